// front_half_bench: throughput of the front half of the pipeline (read + JSON parse +
// normalize/tokenize + n-gram fingerprints) on JSON Lines corpus files.
//
// Pipeline (oneTBB parallel_pipeline, one per file; files run in parallel too, all
// inside one task_arena of --threads threads): a serial stage cuts the decompressed
// file into ~4 MiB blocks of whole lines (BlockReader), a parallel stage parses each
// block (one BlockParser per thread), tokenizes every record and computes its 13-gram
// fingerprints. Levels: "read" stops after JSON parsing (field extraction),
// "full" does everything.
//
// Modes:
//   throughput (default): --plain PATH... and/or --zst PATH... (files, directories or
//     @lists of .jsonl / .jsonl.zst made by scripts/gen_corpus.py). For each set and
//     thread count: best and median MB/s of uncompressed JSONL over --repeat runs,
//     the first run dropped as warm-up. For the .zst set the baseline
//     `zstd -dc FILE > /dev/null` over the same files, one after the other (one
//     core), is timed in the same run and the wall-time ratio printed.
//   rss FILE: one full pass over FILE, prints peak RSS (getrusage ru_maxrss).
//   flatness --small FILE --big FILE: runs the rss mode as two separate processes
//     and prints both peaks and their ratio (memory must not grow with file size).
//
// Usage: front_half_bench [--mode throughput|rss|flatness] [--threads 1,2]
//          [--repeat 4] [--level full|read|both] [--plain P]... [--zst P]...
//          [--small F --big F] [FILE]
#include <sys/resource.h>
#include <sys/wait.h>
#include <tbb/concurrent_queue.h>
#include <tbb/enumerable_thread_specific.h>
#include <tbb/parallel_for_each.h>
#include <tbb/parallel_pipeline.h>
#include <tbb/task_arena.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <memory>
#include <mutex>
#include <string>
#include <vector>

#include "tidemark/reader.h"
#include "tidemark/text_options.h"
#include "tidemark/tokenizer.h"

namespace {

using Clock = std::chrono::steady_clock;
using tidemark::BlockParser;
using tidemark::BlockReader;
using tidemark::LineBlock;
using tidemark::ReadOptions;
using tidemark::Record;
using tidemark::TextOptions;
using tidemark::Token;
using tidemark::Tokenizer;

enum class Level { kRead, kFull };

struct PassResult {
  double seconds = 0;
  double cpu_seconds = 0;  // user + system, all threads
  uint64_t bytes = 0;  // uncompressed
  uint64_t records = 0;
  uint64_t prints = 0;
  uint64_t checksum = 0;  // sum of all fingerprints: independent of order and threads
  std::string error;
};

struct Worker {
  Worker(const ReadOptions& ro, const TextOptions& to) : parser(ro), tokenizer(to) {}
  BlockParser parser;
  Tokenizer tokenizer;
  std::vector<Token> tokens;
  std::vector<uint64_t> prints;
  uint64_t records = 0;
  uint64_t n_prints = 0;
  uint64_t checksum = 0;
};

class BlockPool {
 public:
  LineBlock* Get() {
    LineBlock* b = nullptr;
    if (free_.try_pop(b)) return b;
    std::lock_guard<std::mutex> lock(mu_);
    owned_.push_back(std::make_unique<LineBlock>());
    return owned_.back().get();
  }
  void Put(LineBlock* b) { free_.push(b); }

