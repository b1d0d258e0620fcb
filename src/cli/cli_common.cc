#include "cli/cli_common.h"

#include <unistd.h>

#include <csignal>
#include <cstdlib>

namespace tidemark::cli {

GlobalFlags& Globals() {
  static GlobalFlags flags;
  return flags;
}

int ExitCodeFor(const Status& status) {
  switch (status.code()) {
    case StatusCode::kOk: return kExitOk;
    case StatusCode::kMismatch: return kExitMismatch;
    case StatusCode::kCorruption: return kExitCorrupt;
    case StatusCode::kCancelled: return kExitInterrupted;
    case StatusCode::kInvalidArgument: return kExitUsage;
    default: return kExitFailure;
  }
}

int ReportError(const Status& status) {
  std::fprintf(stderr, "tidemark: %s\n", status.ToString().c_str());
  return ExitCodeFor(status);
}

void Info(const std::string& line) {
  if (Globals().verbosity < 0) return;
  std::fprintf(stderr, "%s\n", line.c_str());
}

std::string FormatBytes(double bytes) {
  const char* units[] = {"B", "KB", "MB", "GB", "TB", "PB"};
  int u = 0;
  while (bytes >= 1000.0 && u < 5) {
    bytes /= 1000.0;
    ++u;
  }
  char buf[32];
  std::snprintf(buf, sizeof(buf), u == 0 ? "%.0f %s" : "%.1f %s", bytes, units[u]);
  return buf;
}

ProgressPrinter::ProgressPrinter(std::string what, double log_interval_s)
    : what_(std::move(what)),
      log_interval_s_(log_interval_s),
      enabled_(!Globals().no_progress && Globals().verbosity >= 0),
      tty_(::isatty(STDERR_FILENO) != 0),
      start_(std::chrono::steady_clock::now()),
      last_(start_) {}

ProgressPrinter::~ProgressPrinter() { Finish(); }

void ProgressPrinter::Update(const ProgressEvent& e) {
  if (!enabled_) return;
  const auto now = std::chrono::steady_clock::now();
  std::lock_guard<std::mutex> lock(mu_);
  const double since_last = std::chrono::duration<double>(now - last_).count();
  if (since_last < (tty_ ? 0.25 : log_interval_s_)) return;
  last_ = now;
  const double elapsed = std::chrono::duration<double>(now - start_).count();
  const double rate = elapsed > 0 ? static_cast<double>(e.done_bytes) / elapsed : 0.0;
  std::string line = what_ + " [" + std::string(e.phase) + "] " +
                     FormatBytes(static_cast<double>(e.done_bytes));
  if (e.total_bytes > 0) {
    char pct[32];
    std::snprintf(pct, sizeof(pct), " of %s (%.1f%%)",
                  FormatBytes(static_cast<double>(e.total_bytes)).c_str(),
                  100.0 * static_cast<double>(e.done_bytes) / static_cast<double>(e.total_bytes));
    line += pct;
  }
  line += ", " + FormatBytes(rate) + "/s";
  if (e.records > 0) line += ", " + std::to_string(e.records) + " records";
  if (e.total_bytes > 0 && rate > 0 && e.done_bytes < e.total_bytes) {
    const double eta = static_cast<double>(e.total_bytes - e.done_bytes) / rate;
    char buf[32];
    std::snprintf(buf, sizeof(buf), ", ETA %.0fs", eta);
    line += buf;
  }
  if (tty_) {
    std::fprintf(stderr, "\r\033[K%s", line.c_str());
    drawn_ = true;
  } else {
    std::fprintf(stderr, "%s\n", line.c_str());
  }
  std::fflush(stderr);
}

void ProgressPrinter::Finish() {
  std::lock_guard<std::mutex> lock(mu_);
  if (drawn_) {
    std::fprintf(stderr, "\r\033[K");
    std::fflush(stderr);
    drawn_ = false;
  }
}

namespace {
extern "C" void HandleSignal(int sig) {
  static volatile std::sig_atomic_t seen = 0;
  if (seen != 0) std::_Exit(128 + sig);  // second signal: stop now
  seen = 1;
  RequestCancel();
}
}  // namespace

void InstallSignalHandlers() {
  struct sigaction sa {};
  sa.sa_handler = HandleSignal;
  sigemptyset(&sa.sa_mask);
  sigaction(SIGINT, &sa, nullptr);
  sigaction(SIGTERM, &sa, nullptr);
}

}  // namespace tidemark::cli
