// Shared pieces of the command-line front end: global flags, the progress printer,
// Status -> exit code mapping. Only src/cli prints.
#ifndef TIDEMARK_SRC_CLI_CLI_COMMON_H_
#define TIDEMARK_SRC_CLI_CLI_COMMON_H_

#include <CLI/CLI.hpp>

#include <chrono>
#include <cstdio>
#include <mutex>
#include <string>

#include "cli/exit_codes.h"
#include "tidemark/progress.h"
#include "tidemark/status.h"

namespace tidemark::cli {

/// Flags every subcommand shares.
struct GlobalFlags {
  int verbosity = 0;  ///< -q: -1, default 0, -v: 1
  bool no_progress = false;
};

GlobalFlags& Globals();

/// Prints "tidemark: <status>" to stderr and returns the matching exit code.
int ReportError(const Status& status);
/// Status code -> exit code (Mismatch -> 5, Corruption -> 4, Cancelled -> 130, else 1).
int ExitCodeFor(const Status& status);

/// Informational line to stderr unless -q.
void Info(const std::string& line);

/// Shows ProgressEvents on stderr: redrawn in place a few times a second on a
/// terminal; one log line every `log_interval` seconds otherwise (batch jobs);
/// nothing with -q or --no-progress. Thread-safe.
class ProgressPrinter final : public ProgressSink {
 public:
  explicit ProgressPrinter(std::string what, double log_interval_s = 5.0);
  ~ProgressPrinter() override;
  void Update(const ProgressEvent& event) override;
  /// Clears a redrawn line before the closing summary.
  void Finish();

 private:
  std::string what_;
  double log_interval_s_;
  bool enabled_;
  bool tty_;
  bool drawn_ = false;
  std::mutex mu_;
  std::chrono::steady_clock::time_point start_;
  std::chrono::steady_clock::time_point last_;
  // The phase counting units (ProgressEvent::total_units) last seen, for its rate.
  std::string units_phase_;
  uint64_t units_total_ = 0;
  uint64_t units_done0_ = 0;
  std::chrono::steady_clock::time_point units_start_;
};

/// Human-readable byte size ("1.5 GB").
std::string FormatBytes(double bytes);

/// Installs SIGINT/SIGTERM handlers that call RequestCancel() (second signal: exit).
void InstallSignalHandlers();

}  // namespace tidemark::cli

#endif  // TIDEMARK_SRC_CLI_CLI_COMMON_H_