 private:
  tbb::concurrent_queue<LineBlock*> free_;
  std::mutex mu_;
  std::vector<std::unique_ptr<LineBlock>> owned_;
};

double CpuSeconds(int who) {
  struct rusage ru;
  getrusage(who, &ru);
  return static_cast<double>(ru.ru_utime.tv_sec + ru.ru_stime.tv_sec) +
         static_cast<double>(ru.ru_utime.tv_usec + ru.ru_stime.tv_usec) / 1e6;
}

PassResult RunPass(const std::vector<std::string>& files, int threads, Level level) {
  ReadOptions ro;
  ro.id_field = "id";
  const TextOptions to;
  BlockPool pool;
  tbb::enumerable_thread_specific<std::unique_ptr<Worker>> workers;
  std::atomic<uint64_t> bytes{0};
  std::mutex err_mu;
  std::string error;
  const auto start = Clock::now();
  const double cpu_start = CpuSeconds(RUSAGE_SELF);
  tbb::task_arena arena(threads);
  arena.execute([&] {
    tbb::parallel_for_each(files.begin(), files.end(), [&](const std::string& path) {
      auto opened = BlockReader::Open(path, ro);
      if (!opened.ok()) {
        std::lock_guard<std::mutex> lock(err_mu);
        error = opened.status().ToString();
        return;
      }
      BlockReader* reader = opened->get();
      tbb::parallel_pipeline(
          static_cast<size_t>(threads) * 2 + 1,
          tbb::make_filter<void, LineBlock*>(
              tbb::filter_mode::serial_in_order,
              [&](tbb::flow_control& fc) -> LineBlock* {
                LineBlock* b = pool.Get();
                auto more = reader->Next(b);
                if (!more.ok() || !*more) {
                  if (!more.ok()) {
                    std::lock_guard<std::mutex> lock(err_mu);
                    error = more.status().ToString();
                  }
                  pool.Put(b);
                  fc.stop();
                  return nullptr;
                }
                bytes += b->data.size();
                return b;
              }) &
              tbb::make_filter<LineBlock*, void>(
                  tbb::filter_mode::parallel, [&](LineBlock* b) {
                    std::unique_ptr<Worker>& slot = workers.local();
                    if (!slot) slot = std::make_unique<Worker>(ro, to);
                    Worker& w = *slot;
                    w.parser.Reset(b);
                    Record rec;
                    while (true) {
                      auto more = w.parser.Next(&rec);
                      if (!more.ok() || !*more) break;
                      ++w.records;
                      if (level == Level::kRead) {
                        w.checksum += rec.text.size();
                        continue;
                      }
                      w.tokenizer.Tokenize(rec.text, &w.tokens);
                      tidemark::ComputeFingerprints(w.tokens, to, &w.prints);
                      w.n_prints += w.prints.size();
                      for (const uint64_t p : w.prints) w.checksum += p;
                    }
                    pool.Put(b);
                  }));
    });
  });
  PassResult r;
  r.seconds = std::chrono::duration<double>(Clock::now() - start).count();
  r.cpu_seconds = CpuSeconds(RUSAGE_SELF) - cpu_start;
  r.bytes = bytes.load();
  for (const auto& w : workers) {
    if (!w) continue;
    r.records += w->records;
    r.prints += w->n_prints;
    r.checksum += w->checksum;
  }
  r.error = error;
  return r;
}

double Median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  const size_t n = v.size();
  return n % 2 ? v[n / 2] : (v[n / 2 - 1] + v[n / 2]) / 2;
}

long PeakRssKb() {
  struct rusage ru;
  getrusage(RUSAGE_SELF, &ru);
  return ru.ru_maxrss;
}

struct Timing {
  double best = 0;    // wall seconds
  double median = 0;  // wall seconds
  double cpu_best = 0;  // CPU seconds (user + system), best run
};

// Runs f `repeat` times (f returns {wall, cpu} seconds), drops the first, returns
// best and median wall seconds and the best CPU seconds.
template <typename F>
Timing Time(int repeat, F f) {
  std::vector<double> t, c;
  for (int i = 0; i < repeat; ++i) {
    const std::pair<double, double> s = f();
    if (i > 0 || repeat == 1) {
      t.push_back(s.first);
      c.push_back(s.second);
    }
  }
  return {*std::min_element(t.begin(), t.end()), Median(t), *std::min_element(c.begin(), c.end())};
}

std::vector<std::string> Expand(const std::vector<std::string>& args) {
  if (args.empty()) return {};
  auto r = tidemark::ExpandInputs(args);
  if (!r.ok()) {
    std::fprintf(stderr, "front_half_bench: %s\n", r.status().ToString().c_str());
    std::exit(1);
  }
  return *r;
}

