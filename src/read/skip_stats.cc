#include "tidemark/reader.h"

namespace tidemark {

std::string_view SkipReasonName(SkipReason reason) {
  switch (reason) {
    case SkipReason::kMalformedJson: return "malformed_json";
    case SkipReason::kMissingField: return "missing_field";
    case SkipReason::kNotString: return "not_string";
    case SkipReason::kLineTooLong: return "line_too_long";
    case SkipReason::kEmptyLine: return "empty_line";
    case SkipReason::kInvalidUtf8: return "invalid_utf8";
    case SkipReason::kBadCsvRow: return "bad_csv_row";
    case SkipReason::kCount: break;
  }
  return "unknown";
}

uint64_t SkipStats::total() const {
  uint64_t t = 0;
  for (const uint64_t c : counts) t += c;
  return t;
}

uint64_t SkipStats::dropped() const {
  return total() - counts[static_cast<size_t>(SkipReason::kInvalidUtf8)];
}

void SkipStats::Add(const SkipStats& other) {
  for (size_t i = 0; i < counts.size(); ++i) counts[i] += other.counts[i];
  for (const std::string& e : other.examples) {
    if (examples.size() >= kMaxExamples) break;
    examples.push_back(e);
  }
}

}  // namespace tidemark
