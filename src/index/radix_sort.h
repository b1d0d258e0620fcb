// In-place MSD radix sort of 64-bit keys (American flag sort: McIlroy, Bostic and
// McIlroy 1993), used to sort a full fingerprint buffer before it is spilled. It needs
// no scratch buffer, so the whole memory budget can hold keys.
//
// Thread safety: pure function on caller-owned memory.
#ifndef TIDEMARK_SRC_INDEX_RADIX_SORT_H_
#define TIDEMARK_SRC_INDEX_RADIX_SORT_H_

#include <cstddef>
#include <cstdint>

namespace tidemark {

/// Sorts keys[0..n) ascending.
void RadixSort64(uint64_t* keys, size_t n);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_RADIX_SORT_H_
