// The token and n-gram hash functions, inlined (XXH_INLINE_ALL) so the tokenizer's
// inner loop and the fingerprint loop pay no call into libxxhash.
//
// Token hash = XXH3_64bits_withSeed(normalized UTF-8, seed); n-gram fingerprint =
// XXH3_64bits_withSeed over the n token hashes, each as 8 little-endian bytes
// (xxHash 0.8.1, XXH3 64-bit; values checked against xxhsum and the upstream
// sanity vectors in tests/unit/shingle).
//
// Thread safety: pure inline functions.
#ifndef TIDEMARK_SRC_SHINGLE_TOKEN_HASH_H_
#define TIDEMARK_SRC_SHINGLE_TOKEN_HASH_H_

#include <bit>
#include <cstddef>
#include <cstdint>
#include <cstring>

#ifndef XXH_INLINE_ALL
#define XXH_INLINE_ALL
#endif
#include <xxhash.h>

namespace tidemark::shingle {

inline uint64_t HashBytes(const void* data, size_t size, uint64_t seed) {
  return XXH3_64bits_withSeed(data, size, seed);
}

/// REQUIRES: 1 <= n <= 64.
inline uint64_t HashNgram(const uint64_t* hashes, int n, uint64_t seed) {
  if constexpr (std::endian::native == std::endian::little) {
    return XXH3_64bits_withSeed(hashes, static_cast<size_t>(n) * 8, seed);
  } else {
    uint64_t le[64];
    for (int i = 0; i < n; ++i) le[i] = __builtin_bswap64(hashes[i]);
    return XXH3_64bits_withSeed(le, static_cast<size_t>(n) * 8, seed);
  }
}

}  // namespace tidemark::shingle

#endif  // TIDEMARK_SRC_SHINGLE_TOKEN_HASH_H_
