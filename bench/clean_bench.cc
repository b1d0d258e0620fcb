// clean_bench: throughput of cleaning (CleanCorpus, drop and redact) and of the
// evidence pass (ScanForEvidence), in corpus MB/s (uncompressed JSONL), next to the
// front half (read + JSON parse + tokenize + 13-gram fingerprints, the same
// BlockReader -> parallel BlockParser/Tokenizer pipeline) timed in the same run.
// Target (issue 5): each >= 80% of the front half. Also timed: the front half plus
// writing a copy of every block (what any cleaning must at least do), and CPU time
// per MB next to wall time (on a shared machine wall time depends on the others).
//
// Corpus: JSONL files made by scripts/gen_corpus.py (seeded). Benchmark: generated
// here, seeded: a 40-word window of every 100th corpus record (so about 1% of the
// records are contaminated) plus as many windows of random words.
//
// Usage: clean_bench [--threads 1,2] [--repeat 4] CORPUS.jsonl...
// Prints best and median MB/s per workload over --repeat runs, first run dropped. The
// front half is timed with 4 MiB blocks (the index build's) and with the blocks
// cleaning reads (CleanOptions::block_bytes); percentages are of the faster.
#include <sys/resource.h>
#include <tbb/enumerable_thread_specific.h>
#include <tbb/parallel_pipeline.h>
#include <tbb/task_arena.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <memory>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "common/env.h"
#include "common/text_util.h"
#include "tidemark/clean.h"
#include "tidemark/evidence.h"
#include "tidemark/reader.h"
#include "tidemark/tokenizer.h"

