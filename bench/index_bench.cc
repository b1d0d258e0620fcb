// index_bench: the index targets of issue 3 (docs/performance.md, "Index").
//
// Modes (corpus from scripts/gen_corpus.py):
//   build  --zst FILE... [--threads 2] [--memory 4G] [--out DIR] [--cached-writes]
//          [--repeat N]
//          BuildIndex wall time against `zstd -qdc FILE... > /dev/null` of the same
//          files (one process, one core), timed back to back in N pairs; each pair's
//          ratio, their median, phase times and CPU; MB/s of uncompressed JSONL;
//          bytes per distinct n-gram.
//   rss    --zst FILE... --memory 512M [--threads 2] [--out DIR]
//          BuildIndex in a child process; its peak RSS (wait4 ru_maxrss) against the
//          budget, and the corpus size against the budget.
//   lookup --index DIR [--threads 1] [--seconds 2]
//          Batched Index::Lookup, page cache warmed first: all-absent, all-present and
//          half/half batches of 4096 fingerprints; lookups per second per thread.
//   sink   [--keys 100000000] [--threads 2] [--repeat 3] [--cached-writes]
//          The index side alone (buffering, sorting, counting, writing shards) on
//          random fingerprints: wall, CPU and CPU nanoseconds per key.
//   layout [--keys 100000000]
//          Synthetic keys (one 256-shard index): bytes per key of each section against
//          the information-theoretic bound, and exact lookups (no Bloom) of the bucket
//          directory against std::lower_bound on the sorted array.
//   naive  --jsonl FILE [--threads 2]
//          bench/naive_ngram_set.py (a Python set of hashed 13-grams) against BuildIndex
//          on the same file: MB/s and peak RSS of both.
#include <fcntl.h>
#include <sys/mman.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>
#define ZSTD_STATIC_LINKING_ONLY  // ZSTD_findDecompressedSize
#include <zstd.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <string>
#include <thread>
#include <vector>

#include "index/format.h"
#include "index/manifest.h"
#include "index/shard_reader.h"
#include "tidemark/index.h"
#include "tidemark/index_builder.h"

