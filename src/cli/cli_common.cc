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
  // A phase counting pieces of work (shards) has its own rate, from its first event
  // (seen here even when it is not printed).
  if (e.total_units > 0 && (e.phase != units_phase_ || e.total_units != units_total_)) {
    units_phase_ = std::string(e.phase);
    units_total_ = e.total_units;
    units_start_ = now;
    units_done0_ = e.done_units;
  }
  const double since_last = std::chrono::duration<double>(now - last_).count();
  if (since_last < (tty_ ? 0.25 : log_interval_s_)) return;
  last_ = now;
  std::string line = what_ + " [" + std::string(e.phase) + "]";
  double eta = -1;  // seconds, when known
  if (e.total_units > 0) {
    char buf[96];
    std::snprintf(buf, sizeof(buf), " %s %llu of %llu (%.1f%%)", std::string(e.unit).c_str(),
                  static_cast<unsigned long long>(e.done_units),
                  static_cast<unsigned long long>(e.total_units),
                  100.0 * static_cast<double>(e.done_units) / static_cast<double>(e.total_units));
    line += buf;
    const double phase_s = std::chrono::duration<double>(now - units_start_).count();
    if (e.done_units > units_done0_ && phase_s > 0 && e.done_units < e.total_units) {
      const double rate = static_cast<double>(e.done_units - units_done0_) / phase_s;
      eta = static_cast<double>(e.total_units - e.done_units) / rate;
    }
  } else if (e.total_bytes > 0 || e.done_bytes > 0) {
    const double elapsed = std::chrono::duration<double>(now - start_).count();
    const double rate = elapsed > 0 ? static_cast<double>(e.done_bytes) / elapsed : 0.0;
    line += " " + FormatBytes(static_cast<double>(e.done_bytes));
    if (e.total_bytes > 0) {
      char pct[32];
      std::snprintf(pct, sizeof(pct), " of %s (%.1f%%)",
                    FormatBytes(static_cast<double>(e.total_bytes)).c_str(),
                    100.0 * static_cast<double>(e.done_bytes) / static_cast<double>(e.total_bytes));
      line += pct;
    }
    line += ", " + FormatBytes(rate) + "/s";
    if (e.total_bytes > 0 && rate > 0 && e.done_bytes < e.total_bytes) {
      eta = static_cast<double>(e.total_bytes - e.done_bytes) / rate;
    }
  }
  if (e.records > 0) line += ", " + std::to_string(e.records) + " records";
  if (eta >= 0) {
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