namespace {

using namespace tidemark;
using Clock = std::chrono::steady_clock;

double Seconds(Clock::time_point since) {
  return std::chrono::duration<double>(Clock::now() - since).count();
}

// User + system CPU seconds of the whole process (all threads). On a shared machine
// wall time depends on the other tenants; CPU time measures the work itself.
double CpuSeconds() {
  struct rusage ru;
  getrusage(RUSAGE_SELF, &ru);
  return static_cast<double>(ru.ru_utime.tv_sec + ru.ru_stime.tv_sec) +
         static_cast<double>(ru.ru_utime.tv_usec + ru.ru_stime.tv_usec) / 1e6;
}

// The front half, shaped like the cleaning pipeline: one file at a time, blocks in
// parallel.
// With `copy_dir`, every block is also written (in order, atomically, as cleaning
// does) to a file there: the front half plus the cost of writing a copy.
uint64_t FrontHalf(const std::vector<std::string>& files, const ReadOptions& ro,
                   const std::string& copy_dir = "", size_t block_bytes = 4 << 20) {
  const TextOptions to;
  struct W {
    explicit W(const TextOptions& t) : tok(t) {}
    Tokenizer tok;
    std::vector<Token> tokens;
    std::vector<uint64_t> fps;
    uint64_t sum = 0;
  };
  tbb::enumerable_thread_specific<std::unique_ptr<W>> ws([&] { return std::make_unique<W>(to); });
  uint64_t bytes = 0;
  for (const std::string& f : files) {
    auto reader = BlockReader::Open(f, ro, block_bytes);
    if (!reader.ok()) {
      std::fprintf(stderr, "%s\n", reader.status().ToString().c_str());
      std::exit(1);
    }
    std::unique_ptr<AtomicFileWriter> copy;
    if (!copy_dir.empty()) {
      std::filesystem::create_directories(copy_dir);
      // Written as cleaning writes its outputs (CleanOptions::direct_writes).
      copy = std::make_unique<AtomicFileWriter>(copy_dir + "/" + BaseName(f), Env::Default(),
                                                FileOptions{true});
      if (!copy->Open().ok()) std::exit(1);
    }
    tbb::parallel_pipeline(
        2 * static_cast<size_t>(tbb::this_task_arena::max_concurrency()),
        tbb::make_filter<void, std::shared_ptr<LineBlock>>(
            tbb::filter_mode::serial_in_order,
            [&](tbb::flow_control& fc) -> std::shared_ptr<LineBlock> {
              auto b = std::make_shared<LineBlock>();
              auto more = (*reader)->Next(b.get());
              if (!more.ok() || !*more) {
                fc.stop();
                return nullptr;
              }
              bytes += b->data.size();
              return b;
            }) &
            tbb::make_filter<std::shared_ptr<LineBlock>, std::shared_ptr<LineBlock>>(
                tbb::filter_mode::parallel, [&](std::shared_ptr<LineBlock> b) {
                  W& w = *ws.local();
                  BlockParser p(ro);
                  p.Reset(b.get());
                  Record rec;
                  while (true) {
                    auto more = p.Next(&rec);
                    if (!more.ok() || !*more) break;
                    w.tok.Tokenize(rec.text, &w.tokens);
                    ComputeFingerprints(w.tokens, to, &w.fps);
                    for (uint64_t x : w.fps) w.sum += x;
                  }
                  return b;
                }) &
            tbb::make_filter<std::shared_ptr<LineBlock>, void>(
                tbb::filter_mode::serial_in_order, [&](std::shared_ptr<LineBlock> b) {
                  if (copy && !copy->Append(b->data).ok()) std::exit(1);
                }));
    if (copy && !copy->Commit().ok()) std::exit(1);
  }
  return bytes;
}

std::string MakeBenchmark(const std::vector<std::string>& files, const std::string& dir) {
  std::mt19937_64 rng(20240611);
  std::vector<std::string> vocab;
  std::string out;
  uint64_t n = 0, items = 0;
  for (const std::string& f : files) {
    auto r = RecordReader::Open(f, ReadOptions{});
    if (!r.ok()) std::exit(1);
    Record rec;
    while (*(*r)->Next(&rec)) {
      std::istringstream words{std::string(rec.text)};
      std::vector<std::string> w;
      std::string x;
      while (words >> x) w.push_back(x);
      if (vocab.size() < 20000) vocab.insert(vocab.end(), w.begin(), w.begin() + std::min<size_t>(w.size(), 50));
      if (n++ % 100 != 0 || w.size() < 40) continue;
      const size_t at = rng() % (w.size() - 39);
      std::string text;
      for (size_t i = 0; i < 40; ++i) text += (i ? " " : "") + w[at + i];
      out += "{\"id\": \"planted-" + std::to_string(items++) + "\", \"text\": ";
      AppendJsonString(&out, text);
      out += "}\n";
    }
  }
  const uint64_t planted = items;
  for (uint64_t k = 0; k < planted; ++k) {
    std::string text;
    for (size_t i = 0; i < 40; ++i) text += (i ? " " : "") + vocab[rng() % vocab.size()];
    out += "{\"id\": \"random-" + std::to_string(k) + "\", \"text\": ";
    AppendJsonString(&out, text);
    out += "}\n";
  }
  const std::string path = dir + "/bench.jsonl";
  std::ofstream(path) << out;
  return path;
}

void Report(const char* name, std::vector<double> mbs, double front_best, std::vector<double> cpu,
            double front_cpu_best) {
  std::sort(mbs.begin(), mbs.end());
  std::sort(cpu.begin(), cpu.end());
  const double best = mbs.back(), median = mbs[mbs.size() / 2];
  std::printf("  %-20s wall: best %7.1f MB/s median %7.1f MB/s (%3.0f%% of front half) | "
              "CPU: best %7.1f MB per CPU-s (%3.0f%% of front half)\n",
              name, best, median, 100.0 * best / front_best, cpu.back(),
              100.0 * cpu.back() / front_cpu_best);
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<int> threads = {1, 2};
  int repeat = 4;
  std::vector<std::string> files;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if (a == "--threads" && i + 1 < argc) {
      threads.clear();
      std::stringstream ss(argv[++i]);
      std::string t;
      while (std::getline(ss, t, ',')) threads.push_back(std::atoi(t.c_str()));
    } else if (a == "--repeat" && i + 1 < argc) {
      repeat = std::max(2, std::atoi(argv[++i]));
    } else {
      files.push_back(a);
    }
  }
  if (files.empty()) {
    std::fprintf(stderr, "usage: clean_bench [--threads 1,2] [--repeat N] CORPUS.jsonl...\n");
    return 2;
  }
  const std::string dir = std::filesystem::temp_directory_path() / ("clean_bench." + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  const std::string bench = MakeBenchmark(files, dir);
  ReadOptions ro;
  ro.id_field = "id";
  CleanBenchmark cb;
  cb.path = bench;
  cb.read.id_field = "id";
  auto table = BenchmarkTable::Build({cb}, TextOptions{});
  if (!table.ok()) return 1;
  CleanOptions co;
  co.corpus_read = ro;
  auto first = CleanCorpus(**table, files, dir + "/probe", co);
  if (!first.ok()) {
    std::fprintf(stderr, "%s\n", first.status().ToString().c_str());
    return 1;
  }
  uint64_t bytes = 0, contaminated = 0, records = 0;
  for (const auto& f : first->files) {
    bytes += f.bytes_in;
    contaminated += f.contaminated;
    records += f.records;
  }
  EvidenceOptions eo;
  uint64_t unresolved = 0;
  auto targets = CollectEvidenceTargets(first->benchmarks, TextOptions{}, eo, &unresolved);
  if (!targets.ok()) return 1;
  std::printf("corpus: %zu files, %.1f MB, %llu records, %llu contaminated; %zu benchmark items, %zu evidence targets\n",
              files.size(), static_cast<double>(bytes) / 1e6, static_cast<unsigned long long>(records),
              static_cast<unsigned long long>(contaminated), (*table)->benchmarks()[0].items.size(),
              targets->size());
  for (int t : threads) {
    tbb::task_arena arena(t);
    std::vector<double> front, front1, copyw, drop, dropc, redact, evidence, front_c, front1_c,
        copy_c, drop_c, dropc_c, redact_c, evidence_c;
    arena.execute([&] {
      for (int r = 0; r < repeat; ++r) {
        double c0 = CpuSeconds();
        auto t0 = Clock::now();
        const uint64_t b = FrontHalf(files, ro);
        const double f_s = Seconds(t0), f_c = CpuSeconds() - c0;
        // The same with the 1 MiB blocks cleaning reads (CleanOptions::block_bytes).
        c0 = CpuSeconds();
        t0 = Clock::now();
        (void)FrontHalf(files, ro, "", co.block_bytes);
        const double f1_s = Seconds(t0), f1_c = CpuSeconds() - c0;
        c0 = CpuSeconds();
        t0 = Clock::now();
        (void)FrontHalf(files, ro, dir + "/copy");
        const double w_s = Seconds(t0), w_c = CpuSeconds() - c0;
        CleanOptions d = co;
        c0 = CpuSeconds();
        t0 = Clock::now();
        auto s1 = CleanCorpus(**table, files, dir + "/drop", d);
        const double d_s = Seconds(t0), d_c = CpuSeconds() - c0;
        CleanOptions dc = co;
        dc.direct_writes = false;
        c0 = CpuSeconds();
        t0 = Clock::now();
        auto s3 = CleanCorpus(**table, files, dir + "/dropc", dc);
        const double dc_s = Seconds(t0), dc_c = CpuSeconds() - c0;
        d.mode = CleanMode::kRedact;
        c0 = CpuSeconds();
        t0 = Clock::now();
        auto s2 = CleanCorpus(**table, files, dir + "/redact", d);
        const double r_s = Seconds(t0), r_c = CpuSeconds() - c0;
        c0 = CpuSeconds();
        t0 = Clock::now();
        auto ev = ScanForEvidence(first->benchmarks, *targets, files, ro, TextOptions{}, eo);
        const double e_s = Seconds(t0), e_c = CpuSeconds() - c0;
        if (!s1.ok() || !s2.ok() || !s3.ok() || !ev.ok()) std::exit(1);
        if (r == 0) continue;  // warm-up
        const double mb = static_cast<double>(b) / 1e6;
        front.push_back(mb / f_s);
        front1.push_back(mb / f1_s);
        front1_c.push_back(mb / f1_c);
        copyw.push_back(mb / w_s);
        copy_c.push_back(mb / w_c);
        drop.push_back(mb / d_s);
        dropc.push_back(mb / dc_s);
        dropc_c.push_back(mb / dc_c);
        redact.push_back(mb / r_s);
        evidence.push_back(mb / e_s);
        front_c.push_back(mb / f_c);
        drop_c.push_back(mb / d_c);
        redact_c.push_back(mb / r_c);
        evidence_c.push_back(mb / e_c);
      }
    });
    std::printf("threads %d:\n", t);
    // The reference is the faster of the two block sizes.
    const double fb = std::max(*std::max_element(front.begin(), front.end()),
                               *std::max_element(front1.begin(), front1.end()));
    const double fc = std::max(*std::max_element(front_c.begin(), front_c.end()),
                               *std::max_element(front1_c.begin(), front1_c.end()));
    Report("front half", front, fb, front_c, fc);
    Report("front half, 1M blocks", front1, fb, front1_c, fc);
    Report("front half + copy", copyw, fb, copy_c, fc);
    Report("clean --mode drop", drop, fb, drop_c, fc);
    Report("clean drop, cached", dropc, fb, dropc_c, fc);
    Report("clean --mode redact", redact, fb, redact_c, fc);
    Report("evidence pass", evidence, fb, evidence_c, fc);
  }
  std::filesystem::remove_all(dir);
  return 0;
}
