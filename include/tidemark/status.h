// Status and Result<T>: how every fallible tidemark function reports failure.
//
// The library never throws across module boundaries, never prints and never exits.
// A Status is a small code plus a message that names the place (file:line, or
// file@byte-offset for binary files) and quotes a clipped excerpt of the input.
//
// Thread safety: Status and Result are values; distinct objects may be used from
// distinct threads freely.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_STATUS_H_
#define TIDEMARK_INCLUDE_TIDEMARK_STATUS_H_

#include <cassert>
#include <optional>
#include <string>
#include <string_view>
#include <utility>

namespace tidemark {

/// The small, closed set of failure kinds.
enum class StatusCode : int {
  kOk = 0,
  kInvalidArgument,  ///< the caller asked for something impossible (bad option value)
  kBadInput,         ///< user data is malformed (bad JSON line, truncated stream)
  kCorruption,       ///< an index file fails a checksum or invariant
  kIOError,          ///< the OS refused (open, read, write, rename, disk full)
  kNotFound,         ///< a named file, field or item does not exist
  kUnsupported,      ///< a valid request this version cannot serve (format version)
  kMismatch,         ///< an index was built with other parameters than requested
  kCancelled,        ///< interrupted by the caller (Ctrl-C)
};

/// Stable lower-case name of a code, e.g. "corruption".
std::string_view StatusCodeName(StatusCode code);

class [[nodiscard]] Status {
 public:
  Status() = default;  // OK
  Status(StatusCode code, std::string message) : code_(code), message_(std::move(message)) {}

  static Status Ok() { return Status(); }
  static Status InvalidArgument(std::string m) { return {StatusCode::kInvalidArgument, std::move(m)}; }
  static Status BadInput(std::string m) { return {StatusCode::kBadInput, std::move(m)}; }
  static Status Corruption(std::string m) { return {StatusCode::kCorruption, std::move(m)}; }
  static Status IOError(std::string m) { return {StatusCode::kIOError, std::move(m)}; }
  static Status NotFound(std::string m) { return {StatusCode::kNotFound, std::move(m)}; }
  static Status Unsupported(std::string m) { return {StatusCode::kUnsupported, std::move(m)}; }
  static Status Mismatch(std::string m) { return {StatusCode::kMismatch, std::move(m)}; }
  static Status Cancelled(std::string m) { return {StatusCode::kCancelled, std::move(m)}; }

  bool ok() const { return code_ == StatusCode::kOk; }
  StatusCode code() const { return code_; }
  const std::string& message() const { return message_; }
  /// "corruption: shard-003.tms@4096: checksum mismatch" ("ok" when OK).
  std::string ToString() const;

  /// Returns a copy with `prefix + ": "` put before the message (keeps the code).
  Status WithContext(std::string_view prefix) const;

 private:
  StatusCode code_ = StatusCode::kOk;
  std::string message_;
};

/// A value or a non-OK Status.
template <typename T>
class [[nodiscard]] Result {
 public:
  Result(T value) : value_(std::move(value)) {}  // NOLINT: implicit by design
  Result(Status status) : status_(std::move(status)) {  // NOLINT: implicit by design
    assert(!status_.ok() && "Result built from an OK Status without a value");
  }

  bool ok() const { return status_.ok(); }
  const Status& status() const { return status_; }
  /// REQUIRES: ok().
  T& value() & { assert(ok()); return *value_; }
  const T& value() const& { assert(ok()); return *value_; }
  T&& value() && { assert(ok()); return std::move(*value_); }
  T& operator*() & { return value(); }
  const T& operator*() const& { return value(); }
  T* operator->() { return &value(); }
  const T* operator->() const { return &value(); }

 private:
  Status status_;
  std::optional<T> value_;
};

}  // namespace tidemark

#define TM_STATUS_CONCAT_INNER_(a, b) a##b
#define TM_STATUS_CONCAT_(a, b) TM_STATUS_CONCAT_INNER_(a, b)

/// Returns from the enclosing function if `expr` (a Status) is not OK.
#define TM_RETURN_IF_ERROR(expr)                          \
  do {                                                    \
    ::tidemark::Status tm_status_ = (expr);               \
    if (!tm_status_.ok()) return tm_status_;              \
  } while (0)

/// `TM_ASSIGN_OR_RETURN(auto x, MakeX());` unwraps a Result or returns its Status.
#define TM_ASSIGN_OR_RETURN(lhs, rexpr) \
  TM_ASSIGN_OR_RETURN_IMPL_(TM_STATUS_CONCAT_(tm_result_, __LINE__), lhs, rexpr)
#define TM_ASSIGN_OR_RETURN_IMPL_(tmp, lhs, rexpr) \
  auto tmp = (rexpr);                              \
  if (!tmp.ok()) return tmp.status();              \
  lhs = std::move(tmp).value()

#endif  // TIDEMARK_INCLUDE_TIDEMARK_STATUS_H_
