// Helpers for the reader tests: read a whole file into owned copies of its records.
#ifndef TIDEMARK_TESTS_UNIT_READ_READ_TEST_UTIL_H_
#define TIDEMARK_TESTS_UNIT_READ_READ_TEST_UTIL_H_

#include <string>
#include <vector>

#include "tidemark/reader.h"

namespace tidemark::testing {

struct OwnedRecord {
  std::string text;
  std::vector<std::string> fields;
  std::string id;
  uint64_t line = 0;
  uint64_t byte_offset = 0;
  uint64_t record_number = 0;
};

struct ReadResult {
  Status status;  // of Open or the first failing Next
  std::vector<OwnedRecord> records;
  SkipStats skips;
};

inline ReadResult ReadAll(const std::string& path, const ReadOptions& options = {}) {
  ReadResult out;
  auto reader = RecordReader::Open(path, options);
  if (!reader.ok()) {
    out.status = reader.status();
    return out;
  }
  Record r;
  while (true) {
    auto more = (*reader)->Next(&r);
    if (!more.ok()) {
      out.status = more.status();
      break;
    }
    if (!*more) break;
    OwnedRecord o;
    o.text = std::string(r.text);
    for (auto f : r.fields) o.fields.emplace_back(f);
    o.id = r.id;
    o.line = r.line;
    o.byte_offset = r.byte_offset;
    o.record_number = r.record_number;
    out.records.push_back(std::move(o));
  }
  out.skips = (*reader)->skips();
  return out;
}

inline uint64_t Count(const SkipStats& s, SkipReason r) {
  return s.counts[static_cast<size_t>(r)];
}

}  // namespace tidemark::testing

#endif  // TIDEMARK_TESTS_UNIT_READ_READ_TEST_UTIL_H_
