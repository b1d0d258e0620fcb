// Classes of normalized code points that decide where tokens start and end
// (text rules version 2, docs/text_rules.md "Tokens").
//
// Thread safety: pure functions.
#ifndef TIDEMARK_SRC_NORMALIZE_CHAR_CLASS_H_
#define TIDEMARK_SRC_NORMALIZE_CHAR_CLASS_H_

#include <cstdint>

namespace tidemark::normalize {

enum class CharClass : uint8_t {
  kSeparator = 0,  ///< General_Category P*, S*, Z*, C* (and unassigned): ends a token
  kWord = 1,       ///< L* or N* outside the ideographic ranges: continues a word
  kAttach = 2,     ///< M*, or a Hangul medial/final jamo: joins the token before it
  kIdeograph = 3,  ///< L* or N* in the Han/Kana/Hangul ranges: a token of its own
};

/// True for the Hangul vowel (jungseong) and final consonant (jongseong) jamo, which
/// attach like marks: U+1160..U+11FF, U+D7B0..U+D7FF (Blocks.txt: Hangul Jamo, Hangul
/// Jamo Extended-B).
inline bool IsHangulMedialOrFinal(char32_t cp) {
  return (cp >= 0x1160 && cp <= 0x11FF) || (cp >= 0xD7B0 && cp <= 0xD7FF);
}

/// True if cp lies in one of the blocks whose letters and numbers are single-character
/// tokens (Han, Hiragana, Katakana, Hangul; the list is in docs/text_rules.md).
bool InIdeographicBlock(char32_t cp);

/// The class of a NORMALIZED code point (General_Category from utf8proc 2.8,
/// Unicode 15.0).
CharClass ClassifyCodePoint(char32_t cp);

}  // namespace tidemark::normalize

#endif  // TIDEMARK_SRC_NORMALIZE_CHAR_CLASS_H_
