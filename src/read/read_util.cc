#include "read/read_util.h"

#include <simdjson.h>

#include "common/text_util.h"

namespace tidemark {

std::string SkipMessage(std::string_view where, std::string_view what,
                        std::string_view excerpt) {
  std::string m(where);
  m += ": ";
  m += what;
  m += ": '";
  m += ClipExcerpt(excerpt);
  m += "'";
  return m;
}

std::string WhereLine(const std::string& path, uint64_t line) {
  return path + ":" + std::to_string(line);
}

bool IsStrictError(SkipReason reason) {
  return reason != SkipReason::kEmptyLine && reason != SkipReason::kInvalidUtf8;
}

Status NoteSkip(const ReadOptions& options, SkipReason reason, std::string message,
                SkipStats* stats) {
  ++stats->counts[static_cast<size_t>(reason)];
  const bool fatal = options.strict && IsStrictError(reason);
  if (fatal) return Status::BadInput(std::move(message));
  if (stats->examples.size() < SkipStats::kMaxExamples) {
    stats->examples.push_back(std::move(message));
  }
  return Status::Ok();
}

size_t RepairUtf8(std::string_view in, std::string* out) {
  out->clear();
  out->reserve(in.size() + 16);
  size_t replaced = 0;
  while (!in.empty()) {
    const size_t good = ValidUtf8Prefix(in);
    out->append(in.data(), good);
    if (good == in.size()) break;
    *out += "\xEF\xBF\xBD";
    ++replaced;
    in.remove_prefix(good + 1);
  }
  return replaced;
}

bool IsValidUtf8(std::string_view s) { return simdjson::validate_utf8(s.data(), s.size()); }

bool IsLineFormat(InputFormat format, const ReadOptions& options) {
  return format == InputFormat::kJsonl || (format == InputFormat::kText && options.text_lines);
}

}  // namespace tidemark
