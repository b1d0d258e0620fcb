// Tokenizer (include/tidemark/tokenizer.h): text -> tokens with original byte spans
// and hashes, text rules version 2 (docs/text_rules.md).
//
// ASCII runs take a table-driven fast path (letters lower-cased, digits kept, every
// other ASCII byte separates), which is exactly what NFKC_Casefold and the category
// rules give for ASCII. Everything else goes cluster by cluster through
// normalize::Normalizer. An ASCII character directly before a non-ASCII one can form
// a cluster with it (e + U+0301 -> é), so the fast path takes back its last
// character in that case and the cluster path handles it.
#include <cassert>
#ifdef __SSE2__
#include <emmintrin.h>
#endif
#include <limits>

#include "normalize/char_class.h"
#include "normalize/normalizer.h"
#include "normalize/utf8.h"
#include "shingle/token_hash.h"
#include "shingle/tokenizer_testing.h"
#include "tidemark/tokenizer.h"

namespace tidemark {
namespace {

using normalize::CharClass;

enum AsciiKind : uint8_t { kSep = 0, kWordByte = 1, kHigh = 2 };

struct AsciiTables {
  uint8_t kind[256];
  char lower[256];
  constexpr AsciiTables() : kind(), lower() {
    for (int b = 0; b < 256; ++b) {
      const bool alpha = (b >= 'a' && b <= 'z') || (b >= 'A' && b <= 'Z');
      const bool digit = b >= '0' && b <= '9';
      kind[b] = b >= 0x80 ? kHigh : (alpha || digit) ? kWordByte : kSep;
      lower[b] = static_cast<char>((b >= 'A' && b <= 'Z') ? b + 32 : b);
    }
  }
};
constexpr AsciiTables kAscii;

#ifdef __SSE2__
// The 16 bytes of v lower-cased (A-Z only), and in *word_mask bit k set iff byte k is
// an ASCII letter or digit. Unsigned range checks as signed compares after a shift by
// 0x80 (SSE2 has only signed byte compares).
inline __m128i LowerAsciiWordBytes(__m128i v, uint32_t* word_mask) {
  const __m128i upper = _mm_cmplt_epi8(_mm_add_epi8(v, _mm_set1_epi8(static_cast<char>(0x80 - 'A'))),
                                       _mm_set1_epi8(static_cast<char>(0x80 + 26)));
  const __m128i lower_v = _mm_or_si128(v, _mm_and_si128(upper, _mm_set1_epi8(0x20)));
  const __m128i letter = _mm_cmplt_epi8(
      _mm_add_epi8(lower_v, _mm_set1_epi8(static_cast<char>(0x80 - 'a'))),
      _mm_set1_epi8(static_cast<char>(0x80 + 26)));
  const __m128i digit = _mm_cmplt_epi8(_mm_add_epi8(v, _mm_set1_epi8(static_cast<char>(0x80 - '0'))),
                                       _mm_set1_epi8(static_cast<char>(0x80 + 10)));
  *word_mask = static_cast<uint32_t>(_mm_movemask_epi8(_mm_or_si128(letter, digit)));
  return lower_v;
}
#endif

// The code point of the 3-byte UTF-8 character at p if it is one of the common
// ideographs, kana or Hangul syllables that NFKC_Casefold leaves unchanged and that
// begin a cluster (shingle::IsStableIdeograph); 0 otherwise.
inline char32_t DecodeStableIdeograph(const unsigned char* p, size_t avail) {
  if (avail < 3 || p[0] < 0xE3 || p[0] > 0xED) return 0;
  if ((p[1] & 0xC0) != 0x80 || (p[2] & 0xC0) != 0x80) return 0;
  const char32_t cp = (static_cast<char32_t>(p[0] & 0x0F) << 12) |
                      (static_cast<char32_t>(p[1] & 0x3F) << 6) | (p[2] & 0x3F);
  return shingle::IsStableIdeograph(cp) ? cp : 0;
}

// True if the character at p certainly starts a new cluster: end of text, ASCII, or a
// stable ideograph. (False means "look closer", not "joins".)
inline bool NextStartsCluster(const unsigned char* p, size_t avail) {
  return avail == 0 || p[0] < 0x80 || DecodeStableIdeograph(p, avail) != 0;
}

// The tokenizer proper; Tokenizer::Impl wraps it, the testing hook uses it directly.
struct TokenizerCore {
  explicit TokenizerCore(const TextOptions& o)
      : options(o),
        normalizer(normalize::NormalForm::kNfkcCasefold, o.strip_accents),
        buf(64),
        out(256),
        hashes(256) {}

