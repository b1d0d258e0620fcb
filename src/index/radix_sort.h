// Radix sort of one shard's 64-bit fingerprints for the index build: SortShard sorts
// the keys of several buffers at once with a few LSD passes over the top bits below
// the shard bits, followed by a fix-up of the (for hashed keys, tiny) groups that share
// those bits.
//
// Thread safety: pure function on caller-owned memory.
#ifndef TIDEMARK_SRC_INDEX_RADIX_SORT_H_
#define TIDEMARK_SRC_INDEX_RADIX_SORT_H_

#include <cstddef>
#include <cstdint>
#include <span>
#include <vector>

namespace tidemark {

/// Writes the keys of all `inputs` to out[0..n) in ascending order, n being the sum
/// of the inputs' sizes. All keys share their top `fixed_bits` bits (the shard).
/// REQUIRES: out and scratch hold n entries each and overlap neither each other nor
/// any input.
void SortShard(std::span<const std::span<const uint64_t>> inputs, uint32_t fixed_bits,
               uint64_t* out, uint64_t* scratch);

/// Reusable memory of SortUnique (one per thread).
struct SortUniqueScratch {
  std::vector<uint64_t> partitioned;  ///< the keys grouped by their top digit
  std::vector<uint64_t> spare;        ///< scratch of SortShard for oversized buckets
  std::vector<uint32_t> counts;       ///< digit counts
  std::vector<size_t> starts;         ///< bucket starts in `partitioned`
};

/// Groups the keys of all `inputs` by the `digit_bits` bits below their top
/// `fixed_bits` into sc->partitioned, bucket d at [sc->starts[d], sc->starts[d+1]).
void PartitionByDigit(std::span<const std::span<const uint64_t>> inputs, uint32_t fixed_bits,
                      uint32_t digit_bits, SortUniqueScratch* sc);

/// Sorts the m keys at src, which share their top `fixed_bits` bits, into dst.
/// REQUIRES: dst holds m entries and does not overlap src.
void SortBucket(const uint64_t* src, size_t m, uint32_t fixed_bits, uint64_t* dst,
                SortUniqueScratch* sc);

/// The bits of the first partition of SortUnique for n keys below `fixed_bits`.
uint32_t SortUniqueDigitBits(size_t n, uint32_t fixed_bits);

/// Sorts the keys of all `inputs` (which share their top `fixed_bits` bits) and
/// collapses equal keys, writing the distinct keys ascending to out[0..u); returns u.
/// The collapsing is the caller's: the keys come in buckets, each sorted in place at
/// its final position out + u, and on_bucket(keys, m) must collapse the runs of equal
/// keys among keys[0..m) in place (CollapseRuns) and return how many it kept. Buckets
/// come in ascending order.
///
/// Method: one MSD pass over the top bits below `fixed_bits` (at most 2^10 buckets)
/// groups the keys into buckets of a few hundred to about a thousand keys on shards of
/// up to a million (L1-sized; larger on larger shards, and a bucket beyond 2^14 keys
/// falls back to SortShard), then each bucket is sorted by one counting
/// pass and an insertion fix-up while it is in cache. Reading the input once for the
/// digit counts and once for the partition, instead of the two full LSD passes of
/// SortShard, measured faster per key on shards of a million keys
/// (docs/performance.md).
/// REQUIRES: out holds n entries and overlaps no input.
template <typename OnBucket>
size_t SortUnique(std::span<const std::span<const uint64_t>> inputs, uint32_t fixed_bits,
                  uint64_t* out, SortUniqueScratch* sc, OnBucket&& on_bucket) {
  size_t n = 0;
  for (const auto& in : inputs) n += in.size();
  if (n == 0) return 0;
  const uint32_t digit = SortUniqueDigitBits(n, fixed_bits);
  PartitionByDigit(inputs, fixed_bits, digit, sc);
  size_t u = 0;
  const size_t buckets = size_t{1} << digit;
  for (size_t d = 0; d < buckets; ++d) {
    const size_t a = sc->starts[d], b = sc->starts[d + 1];
    if (a == b) continue;
    SortBucket(sc->partitioned.data() + a, b - a, fixed_bits + digit, out + u, sc);
    u += on_bucket(out + u, b - a);
  }
  return u;
}

/// True if the m sorted keys at k hold no two equal keys.
inline bool AllDistinct(const uint64_t* k, size_t m) {
  uint64_t equal = 0;
  for (size_t i = 1; i < m; ++i) equal |= static_cast<uint64_t>(k[i] == k[i - 1]);
  return equal == 0;
}

/// Collapses the runs of equal keys among the m sorted keys at k in place: calls
/// on_key(key, times) for each distinct key in order and returns how many there are.
template <typename OnKey>
size_t CollapseRuns(uint64_t* k, size_t m, OnKey&& on_key) {
  size_t u = 0;
  for (size_t i = 0; i < m;) {
    const uint64_t fp = k[i];
    size_t j = i + 1;
    while (j < m && k[j] == fp) ++j;
    k[u++] = fp;
    on_key(fp, static_cast<uint64_t>(j - i));
    i = j;
  }
  return u;
}

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_RADIX_SORT_H_
