// probe_bench: the probe target of issue 4 (docs/performance.md, "Probe").
//
//   probe_bench [--keys 100000000] [--items 100000] [--words 60] [--leak-share 0.05]
//               [--dir probe_bench.work] [--repeat 3]
//
// Builds (once; reused when --dir already holds it) an index of --keys distinct
// fingerprints: the 13-gram fingerprints of the leaked share of the items plus seeded
// random 64-bit filler, via BuildIndexFromDocuments. Writes a JSONL benchmark of
// --items items of --words words drawn from a seeded Zipf-like vocabulary. Then times,
// after one warm-up run (index pages in the page cache), the whole probe + report:
// ProbeBenchmark (read, tokenize, batched lookups, overlap, verdicts), Summarize and
// the JSON, JSONL, CSV and Markdown writers. The baseline timed in the same run is
// reading and tokenizing the same benchmark (RecordReader + Tokenizer +
// ComputeFingerprints), i.e. the part of the probe that does not touch the index.
#include <sys/resource.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <random>
#include <string>
#include <vector>

#include "tidemark/index.h"
#include "tidemark/index_builder.h"
#include "tidemark/probe.h"
#include "tidemark/report.h"
#include "tidemark/tokenizer.h"

namespace {

using Clock = std::chrono::steady_clock;
using namespace tidemark;

double Since(Clock::time_point t) { return std::chrono::duration<double>(Clock::now() - t).count(); }

double PeakRssMb() {
  rusage ru{};
  getrusage(RUSAGE_SELF, &ru);
  return static_cast<double>(ru.ru_maxrss) / 1024.0;
}

// A seeded vocabulary of pronounceable pseudo-words with Zipf-like frequencies.
std::vector<std::string> Vocabulary(std::mt19937_64* rng, size_t n) {
  const char* cons = "bcdfghklmnprstvwz";
  const char* vow = "aeiou";
  std::vector<std::string> v;
  for (size_t i = 0; i < n; ++i) {
    std::string w;
    const int syl = 1 + static_cast<int>((*rng)() % 3);
    for (int s = 0; s < syl; ++s) {
      w += cons[(*rng)() % 17];
      w += vow[(*rng)() % 5];
    }
    v.push_back(w + std::to_string(i % 7));
  }
  return v;
}

}  // namespace

