// TextOptions: every parameter that changes which fingerprints a text produces.
//
// One definition serves the corpus and the benchmarks. The stable textual form
// (ToString) is written into every index manifest; probing an index with options
// whose text form differs is a kMismatch error, never a silent mismatch.
//
// Thread safety: a plain value.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_TEXT_OPTIONS_H_
#define TIDEMARK_INCLUDE_TIDEMARK_TEXT_OPTIONS_H_

#include <cstdint>
#include <string>
#include <string_view>

#include "tidemark/status.h"

namespace tidemark {

struct TextOptions {
  /// Version of the text rules (normalization, tokenization, hashing). Bump it
  /// whenever any rule changes the tokens or fingerprints of some input; see
  /// docs/text_rules.md.
  static constexpr int kRulesVersion = 2;
  static constexpr int kMinNgram = 1;
  static constexpr int kMaxNgram = 64;

  int ngram = 13;              ///< word n-gram length, kMinNgram..kMaxNgram
  uint64_t seed = 0;           ///< seed of the token hashes and n-gram fingerprints
  bool strip_accents = false;  ///< drop combining marks after canonical decomposition

  /// OK or InvalidArgument naming the bad field.
  Status Validate() const;

  /// Stable text form, e.g. "rules=2 n=13 seed=0 accents=keep". Part of the index
  /// identity: never change it for existing versions.
  std::string ToString() const;

  /// Inverse of ToString (fields in any order; unknown keys are an error).
  static Result<TextOptions> Parse(std::string_view text);

  bool operator==(const TextOptions&) const = default;
};

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_TEXT_OPTIONS_H_
