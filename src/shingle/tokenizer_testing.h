// Test hook: the tokenizer without its fast paths (ASCII words, common ideographs), so
// tests can check that they give byte-identical tokens (tests/unit/shingle).
//
// Thread safety: reentrant.
#ifndef TIDEMARK_SRC_SHINGLE_TOKENIZER_TESTING_H_
#define TIDEMARK_SRC_SHINGLE_TOKENIZER_TESTING_H_

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "tidemark/tokenizer.h"

namespace tidemark::shingle {

/// The code points the tokenizer takes as single-character tokens without the cluster
/// normalizer (when the next character starts a new cluster): hiragana U+3041..U+3096,
/// katakana U+30A1..U+30FA and U+30FC, CJK Unified Ideographs U+3400..U+4DBF and
/// U+4E00..U+9FFF, Hangul syllables U+AC00..U+D7A3. Each must be its own NFKC_Casefold,
/// a starter, and an ideograph-class character (tested).
inline bool IsStableIdeograph(char32_t cp) {
  return (cp >= 0x4E00 && cp <= 0x9FFF) || (cp >= 0xAC00 && cp <= 0xD7A3) ||
         (cp >= 0x3041 && cp <= 0x3096) || (cp >= 0x30A1 && cp <= 0x30FA) || cp == 0x30FC ||
         (cp >= 0x3400 && cp <= 0x4DBF);
}

/// As Tokenizer::TokenizeWithText, but every character, ASCII included, goes through
/// the cluster normalizer. Returns the ill-formed UTF-8 bytes seen.
uint64_t TokenizeWithoutAsciiFastPath(const TextOptions& options, std::string_view text,
                                      std::vector<Token>* tokens,
                                      std::vector<std::string>* normalized);

}  // namespace tidemark::shingle

#endif  // TIDEMARK_SRC_SHINGLE_TOKENIZER_TESTING_H_