int main(int argc, char** argv) {
  uint64_t keys = 100000000;
  size_t items = 100000, words = 60, repeat = 3;
  double leak_share = 0.05;
  std::string dir = "probe_bench.work";
  for (int i = 1; i + 1 < argc; i += 2) {
    const std::string a = argv[i];
    const char* v = argv[i + 1];
    if (a == "--keys") keys = std::stoull(v);
    else if (a == "--items") items = std::stoull(v);
    else if (a == "--words") words = std::stoull(v);
    else if (a == "--leak-share") leak_share = std::stod(v);
    else if (a == "--dir") dir = v;
    else if (a == "--repeat") repeat = std::stoull(v);
    else {
      std::fprintf(stderr, "probe_bench: unknown option %s\n", a.c_str());
      return 2;
    }
  }
  std::filesystem::create_directories(dir);
  const std::string bench_path = dir + "/items.jsonl";
  const std::string index_dir = dir + "/index";
  TextOptions text;

  // Benchmark items.
  std::mt19937_64 rng(20261201);
  const std::vector<std::string> vocab = Vocabulary(&rng, 50000);
  std::vector<std::string> item_texts(items);
  {
    std::ofstream out(bench_path);
    for (size_t i = 0; i < items; ++i) {
      std::string t;
      for (size_t w = 0; w < words; ++w) {
        // Zipf-like: index = floor(50000^u) - 1.
        const double u = static_cast<double>(rng() >> 11) * 0x1.0p-53;
        const size_t k = std::min<size_t>(vocab.size() - 1, static_cast<size_t>(std::pow(50000.0, u)) - 1);
        if (w) t += ' ';
        t += vocab[k];
      }
      item_texts[i] = t;
      out << "{\"id\":\"b" << i << "\",\"text\":\"" << t << "\"}\n";
    }
  }

  if (!std::filesystem::exists(index_dir + "/manifest.json")) {
    std::filesystem::remove_all(index_dir);
    const auto t0 = Clock::now();
    std::vector<std::vector<uint64_t>> docs;
    Tokenizer tok(text);
    std::vector<Token> tokens;
    std::vector<uint64_t> fps, leaked;
    const size_t n_leaked = static_cast<size_t>(leak_share * static_cast<double>(items));
    for (size_t i = 0; i < n_leaked; ++i) {
      tok.Tokenize(item_texts[i * (items / std::max<size_t>(1, n_leaked))], &tokens);
      ComputeFingerprints(tokens, text, &fps);
      leaked.insert(leaked.end(), fps.begin(), fps.end());
    }
    docs.push_back(std::move(leaked));
    uint64_t have = docs[0].size();
    std::mt19937_64 filler(7);
    while (have < keys) {
      const uint64_t take = std::min<uint64_t>(keys - have, 10000000);
      std::vector<uint64_t> d(take);
      for (auto& x : d) x = filler();
      have += take;
      docs.push_back(std::move(d));
    }
    IndexBuildOptions o;
    o.text = text;
    o.memory_budget = 6ull << 30;
    IndexBuildStats st;
    const Status s = BuildIndexFromDocuments(index_dir, docs, o, false, &st);
    if (!s.ok()) {
      std::fprintf(stderr, "probe_bench: %s\n", s.ToString().c_str());
      return 1;
    }
    std::printf("index: %llu distinct n-grams, %.2f GB, built in %.1f s\n",
                static_cast<unsigned long long>(st.ngrams_distinct), st.index_bytes / 1e9,
                Since(t0));
  }
  const auto t_open = Clock::now();
  auto index = Index::Open(index_dir);
  const double open_s = Since(t_open);
  if (!index.ok()) {
    std::fprintf(stderr, "probe_bench: %s\n", index.status().ToString().c_str());
    return 1;
  }

  BenchmarkSpec spec;
  spec.name = "synthetic";
  spec.path = bench_path;
  spec.read.id_field = "id";
  ProbeOptions popts;
  std::vector<double> probe_s, base_s;
  uint64_t contaminated = 0;
  for (size_t r = 0; r < repeat + 1; ++r) {
    // Baseline: read + tokenize + fingerprint the benchmark, no index.
    auto tb = Clock::now();
    {
      auto reader = RecordReader::Open(bench_path, spec.read);
      Tokenizer tok(text);
      std::vector<Token> tokens;
      std::vector<uint64_t> fps;
      Record rec;
      uint64_t sum = 0;
      while (true) {
        auto more = (*reader)->Next(&rec);
        if (!more.ok() || !*more) break;
        tok.Tokenize(rec.text, &tokens);
        ComputeFingerprints(tokens, text, &fps);
        sum += fps.size();
      }
      if (sum == 0) return 1;
    }
    const double base = Since(tb);
    auto t0 = Clock::now();
    auto result = ProbeBenchmark(**index, spec, popts);
    if (!result.ok()) {
      std::fprintf(stderr, "probe_bench: %s\n", result.status().ToString().c_str());
      return 1;
    }
    std::vector<BenchmarkResult> results;
    results.push_back(std::move(result).value());
    ReportContext ctx;
    ctx.rules = results[0].rules;
    auto summary = Summarize(results, ctx);
    Status s = summary.status();
    if (s.ok()) s = WriteJsonReport(*summary, dir + "/report.json");
    if (s.ok()) s = WriteMarkdownReport(*summary, dir + "/summary.md");
    if (s.ok()) s = WriteItemsJsonl(results, dir + "/items.jsonl.out");
    if (s.ok()) s = WriteItemsCsv(results, dir + "/items.csv");
    if (!s.ok()) {
      std::fprintf(stderr, "probe_bench: %s\n", s.ToString().c_str());
      return 1;
    }
    const double secs = Since(t0);
    contaminated = summary->benchmarks[0].scopes[0].rules[0].contaminated;
    if (r == 0) continue;  // warm-up
    probe_s.push_back(secs);
    base_s.push_back(base);
  }
  std::sort(probe_s.begin(), probe_s.end());
  std::sort(base_s.begin(), base_s.end());
  const double best = probe_s.front(), median = probe_s[probe_s.size() / 2];
  std::printf("probe+report: %zu items x %zu words against %llu n-grams: best %.2f s, median %.2f s "
              "(%.0f items/s); %llu contaminated\n",
              items, words, static_cast<unsigned long long>(keys), best, median,
              static_cast<double>(items) / best, static_cast<unsigned long long>(contaminated));
  std::printf("Index::Open (manifest, headers, every section checksum): %.2f s\n", open_s);
  std::printf("baseline read+tokenize+fingerprint (1 thread): best %.2f s; ratio probe/baseline %.2f\n",
              base_s.front(), best / base_s.front());
  std::printf("peak RSS %.0f MB (includes index pages touched through mmap, and the index "
              "build when it ran in this process)\n", PeakRssMb());
  return 0;
}
