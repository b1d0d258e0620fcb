// Small text helpers shared by every stage: clipped excerpts for error messages,
// JSON string escaping for the writers, UTF-8 validity scanning.
//
// Thread safety: pure functions.
#ifndef TIDEMARK_SRC_COMMON_TEXT_UTIL_H_
#define TIDEMARK_SRC_COMMON_TEXT_UTIL_H_

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

namespace tidemark {

/// A printable excerpt of at most about `max_bytes` bytes: cut at a UTF-8 character
/// boundary, control characters and invalid bytes shown as \xNN, "..." appended when
/// clipped. For error messages: `f.jsonl:7: malformed JSON: '{"text": ...'`.
std::string ClipExcerpt(std::string_view text, size_t max_bytes = 60);

/// Appends `s` as a quoted JSON string. Invalid UTF-8 bytes become U+FFFD, so the
/// output is always valid JSON.
void AppendJsonString(std::string* out, std::string_view s);

/// Length of the longest prefix of `s` that is valid UTF-8 and does not end inside a
/// character (used to cut snippets).
size_t ValidUtf8Prefix(std::string_view s);

/// Offset of the start of the UTF-8 character containing byte `pos` (moves left past
/// continuation bytes, at most 3).
size_t Utf8CharStart(std::string_view s, size_t pos);

/// XXH3-64 of bytes, seed 0: the checksum used in files tidemark writes.
uint64_t Checksum64(std::string_view data);

/// 16 lower-case hex digits.
std::string Hex64(uint64_t v);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_COMMON_TEXT_UTIL_H_