namespace {

using Clock = std::chrono::steady_clock;
using namespace tidemark;

double Since(Clock::time_point t) { return std::chrono::duration<double>(Clock::now() - t).count(); }

// User + system CPU seconds of this process so far (all threads).
double CpuSeconds() {
  rusage ru;
  ::getrusage(RUSAGE_SELF, &ru);
  return static_cast<double>(ru.ru_utime.tv_sec + ru.ru_stime.tv_sec) +
         static_cast<double>(ru.ru_utime.tv_usec + ru.ru_stime.tv_usec) / 1e6;
}

struct Args {
  std::string mode;
  std::vector<std::string> zst;
  std::string jsonl;
  std::string index;
  std::string out = "index_bench.idx";
  std::string memory;
  int threads = 2;
  double seconds = 2;
  uint64_t keys = 100000000;
  bool cached_writes = false;
  int repeat = 1;
};

uint64_t ZstdContentSize(const std::string& path) {
  const int fd = ::open(path.c_str(), O_RDONLY);
  if (fd < 0) return 0;
  struct stat st;
  ::fstat(fd, &st);
  void* p = ::mmap(nullptr, static_cast<size_t>(st.st_size), PROT_READ, MAP_PRIVATE, fd, 0);
  ::close(fd);
  if (p == MAP_FAILED) return 0;
  const unsigned long long n = ZSTD_findDecompressedSize(p, static_cast<size_t>(st.st_size));
  ::munmap(p, static_cast<size_t>(st.st_size));
  return n == ZSTD_CONTENTSIZE_ERROR || n == ZSTD_CONTENTSIZE_UNKNOWN ? 0 : n;
}

// One `zstd -qdc FILE... > /dev/null`: zstd decompresses the files one after the
// other on one core (one process, so no per-file start-up is timed). -1 if it failed.
double TimeZstd(const std::vector<std::string>& files) {
  std::string cmd = "zstd -qdc";
  for (const auto& f : files) cmd += " '" + f + "'";
  cmd += " > /dev/null";
  const auto t = Clock::now();
  if (std::system(cmd.c_str()) != 0) return -1;
  return Since(t);
}

void WarmFiles(const std::vector<std::string>& files) {
  std::vector<char> buf(1 << 20);
  for (const auto& f : files) {
    FILE* fp = std::fopen(f.c_str(), "rb");
    if (fp == nullptr) continue;
    while (std::fread(buf.data(), 1, buf.size(), fp) > 0) {
    }
    std::fclose(fp);
  }
}

int Build(const Args& a, bool quiet_header = false) {
  uint64_t raw = 0, disk = 0;
  for (const auto& f : a.zst) {
    raw += ZstdContentSize(f);
    disk += std::filesystem::file_size(f);
  }
  WarmFiles(a.zst);
  if (!quiet_header) {
    std::printf("corpus: %zu files, %.1f MB zstd, %.1f MB uncompressed JSONL\n", a.zst.size(),
                disk / 1e6, raw / 1e6);
  }
  // --repeat pairs: zstd, then the build, each pair timed back to back, so that the
  // ratio of a pair compares the two at the same speed of a machine whose speed
  // drifts (on the test VM, zstd -dc of the same files took 5.9 to 9.7 s over a day).
  // Printed: every pair's ratio, their median, and the best times of each.
  double zstd_s = 1e30, build_s = 1e30, cpu_s = 0;
  std::vector<double> ratios;
  IndexBuildStats st;
  for (int r = 0; r < a.repeat; ++r) {
    const double z = TimeZstd(a.zst);
    if (z < 0) {
      std::fprintf(stderr, "zstd -qdc failed on the corpus files; no ratio to report\n");
      return 1;
    }
    zstd_s = std::min(zstd_s, z);
    std::filesystem::remove_all(a.out);
    IndexBuildOptions o;
    o.threads = a.threads;
    if (!a.memory.empty()) o.memory_budget = *ParseByteSize(a.memory);
    o.direct_writes = !a.cached_writes;
    IndexBuildStats run;
    const double cpu0 = CpuSeconds();
    const auto t = Clock::now();
    Status s = BuildIndex(a.out, a.zst, o, &run);
    const double sec = Since(t);
    const double cpu = CpuSeconds() - cpu0;
    if (!s.ok()) {
      std::fprintf(stderr, "build failed: %s\n", s.ToString().c_str());
      return 1;
    }
    ratios.push_back(sec / z);
    std::printf("pair %d: zstd -dc %.2f s, build %.2f s (reading %.2f s, CPU %.2f s; shards "
                "%.2f s, CPU %.2f s): ratio %.2f\n",
                r + 1, z, sec, run.seconds_reading, run.cpu_seconds_reading, run.seconds_writing,
                run.cpu_seconds_writing, sec / z);
    std::fflush(stdout);
    if (sec < build_s) {
      build_s = sec;
      cpu_s = cpu;
      st = run;
    }
  }
  std::sort(ratios.begin(), ratios.end());
  const double median = ratios.size() % 2 == 1
                            ? ratios[ratios.size() / 2]
                            : (ratios[ratios.size() / 2 - 1] + ratios[ratios.size() / 2]) / 2;
  if (a.repeat > 1) std::printf("best of %d runs each:\n", a.repeat);
  std::printf("zstd -dc, 1 core:        %.2f s (%.0f MB/s)\n", zstd_s, raw / 1e6 / zstd_s);
  std::printf("index build, %d threads: %.2f s (%.0f MB/s), %llu records, %llu n-grams, %llu distinct, "
              "%llu spills (%.0f MB)\n",
              a.threads, build_s, raw / 1e6 / build_s, (unsigned long long)st.records,
              (unsigned long long)st.ngrams_total, (unsigned long long)st.ngrams_distinct,
              (unsigned long long)st.spills, st.spilled_bytes / 1e6);
  std::printf("  phases: reading %.2f s (CPU %.2f s), sorting + writing shards %.2f s (CPU %.2f s); "
              "CPU %.2f s in all (%.2f cores busy on average); shard writes %s\n",
              st.seconds_reading, st.cpu_seconds_reading, st.seconds_writing,
              st.cpu_seconds_writing, cpu_s, cpu_s / build_s,
              a.cached_writes ? "through the page cache" : "direct (O_DIRECT)");
  std::printf("ratio build / zstd:      median of %zu pairs %.2f, best pair %.2f, best build / "
              "best zstd %.2f (target <= 2)\n",
              ratios.size(), median, ratios.front(), build_s / zstd_s);
  std::printf("index size:              %.1f MB, %.3f bytes per distinct n-gram (target <= 10, "
              "stretch 6)\n",
              st.index_bytes / 1e6, static_cast<double>(st.index_bytes) / st.ngrams_distinct);
  return 0;
}

int Rss(const Args& a) {
  uint64_t raw = 0;
  for (const auto& f : a.zst) raw += ZstdContentSize(f);
  const uint64_t budget = *ParseByteSize(a.memory);
  std::filesystem::remove_all(a.out);
  const auto t = Clock::now();
  const pid_t pid = ::fork();
  if (pid == 0) {
    IndexBuildOptions o;
    o.threads = a.threads;
    o.memory_budget = budget;
    IndexBuildStats st;
    Status s = BuildIndex(a.out, a.zst, o, &st);
    if (!s.ok()) {
      std::fprintf(stderr, "build failed: %s\n", s.ToString().c_str());
      ::_exit(1);
    }
    std::printf("child: %llu spills (%.0f MB), %llu distinct n-grams\n",
                (unsigned long long)st.spills, st.spilled_bytes / 1e6,
                (unsigned long long)st.ngrams_distinct);
    std::fflush(stdout);
    ::_exit(0);
  }
  int status = 0;
  struct rusage ru {};
  ::wait4(pid, &status, 0, &ru);
  const double peak = static_cast<double>(ru.ru_maxrss) * 1024.0;
  std::printf("corpus %.1f MB uncompressed = %.2f x the budget %.1f MB; build %.1f s\n", raw / 1e6,
              raw / static_cast<double>(budget), budget / 1e6, Since(t));
  std::printf("peak RSS %.1f MB = %.3f x budget (target <= 1.10)\n", peak / 1e6, peak / budget);
  return WIFEXITED(status) ? WEXITSTATUS(status) : 1;
}

int Lookup(const Args& a) {
  auto idx = Index::Open(a.index);
  if (!idx.ok()) {
    std::fprintf(stderr, "%s\n", idx.status().ToString().c_str());
    return 1;
  }
  const auto& m = (*idx)->manifest();
  std::vector<std::string> files;
  for (const auto& e : std::filesystem::recursive_directory_iterator(a.index)) {
    if (e.is_regular_file()) files.push_back(e.path().string());
  }
  WarmFiles(files);
  IndexInspection in;
  (void)InspectIndex(a.index, &in);
  std::printf("index: %.1f MB, %llu distinct n-grams, %zu segment(s)\n", in.bytes / 1e6,
              (unsigned long long)in.ngrams_distinct, m.segments.size());
  // Present keys: every k-th key of the dump, up to 4M.
  const uint64_t step = std::max<uint64_t>(1, in.ngrams_distinct / 4000000);
  std::vector<uint64_t> present;
  uint64_t i = 0;
  (void)DumpIndex(a.index, [&](uint64_t fp, const NgramInfo&) {
    if (i++ % step == 0) present.push_back(fp);
    return Status::Ok();
  });
  std::vector<uint64_t> absent(present.size());
  uint64_t x = 12345;
  for (auto& f : absent) {
    x += 0x9e3779b97f4a7c15ull;
    f = index_format::Mix64(x);
  }
  // Shuffle present keys so shards are visited at random.
  for (size_t j = present.size(); j > 1; --j) std::swap(present[j - 1], present[index_format::Mix64(j) % j]);
  std::vector<uint64_t> mixed(present.size());
  for (size_t j = 0; j < mixed.size(); ++j) mixed[j] = (j & 1) ? present[j] : absent[j];
  const size_t kBatch = 4096;
  auto run = [&](const char* name, const std::vector<uint64_t>& keys) {
    std::atomic<uint64_t> total{0};
    std::atomic<uint64_t> hits{0};
    const auto t = Clock::now();
    std::vector<std::thread> ths;
    for (int th = 0; th < a.threads; ++th) {
      ths.emplace_back([&, th] {
        std::vector<NgramInfo> out(kBatch);
        size_t pos = (static_cast<size_t>(th) * 7919 * kBatch) % keys.size();
        uint64_t n = 0, h = 0;
        while (Since(t) < a.seconds) {
          for (int rep = 0; rep < 16; ++rep) {
            if (pos + kBatch > keys.size()) pos = 0;
            (*idx)->Lookup(std::span<const uint64_t>(keys.data() + pos, kBatch), out);
            for (const auto& o : out) h += o.present();
            pos += kBatch;
            n += kBatch;
          }
        }
        total += n;
        hits += h;
      });
    }
    for (auto& th : ths) th.join();
    const double s = Since(t);
    std::printf("%-12s %d thread(s): %.2f M lookups/s total, %.2f M/s per thread, %.1f%% present\n",
                name, a.threads, total / s / 1e6, total / s / 1e6 / a.threads,
                100.0 * hits / std::max<uint64_t>(1, total));
  };
  run("absent", absent);
  run("present", present);
  run("half/half", mixed);
  return 0;
}

// The index side alone: BuildIndexFromDocuments on random fingerprints (documents of
// 800), so buffering, sorting, counting and shard writing are timed without the
// front half. Best of --repeat runs.
int Sink(const Args& a) {
  const uint64_t n = a.keys;
  std::vector<std::vector<uint64_t>> docs((n + 799) / 800);
  uint64_t x = 7;
  for (size_t d = 0; d < docs.size(); ++d) {
    docs[d].resize(std::min<uint64_t>(800, n - d * 800));
    for (auto& f : docs[d]) {
      x += 0x9e3779b97f4a7c15ull;
      f = index_format::Mix64(x);
    }
  }
  double best = 1e30, best_add = 0, best_write = 0, best_cpu = 0, best_add_cpu = 0,
         best_write_cpu = 0;
  for (int r = 0; r < a.repeat; ++r) {
    std::filesystem::remove_all(a.out);
    IndexBuildOptions o;
    o.threads = a.threads;
    o.direct_writes = !a.cached_writes;
    if (!a.memory.empty()) o.memory_budget = *ParseByteSize(a.memory);
    IndexBuildStats st;
    const double cpu0 = CpuSeconds();
    const auto t = Clock::now();
    Status s = BuildIndexFromDocuments(a.out, docs, o, false, &st);
    const double sec = Since(t);
    const double cpu = CpuSeconds() - cpu0;
    if (!s.ok()) {
      std::fprintf(stderr, "%s\n", s.ToString().c_str());
      return 1;
    }
    if (sec < best) {
      best = sec;
      best_add = st.seconds_reading;
      best_write = st.seconds_writing;
      best_add_cpu = st.cpu_seconds_reading;
      best_write_cpu = st.cpu_seconds_writing;
      best_cpu = cpu;
    }
  }
  std::printf("index side, %llu random keys, %d threads, best of %d: %.2f s wall (adding %.2f s, "
              "CPU %.1f ns per key; sorting + writing %.2f s, CPU %.1f ns per key), CPU %.2f s = "
              "%.1f ns per key; shard writes %s\n",
              (unsigned long long)n, a.threads, a.repeat, best, best_add,
              best_add_cpu / static_cast<double>(n) * 1e9, best_write,
              best_write_cpu / static_cast<double>(n) * 1e9, best_cpu,
              best_cpu / static_cast<double>(n) * 1e9, a.cached_writes ? "cached" : "direct");
  std::filesystem::remove_all(a.out);
  return 0;
}

int Layout(const Args& a) {
  // One document per 4096 random keys.
  const uint64_t n = a.keys;
  std::vector<std::vector<uint64_t>> docs((n + 4095) / 4096);
  uint64_t x = 99;
  for (size_t d = 0; d < docs.size(); ++d) {
    const size_t len = std::min<uint64_t>(4096, n - d * 4096);
    docs[d].resize(len);
    for (auto& f : docs[d]) {
      x += 0x9e3779b97f4a7c15ull;
      f = index_format::Mix64(x);
    }
  }
  std::filesystem::remove_all(a.out);
  IndexBuildOptions o;
  o.threads = a.threads;
  IndexBuildStats st;
  Status s = BuildIndexFromDocuments(a.out, docs, o, false, &st);
  if (!s.ok()) {
    std::fprintf(stderr, "%s\n", s.ToString().c_str());
    return 1;
  }
  auto idx = Index::Open(a.out);
  if (!idx.ok()) return 1;
  // Section totals over all shards.
  IndexInspection in;
  (void)InspectIndex(a.out, &in);
  double sec[index_format::kNumSections] = {};
  std::vector<std::unique_ptr<ShardReader>> readers;
  const auto& m = (*idx)->manifest();
  ShardParams p;
  p.shard_bits = m.shard_bits;
  p.bloom_bits_per_key = m.bloom_bits_per_key;
  p.params_hash = m.params_hash();
  for (uint32_t sh = 0; sh < (1u << m.shard_bits); ++sh) {
    p.shard_id = sh;
    auto r = ShardReader::Open(a.out + "/seg-000001/" + index_format::ShardFileName(sh), p);
    for (int i = 0; i < index_format::kNumSections; ++i) sec[i] += (*r)->section(i).bytes;
    readers.push_back(std::move(r).value());
  }
  const double keys = static_cast<double>(st.ngrams_distinct);
  const double per_shard = keys / (1u << m.shard_bits);
  // log2 C(U, N) / N ~ log2(U / N) + log2(e) for N << U, per shard with U = 2^(64-s).
  const double bound_bits = (64 - m.shard_bits) - std::log2(per_shard) + 1.4427;
  std::printf("%.0f keys, %u shards (%.0f keys per shard), total %.3f bytes/key\n", keys,
              1u << m.shard_bits, per_shard, in.bytes / keys);
  for (int i = 0; i < index_format::kNumSections; ++i) {
    std::printf("  %-22s %.3f bytes/key\n", index_format::kSectionNames[i], sec[i] / keys);
  }
  std::printf("  keys (directory + remainders) %.3f bytes/key; information bound %.3f bytes/key\n",
              (sec[1] + sec[2]) / keys, bound_bits / 8);
  // Exact lookups: bucket directory vs binary search over the sorted keys of one
  // shard array the size of the whole key set.
  std::vector<uint64_t> sorted;
  sorted.reserve(static_cast<size_t>(keys));
  for (const auto& d : docs) sorted.insert(sorted.end(), d.begin(), d.end());
  std::sort(sorted.begin(), sorted.end());
  std::vector<uint64_t> probe(2000000);
  for (size_t j = 0; j < probe.size(); ++j) probe[j] = sorted[index_format::Mix64(j) % sorted.size()];
  auto t = Clock::now();
  uint64_t found = 0;
  for (const uint64_t f : probe) found += std::binary_search(sorted.begin(), sorted.end(), f);
  const double bs = Since(t);
  t = Clock::now();
  uint64_t found2 = 0;
  for (const uint64_t f : probe) {
    found2 += readers[index_format::ShardOf(f, m.shard_bits)]->Find(f) >= 0;
  }
  const double bd = Since(t);
  std::printf("exact lookups, 1 thread, present keys: std::binary_search %.2f M/s; bucket "
              "directory %.2f M/s (found %llu / %llu)\n",
              probe.size() / bs / 1e6, probe.size() / bd / 1e6, (unsigned long long)found,
              (unsigned long long)found2);
  return 0;
}

int Naive(const Args& a) {
  const double mb = std::filesystem::file_size(a.jsonl) / 1e6;
  WarmFiles({a.jsonl});
  const std::string script = std::string(TIDEMARK_BENCH_SOURCE_DIR) + "/naive_ngram_set.py";
  const auto t = Clock::now();
  const pid_t pid = ::fork();
  if (pid == 0) {
    ::execl("/usr/bin/python3", "python3", script.c_str(), a.jsonl.c_str(), (char*)nullptr);
    ::_exit(127);
  }
  int status = 0;
  struct rusage ru {};
  ::wait4(pid, &status, 0, &ru);
  const double py_s = Since(t);
  const double py_rss = ru.ru_maxrss * 1024.0;
  std::filesystem::remove_all(a.out);
  IndexBuildOptions o;
  o.threads = a.threads;
  IndexBuildStats st;
  const auto t2 = Clock::now();
  Status s = BuildIndex(a.out, {a.jsonl}, o, &st);
  const double tm_s = Since(t2);
  struct rusage self {};
  ::getrusage(RUSAGE_SELF, &self);
  if (!s.ok()) return 1;
  std::printf("corpus %.1f MB JSONL\n", mb);
  std::printf("python set of 13-gram hashes: %.1f s, %.2f MB/s, peak RSS %.0f MB (%.1f GB per GB)\n",
              py_s, mb / py_s, py_rss / 1e6, py_rss / 1e6 / mb);
  std::printf("tidemark index build, %d threads: %.1f s, %.2f MB/s, peak RSS %.0f MB, index %.1f MB\n",
              a.threads, tm_s, mb / tm_s, self.ru_maxrss * 1024.0 / 1e6, st.index_bytes / 1e6);
  std::printf("speed ratio %.1fx\n", py_s / tm_s);
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  Args a;
  for (int i = 1; i < argc; ++i) {
    const std::string k = argv[i];
    auto next = [&]() -> std::string { return i + 1 < argc ? argv[++i] : ""; };
    if (k == "--zst") {
      while (i + 1 < argc && argv[i + 1][0] != '-') a.zst.push_back(argv[++i]);
    } else if (k == "--jsonl") a.jsonl = next();
    else if (k == "--index") a.index = next();
    else if (k == "--out") a.out = next();
    else if (k == "--memory") a.memory = next();
    else if (k == "--threads") a.threads = std::atoi(next().c_str());
    else if (k == "--seconds") a.seconds = std::atof(next().c_str());
    else if (k == "--cached-writes") a.cached_writes = true;
    else if (k == "--repeat") a.repeat = std::max(1, std::atoi(next().c_str()));
    else if (k == "--keys") a.keys = std::strtoull(next().c_str(), nullptr, 10);
    else if (k[0] != '-' && i == 1) a.mode = k;
    else {
      std::fprintf(stderr, "unknown argument %s\n", k.c_str());
      return 2;
    }
  }
  std::sort(a.zst.begin(), a.zst.end());
  if (a.mode.empty()) {
    std::fprintf(stderr,
                 "usage: index_bench build|rss|lookup|sink|layout|naive [options]; the modes and "
                 "their options are listed at the top of bench/index_bench.cc\n");
    return 2;
  }
  if ((a.mode == "build" || a.mode == "rss") && a.zst.empty()) {
    std::fprintf(stderr, "index_bench %s: --zst FILE... is required (a corpus from "
                 "scripts/gen_corpus.py --zstd)\n", a.mode.c_str());
    return 2;
  }
  if (a.mode == "build") return Build(a);
  if (a.mode == "rss") return Rss(a);
  if (a.mode == "lookup") return Lookup(a);
  if (a.mode == "layout") return Layout(a);
  if (a.mode == "sink") return Sink(a);
  if (a.mode == "naive") return Naive(a);
  std::fprintf(stderr, "unknown mode %s\n", a.mode.c_str());
  return 2;
}
