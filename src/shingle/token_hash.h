// The token and n-gram hash functions of text rules version 2 (docs/text_rules.md),
// inlined (XXH_INLINE_ALL) so the tokenizer's inner loop pays no call into libxxhash.
//
// Token hash = XXH3_64bits_withSeed(normalized UTF-8, seed) (xxHash 0.8.1; values
// checked against xxhsum and the upstream sanity vectors in tests/unit/shingle).
// n-gram fingerprint = FinalizeNgram(p, seed), p = the polynomial of the n token
// hashes in base kNgramBase mod 2^64 (checked against an independent Python
// computation in tests/reference/index).
//
// Thread safety: pure inline functions.
#ifndef TIDEMARK_SRC_SHINGLE_TOKEN_HASH_H_
#define TIDEMARK_SRC_SHINGLE_TOKEN_HASH_H_

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

/// The base of the n-gram polynomial: the odd golden-ratio constant 2^64 / phi, as in
/// Knuth's multiplicative hashing (common practice).
inline constexpr uint64_t kNgramBase = 0x9E3779B97F4A7C15ull;

/// The fingerprint of an n-gram from its polynomial value p (see HashNgram): the
/// MurmurHash3 64-bit finalizer (Appleby 2011, public domain; a bijection) of p ^ seed.
inline uint64_t FinalizeNgram(uint64_t p, uint64_t seed) {
  uint64_t k = p ^ seed;
  k ^= k >> 33;
  k *= 0xff51afd7ed558ccdull;
  k ^= k >> 33;
  k *= 0xc4ceb9fe1a85ec53ull;
  k ^= k >> 33;
  return k;
}

/// Fingerprint of the n token hashes h[0..n): FinalizeNgram(sum of h[j] * B^(n-1-j)
/// mod 2^64, seed), B = kNgramBase. REQUIRES: 1 <= n <= 64.
inline uint64_t HashNgram(const uint64_t* hashes, int n, uint64_t seed) {
  uint64_t p = 0;
  for (int j = 0; j < n; ++j) p = p * kNgramBase + hashes[j];
  return FinalizeNgram(p, seed);
}

}  // namespace tidemark::shingle

#endif  // TIDEMARK_SRC_SHINGLE_TOKEN_HASH_H_