// Wall and CPU seconds of `zstd -dc FILE > /dev/null` over the files in turn.
std::pair<double, double> ZstdBaseline(const std::vector<std::string>& files) {
  const auto start = Clock::now();
  const double cpu_start = CpuSeconds(RUSAGE_CHILDREN);
  for (const std::string& f : files) {
    const std::string cmd = "zstd -q -dc '" + f + "' > /dev/null";
    if (std::system(cmd.c_str()) != 0) {
      std::fprintf(stderr, "front_half_bench: failed: %s\n", cmd.c_str());
      std::exit(1);
    }
  }
  return {std::chrono::duration<double>(Clock::now() - start).count(),
          CpuSeconds(RUSAGE_CHILDREN) - cpu_start};
}

int Throughput(const std::vector<std::string>& plain, const std::vector<std::string>& zst,
               const std::vector<int>& threads, int repeat, const std::string& level_arg) {
  std::vector<Level> levels;
  if (level_arg == "read" || level_arg == "both") levels.push_back(Level::kRead);
  if (level_arg == "full" || level_arg == "both") levels.push_back(Level::kFull);
  std::printf("front_half_bench: %d repeats per figure, first dropped; MB = 10^6 bytes of "
              "uncompressed JSONL\n", repeat);
  struct Set {
    const char* name;
    const std::vector<std::string>* files;
  };
  for (const Set& set : {Set{"jsonl", &plain}, Set{"jsonl.zst", &zst}}) {
    if (set.files->empty()) continue;
    for (const Level level : levels) {
      double one_thread = 0;
      double best_wall_by_threads = 0;
      double one_thread_cpu = 0;
      double best_cpu_by_threads = 0;
      for (const int t : threads) {
        PassResult last;
        const Timing tm = Time(repeat, [&] {
          last = RunPass(*set.files, t, level);
          if (!last.error.empty()) {
            std::fprintf(stderr, "front_half_bench: %s\n", last.error.c_str());
            std::exit(1);
          }
          return std::make_pair(last.seconds, last.cpu_seconds);
        });
        const double mb = static_cast<double>(last.bytes) / 1e6;
        if (t == threads.front()) one_thread = tm.best;
        best_wall_by_threads = tm.best;
        if (t == threads.front()) one_thread_cpu = tm.cpu_best;
        best_cpu_by_threads = tm.cpu_best;
        std::printf("%-9s %-10s %zu files %8.1f MB %d thread%s: best %7.1f MB/s  median %7.1f "
                    "MB/s  wall %6.2f s  speedup %.2fx  cpu %6.2f s = %6.1f MB/cpu-s (x%.2f of 1st)  "
                    "(%llu records, %llu prints, sum %016llx)\n",
                    set.name, level == Level::kRead ? "read+parse" : "front-half",
                    set.files->size(), mb, t, t == 1 ? " " : "s", mb / tm.best, mb / tm.median,
                    tm.best, one_thread / tm.best, tm.cpu_best, mb / tm.cpu_best,
                    one_thread_cpu / tm.cpu_best, static_cast<unsigned long long>(last.records),
                    static_cast<unsigned long long>(last.prints),
                    static_cast<unsigned long long>(last.checksum));
        std::fflush(stdout);
      }
      if (set.files == &zst) {
        const Timing base = Time(repeat, [&] { return ZstdBaseline(zst); });
        std::printf("%-9s baseline   zstd -dc > /dev/null, one file after another (1 core): "
                    "best wall %6.2f s  median %6.2f s  cpu %6.2f s;  %s/%d threads vs "
                    "baseline: wall %.2fx, cpu %.2fx\n",
                    set.name, base.best, base.median, base.cpu_best,
                    level == Level::kRead ? "read+parse" : "front-half", threads.back(),
                    best_wall_by_threads / base.best, best_cpu_by_threads / base.cpu_best);
        std::fflush(stdout);
      }
    }
  }
  std::printf("peak RSS %.1f MB\n", static_cast<double>(PeakRssKb()) / 1024.0);
  return 0;
}

