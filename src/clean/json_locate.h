// Finds where the text fields of a JSON Lines record sit in the raw line, so that a
// stage can rewrite exactly those bytes (redaction) or point into them (evidence
// file offsets) while every other byte of the line stays as it was.
//
// A field is a plain key (top-level member) or an RFC 6901 JSON Pointer, as in
// ReadOptions::fields. Its value is a string (one piece) or an array of strings (one
// piece per element, joined with ReadOptions::array_joiner, as the readers do).
//
// Thread safety: a JsonFieldLocator keeps a parser and buffers; one per thread. The
// free functions are pure.
#ifndef TIDEMARK_SRC_CLEAN_JSON_LOCATE_H_
#define TIDEMARK_SRC_CLEAN_JSON_LOCATE_H_

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "tidemark/reader.h"
#include "tidemark/status.h"

namespace tidemark {

/// One JSON string token of a line and the text it decodes to.
struct JsonStringPiece {
  uint32_t raw_begin = 0;  ///< offset of the opening quote in the line
  uint32_t raw_end = 0;    ///< one past the closing quote
  std::string decoded;     ///< the string value (UTF-8)
  uint32_t text_begin = 0; ///< offset of `decoded` inside the joined record text
};

/// The located text of a record: pieces in text order, and the joined text, which
/// equals Record::text when the reader and the locator agree.
struct LocatedText {
  std::vector<JsonStringPiece> pieces;
  std::string text;
};

class JsonFieldLocator {
 public:
  explicit JsonFieldLocator(const ReadOptions& options);
  ~JsonFieldLocator();
  JsonFieldLocator(const JsonFieldLocator&) = delete;
  JsonFieldLocator& operator=(const JsonFieldLocator&) = delete;

  /// Locates the fields in `line` (one JSON object, without its newline).
  /// BadInput when the line is not an object, a field is not a string or array of
  /// strings, or (unless allow_missing_fields) a field is absent.
  Status Locate(std::string_view line, LocatedText* out);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// Decodes a JSON string token (with its quotes) into UTF-8 (RFC 8259 section 7;
/// \uXXXX surrogate pairs combined, a lone surrogate becomes U+FFFD).
Status DecodeJsonString(std::string_view token, std::string* out);

/// Offset inside `token` (with its quotes) of the raw bytes that decode to byte
/// `decoded_offset` of the value; decoded_offset == decoded size maps to the closing
/// quote. An offset that falls inside an escape maps to the escape's first byte.
size_t RawOffsetInJsonString(std::string_view token, size_t decoded_offset);

/// Maps a byte range [begin, end) of the joined text to the pieces it touches:
/// calls f(piece_index, begin_in_piece, end_in_piece) for each non-empty overlap, in
/// order. Joiner bytes between pieces are not part of any piece.
template <typename F>
void ForEachPieceRange(const LocatedText& located, size_t begin, size_t end, F&& f) {
  for (size_t i = 0; i < located.pieces.size(); ++i) {
    const JsonStringPiece& p = located.pieces[i];
    const size_t pb = p.text_begin, pe = p.text_begin + p.decoded.size();
    const size_t b = begin > pb ? begin : pb;
    const size_t e = end < pe ? end : pe;
    if (b < e) f(i, b - pb, e - pb);
  }
}

}  // namespace tidemark

#endif  // TIDEMARK_SRC_CLEAN_JSON_LOCATE_H_
