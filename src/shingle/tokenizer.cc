// Tokenizer (include/tidemark/tokenizer.h): text -> tokens with original byte spans
// and hashes, text rules version 1 (docs/text_rules.md).
//
// ASCII runs take a table-driven fast path (letters lower-cased, digits kept, every
// other ASCII byte separates), which is exactly what NFKC_Casefold and the category
// rules give for ASCII. Everything else goes cluster by cluster through
// normalize::Normalizer. An ASCII character directly before a non-ASCII one can form
// a cluster with it (e + U+0301 -> é), so the fast path takes back its last
// character in that case and the cluster path handles it.
#include <cassert>
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

// The tokenizer proper; Tokenizer::Impl wraps it, the testing hook uses it directly.
struct TokenizerCore {
  explicit TokenizerCore(const TextOptions& o)
      : options(o), normalizer(normalize::NormalForm::kNfkcCasefold, o.strip_accents), buf(64) {}

  template <bool kWithText, bool kAsciiFastPath = true>
  void Run(std::string_view text, std::vector<Token>* tokens, std::vector<std::string>* normalized);

  TextOptions options;
  normalize::Normalizer normalizer;
  uint64_t invalid_bytes = 0;
  std::vector<char> buf;  // normalized UTF-8 of the token being built
};

}  // namespace

struct Tokenizer::Impl : TokenizerCore {
  using TokenizerCore::TokenizerCore;
};

template <bool kWithText, bool kAsciiFastPath>
void TokenizerCore::Run(std::string_view text, std::vector<Token>* tokens,
                          std::vector<std::string>* normalized) {
  assert(text.size() < std::numeric_limits<uint32_t>::max());
  tokens->clear();
  if constexpr (kWithText) normalized->clear();
  normalizer.Reset();
  const auto* s = reinterpret_cast<const unsigned char*>(text.data());
  const size_t n = text.size();
  const uint64_t seed = options.seed;
  char* b = buf.data();
  size_t cap = buf.size();
  size_t len = 0;         // bytes in b
  bool in_token = false;  // a token is being built
  bool ideograph = false;  // ... and it is a single-ideograph token
  uint32_t tb = 0, te = 0;  // its original byte span

  auto reserve = [&](size_t more) {
    if (len + more > cap) {
      buf.resize(std::max(2 * cap, len + more));
      b = buf.data();
      cap = buf.size();
    }
  };
  auto emit = [&] {
    tokens->push_back(Token{tb, te, shingle::HashBytes(b, len, seed)});
    if constexpr (kWithText) normalized->emplace_back(b, len);
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
      if (!in_token) {
        in_token = true;
        ideograph = false;
        tb = static_cast<uint32_t>(i);
      }
      size_t j = i + 1;
      while (j < n && kAscii.kind[s[j]] == kWordByte) ++j;
      reserve(j - i);
      for (size_t k = i; k < j; ++k) b[len++] = kAscii.lower[s[k]];
      te = static_cast<uint32_t>(j);
      i = j;
      continue;
    }
    // A non-ASCII byte. If the fast path took the ASCII character just before it,
    // take it back: it begins the cluster that this character may join.
    size_t start = i;
    if (i > fast_from) {
      start = i - 1;
      if (kAscii.kind[s[start]] == kWordByte) {
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
}

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
