// Strict UTF-8 decoding and encoding for the text rules.
//
// Decoding follows the Unicode Standard 15.0, section 3.9, Table 3-7 (well-formed
// byte sequences) and replaces each maximal subpart of an ill-formed sequence with
// one U+FFFD ("U+FFFD Substitution of Maximal Subparts", same section). Overlong
// forms, surrogates (ED A0..BF) and values above U+10FFFF are ill-formed.
//
// Thread safety: pure inline functions.
#ifndef TIDEMARK_SRC_NORMALIZE_UTF8_H_
#define TIDEMARK_SRC_NORMALIZE_UTF8_H_

#include <cstddef>
#include <cstdint>

namespace tidemark::normalize {

inline constexpr char32_t kReplacementChar = 0xFFFD;

/// Result of decoding one code point.
struct Decoded {
  char32_t cp;     ///< the code point, or U+FFFD for an ill-formed subpart
  uint32_t len;    ///< bytes consumed (>= 1)
  bool invalid;    ///< the bytes were ill-formed and replaced by U+FFFD
};

/// Decodes the code point starting at p. REQUIRES: p < end.
inline Decoded DecodeUtf8(const unsigned char* p, const unsigned char* end) {
  const unsigned char b0 = p[0];
  if (b0 < 0x80) return {b0, 1, false};
  const size_t avail = static_cast<size_t>(end - p);
  // Table 3-7: allowed range of the second byte depends on the first.
  unsigned char lo = 0x80, hi = 0xBF;
  uint32_t need;  // continuation bytes
  char32_t cp;
  if (b0 >= 0xC2 && b0 <= 0xDF) {
    need = 1;
    cp = b0 & 0x1F;
  } else if (b0 >= 0xE0 && b0 <= 0xEF) {
    need = 2;
    cp = b0 & 0x0F;
    if (b0 == 0xE0) lo = 0xA0;
    if (b0 == 0xED) hi = 0x9F;
  } else if (b0 >= 0xF0 && b0 <= 0xF4) {
    need = 3;
    cp = b0 & 0x07;
    if (b0 == 0xF0) lo = 0x90;
    if (b0 == 0xF4) hi = 0x8F;
  } else {
    return {kReplacementChar, 1, true};  // 80..C1, F5..FF never start a character
  }
  for (uint32_t k = 1; k <= need; ++k) {
    if (k >= avail) return {kReplacementChar, k, true};  // truncated at the end
    const unsigned char b = p[k];
    if (b < lo || b > hi) return {kReplacementChar, k, true};
    lo = 0x80;
    hi = 0xBF;
    cp = (cp << 6) | (b & 0x3F);
  }
  return {cp, need + 1, false};
}

/// Appends the UTF-8 form of cp (REQUIRES: a scalar value) to out; returns bytes written
/// (1..4). REQUIRES: out has room for 4 bytes.
inline size_t EncodeUtf8(char32_t cp, char* out) {
  if (cp < 0x80) {
    out[0] = static_cast<char>(cp);
    return 1;
  }
  if (cp < 0x800) {
    out[0] = static_cast<char>(0xC0 | (cp >> 6));
    out[1] = static_cast<char>(0x80 | (cp & 0x3F));
    return 2;
  }
  if (cp < 0x10000) {
    out[0] = static_cast<char>(0xE0 | (cp >> 12));
    out[1] = static_cast<char>(0x80 | ((cp >> 6) & 0x3F));
    out[2] = static_cast<char>(0x80 | (cp & 0x3F));
    return 3;
  }
  out[0] = static_cast<char>(0xF0 | (cp >> 18));
  out[1] = static_cast<char>(0x80 | ((cp >> 12) & 0x3F));
  out[2] = static_cast<char>(0x80 | ((cp >> 6) & 0x3F));
  out[3] = static_cast<char>(0x80 | (cp & 0x3F));
  return 4;
}

}  // namespace tidemark::normalize

#endif  // TIDEMARK_SRC_NORMALIZE_UTF8_H_
