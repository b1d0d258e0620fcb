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

namespace tidemark {

/// Writes the keys of all `inputs` to out[0..n) in ascending order, n being the sum
/// of the inputs' sizes. All keys share their top `fixed_bits` bits (the shard).
/// REQUIRES: out and scratch hold n entries each and overlap neither each other nor
/// any input.
void SortShard(std::span<const std::span<const uint64_t>> inputs, uint32_t fixed_bits,
               uint64_t* out, uint64_t* scratch);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_RADIX_SORT_H_
