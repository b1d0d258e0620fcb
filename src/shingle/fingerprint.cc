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

void ComputeFingerprints(std::span<const Token> tokens, const TextOptions& options,
                         std::vector<uint64_t>* out) {
  const size_t n = static_cast<size_t>(options.ngram);
  assert(options.ngram >= TextOptions::kMinNgram && options.ngram <= TextOptions::kMaxNgram);
  out->clear();
  if (tokens.size() < n) return;
  const size_t count = tokens.size() - n + 1;
  out->resize(count);
  uint64_t* const fp = out->data();
  const uint64_t seed = options.seed;
  constexpr uint64_t kB = shingle::kNgramBase;
  // The polynomial rolls (Karp and Rabin 1987): p(i+1) = (p(i) - h(i) B^(n-1)) B +
  // h(i+n), mod 2^64: two multiplications a window, where the XXH3 of 8n bytes that
  // text rules 1 used took about 11 ns (docs/text_rules.md).
  uint64_t top = 1;  // B^(n-1)
  for (size_t j = 1; j < n; ++j) top *= kB;
  uint64_t p = 0;
  for (size_t j = 0; j < n; ++j) p = p * kB + tokens[j].hash;
  fp[0] = shingle::FinalizeNgram(p, seed);
  for (size_t i = 1; i < count; ++i) {
    p = (p - tokens[i - 1].hash * top) * kB + tokens[i + n - 1].hash;
    fp[i] = shingle::FinalizeNgram(p, seed);
  }
}

size_t FingerprintsInPlace(std::span<uint64_t> hashes, const TextOptions& options) {
  const size_t n = static_cast<size_t>(options.ngram);
  assert(options.ngram >= TextOptions::kMinNgram && options.ngram <= TextOptions::kMaxNgram);
  if (hashes.size() < n) return 0;
  const size_t count = hashes.size() - n + 1;
  uint64_t* const h = hashes.data();
  const uint64_t seed = options.seed;
  constexpr uint64_t kB = shingle::kNgramBase;
  uint64_t top = 1;  // B^(n-1)
  for (size_t j = 1; j < n; ++j) top *= kB;
  uint64_t p = 0;
  for (size_t j = 0; j < n; ++j) p = p * kB + h[j];
  // Fingerprint i goes over hash i, which is read (to roll it out) just before.
  for (size_t i = 0; i + 1 < count; ++i) {
    const uint64_t out = h[i];
    h[i] = shingle::FinalizeNgram(p, seed);
    p = (p - out * top) * kB + h[i + n];
  }
  h[count - 1] = shingle::FinalizeNgram(p, seed);
  return count;
}

}  // namespace tidemark
