// Progress and cancellation: how long-running library work talks to its caller.
//
// The library never prints. Long operations (index build, evidence pass, cleaning)
// call ProgressSink::Update from any worker thread, a few times a second at most;
// the CLI decides how to show it (redrawn line on a terminal, log lines in batch).
// Cancellation is cooperative: workers poll CancelRequested() between blocks and
// return Status::Cancelled, after removing their temporary files.
//
// Thread safety: Update may be called concurrently; implementations must be
// thread-safe. RequestCancel is async-signal-safe.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_PROGRESS_H_
#define TIDEMARK_INCLUDE_TIDEMARK_PROGRESS_H_

#include <cstdint>
#include <string_view>

namespace tidemark {

/// One snapshot of a long operation.
struct ProgressEvent {
  std::string_view phase;    ///< "reading", "spilling", "merging", "probing", ...
  uint64_t done_bytes = 0;   ///< input bytes consumed so far (on-disk bytes)
  uint64_t total_bytes = 0;  ///< 0 when unknown
  uint64_t records = 0;      ///< records (documents, items) processed so far
  /// A phase that counts pieces of work instead of input bytes (an index build's
  /// shards while "merging"): done_units of total_units `unit`s; total_units is 0
  /// in phases that count bytes.
  uint64_t done_units = 0;
  uint64_t total_units = 0;
  std::string_view unit;
};

class ProgressSink {
 public:
  virtual ~ProgressSink() = default;
  virtual void Update(const ProgressEvent& event) = 0;
};

/// Asks all running tidemark work to stop soon. Async-signal-safe.
void RequestCancel();
/// True once RequestCancel was called (until ResetCancel).
bool CancelRequested();
/// For tests: clears the flag.
void ResetCancel();

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_PROGRESS_H_