int Rss(const std::string& file, int threads) {
  const PassResult r = RunPass({file}, threads, Level::kFull);
  if (!r.error.empty()) {
    std::fprintf(stderr, "front_half_bench: %s\n", r.error.c_str());
    return 1;
  }
  std::printf("rss %s bytes %llu seconds %.2f peak_rss_kb %ld\n", file.c_str(),
              static_cast<unsigned long long>(r.bytes), r.seconds, PeakRssKb());
  return 0;
}

// Runs `self --mode rss --threads T FILE` and returns its peak RSS in KB.
long ChildRss(const std::string& self, const std::string& file, int threads) {
  const std::string cmd = "'" + self + "' --mode rss --threads " + std::to_string(threads) +
                          " '" + file + "'";
  FILE* p = popen(cmd.c_str(), "r");
  if (p == nullptr) return -1;
  char line[4096];
  long kb = -1;
  while (std::fgets(line, sizeof(line), p) != nullptr) {
    std::fputs(line, stdout);
    const char* at = std::strstr(line, "peak_rss_kb ");
    if (at != nullptr) kb = std::atol(at + 12);
  }
  if (pclose(p) != 0) return -1;
  return kb;
}

int Flatness(const std::string& small, const std::string& big, int threads) {
  char self[4096];
  const ssize_t n = readlink("/proc/self/exe", self, sizeof(self) - 1);
  if (n <= 0) return 1;
  self[n] = '\0';
  const long a = ChildRss(self, small, threads);
  const long b = ChildRss(self, big, threads);
  if (a <= 0 || b <= 0) {
    std::fprintf(stderr, "front_half_bench: a child run failed\n");
    return 1;
  }
  std::printf("peak RSS: small %.1f MB, big %.1f MB, big/small %.3f (%d threads)\n", a / 1024.0,
              b / 1024.0, static_cast<double>(b) / static_cast<double>(a), threads);
  return 0;
}

void Usage() {
  std::fprintf(stderr,
               "usage: front_half_bench [--mode throughput|rss|flatness] [--threads 1,2] "
               "[--repeat N] [--level full|read|both] [--plain PATH]... [--zst PATH]... "
               "[--small FILE --big FILE] [FILE]\n");
  std::exit(2);
}

}  // namespace

int main(int argc, char** argv) {
  std::string mode = "throughput";
  std::string level = "both";
  std::vector<int> threads = {1, 2};
  int repeat = 4;
  std::vector<std::string> plain, zst, rest;
  std::string small, big;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    auto next = [&]() -> std::string {
      if (i + 1 >= argc) Usage();
      return argv[++i];
    };
    if (a == "--mode") {
      mode = next();
    } else if (a == "--threads") {
      threads.clear();
      const std::string list = next();
      size_t pos = 0;
      while (pos <= list.size()) {
        const size_t comma = std::min(list.find(',', pos), list.size());
        threads.push_back(std::atoi(list.substr(pos, comma - pos).c_str()));
        pos = comma + 1;
      }
    } else if (a == "--repeat") {
      repeat = std::atoi(next().c_str());
    } else if (a == "--level") {
      level = next();
    } else if (a == "--plain") {
      plain.push_back(next());
    } else if (a == "--zst") {
      zst.push_back(next());
    } else if (a == "--small") {
      small = next();
    } else if (a == "--big") {
      big = next();
    } else if (!a.empty() && a[0] == '-') {
      Usage();
    } else {
      rest.push_back(a);
    }
  }
  if (repeat < 1 || threads.empty()) Usage();
  for (const int t : threads) {
    if (t < 1) Usage();
  }
  if (mode == "rss") {
    if (rest.size() != 1) Usage();
    return Rss(rest[0], threads.back());
  }
  if (mode == "flatness") {
    if (small.empty() || big.empty()) Usage();
    return Flatness(small, big, threads.back());
  }
  if (mode != "throughput") Usage();
  for (const std::string& r : rest) plain.push_back(r);
  if (plain.empty() && zst.empty()) Usage();
  return Throughput(Expand(plain), Expand(zst), threads, repeat, level);
}
