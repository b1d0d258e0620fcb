// Unicode normalization for the text rules, one cluster at a time.
//
// A cluster is a code point whose normalization begins with a starter that never
// composes with what precedes it (canonical combining class 0, General_Category not
// M*, not a Hangul medial/final jamo), followed by every code point that does not
// begin a cluster (combining marks, Hangul V/T jamo, characters that normalize to
// nothing such as U+00AD SOFT HYPHEN). Canonical reordering and composition (UAX #15)
// never cross such a boundary, so normalizing cluster by cluster gives exactly the
// result of normalizing the whole string, and every normalized code point maps back to
// the original bytes of its cluster. tests/unit/normalize checks this against
// NormalizationTest.txt and utf8proc's whole-string functions.
//
// Forms (utf8proc 2.8 option sets):
//   kNfkc         STABLE|COMPOSE|COMPAT                   = utf8proc_NFKC
//   kNfkcCasefold STABLE|COMPOSE|COMPAT|CASEFOLD|IGNORE   = utf8proc_NFKC_Casefold
// With strip_accents, nonspacing marks (Mn) are dropped after the full decomposition
// and before recomposition.
//
// Thread safety: a Normalizer holds scratch buffers; use one per thread. The free
// functions are reentrant.
#ifndef TIDEMARK_SRC_NORMALIZE_NORMALIZER_H_
#define TIDEMARK_SRC_NORMALIZE_NORMALIZER_H_

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

namespace tidemark::normalize {

enum class NormalForm { kNfkc, kNfkcCasefold };

class Normalizer {
 public:
  Normalizer(NormalForm form, bool strip_accents);
  Normalizer(const Normalizer&) = delete;
  Normalizer& operator=(const Normalizer&) = delete;

  /// Forgets the look-ahead kept between NextCluster calls. Call before starting on
  /// a new text.
  void Reset() { pending_valid_ = false; }

  /// Normalizes the cluster that starts at byte `pos` of `text` and returns the byte
  /// offset where it ends (> pos). The normalized code points are then in
  /// cluster()[0 .. cluster_size()). REQUIRES: pos < text.size(), pos is the start of a
  /// cluster (0, or a value returned by the previous call, or the start of an ASCII
  /// character); calls for one text go left to right, with Reset() before a new text.
  size_t NextCluster(std::string_view text, size_t pos);

  const int32_t* cluster() const { return buf_.data(); }
  size_t cluster_size() const { return len_; }
  /// Ill-formed UTF-8 bytes (replaced by U+FFFD) in the last cluster.
  uint32_t cluster_invalid_bytes() const { return invalid_; }

  /// Appends the normalization of the whole of `text` to *out; returns the number of
  /// ill-formed bytes that became U+FFFD.
  uint64_t AppendNormalized(std::string_view text, std::string* out);

 private:
  // Appends the full decomposition of cp to buf_[len_..]; returns whether it starts a
  // cluster.
  bool AppendDecomposition(char32_t cp);
  void Finish();  // strip, reorder, compose buf_[0..len_)

  const int options_;  // utf8proc_option_t
  const bool casefold_ignore_;
  const bool strip_accents_;
  std::vector<int32_t> buf_;  // current cluster
  size_t len_ = 0;
  uint32_t invalid_ = 0;
  std::vector<int32_t> pending_;  // decomposition of the code point after the cluster
  std::vector<std::pair<uint8_t, int32_t>> sort_scratch_;
  size_t pending_pos_ = 0;
  uint32_t pending_len_ = 0;  // bytes of that code point
  bool pending_invalid_ = false;
  bool pending_valid_ = false;
};

/// NFKC (UAX #15) of a whole string, computed cluster by cluster. Ill-formed UTF-8
/// becomes U+FFFD.
std::string NormalizeNfkc(std::string_view text);

/// NFKC_Casefold (utf8proc_NFKC_Casefold semantics), cluster by cluster; with
/// strip_accents also drops Mn marks. Ill-formed UTF-8 becomes U+FFFD.
std::string NormalizeNfkcCasefold(std::string_view text, bool strip_accents);

/// Full case folding only (CaseFolding.txt status C + F), no normalization.
std::string CaseFold(std::string_view text);

/// Appends cp as UTF-8 to *out.
void AppendUtf8(char32_t cp, std::string* out);

}  // namespace tidemark::normalize

#endif  // TIDEMARK_SRC_NORMALIZE_NORMALIZER_H_
