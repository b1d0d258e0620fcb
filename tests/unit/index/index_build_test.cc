#include "tidemark/index_builder.h"

#include <sys/wait.h>
#include <unistd.h>

#include <catch2/catch.hpp>

#include <algorithm>
#include <filesystem>
#include <random>
#include <mutex>
#include <thread>

#include "common/env.h"
#include "index/manifest.h"
#include "index_test_util.h"
#include "faulty_env.h"
#include "test_util.h"
#include "tidemark/index.h"

namespace tidemark {
namespace {

using testing::IndexContentBytes;
using testing::MakeDocuments;
using testing::ReferenceCounts;

IndexBuildOptions SmallOptions(int threads = 2) {
  IndexBuildOptions o;
  o.shard_bits = 4;
  o.threads = threads;
  o.memory_budget = 256ull << 20;
  return o;
}

void CheckAgainstReference(const Index& index, const std::map<uint64_t, NgramInfo>& ref) {
  std::vector<uint64_t> fps;
  for (const auto& [fp, info] : ref) fps.push_back(fp);
  std::vector<NgramInfo> out(fps.size());
  index.Lookup(fps, out);
  size_t i = 0;
  for (const auto& [fp, info] : ref) {
    INFO("fp " << fp);
    CHECK(out[i].count == info.count);
    CHECK(out[i].docs == info.docs);
    ++i;
  }
  // Keys never inserted: exact confirmation means none is reported present.
  testing::SplitMix64 rng(0xABCDEF);
  std::vector<uint64_t> absent;
  while (absent.size() < 50000) {
    const uint64_t k = rng.Next();
    if (ref.count(k) == 0) absent.push_back(k);
  }
  std::vector<NgramInfo> aout(absent.size());
  index.Lookup(absent, aout);
  size_t present = 0;
  for (const auto& a : aout) present += a.present();
  CHECK(present == 0);
}

TEST_CASE("build from documents: lookups equal a reference count", "[index][build]") {
  const auto docs = MakeDocuments(1, 2000, 60, 30000);
  const auto ref = ReferenceCounts(docs);
  const std::string dir = testing::ScratchDir("build_ref") + "/idx";
  IndexBuildStats st;
  REQUIRE(BuildIndexFromDocuments(dir, docs, SmallOptions(), false, &st).ok());
  CHECK(st.records == docs.size());
  CHECK(st.ngrams_distinct == ref.size());
  uint64_t total = 0;
  for (const auto& d : docs) total += d.size();
  CHECK(st.ngrams_total == total);
  auto idx = Index::Open(dir);
  REQUIRE(idx.ok());
  CheckAgainstReference(**idx, ref);
  IndexVerifyReport vr;
  CHECK(VerifyIndex(dir, 2, &vr).ok());
  CHECK(vr.keys_checked == ref.size());
  // Dump: ascending, equal to the reference.
  std::vector<std::pair<uint64_t, NgramInfo>> dumped;
  REQUIRE(DumpIndex(dir, [&](uint64_t fp, const NgramInfo& i) {
            dumped.emplace_back(fp, i);
            return Status::Ok();
          }).ok());
  REQUIRE(dumped.size() == ref.size());
  size_t i = 0;
  for (const auto& [fp, info] : ref) {
    CHECK(dumped[i].first == fp);
    CHECK(dumped[i].second.count == info.count);
    CHECK(dumped[i].second.docs == info.docs);
    ++i;
  }
  // Temp runs and staging are gone; the directory holds exactly the documented names.
  for (const auto& name : testing::ListTree(dir)) {
    CHECK((name == "LOCK" || name == "manifest.json" || name.rfind("seg-000001", 0) == 0));
  }
}

TEST_CASE("edge fingerprints: 0, all ones, repeats inside a document", "[index][build]") {
  // 0 is the builder's empty-slot marker inside a document's set: it must count like
  // any other key, as must the extremes of shards 0 and 255.
  std::vector<std::vector<uint64_t>> docs = {
      {0, 0, 5, 0, ~0ull, 5},
      {0, 7, ~0ull, ~0ull, 0x00ffffffffffffffull},
      {},
      {0},
      {0x0100000000000000ull, 0x0100000000000000ull, 0}};
  for (int i = 0; i < 300; ++i) docs.push_back({static_cast<uint64_t>(i) * 0x9e3779b97f4a7c15ull, 0});
  const auto ref = ReferenceCounts(docs);
  for (const uint64_t budget : {uint64_t{256} << 20, uint64_t{1}}) {  // in memory; spilled
    const std::string dir = testing::ScratchDir("edge_fps") + "/idx" + std::to_string(budget);
    IndexBuildOptions o = SmallOptions(2);
    o.memory_budget = budget;
    IndexBuildStats st;
    REQUIRE(BuildIndexFromDocuments(dir, docs, o, false, &st).ok());
    CHECK(st.ngrams_distinct == ref.size());
    auto idx = Index::Open(dir);
    REQUIRE(idx.ok());
    CheckAgainstReference(**idx, ref);
    IndexVerifyReport vr;
    CHECK(VerifyIndex(dir, 2, &vr).ok());
  }
}

TEST_CASE("index bytes do not depend on threads, memory budget or document order",
          "[index][build][determinism]") {
  const auto docs = MakeDocuments(2, 3000, 80, 50000);
  const std::string base = testing::ScratchDir("determinism");
  IndexBuildStats st;
  REQUIRE(BuildIndexFromDocuments(base + "/t1", docs, SmallOptions(1), false, &st).ok());
  CHECK(st.spills == 0);
  REQUIRE(BuildIndexFromDocuments(base + "/t2", docs, SmallOptions(2), false, &st).ok());
  IndexBuildOptions tiny = SmallOptions(2);
  tiny.memory_budget = 1;  // floor-sized buffers: many spills
  REQUIRE(BuildIndexFromDocuments(base + "/tiny", docs, tiny, false, &st).ok());
  CHECK(st.spills > 10);
  auto shuffled = docs;
  std::mt19937_64 g(3);
  std::shuffle(shuffled.begin(), shuffled.end(), g);
  REQUIRE(BuildIndexFromDocuments(base + "/shuf", shuffled, SmallOptions(2), false, &st).ok());
  IndexBuildOptions cached = SmallOptions(2);
  cached.direct_writes = false;  // through the page cache instead of O_DIRECT
  REQUIRE(BuildIndexFromDocuments(base + "/cached", docs, cached, false, &st).ok());
  IndexBuildOptions unsynced = SmallOptions(2);
  unsynced.sync = false;  // --no-sync
  REQUIRE(BuildIndexFromDocuments(base + "/nosync", docs, unsynced, false, &st).ok());
  const std::string a = IndexContentBytes(base + "/t1");
  CHECK(a == IndexContentBytes(base + "/nosync"));
  CHECK(a == IndexContentBytes(base + "/t2"));
  CHECK(a == IndexContentBytes(base + "/tiny"));
  CHECK(a == IndexContentBytes(base + "/shuf"));
  CHECK(a == IndexContentBytes(base + "/cached"));
  auto idx = Index::Open(base + "/tiny");
  REQUIRE(idx.ok());
  CheckAgainstReference(**idx, ReferenceCounts(docs));
}

TEST_CASE("merge(build(A), add(B)) equals build(A+B) byte for byte", "[index][merge]") {
  const auto all = MakeDocuments(4, 3000, 50, 40000);
  const std::vector<std::vector<uint64_t>> a(all.begin(), all.begin() + 1200);
  const std::vector<std::vector<uint64_t>> b(all.begin() + 1200, all.end());
  const std::string base = testing::ScratchDir("merge");
  IndexBuildStats st;
  REQUIRE(BuildIndexFromDocuments(base + "/ab", all, SmallOptions(), false, &st).ok());
  REQUIRE(BuildIndexFromDocuments(base + "/x", a, SmallOptions(), false, &st).ok());
  REQUIRE(BuildIndexFromDocuments(base + "/x", b, SmallOptions(), true, &st).ok());
  CHECK(st.segment_id == 2);
  {
    // Two segments: lookups sum over them.
    auto idx = Index::Open(base + "/x");
    REQUIRE(idx.ok());
    CHECK((*idx)->manifest().segments.size() == 2);
    CheckAgainstReference(**idx, ReferenceCounts(all));
  }
  // Separate indexes merged into a new one (one index per cluster task).
  REQUIRE(BuildIndexFromDocuments(base + "/ia", a, SmallOptions(), false, &st).ok());
  REQUIRE(BuildIndexFromDocuments(base + "/ib", b, SmallOptions(), false, &st).ok());
  IndexMergeStats ms;
  REQUIRE(MergeIndexes(base + "/iab", {base + "/ia", base + "/ib"}, IndexMergeOptions{}, &ms).ok());
  CHECK(ms.segments_in == 2);
  REQUIRE(MergeSegments(base + "/x", IndexMergeOptions{}, &ms).ok());
  CHECK(ms.segments_in == 2);
  CHECK(ms.segment_id == 3);
  const std::string want = IndexContentBytes(base + "/ab");
  CHECK(IndexContentBytes(base + "/x") == want);
  CHECK(IndexContentBytes(base + "/iab") == want);
  // Old segments are gone after the merge.
  CHECK(!testing::PathExists(base + "/x/seg-000001"));
  CHECK(!testing::PathExists(base + "/x/seg-000002"));
  auto idx = Index::Open(base + "/x");
  REQUIRE(idx.ok());
  CheckAgainstReference(**idx, ReferenceCounts(all));
  IndexVerifyReport vr;
  CHECK(VerifyIndex(base + "/x", 2, &vr).ok());
}

TEST_CASE("mismatched parameters are named errors", "[index][params]") {
  const auto docs = MakeDocuments(5, 100, 20, 1000);
  const std::string dir = testing::ScratchDir("params") + "/idx";
  IndexBuildStats st;
  REQUIRE(BuildIndexFromDocuments(dir, docs, SmallOptions(), false, &st).ok());
  auto idx = Index::Open(dir);
  REQUIRE(idx.ok());
  TextOptions want;
  CHECK((*idx)->CheckTextOptions(want).ok());
  want.ngram = 8;
  want.seed = 5;
  Status s = (*idx)->CheckTextOptions(want);
  CHECK(s.code() == StatusCode::kMismatch);
  CHECK(s.message().find("n=13") != std::string::npos);
  CHECK(s.message().find("n=8") != std::string::npos);
  CHECK(s.message().find("seed=5") != std::string::npos);
  want = TextOptions{};
  want.strip_accents = true;
  CHECK((*idx)->CheckTextOptions(want).message().find("accents") != std::string::npos);

  IndexBuildOptions other = SmallOptions();
  other.text.ngram = 8;
  s = BuildIndexFromDocuments(dir, docs, other, true, &st);
  CHECK(s.code() == StatusCode::kMismatch);
  CHECK(s.message().find("n=8") != std::string::npos);
  other = SmallOptions();
  other.shard_bits = 5;
  CHECK(BuildIndexFromDocuments(dir, docs, other, true, &st).code() == StatusCode::kMismatch);
  other = SmallOptions();
  other.read.fields = {"body"};
  s = BuildIndexFromDocuments(dir, docs, other, true, &st);
  CHECK(s.code() == StatusCode::kMismatch);
  CHECK(s.message().find("body") != std::string::npos);
  // Building over an existing index is refused; so is a foreign non-empty directory.
  CHECK(BuildIndexFromDocuments(dir, docs, SmallOptions(), false, &st).code() ==
        StatusCode::kInvalidArgument);
  const std::string foreign = testing::ScratchDir("foreign");
  testing::WriteFile(foreign + "/notes.txt", "mine");
  s = BuildIndexFromDocuments(foreign, docs, SmallOptions(), false, &st);
  CHECK(s.code() == StatusCode::kInvalidArgument);
  CHECK(testing::PathExists(foreign + "/notes.txt"));
  // Not an index.
  auto none = Index::Open(foreign);
  REQUIRE(!none.ok());
  CHECK(none.status().code() == StatusCode::kNotFound);
}

TEST_CASE("manifest records parameters and round-trips", "[index][manifest]") {
  const auto docs = MakeDocuments(6, 50, 10, 500);
  const std::string dir = testing::ScratchDir("manifest") + "/idx";
  IndexBuildOptions o = SmallOptions();
  o.text.ngram = 9;
  o.text.seed = 12345;
  o.read.fields = {"/meta/body", "title"};
  o.read.id_field = "id";
  o.bloom_bits_per_key = 12;
  IndexBuildStats st;
  REQUIRE(BuildIndexFromDocuments(dir, docs, o, false, &st).ok());
  auto m = ReadManifest(dir);
  REQUIRE(m.ok());
  CHECK(m->text == o.text);
  CHECK(m->read.fields == o.read.fields);
  CHECK(m->read.id_field == "id");
  CHECK(m->shard_bits == 4);
  CHECK(m->bloom_bits_per_key == 12);
  CHECK(m->records() == docs.size());
  const std::string json = m->Serialize(true);
  CHECK(json == testing::ReadFile(dir + "/manifest.json"));
  auto again = IndexManifest::Parse(json, "x");
  REQUIRE(again.ok());
  CHECK(again->Serialize(true) == json);
  CHECK(again->Identity() == m->Identity());
  // Unknown keys and other format versions are refused.
  std::string bad = json;
  bad.replace(bad.find("\"shard_bits\""), 12, "\"shard_bitz\"");
  CHECK(IndexManifest::Parse(bad, "x").status().code() == StatusCode::kCorruption);
  bad = json;
  bad.replace(bad.find("\"format_version\": 3"), 19, "\"format_version\": 2");
  CHECK(IndexManifest::Parse(bad, "x").status().code() == StatusCode::kUnsupported);
  // So is an index built under other text rules (version 1 fingerprinted n-grams with
  // XXH3): it must be rebuilt, never probed with fingerprints that mean something else.
  bad = json;
  bad.replace(bad.find("\"rules=2 "), 9, "\"rules=1 ");
  const Status old_rules = IndexManifest::Parse(bad, "x").status();
  CHECK(old_rules.code() == StatusCode::kUnsupported);
  CHECK(old_rules.message() ==
        "x: text_options: text rules version 1 (this build implements version 2); rebuild the "
        "index with `tidemark index build`");
}

using testing::FaultyEnv;

TEST_CASE("disk full or a failed rename leaves no index", "[index][faults]") {
  const auto docs = MakeDocuments(7, 500, 40, 10000);
  for (const uint64_t budget : {uint64_t{0}, uint64_t{5000}, uint64_t{60000}}) {
    const std::string dir = testing::ScratchDir("diskfull") + "/idx";
    FaultyEnv env;
    env.budget = budget;
    IndexBuildOptions o = SmallOptions();
    o.env = &env;
    o.memory_budget = 1;  // spills too, so run writes can fail
    IndexBuildStats st;
    Status s = BuildIndexFromDocuments(dir, docs, o, false, &st);
    INFO("budget " << budget << ": " << s.ToString());
    REQUIRE(s.code() == StatusCode::kIOError);
    CHECK(s.message().find("No space left") != std::string::npos);
    CHECK(Index::Open(dir).status().code() == StatusCode::kNotFound);
    for (const auto& name : testing::ListTree(dir)) CHECK(name == "LOCK");
  }
  // The shard files are made durable by one filesystem flush, not an fsync each: when
  // that flush fails, nothing is published either.
  {
    const std::string sdir = testing::ScratchDir("syncfsfail") + "/idx";
    FaultyEnv env;
    env.fail_syncfs = true;
    IndexBuildOptions o = SmallOptions();
    o.env = &env;
    IndexBuildStats st;
    const Status s = BuildIndexFromDocuments(sdir, docs, o, false, &st);
    CHECK(s.code() == StatusCode::kIOError);
    CHECK(env.syncfs_calls == 1);
    CHECK(Index::Open(sdir).status().code() == StatusCode::kNotFound);
    for (const auto& name : testing::ListTree(sdir)) CHECK(name == "LOCK");
  }
  const std::string dir = testing::ScratchDir("renamefail") + "/idx";
  FaultyEnv env;
  env.fail_rename = "/manifest.json";
  IndexBuildOptions o = SmallOptions();
  o.env = &env;
  IndexBuildStats st;
  CHECK(!BuildIndexFromDocuments(dir, docs, o, false, &st).ok());
  CHECK(Index::Open(dir).status().code() == StatusCode::kNotFound);
  for (const auto& name : testing::ListTree(dir)) CHECK(name == "LOCK");
}

TEST_CASE("sync = false (--no-sync) flushes nothing; the default flushes before the manifest",
          "[index][faults]") {
  const auto docs = MakeDocuments(8, 400, 40, 5000);
  const std::string base = testing::ScratchDir("nosync");
  for (const bool sync : {true, false}) {
    INFO("sync " << sync);
    testing::FaultyEnv env;
    IndexBuildOptions o = SmallOptions(2);
    o.env = &env;
    o.sync = sync;
    const std::string dir = base + (sync ? "/synced" : "/unsynced");
    IndexBuildStats st;
    REQUIRE(BuildIndexFromDocuments(dir, docs, o, false, &st).ok());
    REQUIRE(BuildIndexFromDocuments(dir, docs, o, true, &st).ok());  // a second segment
    IndexMergeOptions mo;
    mo.threads = 2;
    mo.env = &env;
    mo.sync = sync;
    IndexMergeStats ms;
    REQUIRE(MergeSegments(dir, mo, &ms).ok());
    REQUIRE(ms.segments_in == 2);
    if (sync) {
      CHECK(env.syncfs_calls == 3);  // build, add, merge: one each
      CHECK(env.syncdir_calls > 0);
      CHECK(env.file_sync_calls > 0);  // the manifests
    } else {
      CHECK(env.syncfs_calls == 0);
      CHECK(env.syncdir_calls == 0);
      CHECK(env.file_sync_calls == 0);
    }
    auto idx = Index::Open(dir);
    REQUIRE(idx.ok());
    auto twice = docs;
    twice.insert(twice.end(), docs.begin(), docs.end());
    CheckAgainstReference(**idx, ReferenceCounts(twice));
  }
  CHECK(IndexContentBytes(base + "/synced") == IndexContentBytes(base + "/unsynced"));
}

TEST_CASE("a cancelled build leaves no index", "[index][faults]") {
  const auto docs = MakeDocuments(8, 300, 30, 5000);
  const std::string dir = testing::ScratchDir("cancel") + "/idx";
  RequestCancel();
  IndexBuildStats st;
  Status s = BuildIndexFromDocuments(dir, docs, SmallOptions(), false, &st);
  ResetCancel();
  CHECK(s.code() == StatusCode::kCancelled);
  CHECK(Index::Open(dir).status().code() == StatusCode::kNotFound);
  // The next build into the same directory works.
  REQUIRE(BuildIndexFromDocuments(dir, docs, SmallOptions(), false, &st).ok());
  CHECK(Index::Open(dir).ok());
}

TEST_CASE("left-overs of a killed build are removed by the next build", "[index][faults]") {
  // A pid that is certainly dead: a child that has exited and been reaped.
  const pid_t child = ::fork();
  if (child == 0) ::_exit(0);
  int status = 0;
  ::waitpid(child, &status, 0);
  const std::string dead = std::to_string(child);
  const std::string dir = testing::ScratchDir("stale") + "/idx";
  std::filesystem::create_directories(dir + "/.tmp-" + dead);
  testing::WriteFile(dir + "/.tmp-" + dead + "/run-000000", "partial");
  std::filesystem::create_directories(dir + "/seg-000001.tmp." + dead);
  testing::WriteFile(dir + "/seg-000001.tmp." + dead + "/shard-00000.tms", "partial");
  std::filesystem::create_directories(dir + "/seg-000001");  // renamed, manifest never written
  testing::WriteFile(dir + "/manifest.json.tmp." + dead, "{");
  CHECK(Index::Open(dir).status().code() == StatusCode::kNotFound);
  const auto docs = MakeDocuments(9, 100, 20, 2000);
  IndexBuildStats st;
  REQUIRE(BuildIndexFromDocuments(dir, docs, SmallOptions(), false, &st).ok());
  CHECK(!testing::PathExists(dir + "/.tmp-" + dead));
  CHECK(!testing::PathExists(dir + "/seg-000001.tmp." + dead));
  CHECK(!testing::PathExists(dir + "/manifest.json.tmp." + dead));
  auto idx = Index::Open(dir);
  REQUIRE(idx.ok());
  CheckAgainstReference(**idx, ReferenceCounts(docs));
}

TEST_CASE("concurrent readers get the same answers", "[index][lookup]") {
  const auto docs = MakeDocuments(10, 2000, 50, 20000);
  const auto ref = ReferenceCounts(docs);
  const std::string dir = testing::ScratchDir("concurrent") + "/idx";
  IndexBuildStats st;
  REQUIRE(BuildIndexFromDocuments(dir, docs, SmallOptions(), false, &st).ok());
  REQUIRE(BuildIndexFromDocuments(dir, docs, SmallOptions(), true, &st).ok());  // 2 segments
  auto idx = Index::Open(dir);
  REQUIRE(idx.ok());
  std::vector<uint64_t> fps;
  testing::SplitMix64 rng(11);
  for (const auto& [fp, info] : ref) {
    fps.push_back(fp);
    fps.push_back(rng.Next());
  }
  std::vector<NgramInfo> want(fps.size());
  (*idx)->Lookup(fps, want);
  std::vector<std::vector<NgramInfo>> got(4, std::vector<NgramInfo>(fps.size()));
  std::vector<std::thread> threads;
  for (int t = 0; t < 4; ++t) {
    threads.emplace_back([&, t] {
      // Odd-sized batches, so group boundaries differ from the single-thread run.
      const size_t batch = 1 + 37 * static_cast<size_t>(t);
      for (size_t i = 0; i < fps.size(); i += batch) {
        const size_t n = std::min(batch, fps.size() - i);
        (*idx)->Lookup(std::span<const uint64_t>(fps.data() + i, n),
                       std::span<NgramInfo>(got[static_cast<size_t>(t)].data() + i, n));
      }
    });
  }
  for (auto& th : threads) th.join();
  size_t k = 0;
  for (const auto& [fp, info] : ref) {
    CHECK(want[2 * k].count == 2 * info.count);  // the documents were indexed twice
    CHECK(want[2 * k].docs == 2 * info.docs);
    ++k;
  }
  for (int t = 0; t < 4; ++t) {
    for (size_t i = 0; i < fps.size(); ++i) {
      CHECK(got[static_cast<size_t>(t)][i].count == want[i].count);
      CHECK(got[static_cast<size_t>(t)][i].docs == want[i].docs);
    }
  }
}

TEST_CASE("ParseByteSize accepts 512M and 4G", "[index][options]") {
  CHECK(*ParseByteSize("512M") == 512ull << 20);
  CHECK(*ParseByteSize("4G") == 4ull << 30);
  CHECK(*ParseByteSize("1.5GiB") == 3ull << 29);
  CHECK(*ParseByteSize("100") == 100);
  CHECK(*ParseByteSize("64kb") == 64ull << 10);
  CHECK(!ParseByteSize("lots").ok());
  CHECK(!ParseByteSize("5X").ok());
}

}  // namespace
}  // namespace tidemark

