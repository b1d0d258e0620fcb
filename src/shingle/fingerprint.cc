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
  // The token hashes are laid out in *out itself; fingerprint i reads hashes
  // i .. i+n-1 and is written over hash i, which no later fingerprint reads.
  out->resize(tokens.size());
  uint64_t* h = out->data();
  for (size_t i = 0; i < tokens.size(); ++i) h[i] = tokens[i].hash;
  const size_t count = tokens.size() - n + 1;
  for (size_t i = 0; i < count; ++i) h[i] = shingle::HashNgram(h + i, options.ngram, options.seed);
  out->resize(count);
}

}  // namespace tidemark
