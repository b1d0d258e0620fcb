// The index holds exactly the n-grams and counts of a real text: the King James Bible
// (Debian package bible-kjv, REFERENCES.md), computed independently by
// kjv_ngrams.py with /usr/bin/python3 and python3-xxhash at test time.
#include <catch2/catch.hpp>

#include <cinttypes>
#include <cstdio>

#include "test_util.h"
#include "index/manifest.h"
#include "tidemark/index.h"
#include "tidemark/index_builder.h"

namespace tidemark {
namespace {

std::string Dump(const std::string& dir) {
  std::string out;
  REQUIRE(DumpIndex(dir, [&](uint64_t fp, const NgramInfo& info) {
            char line[64];
            std::snprintf(line, sizeof(line), "%016" PRIx64 " %u %u\n", fp, info.count, info.docs);
            out += line;
            return Status::Ok();
          }).ok());
  return out;
}

size_t CountLines(const std::string& s) {
  size_t n = 0;
  for (const char c : s) n += c == '\n';
  return n;
}

TEST_CASE("KJV n-grams and counts equal an independent Python computation",
          "[index][reference]") {
  if (!testing::PathExists("/usr/bin/bible") || !testing::PathExists("/usr/bin/python3")) {
    WARN("bible-kjv or python3 missing (scripts/setup.sh installs them); skipped");
    return;
  }
  struct Case {
    int n;
    uint64_t seed;
    int dups;
    uint32_t shard_bits;
  };
  for (const Case c : {Case{13, 0, 0, 8}, Case{5, 77, 3000, 4}}) {
    INFO("n=" << c.n << " seed=" << c.seed);
    const std::string dir = testing::ScratchDir("kjv_ref");
    const std::string corpus = dir + "/kjv.jsonl";
    int rc = 0;
    const std::string want = testing::RunCommand(
        "/usr/bin/python3 " + testing::SourceDir() + "/tests/reference/index/kjv_ngrams.py " +
            std::to_string(c.n) + " " + std::to_string(c.seed) + " " + corpus + " " +
            std::to_string(c.dups),
        &rc);
    REQUIRE(rc == 0);
    REQUIRE(CountLines(want) > 100000);
    IndexBuildOptions o;
    o.text.ngram = c.n;
    o.text.seed = c.seed;
    o.shard_bits = c.shard_bits;
    o.threads = 2;
    o.memory_budget = 256ull << 20;
    IndexBuildStats st;
    Status s = BuildIndex(dir + "/idx", {corpus}, o, &st);
    REQUIRE(s.ok());
    CHECK(st.skips.total() == 0);
    CHECK(st.ngrams_distinct == CountLines(want));
    const std::string got = Dump(dir + "/idx");
    CHECK(got.size() == want.size());
    CHECK(got == want);
    // The manifest's content checksum of the input (taken while it was read) equals
    // `xxhsum -H3` of the file (Debian package xxhash).
    auto m = ReadManifest(dir + "/idx");
    REQUIRE(m.ok());
    REQUIRE(m->segments.size() == 1);
    REQUIRE(m->segments[0].files.size() == 1);
    CHECK(m->segments[0].files[0].xxh3 == testing::XxhsumH3(corpus));
    // The CLI's dump prints the same lines.
    const std::string cli = testing::RunCommand(testing::CliPath() + " index dump " + dir + "/idx", &rc);
    CHECK(rc == 0);
    CHECK(cli == want);
    // And the lookup API agrees on a sample of the reference lines.
    auto idx = Index::Open(dir + "/idx");
    REQUIRE(idx.ok());
    std::vector<uint64_t> fps;
    std::vector<std::pair<uint32_t, uint32_t>> expect;
    size_t pos = 0, line = 0;
    while (pos < want.size()) {
      const size_t nl = want.find('\n', pos);
      if (line++ % 97 == 0) {
        uint64_t fp;
        unsigned cnt, dc;
        REQUIRE(std::sscanf(want.c_str() + pos, "%" SCNx64 " %u %u", &fp, &cnt, &dc) == 3);
        fps.push_back(fp);
        expect.emplace_back(cnt, dc);
      }
      pos = nl + 1;
    }
    std::vector<NgramInfo> out(fps.size());
    (*idx)->Lookup(fps, out);
    size_t wrong = 0;
    for (size_t i = 0; i < fps.size(); ++i) {
      wrong += out[i].count != expect[i].first || out[i].docs != expect[i].second;
    }
    CHECK(wrong == 0);
  }
}

}  // namespace
}  // namespace tidemark