namespace tidemark {
namespace {

// A JSON Lines corpus big enough that a build takes a while (about 40 MB).
std::string WriteBigCorpus(const std::string& dir) {
  const std::string path = dir + "/big.jsonl";
  std::string data;
  testing::SplitMix64 rng(77);
  for (int r = 0; r < 40000; ++r) {
    data += "{\"text\": \"";
    for (int w = 0; w < 150; ++w) {
      data += "w" + std::to_string(rng.Next() % 50000) + " ";
    }
    data += "\"}\n";
  }
  testing::WriteFile(path, data);
  return path;
}

TEST_CASE("kill -9 or Ctrl-C during a CLI build leaves no index; the next build cleans up",
          "[index][faults][cli]") {
  const std::string base = testing::ScratchDir("kill");
  const std::string corpus = WriteBigCorpus(base);
  for (const char* sig : {"KILL", "INT"}) {
    INFO("signal " << sig);
    const std::string dir = base + "/idx-" + sig;
    int rc = 0;
    // Start the build, signal it after 0.5 s, report how it ended.
    const std::string out = testing::RunCommand(
        "(" + testing::CliPath() + " -q index build --memory 64M --threads 2 -n 5 -o " + dir +
            " " + corpus + " & pid=$!; sleep 0.5; kill -" + sig +
            " $pid; wait $pid; echo exit=$?) 2>&1",
        &rc);
    INFO(out);
    const bool interrupted = out.find("exit=0") == std::string::npos;
    if (!interrupted) {
      WARN("the build finished before the signal; nothing to check");
      continue;
    }
    if (std::string(sig) == "INT") CHECK(out.find("exit=130") != std::string::npos);
    auto idx = Index::Open(dir);
    CHECK(idx.status().code() == StatusCode::kNotFound);
    if (std::string(sig) == "INT") {
      // The interrupted build removed its own temporary files.
      for (const auto& name : testing::ListTree(dir)) CHECK(name == "LOCK");
    }
    testing::RunCommand(testing::CliPath() + " -q index build --threads 2 -n 5 -o " + dir + " " +
                            corpus + " 2>&1",
                        &rc);
    CHECK(rc == 0);
    CHECK(Index::Open(dir).ok());
    for (const auto& name : testing::ListTree(dir)) {
      CHECK((name == "LOCK" || name == "manifest.json" || name.rfind("seg-000001", 0) == 0));
      CHECK(name.find(".tmp") == std::string::npos);
    }
  }
}

}  // namespace

namespace {
// Records every progress event (phase names are string literals, kept as views).
class RecordingSink final : public ProgressSink {
 public:
  void Update(const ProgressEvent& e) override {
    std::lock_guard<std::mutex> lock(mu);
    events.push_back(e);
  }
  std::mutex mu;
  std::vector<ProgressEvent> events;
};

// Writes the non-empty lines of the GPL version 3 text that Debian's base-files ships
// (real text) as JSON Lines records, odd lines to dir/a.jsonl and even ones to
// dir/b.jsonl; returns the number of records.
size_t WriteGplJsonl(const std::string& dir) {
  const std::string gpl = testing::ReadFile("/usr/share/common-licenses/GPL-3");
  std::string a, b;
  size_t pos = 0, n = 0;
  while (pos < gpl.size()) {
    size_t nl = gpl.find('\n', pos);
    if (nl == std::string::npos) nl = gpl.size();
    std::string text;
    for (const char c : gpl.substr(pos, nl - pos)) {
      if (c == '"' || c == '\\') text += '\\';
      text += c;
    }
    pos = nl + 1;
    if (text.empty()) continue;
    (n++ % 2 == 0 ? a : b) += "{\"text\": \"" + text + "\"}\n";
  }
  REQUIRE(n > 500);
  testing::WriteFile(dir + "/a.jsonl", a);
  testing::WriteFile(dir + "/b.jsonl", b);
  return n;
}
}  // namespace

TEST_CASE("progress: reading counts input bytes, merging counts shards, syncing neither",
          "[index][progress]") {
  const std::string dir = testing::ScratchDir("progress");
  const size_t n = WriteGplJsonl(dir);
  RecordingSink sink;
  IndexBuildOptions o;
  o.text.ngram = 5;
  o.shard_bits = 4;
  o.threads = 2;
  o.memory_budget = 64ull << 20;
  o.progress = &sink;
  IndexBuildStats st;
  REQUIRE(BuildIndex(dir + "/idx", {dir + "/a.jsonl", dir + "/b.jsonl"}, o, &st).ok());
  CHECK(st.records == n);
  CHECK(st.skips.total() == 0);

  uint64_t merging = 0, syncing = 0, last_done = 0;
  for (const ProgressEvent& e : sink.events) {
    INFO("phase " << e.phase << " units " << e.done_units << "/" << e.total_units);
    if (e.phase == "merging") {
      ++merging;
      CHECK(e.total_units == 16);
      CHECK(e.unit == "shards");
      CHECK(e.done_units <= e.total_units);
      CHECK(e.done_units >= last_done);  // never goes back within the phase
      last_done = e.done_units;
    } else {
      CHECK(e.total_units == 0);
      if (e.phase == "syncing") ++syncing;
      if (e.phase == "reading") CHECK(e.done_bytes <= e.total_bytes);
    }
  }
  CHECK(merging >= 1);  // the forced report at the start of the phase, at least
  CHECK(syncing == 1);

  // The merge command counts shards too.
  testing::WriteFile(dir + "/c.jsonl", testing::ReadFile(dir + "/b.jsonl"));
  REQUIRE(AddSegment(dir + "/idx", {dir + "/c.jsonl"}, o, &st).ok());
  sink.events.clear();
  IndexMergeOptions mo;
  mo.threads = 2;
  mo.progress = &sink;
  IndexMergeStats ms;
  REQUIRE(MergeSegments(dir + "/idx", mo, &ms).ok());
  REQUIRE(ms.segments_in == 2);
  bool merge_counted = false;
  for (const ProgressEvent& e : sink.events) {
    if (e.phase == "merging") {
      CHECK(e.total_units == 16);
      merge_counted = true;
    } else {
      CHECK(e.total_units == 0);
      CHECK(e.total_bytes == 0);  // no "0 B of 16 B" from a shard count posing as bytes
    }
  }
  CHECK(merge_counted);
}

TEST_CASE("CLI: index build, add and merge with --no-sync make an index that verifies",
          "[index][cli]") {
  const std::string dir = testing::ScratchDir("cli_nosync");
  WriteGplJsonl(dir);
  const std::string cli = testing::CliPath() + " -q index ";
  const std::string idx = dir + "/idx";
  int rc = -1;
  const std::string out =
      testing::RunCommand(cli + "build --no-sync -n 5 -o " + idx + " " + dir + "/a.jsonl 2>&1 && " +
                              cli + "add --no-sync " + idx + " " + dir + "/b.jsonl 2>&1 && " + cli +
                              "merge --no-sync " + idx + " 2>&1 && " + cli + "verify " + idx + " 2>&1",
                          &rc);
  INFO(out);
  CHECK(rc == 0);
  auto m = ReadManifest(idx);
  REQUIRE(m.ok());
  CHECK(m->segments.size() == 1);
  CHECK(m->records() > 500);
}

}  // namespace tidemark
