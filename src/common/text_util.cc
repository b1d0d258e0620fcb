#include "common/text_util.h"

#include <xxhash.h>

#include <cstdio>

namespace tidemark {
namespace {

// Length of the valid UTF-8 sequence starting at s[i], or 0 if invalid (RFC 3629:
// no overlongs, no surrogates, nothing above U+10FFFF).
size_t Utf8SeqLen(std::string_view s, size_t i) {
  const auto b = [&](size_t k) { return static_cast<unsigned char>(s[k]); };
  const unsigned char c = b(i);
  if (c < 0x80) return 1;
  size_t len;
  unsigned char lo = 0x80, hi = 0xBF;
  if (c >= 0xC2 && c <= 0xDF) {
    len = 2;
  } else if (c >= 0xE0 && c <= 0xEF) {
    len = 3;
    if (c == 0xE0) lo = 0xA0;
    if (c == 0xED) hi = 0x9F;
  } else if (c >= 0xF0 && c <= 0xF4) {
    len = 4;
    if (c == 0xF0) lo = 0x90;
    if (c == 0xF4) hi = 0x8F;
  } else {
    return 0;
  }
  if (i + len > s.size()) return 0;
  if (b(i + 1) < lo || b(i + 1) > hi) return 0;
  for (size_t k = 2; k < len; ++k) {
    if (b(i + k) < 0x80 || b(i + k) > 0xBF) return 0;
  }
  return len;
}

}  // namespace

std::string ClipExcerpt(std::string_view text, size_t max_bytes) {
  std::string out;
  size_t i = 0;
  while (i < text.size() && out.size() < max_bytes) {
    const unsigned char c = static_cast<unsigned char>(text[i]);
    const size_t len = Utf8SeqLen(text, i);
    if (len == 0 || c < 0x20 || c == 0x7F) {
      char buf[8];
      std::snprintf(buf, sizeof(buf), "\\x%02X", c);
      out += buf;
      ++i;
      continue;
    }
    out.append(text.substr(i, len));
    i += len;
  }
  if (i < text.size()) out += "...";
  return out;
}

void AppendJsonString(std::string* out, std::string_view s) {
  out->push_back('"');
  size_t i = 0;
  while (i < s.size()) {
    const unsigned char c = static_cast<unsigned char>(s[i]);
    if (c >= 0x20 && c < 0x80 && c != '"' && c != '\\') {
      out->push_back(static_cast<char>(c));
      ++i;
      continue;
    }
    switch (c) {
      case '"': *out += "\\\""; ++i; continue;
      case '\\': *out += "\\\\"; ++i; continue;
      case '\n': *out += "\\n"; ++i; continue;
      case '\r': *out += "\\r"; ++i; continue;
      case '\t': *out += "\\t"; ++i; continue;
      default: break;
    }
    if (c < 0x20 || c == 0x7F) {
      char buf[8];
      std::snprintf(buf, sizeof(buf), "\\u%04x", c);
      *out += buf;
      ++i;
      continue;
    }
    const size_t len = Utf8SeqLen(s, i);
    if (len == 0) {
      *out += "\xEF\xBF\xBD";  // U+FFFD REPLACEMENT CHARACTER
      ++i;
    } else {
      out->append(s.substr(i, len));
      i += len;
    }
  }
  out->push_back('"');
}

size_t ValidUtf8Prefix(std::string_view s) {
  size_t i = 0;
  while (i < s.size()) {
    const size_t len = Utf8SeqLen(s, i);
    if (len == 0) break;
    i += len;
  }
  return i;
}

size_t Utf8CharStart(std::string_view s, size_t pos) {
  if (pos >= s.size()) return s.size();
  size_t back = 0;
  while (pos > 0 && back < 3 && (static_cast<unsigned char>(s[pos]) & 0xC0) == 0x80) {
    --pos;
    ++back;
  }
  return pos;
}

uint64_t Checksum64(std::string_view data) { return XXH3_64bits(data.data(), data.size()); }

std::string Hex64(uint64_t v) {
  char buf[17];
  std::snprintf(buf, sizeof(buf), "%016llx", static_cast<unsigned long long>(v));
  return buf;
}

}  // namespace tidemark
