// JsonRecordParser: one JSON object (a JSONL line, or one element of a .json array)
// -> Record text fields and id, with simdjson's DOM parser (which validates the
// whole object, so a malformed line is never half-accepted).
//
// Fields are plain keys ("text") or RFC 6901 JSON Pointers ("/meta/body",
// "/a~1b"); arrays of strings are joined with ReadOptions::array_joiner; the id may
// be a string or a number. A line whose bytes are not valid UTF-8 is repaired
// (invalid bytes -> U+FFFD) and parsed again, and reported as repaired.
//
// Thread safety: one parser per thread; the views it hands out stay valid until the
// next Parse.
#ifndef TIDEMARK_SRC_READ_JSON_RECORD_H_
#define TIDEMARK_SRC_READ_JSON_RECORD_H_

#include <simdjson.h>

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "tidemark/reader.h"

namespace tidemark {

class JsonRecordParser {
 public:
  /// REQUIRES: ValidateReadOptions(options).ok(); `options` outlives the parser.
  explicit JsonRecordParser(const ReadOptions& options);

  struct Outcome {
    bool ok = true;
    SkipReason reason = SkipReason::kMalformedJson;  ///< when !ok
    std::string what;                                ///< when !ok: "missing field \"text\""
    size_t repaired_bytes = 0;  ///< invalid UTF-8 bytes replaced (record still ok)
  };

  /// Parses `json`, filling record->text, ->fields and ->id (the record number when
  /// there is no id field). REQUIRES: kParsePadding readable bytes after `json`.
  Outcome Parse(std::string_view json, uint64_t record_number, Record* record);

 private:
  Outcome Extract(simdjson::dom::element root, uint64_t record_number, Record* record);
  // Text of one field: string, or array of strings joined into *scratch.
  Outcome FieldText(simdjson::dom::element root, const std::string& field,
                    std::string* scratch, std::string_view* out);
  simdjson::simdjson_result<simdjson::dom::element> Lookup(simdjson::dom::element root,
                                                           const std::string& field);

  const ReadOptions& options_;
  simdjson::dom::parser parser_;
  std::string repaired_;
  std::vector<std::string> field_scratch_;
  std::string text_;
};

}  // namespace tidemark

#endif  // TIDEMARK_SRC_READ_JSON_RECORD_H_