  // kHashesOnly: only the token hashes, into `hashes` (tokens and normalized unused).
  template <bool kWithText, bool kAsciiFastPath = true, bool kHashesOnly = false>
  size_t Run(std::string_view text, std::vector<Token>* tokens, std::vector<std::string>* normalized);

  TextOptions options;
  normalize::Normalizer normalizer;
  uint64_t invalid_bytes = 0;
  std::vector<char> buf;   // normalized UTF-8 of the token being built
  std::vector<Token> out;  // tokens, copied to the caller's vector at the end
  std::vector<uint64_t> hashes;  // the token hashes of TokenizeHashes
};

// The loop keeps its state in locals (not in *tokens or members), so that stores
// through the char buffer, which may alias anything, do not force reloads.
// flatten: inline XXH3 (the hash of a short token is a few instructions).
template <bool kWithText, bool kAsciiFastPath, bool kHashesOnly>
[[gnu::flatten]] size_t TokenizerCore::Run(std::string_view text, std::vector<Token>* tokens,
                                           std::vector<std::string>* normalized) {
  assert(text.size() < std::numeric_limits<uint32_t>::max());
  if constexpr (kWithText) normalized->clear();
  normalizer.Reset();
  const auto* s = reinterpret_cast<const unsigned char*>(text.data());
  const size_t n = text.size();
  const uint64_t seed = options.seed;
  const bool strip_accents = options.strip_accents;
  char* b = buf.data();
  size_t cap = buf.size();
  size_t len = 0;          // bytes in b
  Token* o = out.data();
  uint64_t* ho = hashes.data();
  size_t count = 0;        // tokens in o (hashes in ho)
  size_t ocap = kHashesOnly ? hashes.size() : out.size();
  bool in_token = false;   // a token is being built in b
  bool ideograph = false;  // ... and it is a single-ideograph token
  uint32_t tb = 0, te = 0;  // its original byte span

  auto reserve = [&](size_t more) {
    if (len + more > cap) [[unlikely]] {
      buf.resize(std::max(2 * cap, len + more));
      b = buf.data();
      cap = buf.size();
    }
  };
  auto push = [&](uint32_t begin, uint32_t end, const char* p, size_t size) {
    if (count == ocap) [[unlikely]] {
      if constexpr (kHashesOnly) {
        hashes.resize(2 * ocap);
        ho = hashes.data();
      } else {
        out.resize(2 * ocap);
        o = out.data();
      }
      ocap *= 2;
    }
    if constexpr (kHashesOnly) {
      (void)begin;
      (void)end;
      ho[count++] = shingle::HashBytes(p, size, seed);
    } else {
      o[count++] = Token{begin, end, shingle::HashBytes(p, size, seed)};
    }
    if constexpr (kWithText) normalized->emplace_back(p, size);
  };
  auto emit = [&] {
    push(tb, te, b, len);
    in_token = false;
    len = 0;
  };
  auto append_cp = [&](char32_t cp) {
    reserve(4);
    len += normalize::EncodeUtf8(cp, b + len);
  };

  size_t i = 0;
  size_t fast_from = 0;  // bytes before this were handled by the cluster path
  while (i < n) {
    const uint8_t kind = kAsciiFastPath ? kAscii.kind[s[i]] : uint8_t{kHigh};
    if (kind == kSep) {
      if (in_token) emit();
      do ++i;
      while (i < n && kAscii.kind[s[i]] == kSep);
      continue;
    }
    if (kind == kWordByte) {
      if (in_token && ideograph) emit();
#ifdef __SSE2__
      if (!in_token && i + 32 <= n) {
        // The common case: ASCII words ending at an ASCII separator. A 32-byte window
        // is lower-cased and classified once; every word that ends inside it is hashed
        // straight from the lower-cased copy (English text has about five to a window),
        // then the window moves to the first word that does not end inside it.
        bool general = false;
        bool reload;
        do {
          const __m128i v0 = _mm_loadu_si128(reinterpret_cast<const __m128i*>(s + i));
          const __m128i v1 = _mm_loadu_si128(reinterpret_cast<const __m128i*>(s + i + 16));
          uint32_t wm0, wm1;
          alignas(16) char lowered[48];  // 32 used; the rest quiets -Warray-bounds in XXH3
          _mm_store_si128(reinterpret_cast<__m128i*>(lowered), LowerAsciiWordBytes(v0, &wm0));
          _mm_store_si128(reinterpret_cast<__m128i*>(lowered + 16), LowerAsciiWordBytes(v1, &wm1));
          const uint32_t word_mask = wm0 | (wm1 << 16);
          const uint32_t high_mask = static_cast<uint32_t>(_mm_movemask_epi8(v0)) |
                                     (static_cast<uint32_t>(_mm_movemask_epi8(v1)) << 16);
          uint32_t pos = 0;  // a word starts here (s[i] is a word byte)
          reload = false;
          while (true) {
            const uint32_t after = ~word_mask >> pos;  // bit 0 clear: pos is in the word
            if (after == 0) {
              // The word runs to the end of the window: move the window to it, unless
              // it began the window (32 bytes or longer: the general path).
              if (pos == 0) {
                general = true;
              } else {
                i += pos;
                reload = true;
              }
              break;
            }
            const auto k = static_cast<uint32_t>(__builtin_ctz(after));  // word length
            const uint32_t end = pos + k;
            if ((high_mask >> end) & 1) {
              i += pos;  // it runs into a non-ASCII character: the general path
              general = true;
              break;
            }
            push(static_cast<uint32_t>(i + pos), static_cast<uint32_t>(i + end), lowered + pos, k);
            // The separators after it: skip to the next word or non-ASCII byte.
            // (end <= 31, and 2u << 31 wraps to 0: nothing above bit 31.)
            const uint32_t next = (word_mask | high_mask) & ~((2u << end) - 1);
            if (next == 0) {
              i += 32;
              break;
            }
            const auto c = static_cast<uint32_t>(__builtin_ctz(next));
            if ((high_mask >> c) & 1) {
              i += c;
              break;
            }
            pos = c;
          }
        } while (reload && i + 32 <= n);
        if (!general) continue;
      }
#endif
      size_t j = i;
      if (!in_token) {
        in_token = true;
        ideograph = false;
        tb = static_cast<uint32_t>(i);
      }
#ifdef __SSE2__
      // 16 bytes at a time: lower-case them into the token buffer and stop at the
      // first byte that is not an ASCII letter or digit.
      while (j + 16 <= n) {
        reserve(16);
        const __m128i v = _mm_loadu_si128(reinterpret_cast<const __m128i*>(s + j));
        uint32_t word_mask;
        _mm_storeu_si128(reinterpret_cast<__m128i*>(b + len), LowerAsciiWordBytes(v, &word_mask));
        if (word_mask != 0xFFFF) {
          const auto k = static_cast<size_t>(__builtin_ctz(~word_mask));
          len += k;
          j += k;
          goto word_done;
        }
        len += 16;
        j += 16;
      }
#endif
      while (j < n && kAscii.kind[s[j]] == kWordByte) {
        reserve(1);
        b[len++] = kAscii.lower[s[j++]];
      }
#ifdef __SSE2__
    word_done:
#endif
      te = static_cast<uint32_t>(j);
      i = j;
      continue;
    }
    // A non-ASCII byte. Common ideographs, kana and Hangul syllables followed by
    // something that starts a new cluster are tokens of their own whose normalized form
    // is their original bytes (checked for every such code point in
    // tests/unit/shingle); they skip the cluster normalizer.
    // (Not with accent stripping, which takes the voicing marks off kana.)
    if constexpr (kAsciiFastPath) {
      if (!strip_accents && DecodeStableIdeograph(s + i, n - i) != 0 &&
          NextStartsCluster(s + i + 3, n - i - 3)) {
        if (in_token) emit();
        push(static_cast<uint32_t>(i), static_cast<uint32_t>(i + 3), text.data() + i, 3);
        i += 3;
        fast_from = i;
        continue;
      }
    }
    // If the fast path took the ASCII character just before it, take it back: it
    // begins the cluster that this character may join.
    size_t start = i;
    if (i > fast_from) {
      start = i - 1;
      if (kAscii.kind[s[start]] == kWordByte) {
        // (The direct path above never ends a word at a non-ASCII byte, so the word
        // is still open here.)
        assert(in_token && !ideograph);
        --len;
        te = static_cast<uint32_t>(start);
        if (len == 0) in_token = false;
      }
    }
    const size_t end = normalizer.NextCluster(text, start);
    invalid_bytes += normalizer.cluster_invalid_bytes();
    const int32_t* cps = normalizer.cluster();
    const size_t m = normalizer.cluster_size();
    for (size_t k = 0; k < m; ++k) {
      const auto cp = static_cast<char32_t>(cps[k]);
      CharClass cc;
      if (cp < 0x80) {
        cc = kAscii.kind[cp] == kWordByte ? CharClass::kWord : CharClass::kSeparator;
      } else {
        cc = normalize::ClassifyCodePoint(cp);
      }
      switch (cc) {
        case CharClass::kSeparator:
          if (in_token) emit();
          continue;
        case CharClass::kIdeograph:
          if (in_token) emit();
          in_token = true;
          ideograph = true;
          tb = static_cast<uint32_t>(start);
          break;
        case CharClass::kWord:
          if (in_token && ideograph) emit();
          [[fallthrough]];
        case CharClass::kAttach:
          if (!in_token) {
            in_token = true;
            ideograph = false;
            tb = static_cast<uint32_t>(start);
          }
          break;
      }
      append_cp(cp);
      te = static_cast<uint32_t>(end);
    }
    i = end;
    fast_from = end;
  }
  if (in_token) emit();
  if constexpr (!kHashesOnly) tokens->assign(o, o + count);
  return count;
}

}  // namespace

struct Tokenizer::Impl : TokenizerCore {
  using TokenizerCore::TokenizerCore;
};

Tokenizer::Tokenizer(const TextOptions& options) : impl_(std::make_unique<Impl>(options)) {
  assert(options.Validate().ok());
}

Tokenizer::~Tokenizer() = default;

void Tokenizer::Tokenize(std::string_view text, std::vector<Token>* tokens) {
  impl_->Run<false>(text, tokens, nullptr);
}

void Tokenizer::TokenizeWithText(std::string_view text, std::vector<Token>* tokens,
                                 std::vector<std::string>* normalized) {
  impl_->Run<true>(text, tokens, normalized);
}

std::span<uint64_t> Tokenizer::TokenizeHashes(std::string_view text) {
  const size_t count = impl_->Run<false, true, true>(text, nullptr, nullptr);
  return std::span<uint64_t>(impl_->hashes.data(), count);
}

namespace shingle {
uint64_t TokenizeWithoutAsciiFastPath(const TextOptions& options, std::string_view text,
                                      std::vector<Token>* tokens,
                                      std::vector<std::string>* normalized) {
  TokenizerCore impl(options);
  impl.Run<true, false>(text, tokens, normalized);
  return impl.invalid_bytes;
}
}  // namespace shingle

uint64_t Tokenizer::invalid_utf8_bytes() const { return impl_->invalid_bytes; }

const TextOptions& Tokenizer::options() const { return impl_->options; }

}  // namespace tidemark
