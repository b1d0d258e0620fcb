// HashToken, FingerprintNgram, ComputeFingerprints (include/tidemark/tokenizer.h).
#include <cassert>

#include "shingle/token_hash.h"
#include "tidemark/tokenizer.h"

namespace tidemark {
namespace {

template <int kN>
[[gnu::flatten, gnu::noinline]] void FingerprintWindows(uint64_t* h, size_t count, uint64_t seed) {
  for (size_t i = 0; i < count; ++i) h[i] = shingle::HashNgram(h + i, kN, seed);
}

template <int kN>
[[gnu::flatten, gnu::noinline]] void FingerprintWindowsSeed0(uint64_t* h, size_t count) {
  for (size_t i = 0; i < count; ++i) h[i] = shingle::HashNgram(h + i, kN, 0);
}

}  // namespace

uint64_t HashToken(std::string_view normalized_token, uint64_t seed) {
  return shingle::HashBytes(normalized_token.data(), normalized_token.size(), seed);
}

uint64_t FingerprintNgram(const uint64_t* hashes, int n, uint64_t seed) {
  assert(n >= TextOptions::kMinNgram && n <= TextOptions::kMaxNgram);
  return shingle::HashNgram(hashes, n, seed);
}

[[gnu::flatten]] void ComputeFingerprints(std::span<const Token> tokens, const TextOptions& options,
                         std::vector<uint64_t>* out) {
  const size_t n = static_cast<size_t>(options.ngram);
  assert(options.ngram >= TextOptions::kMinNgram && options.ngram <= TextOptions::kMaxNgram);
  out->clear();
  if (tokens.size() < n) return;
  // The token hashes are laid out in *out itself; fingerprint i reads hashes
  // i .. i+n-1 and is written over hash i, which no later fingerprint reads.
  out->resize(tokens.size());
  uint64_t* h = out->data();
  for (size_t i = 0; i < tokens.size(); ++i) h[i] = tokens[i].hash;
  const size_t count = tokens.size() - n + 1;
  // A compile-time n lets the compiler drop XXH3's length dispatch; 13 is the default
  // and 8 the other published choice (docs/text_rules.md).
  // A compile-time n (and seed 0, the default) lets the compiler drop XXH3's length
  // dispatch and fold the secret into constants; 13 is the default and 8 the other
  // published choice (docs/text_rules.md).
  const uint64_t seed = options.seed;
  switch (options.ngram) {
    case 13:
      seed == 0 ? FingerprintWindowsSeed0<13>(h, count) : FingerprintWindows<13>(h, count, seed);
      break;
    case 8:
      seed == 0 ? FingerprintWindowsSeed0<8>(h, count) : FingerprintWindows<8>(h, count, seed);
      break;
    default: {
      const int n_local = options.ngram;  // locals: stores through h cannot change them
      for (size_t i = 0; i < count; ++i) h[i] = shingle::HashNgram(h + i, n_local, seed);
    }
  }
  out->resize(count);
}

}  // namespace tidemark
