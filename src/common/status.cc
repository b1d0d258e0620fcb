#include "tidemark/status.h"

namespace tidemark {

std::string_view StatusCodeName(StatusCode code) {
  switch (code) {
    case StatusCode::kOk: return "ok";
    case StatusCode::kInvalidArgument: return "invalid argument";
    case StatusCode::kBadInput: return "bad input";
    case StatusCode::kCorruption: return "corruption";
    case StatusCode::kIOError: return "I/O error";
    case StatusCode::kNotFound: return "not found";
    case StatusCode::kUnsupported: return "unsupported";
    case StatusCode::kMismatch: return "parameter mismatch";
    case StatusCode::kCancelled: return "cancelled";
  }
  return "unknown";
}

std::string Status::ToString() const {
  if (ok()) return "ok";
  std::string out(StatusCodeName(code_));
  out += ": ";
  out += message_;
  return out;
}

Status Status::WithContext(std::string_view prefix) const {
  if (ok()) return *this;
  std::string m(prefix);
  m += ": ";
  m += message_;
  return Status(code_, std::move(m));
}

}  // namespace tidemark
