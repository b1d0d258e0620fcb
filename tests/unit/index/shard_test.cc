#include "index/shard_reader.h"
#include "index/shard_writer.h"

#include <catch2/catch.hpp>

#include <algorithm>
#include <map>
#include <set>

#include "common/text_util.h"
#include "index/format.h"
#include "index_test_util.h"
#include "test_util.h"

namespace tidemark {
namespace {

namespace fmt = index_format;

struct Entry {
  uint32_t count, docs;
};

// Writes a shard of `n` random keys of shard `id` and returns the reference map.
std::map<uint64_t, Entry> WriteShard(const std::string& path, const ShardParams& p, size_t n,
                                     uint64_t seed) {
  testing::SplitMix64 rng(seed);
  std::map<uint64_t, Entry> ref;
  while (ref.size() < n) {
    uint64_t fp = rng.Next();
    if (p.shard_bits > 0) {
      fp = (fp >> p.shard_bits) | (static_cast<uint64_t>(p.shard_id) << (64 - p.shard_bits));
    }
    const uint64_t r = rng.Next();
    uint32_t count = 1 + static_cast<uint32_t>(r % 3);
    if (r % 97 == 0) count = 254 + static_cast<uint32_t>(r % 5);  // around the escape
    if (r % 1009 == 0) count = fmt::kMaxCount;
    const uint32_t docs = 1 + static_cast<uint32_t>((r >> 20) % count);
    ref[fp] = {count, docs};
  }
  ShardWriter w(p);
  for (const auto& [fp, e] : ref) w.Add(fp, e.count, e.docs);
  ShardFileInfo info;
  REQUIRE(w.Finish(path, Env::Default(), &info).ok());
  CHECK(info.keys == n);
  CHECK(info.bytes == testing::ReadFile(path).size());
  return ref;
}

TEST_CASE("shard round trip: every key found with its counts, absent keys not found",
          "[index][shard]") {
  const std::string dir = testing::ScratchDir("shard_rt");
  struct Case {
    uint32_t shard_bits, shard_id;
    size_t n;
  };
  for (const Case c : {Case{8, 3, 0}, Case{8, 3, 1}, Case{8, 200, 31}, Case{8, 7, 5000},
                       Case{0, 0, 3000}, Case{16, 65535, 100}, Case{4, 9, 100000}}) {
    ShardParams p;
    p.shard_bits = c.shard_bits;
    p.shard_id = c.shard_id;
    p.bloom_bits_per_key = 10;
    p.params_hash = 0x1234;
    const std::string path = dir + "/s" + std::to_string(c.shard_bits) + "-" + std::to_string(c.n);
    const auto ref = WriteShard(path, p, c.n, 99 + c.n);
    auto r = ShardReader::Open(path, p);
    REQUIRE(r.ok());
    const ShardReader& sr = **r;
    INFO("shard_bits=" << c.shard_bits << " n=" << c.n);
    REQUIRE(sr.size() == c.n);
    CHECK(sr.VerifyChecksums().ok());
    CHECK(sr.VerifyInvariants().ok());
    CHECK(sr.remainder_bits() <= fmt::kMaxRemainderBits);
    uint64_t i = 0;
    for (const auto& [fp, e] : ref) {
      CHECK(sr.KeyAt(i) == fp);
      CHECK(sr.Find(fp) == static_cast<int64_t>(i));
      uint32_t count, docs;
      sr.CountsAt(i, &count, &docs);
      CHECK(count == e.count);
      CHECK(docs == e.docs);
      CHECK(sr.CountAt(i) == e.count);
      CHECK(sr.bloom().MayContain(fp));  // no false negatives
      NgramInfo info;
      sr.LookupInto(fp, &info);
      CHECK(info.count == e.count);
      CHECK(info.docs == e.docs);
      ++i;
    }
    // Keys never inserted (same shard, random low bits): exact lookup never finds them.
    testing::SplitMix64 rng(5);
    for (int t = 0; t < 20000; ++t) {
      uint64_t fp = rng.Next();
      if (c.shard_bits > 0) {
        fp = (fp >> c.shard_bits) | (static_cast<uint64_t>(c.shard_id) << (64 - c.shard_bits));
      }
      if (ref.count(fp) != 0) continue;
      CHECK(sr.Find(fp) == -1);
      NgramInfo info;
      sr.LookupInto(fp, &info);
      CHECK(info.count == 0);
    }
    // Neighbours of stored keys (the hardest absent keys for a bucketed layout).
    for (const auto& [fp, e] : ref) {
      if (ref.count(fp + 1) == 0 && fmt::ShardOf(fp + 1, c.shard_bits) == c.shard_id) {
        CHECK(sr.Find(fp + 1) == -1);
      }
    }
  }
}

TEST_CASE("shard header fields follow docs/index_format.md", "[index][shard]") {
  const std::string dir = testing::ScratchDir("shard_hdr");
  ShardParams p;
  p.shard_bits = 8;
  p.shard_id = 17;
  p.bloom_bits_per_key = 10;
  p.params_hash = Checksum64("rules=2 n=13 seed=0 accents=keep");
  const std::string path = dir + "/x.tms";
  WriteShard(path, p, 1000, 3);
  const std::string f = testing::ReadFile(path);
  REQUIRE(f.size() > 256);
  CHECK(f.substr(0, 8) == std::string("\x89TMS\r\n\x1a\n", 8));
  CHECK(fmt::LoadLE32(f.data() + 8) == 3);
  CHECK(fmt::LoadLE32(f.data() + 12) == 256);
  CHECK(fmt::LoadLE32(f.data() + 16) == 8);
  CHECK(fmt::LoadLE32(f.data() + 20) == 17);
  CHECK(fmt::LoadLE64(f.data() + 24) == 1000);
  CHECK(fmt::LoadLE64(f.data() + 32) == p.params_hash);
  // b: largest with floor(1000 / 2^b) >= 16 -> 5 (1000/32 = 31); w = 64 - 8 - 5 = 51.
  CHECK(fmt::LoadLE32(f.data() + 40) == 5);
  CHECK(fmt::LoadLE32(f.data() + 44) == 51);
  CHECK(fmt::LoadLE32(f.data() + 48) == 10);
  CHECK(fmt::LoadLE32(f.data() + 52) == 6);
  CHECK(fmt::LoadLE64(f.data() + 56) == (1000 * 10 + 511) / 512);
  CHECK(Checksum64(std::string_view(f.data(), 248)) == fmt::LoadLE64(f.data() + 248));
  // Sections: consecutive, aligned, checksummed, file ends at the last one.
  uint64_t pos = 256;
  for (int i = 0; i < 7; ++i) {
    const char* e = f.data() + 80 + i * 24;
    const uint64_t off = fmt::LoadLE64(e), bytes = fmt::LoadLE64(e + 8);
    CHECK(off == fmt::AlignUp(pos, i == 0 ? 64 : 8));
    CHECK(Checksum64(std::string_view(f.data() + off, bytes)) == fmt::LoadLE64(e + 16));
    pos = off + bytes;
  }
  CHECK(pos == f.size());
}

// The counts and doc-counts sections take the code width of the fewest bytes
// (docs/index_format.md "Counts and doc counts"): bytes(w) = ceil(N w / 8) + 8 E(w),
// E(w) = the keys whose value (count - 1, or count - docs) is at least 2^w - 1.
TEST_CASE("counts take the narrowest code width, values round-trip", "[index][shard]") {
  const std::string dir = testing::ScratchDir("shard_codes");
  struct Case {
    const char* what;
    uint32_t (*count)(uint64_t i);
    uint32_t (*docs)(uint64_t i, uint32_t count);
    uint32_t want_cw, want_dw;
  };
  // N = 4000 keys. "All ones": width 0 for both, no codes at all.
  // "Ones and twos": counts 1 (1920 keys), 2 (2000) and 1000 (80), so v = count - 1 is
  // 0, 1 or 999: bytes(1) = 500 + 8 * 2080, bytes(2) = 1000 + 8 * 80 = 1640,
  // bytes(4) = 2000 + 640, bytes(8) = 4000 + 640 -> 2. Docs = count, except the 80
  // large ones (docs 1: v = 999) and the 286 odd multiples of 7 (count 2, docs 1: v = 1):
  // bytes(1) = 500 + 8 * 366 = 3428, bytes(2) = 1000 + 640 = 1640 -> 2.
  // "All 300": every count escapes at every width, so the narrowest wins: 1; docs 0.
  const Case cases[] = {
      {"all ones", [](uint64_t) { return 1u; }, [](uint64_t, uint32_t c) { return c; }, 0, 0},
      {"ones and twos, a few large",
       [](uint64_t i) -> uint32_t { return i % 50 == 0 ? 1000 : 1 + static_cast<uint32_t>(i % 2); },
       [](uint64_t i, uint32_t c) -> uint32_t { return c == 1000 ? 1 : (i % 7 == 0 ? c - (c > 1) : c); },
       2, 2},
      {"all 300", [](uint64_t) { return 300u; }, [](uint64_t, uint32_t c) { return c; }, 1, 0},
  };
  for (const Case& c : cases) {
    INFO(c.what);
    ShardParams p;
    p.shard_bits = 8;
    p.shard_id = 5;
    p.params_hash = 9;
    const std::string path = dir + "/codes.tms";
    ShardWriter w(p);
    testing::SplitMix64 rng(3);
    std::set<uint64_t> keys;
    while (keys.size() < 4000) keys.insert((rng.Next() >> 8) | (uint64_t{5} << 56));
    uint64_t i = 0;
    std::vector<std::pair<uint32_t, uint32_t>> want;
    for (const uint64_t fp : keys) {
      const uint32_t count = c.count(i);
      const uint32_t docs = c.docs(i, count);
      want.emplace_back(count, docs);
      w.Add(fp, count, docs);
      ++i;
    }
    ShardFileInfo info;
    REQUIRE(w.Finish(path, Env::Default(), &info).ok());
    auto r = ShardReader::Open(path, p);
    REQUIRE(r.ok());
    const ShardReader& sr = **r;
    CHECK(sr.VerifyInvariants().ok());
    const std::string f = testing::ReadFile(path);
    const auto& cs = sr.section(fmt::kSecCounts);
    const auto& ds = sr.section(fmt::kSecDocs);
    CHECK(fmt::LoadLE32(f.data() + cs.offset) == c.want_cw);
    CHECK(fmt::LoadLE32(f.data() + ds.offset) == c.want_dw);
    CHECK(cs.bytes == 8 + (4000 * c.want_cw + 7) / 8);
    CHECK(ds.bytes == 8 + (4000 * c.want_dw + 7) / 8);
    for (uint64_t k = 0; k < want.size(); ++k) {
      uint32_t count, docs;
      sr.CountsAt(k, &count, &docs);
      REQUIRE(count == want[k].first);
      REQUIRE(docs == want[k].second);
    }
  }
}

TEST_CASE("shard opened with other parameters is refused", "[index][shard]") {
  const std::string dir = testing::ScratchDir("shard_params");
  ShardParams p;
  p.shard_id = 1;
  p.params_hash = 77;
  WriteShard(dir + "/a.tms", p, 10, 1);
  ShardParams q = p;
  q.params_hash = 78;
  auto r = ShardReader::Open(dir + "/a.tms", q);
  REQUIRE(!r.ok());
  CHECK(r.status().code() == StatusCode::kCorruption);
  CHECK(r.status().message().find("a.tms@32") != std::string::npos);
  q = p;
  q.shard_id = 2;
  r = ShardReader::Open(dir + "/a.tms", q);
  REQUIRE(!r.ok());
  CHECK(r.status().message().find("a.tms@20") != std::string::npos);
}

}  // namespace
}  // namespace tidemark
