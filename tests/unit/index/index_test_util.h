// Helpers for the index tests: seeded key generators, a reference multiset of
// documents, and a byte-level comparison of two index directories.
#ifndef TIDEMARK_TESTS_UNIT_INDEX_INDEX_TEST_UTIL_H_
#define TIDEMARK_TESTS_UNIT_INDEX_INDEX_TEST_UTIL_H_

#include <cstdint>
#include <map>
#include <string>
#include <vector>

#include "tidemark/index.h"

namespace tidemark::testing {

/// SplitMix64 (Steele, Lea, Flood 2014): a seeded stream of well-mixed 64-bit keys.
class SplitMix64 {
 public:
  explicit SplitMix64(uint64_t seed) : x_(seed) {}
  uint64_t Next() {
    uint64_t z = (x_ += 0x9e3779b97f4a7c15ull);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
  }

 private:
  uint64_t x_;
};

/// `num_docs` documents of fingerprints drawn from a pool of `pool` keys (so keys repeat
/// across and inside documents), lengths 0..2*avg_len.
std::vector<std::vector<uint64_t>> MakeDocuments(uint64_t seed, size_t num_docs, size_t avg_len,
                                                 size_t pool);

/// Reference counts: occurrences and distinct documents per fingerprint.
std::map<uint64_t, NgramInfo> ReferenceCounts(const std::vector<std::vector<uint64_t>>& docs);

/// The bytes that must be equal between equivalent indexes: every shard file (by shard
/// id, all segments in order) and the manifest without build info and segment ids.
std::string IndexContentBytes(const std::string& dir);

/// Files under `dir`, recursively, relative paths, sorted.
std::vector<std::string> ListTree(const std::string& dir);

}  // namespace tidemark::testing

#endif  // TIDEMARK_TESTS_UNIT_INDEX_INDEX_TEST_UTIL_H_
