#include <catch2/catch.hpp>

#include "common/text_util.h"

namespace tidemark {
namespace {

TEST_CASE("ClipExcerpt cuts at character boundaries and shows control bytes", "[common]") {
  CHECK(ClipExcerpt("hello", 60) == "hello");
  CHECK(ClipExcerpt("abcdef", 3) == "abc...");
  // "é" is two bytes; a cut after 1 byte of budget still keeps the whole character.
  CHECK(ClipExcerpt("a\xC3\xA9z", 2) == "a\xC3\xA9...");
  CHECK(ClipExcerpt("a\tb", 60) == "a\\x09b");
  CHECK(ClipExcerpt("\xFFok", 60) == "\\xFFok");
}

TEST_CASE("AppendJsonString escapes per RFC 8259 and repairs invalid UTF-8", "[common]") {
  std::string out;
  AppendJsonString(&out, "a\"b\\c\n\x01\xC3\xA9\xFF");
  CHECK(out == "\"a\\\"b\\\\c\\n\\u0001\xC3\xA9\xEF\xBF\xBD\"");
}

TEST_CASE("UTF-8 prefix and character start follow RFC 3629", "[common]") {
  CHECK(ValidUtf8Prefix("ab\xE2\x82") == 2);       // cut inside a 3-byte character
  CHECK(ValidUtf8Prefix("\xED\xA0\x80") == 0);     // a UTF-16 surrogate is invalid
  CHECK(ValidUtf8Prefix("\xC0\xAF") == 0);         // overlong '/'
  CHECK(ValidUtf8Prefix("\xF0\x9F\x98\x80x") == 5);
  const std::string s = "a\xE2\x82\xAC";  // "a€"
  CHECK(Utf8CharStart(s, 3) == 1);
  CHECK(Utf8CharStart(s, 0) == 0);
}

TEST_CASE("Checksum64 is XXH3-64 with seed 0", "[common]") {
  // Values from ../shared/REFERENCES.md (xxHash plain-string vectors).
  CHECK(Hex64(Checksum64("")) == "2d06800538d394c2");
  CHECK(Hex64(Checksum64("a")) == "e6c632b61e964e1f");
  CHECK(Hex64(Checksum64("abc")) == "78af5f94892f3950");
}

}  // namespace
}  // namespace tidemark
