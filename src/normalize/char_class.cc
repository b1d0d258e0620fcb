#include "normalize/char_class.h"

#include <utf8proc.h>

namespace tidemark::normalize {

bool InIdeographicBlock(char32_t cp) {
  // Block ranges from Blocks.txt (Unicode 15.0). Every letter and number that
  // Scripts.txt assigns to Han, Hiragana, Katakana or Hangul and that is stable under
  // NFKC_Casefold lies in these blocks (checked by tests/unit/normalize); the blocks
  // also hold a few Common-script letters used only in CJK text (U+30FC KATAKANA-
  // HIRAGANA PROLONGED SOUND MARK, U+3031..U+3035 kana repeat marks).
  if (cp < 0x1100) return false;
  if (cp < 0x3000) return cp <= 0x115F ||                    // Hangul Jamo, choseong
                          (cp >= 0x2E80 && cp <= 0x2FDF);    // CJK/Kangxi radicals
  if (cp <= 0x30FF) return true;                             // CJK Symbols, Hiragana, Katakana
  if (cp < 0x3130) return false;                             // Bopomofo
  if (cp <= 0x319F) return true;                             // Hangul Compat. Jamo, Kanbun
  if (cp < 0x31F0) return false;                             // Bopomofo Ext., CJK Strokes
  if (cp <= 0x9FFF) return true;  // Katakana Phonetic Ext., Enclosed CJK, CJK Compat.,
                                  // CJK Ext. A, Yijing (So), CJK Unified Ideographs
  if (cp < 0xA960) return false;
  if (cp <= 0xA97F) return true;                             // Hangul Jamo Extended-A
  if (cp < 0xAC00) return false;
  if (cp <= 0xD7FF) return true;  // Hangul Syllables, Hangul Jamo Extended-B
  if (cp < 0xF900) return false;
  if (cp <= 0xFAFF) return true;                             // CJK Compatibility Ideographs
  if (cp < 0x16FE0) return false;
  if (cp <= 0x16FFF) return true;                            // Ideographic Symbols and Punct.
  if (cp < 0x1AFF0) return false;
  if (cp <= 0x1B16F) return true;  // Kana Ext.-B, Kana Supplement, Kana Ext.-A, Small Kana
  if (cp < 0x20000) return false;
  return cp <= 0x3FFFF;  // Supplementary and Tertiary Ideographic Planes
}

CharClass ClassifyCodePoint(char32_t cp) {
  switch (utf8proc_category(static_cast<utf8proc_int32_t>(cp))) {
    case UTF8PROC_CATEGORY_LU:
    case UTF8PROC_CATEGORY_LL:
    case UTF8PROC_CATEGORY_LT:
    case UTF8PROC_CATEGORY_LM:
    case UTF8PROC_CATEGORY_LO:
    case UTF8PROC_CATEGORY_ND:
    case UTF8PROC_CATEGORY_NL:
    case UTF8PROC_CATEGORY_NO:
      if (IsHangulMedialOrFinal(cp)) return CharClass::kAttach;
      return InIdeographicBlock(cp) ? CharClass::kIdeograph : CharClass::kWord;
    case UTF8PROC_CATEGORY_MN:
    case UTF8PROC_CATEGORY_MC:
    case UTF8PROC_CATEGORY_ME:
      return CharClass::kAttach;
    default:
      return CharClass::kSeparator;
  }
}

}  // namespace tidemark::normalize
