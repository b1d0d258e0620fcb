// Radix sorts of 64-bit fingerprints for the index build.
//
// RadixSort64 is a general in-place MSD sort (American flag sort: McIlroy, Bostic and
// McIlroy 1993). The build itself uses the two-step form: PartitionByTopBits splits a
// worker's buffer by shard in place (one American-flag pass, no scratch memory), and
// SortShard then sorts one shard's keys, gathered from several buffers, with a few LSD
// passes over the top bits below the shard bits followed by a fix-up of the (for
// hashed keys, tiny) groups that share those bits.
//
// Thread safety: pure functions on caller-owned memory.
#ifndef TIDEMARK_SRC_INDEX_RADIX_SORT_H_
#define TIDEMARK_SRC_INDEX_RADIX_SORT_H_

#include <cstddef>
#include <cstdint>
#include <span>

namespace tidemark {

/// Sorts keys[0..n) ascending.
void RadixSort64(uint64_t* keys, size_t n);

/// Reorders keys[0..n) in place so that keys are grouped by their top `bits` bits
/// (0..16) in ascending order of those bits; cuts[d] is where group d begins and
/// cuts[2^bits] == n. REQUIRES: cuts has 2^bits + 1 entries.
void PartitionByTopBits(uint64_t* keys, size_t n, uint32_t bits, size_t* cuts);

/// Writes the keys of all `inputs` to out[0..n) in ascending order, n being the sum
/// of the inputs' sizes. All keys share their top `fixed_bits` bits (the shard).
/// REQUIRES: out and scratch hold n entries each and overlap neither each other nor
/// any input.
void SortShard(std::span<const std::span<const uint64_t>> inputs, uint32_t fixed_bits,
               uint64_t* out, uint64_t* scratch);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_RADIX_SORT_H_
