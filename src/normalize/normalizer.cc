#include "normalize/normalizer.h"

#include <utf8proc.h>

#include <algorithm>
#include <cassert>

#include "normalize/char_class.h"
#include "normalize/utf8.h"

namespace tidemark::normalize {
namespace {

constexpr int kNfkcOptions = UTF8PROC_STABLE | UTF8PROC_COMPOSE | UTF8PROC_COMPAT;
constexpr int kCasefoldIgnoreOptions = UTF8PROC_CASEFOLD | UTF8PROC_IGNORE;

// Hangul syllables decompose algorithmically (Unicode 15.0, section 3.12).
constexpr char32_t kHangulFirst = 0xAC00;
constexpr char32_t kHangulLast = 0xD7A3;

// Room kept free before each decomposition; the longest single decomposition in
// Unicode 15.0 is 18 code points (U+FDFA), case folding included.
constexpr size_t kDecompSlack = 32;

inline bool IsMark(const utf8proc_property_t* p) {
  return p->category == UTF8PROC_CATEGORY_MN || p->category == UTF8PROC_CATEGORY_MC ||
         p->category == UTF8PROC_CATEGORY_ME;
}

// A decomposition starting with `first` begins a cluster (see normalizer.h).
inline bool StartsCluster(int32_t first, const utf8proc_property_t* p) {
  return p->combining_class == 0 && !IsMark(p) &&
         !IsHangulMedialOrFinal(static_cast<char32_t>(first));
}

inline uint8_t Ccc(int32_t cp) {
  return static_cast<uint8_t>(utf8proc_get_property(cp)->combining_class);
}

}  // namespace

Normalizer::Normalizer(NormalForm form, bool strip_accents)
    : options_(form == NormalForm::kNfkc ? kNfkcOptions : kNfkcOptions | kCasefoldIgnoreOptions),
      casefold_ignore_(form == NormalForm::kNfkcCasefold),
      strip_accents_(strip_accents),
      buf_(256),
      pending_(kDecompSlack) {}

bool Normalizer::AppendDecomposition(char32_t cp) {
  if (buf_.size() < len_ + kDecompSlack) buf_.resize(2 * buf_.size() + kDecompSlack);
  const auto ucp = static_cast<utf8proc_int32_t>(cp);
  const utf8proc_property_t* p = utf8proc_get_property(ucp);
  // Fast case: the code point is its own normalization.
  if (p->decomp_seqindex == UINT16_MAX && (cp < kHangulFirst || cp > kHangulLast) &&
      (!casefold_ignore_ || (p->casefold_seqindex == UINT16_MAX && !p->ignorable))) {
    buf_[len_++] = ucp;
    return StartsCluster(ucp, p);
  }
  int boundclass = 0;
  utf8proc_ssize_t n;
  for (;;) {
    const auto room = static_cast<utf8proc_ssize_t>(buf_.size() - len_);
    n = utf8proc_decompose_char(ucp, buf_.data() + len_, room,
                                static_cast<utf8proc_option_t>(options_), &boundclass);
    assert(n >= 0);  // only fails for values outside 0..10FFFF, which never reach here
    if (n <= room) break;
    buf_.resize(len_ + static_cast<size_t>(n) + kDecompSlack);
  }
  if (n == 0) return false;  // default-ignorable: joins the cluster before it
  const int32_t first = buf_[len_];
  len_ += static_cast<size_t>(n);
  return StartsCluster(first, utf8proc_get_property(first));
}

size_t Normalizer::NextCluster(std::string_view text, size_t pos) {
  assert(pos < text.size());
  const auto* begin = reinterpret_cast<const unsigned char*>(text.data());
  const auto* end = begin + text.size();
  len_ = 0;
  invalid_ = 0;
  if (pending_valid_ && pending_pos_ == pos) {
    if (buf_.size() < pending_.size()) buf_.resize(pending_.size() + kDecompSlack);
    std::copy(pending_.begin(), pending_.end(), buf_.begin());
    len_ = pending_.size();
    pos += pending_len_;
    if (pending_invalid_) invalid_ += pending_len_;
  } else {
    const Decoded d = DecodeUtf8(begin + pos, end);
    AppendDecomposition(d.cp);
    pos += d.len;
    if (d.invalid) invalid_ += d.len;
  }
  pending_valid_ = false;
  while (pos < text.size() && begin[pos] >= 0x80) {  // ASCII always starts a cluster
    const Decoded d = DecodeUtf8(begin + pos, end);
    const size_t mark = len_;
    if (AppendDecomposition(d.cp)) {
      // Keep this code point's decomposition for the next call.
      pending_.assign(buf_.begin() + static_cast<ptrdiff_t>(mark),
                      buf_.begin() + static_cast<ptrdiff_t>(len_));
      len_ = mark;
      pending_pos_ = pos;
      pending_len_ = d.len;
      pending_invalid_ = d.invalid;
      pending_valid_ = true;
      break;
    }
    pos += d.len;
    if (d.invalid) invalid_ += d.len;
  }
  Finish();
  return pos;
}

void Normalizer::Finish() {
  int32_t* b = buf_.data();
  if (strip_accents_) {
    size_t w = 0;
    for (size_t r = 0; r < len_; ++r) {
      if (utf8proc_category(b[r]) != UTF8PROC_CATEGORY_MN) b[w++] = b[r];
    }
    len_ = w;
  }
  if (len_ < 2) return;
  // Canonical ordering (UAX #15 / Unicode 15.0 section 3.11): a stable sort of each
  // run of non-starters by combining class. Short runs by insertion, long ones (only
  // in adversarial input) by std::stable_sort, so the cost stays O(n log n).
  size_t i = 0;
  while (i < len_) {
    if (Ccc(b[i]) == 0) {
      ++i;
      continue;
    }
    size_t j = i + 1;
    while (j < len_ && Ccc(b[j]) != 0) ++j;
    if (j - i <= 16) {
      for (size_t k = i + 1; k < j; ++k) {
        const int32_t v = b[k];
        const uint8_t c = Ccc(v);
        size_t m = k;
        while (m > i && Ccc(b[m - 1]) > c) {
          b[m] = b[m - 1];
          --m;
        }
        b[m] = v;
      }
    } else {
      sort_scratch_.clear();
      for (size_t k = i; k < j; ++k) sort_scratch_.emplace_back(Ccc(b[k]), b[k]);
      std::stable_sort(sort_scratch_.begin(), sort_scratch_.end(),
                       [](const auto& x, const auto& y) { return x.first < y.first; });
      for (size_t k = i; k < j; ++k) b[k] = sort_scratch_[k - i].second;
    }
    i = j;
  }
  // Canonical composition; utf8proc_normalize_utf32 only composes for these options.
  len_ = static_cast<size_t>(utf8proc_normalize_utf32(
      b, static_cast<utf8proc_ssize_t>(len_), static_cast<utf8proc_option_t>(options_)));
}

uint64_t Normalizer::AppendNormalized(std::string_view text, std::string* out) {
  Reset();
  uint64_t invalid = 0;
  size_t pos = 0;
  while (pos < text.size()) {
    pos = NextCluster(text, pos);
    invalid += invalid_;
    for (size_t k = 0; k < len_; ++k) AppendUtf8(static_cast<char32_t>(buf_[k]), out);
  }
  Reset();
  return invalid;
}

void AppendUtf8(char32_t cp, std::string* out) {
  char tmp[4];
  out->append(tmp, EncodeUtf8(cp, tmp));
}

std::string NormalizeNfkc(std::string_view text) {
  Normalizer n(NormalForm::kNfkc, false);
  std::string out;
  n.AppendNormalized(text, &out);
  return out;
}

std::string NormalizeNfkcCasefold(std::string_view text, bool strip_accents) {
  Normalizer n(NormalForm::kNfkcCasefold, strip_accents);
  std::string out;
  n.AppendNormalized(text, &out);
  return out;
}

std::string CaseFold(std::string_view text) {
  const auto* p = reinterpret_cast<const unsigned char*>(text.data());
  const auto* end = p + text.size();
  std::string out;
  int32_t tmp[kDecompSlack];
  while (p < end) {
    const Decoded d = DecodeUtf8(p, end);
    p += d.len;
    int boundclass = 0;
    // CASEFOLD alone: the full case folding mapping, no decomposition.
    const utf8proc_ssize_t n = utf8proc_decompose_char(static_cast<utf8proc_int32_t>(d.cp), tmp,
                                                       kDecompSlack, UTF8PROC_CASEFOLD, &boundclass);
    assert(n >= 1 && n <= static_cast<utf8proc_ssize_t>(kDecompSlack));
    for (utf8proc_ssize_t k = 0; k < n; ++k) AppendUtf8(static_cast<char32_t>(tmp[k]), &out);
  }
  return out;
}

}  // namespace tidemark::normalize
