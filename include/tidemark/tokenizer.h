// Tokenizer and n-gram fingerprints: the one definition of what is matched.
//
// Text rules version TextOptions::kRulesVersion (docs/text_rules.md):
//   * Unicode NFKC_Casefold (UAX #15 + the NFKC_CF property of
//     DerivedNormalizationProps.txt) via utf8proc, with an ASCII fast path that
//     gives byte-identical results; invalid UTF-8 bytes become U+FFFD and are counted.
//   * Letters (L*), marks (M*) and digits/numbers (N*) form words; everything else
//     (punctuation, symbols, separators, controls) separates words.
//   * Each Han, Hiragana, Katakana or Hangul character is a token of its own.
//   * Optional accent stripping (TextOptions::strip_accents) removes nonspacing marks
//     after canonical decomposition.
//   * Every token keeps the byte range [begin, end) of the ORIGINAL text it came from.
//   * Token hash = XXH3-64(normalized token UTF-8, seed); n-gram fingerprint = the
//     MurmurHash3 finalizer of a polynomial of the n token hashes mod 2^64, seed.
//
// Thread safety: a Tokenizer keeps scratch buffers; use one per thread. The free
// functions are pure.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_TOKENIZER_H_
#define TIDEMARK_INCLUDE_TIDEMARK_TOKENIZER_H_

#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "tidemark/text_options.h"

namespace tidemark {

/// One token: where it came from in the original text, and its hash.
struct Token {
  uint32_t begin = 0;  ///< byte offset of the first original byte
  uint32_t end = 0;    ///< one past the last original byte
  uint64_t hash = 0;   ///< XXH3-64 of the normalized token, TextOptions::seed
};

class Tokenizer {
 public:
  /// REQUIRES: options.Validate().ok().
  explicit Tokenizer(const TextOptions& options);
  ~Tokenizer();
  Tokenizer(const Tokenizer&) = delete;
  Tokenizer& operator=(const Tokenizer&) = delete;

  /// Replaces *tokens with the tokens of `text`. REQUIRES: text.size() < 4 GiB.
  void Tokenize(std::string_view text, std::vector<Token>* tokens);

  /// As Tokenize, and also fills *normalized with each token's normalized UTF-8
  /// (for display: `tidemark tokens`).
  void TokenizeWithText(std::string_view text, std::vector<Token>* tokens,
                        std::vector<std::string>* normalized);

  /// The token hashes of `text` alone (what an index build needs: no spans), in a
  /// buffer of the tokenizer's, valid until its next call. The caller may overwrite
  /// them (FingerprintsInPlace). REQUIRES: text.size() < 4 GiB.
  std::span<uint64_t> TokenizeHashes(std::string_view text);

  /// Invalid UTF-8 bytes replaced by U+FFFD since construction.
  uint64_t invalid_utf8_bytes() const;

  const TextOptions& options() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// XXH3-64 of a normalized token.
uint64_t HashToken(std::string_view normalized_token, uint64_t seed);

/// Fingerprint of the n-gram whose token hashes are hashes[0..n): the MurmurHash3
/// finalizer of (sum of hashes[j] * B^(n-1-j) mod 2^64) ^ seed, B = 0x9E3779B97F4A7C15
/// (docs/text_rules.md "Hashes and fingerprints").
uint64_t FingerprintNgram(const uint64_t* hashes, int n, uint64_t seed);

/// Replaces *out with the fingerprint of every n-gram: (*out)[i] covers
/// tokens[i .. i+n). Empty when tokens.size() < n.
void ComputeFingerprints(std::span<const Token> tokens, const TextOptions& options,
                         std::vector<uint64_t>* out);

/// Overwrites hashes[i] with the fingerprint of the n-gram of hashes[i .. i+n) for every
/// i, and returns how many there are (0 when hashes.size() < n): the same values as
/// ComputeFingerprints, without a second buffer.
size_t FingerprintsInPlace(std::span<uint64_t> hashes, const TextOptions& options);

/// Normalizes a whole string with the text rules (no tokenization): NFKC_Casefold,
/// plus accent stripping if asked. For tests and display.
std::string NormalizeText(std::string_view text, const TextOptions& options);

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_TOKENIZER_H_
