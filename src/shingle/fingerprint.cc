// HashToken, FingerprintNgram, ComputeFingerprints (include/tidemark/tokenizer.h).
#include <cassert>

#include "shingle/token_hash.h"
#include "tidemark/tokenizer.h"

namespace tidemark {

uint64_t HashToken(std::string_view normalized_token, uint64_t seed) {
  return shingle::HashBytes(normalized_token.data(), normalized_token.size(), seed);
}

uint64_t FingerprintNgram(const uint64_t* hashes, int n, uint64_t seed) {
  assert(n >= TextOptions::kMinNgram && n <= TextOptions::kMaxNgram);
  return shingle::HashNgram(hashes, n, seed);
}

namespace {

// The fingerprints of the `size` token hashes hash_at(0 .. size): put(i, fp) for each
// of the size - n + 1 windows, in order; returns their number. The polynomial rolls
// (Karp and Rabin 1987): p(i+1) = (p(i) - h(i) B^(n-1)) B + h(i+n), mod 2^64, two
// multiplications a window, where the XXH3 of 8n bytes that text rules 1 used took
// about 11 ns (docs/text_rules.md). put(i, ...) comes after the last read of hash i,
// so the fingerprints may overwrite the hashes they come from.
template <typename HashAt, typename Put>
size_t RollFingerprints(size_t size, const TextOptions& options, HashAt hash_at, Put put) {
  const size_t n = static_cast<size_t>(options.ngram);
  assert(options.ngram >= TextOptions::kMinNgram && options.ngram <= TextOptions::kMaxNgram);
  if (size < n) return 0;
  const size_t count = size - n + 1;
  const uint64_t seed = options.seed;
  constexpr uint64_t kB = shingle::kNgramBase;
  uint64_t top = 1;  // B^(n-1)
  for (size_t j = 1; j < n; ++j) top *= kB;
  uint64_t p = 0;
  for (size_t j = 0; j < n; ++j) p = p * kB + hash_at(j);
  for (size_t i = 0; i + 1 < count; ++i) {
    const uint64_t fp = shingle::FinalizeNgram(p, seed);
    p = (p - hash_at(i) * top) * kB + hash_at(i + n);
    put(i, fp);
  }
  put(count - 1, shingle::FinalizeNgram(p, seed));
  return count;
}

}  // namespace

void ComputeFingerprints(std::span<const Token> tokens, const TextOptions& options,
                         std::vector<uint64_t>* out) {
  out->clear();
  if (tokens.size() < static_cast<size_t>(options.ngram)) return;
  out->resize(tokens.size() - static_cast<size_t>(options.ngram) + 1);
  uint64_t* const fp = out->data();
  RollFingerprints(
      tokens.size(), options, [&](size_t i) { return tokens[i].hash; },
      [&](size_t i, uint64_t v) { fp[i] = v; });
}

size_t FingerprintsInPlace(std::span<uint64_t> hashes, const TextOptions& options) {
  uint64_t* const h = hashes.data();
  return RollFingerprints(
      hashes.size(), options, [&](size_t i) { return h[i]; },
      [&](size_t i, uint64_t v) { h[i] = v; });
}

}  // namespace tidemark
