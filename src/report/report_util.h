// Helpers shared by the report writers: number formatting for JSON, CSV quoting,
// rule kind names and a buffered atomic file writer.
//
// Thread safety: free functions are pure; a StreamingFileWriter is used by one
// thread at a time.
#ifndef TIDEMARK_SRC_REPORT_REPORT_UTIL_H_
#define TIDEMARK_SRC_REPORT_REPORT_UTIL_H_

#include <cstdint>
#include <string>
#include <string_view>

#include "common/env.h"
#include "tidemark/probe.h"
#include "tidemark/status.h"

namespace tidemark::report {

/// Shortest decimal that reads back to the same double (std::to_chars); NaN and
/// infinities become `null`, so the output is always valid JSON.
void AppendJsonNumber(std::string* out, double v);
void AppendUint(std::string* out, uint64_t v);

/// RFC 4180 field: quoted (quotes doubled) when it holds a comma, quote, CR or LF.
void AppendCsvField(std::string* out, std::string_view field);

/// "any_hit", "hit_fraction", "coverage", "longest_run".
std::string_view RuleKindName(Rule::Kind kind);

/// `v` as a percentage with `decimals` places ("3.33%"); "n/a" for NaN.
std::string FormatPercent(double v, int decimals = 2);

/// Env::Default() when `env` is null.
inline Env* EnvOrDefault(Env* env) { return env != nullptr ? env : Env::Default(); }

/// AtomicFileWriter with a 1 MiB buffer, for outputs too large to build in memory.
class StreamingFileWriter {
 public:
  StreamingFileWriter(const std::string& path, Env* env) : file_(path, EnvOrDefault(env)) {}
  Status Open() { return file_.Open(); }
  /// The buffer to append to; call MaybeFlush after each record.
  std::string* buffer() { return &buffer_; }
  Status MaybeFlush() {
    if (buffer_.size() < (1u << 20)) return Status::Ok();
    return Flush();
  }
  /// Flushes and renames into place. Without it the temp file is removed.
  Status Commit() {
    TM_RETURN_IF_ERROR(Flush());
    return file_.Commit();
  }

 private:
  Status Flush() {
    Status s = file_.Append(buffer_);
    buffer_.clear();
    return s;
  }
  AtomicFileWriter file_;
  std::string buffer_;
};

}  // namespace tidemark::report

#endif  // TIDEMARK_SRC_REPORT_REPORT_UTIL_H_
