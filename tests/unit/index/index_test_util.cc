#include "index_test_util.h"

#include <algorithm>
#include <filesystem>
#include <stdexcept>

#include "index/format.h"
#include "index/manifest.h"
#include "test_util.h"

namespace tidemark::testing {

std::vector<std::vector<uint64_t>> MakeDocuments(uint64_t seed, size_t num_docs, size_t avg_len,
                                                 size_t pool) {
  SplitMix64 rng(seed);
  std::vector<uint64_t> keys(pool);
  for (auto& k : keys) k = rng.Next();
  std::vector<std::vector<uint64_t>> docs(num_docs);
  for (auto& d : docs) {
    const size_t len = static_cast<size_t>(rng.Next() % (2 * avg_len + 1));
    d.resize(len);
    for (auto& f : d) {
      // Skewed: half the draws from the first 1% of the pool (frequent n-grams).
      const uint64_t r = rng.Next();
      const size_t range = (r & 1) ? std::max<size_t>(1, pool / 100) : pool;
      f = keys[(r >> 1) % range];
    }
  }
  return docs;
}

std::map<uint64_t, NgramInfo> ReferenceCounts(const std::vector<std::vector<uint64_t>>& docs) {
  std::map<uint64_t, NgramInfo> ref;
  for (const auto& d : docs) {
    std::vector<uint64_t> u = d;
    std::sort(u.begin(), u.end());
    for (const uint64_t f : d) ref[f].count++;
    u.erase(std::unique(u.begin(), u.end()), u.end());
    for (const uint64_t f : u) ref[f].docs++;
  }
  return ref;
}

std::string IndexContentBytes(const std::string& dir) {
  auto m = ReadManifest(dir);
  if (!m.ok()) throw std::runtime_error(m.status().ToString());
  IndexManifest copy = *m;
  std::string out;
  for (auto& s : copy.segments) {
    for (uint32_t sh = 0; sh < (1u << copy.shard_bits); ++sh) {
      out += ReadFile(dir + "/" + index_format::SegmentDirName(s.id) + "/" +
                      index_format::ShardFileName(sh));
    }
    s.id = 0;
  }
  out += copy.Serialize(false);
  return out;
}

std::vector<std::string> ListTree(const std::string& dir) {
  std::vector<std::string> out;
  for (const auto& e : std::filesystem::recursive_directory_iterator(dir)) {
    out.push_back(std::filesystem::relative(e.path(), dir).string());
  }
  std::sort(out.begin(), out.end());
  return out;
}

}  // namespace tidemark::testing
