// tokenize_bench: throughput of the text rules on one thread.
//
// Workloads (seeded generator, in memory, documents of about 2 KB like corpus records):
//   ascii   English-like ASCII prose: Zipf-distributed common words, capitals,
//           punctuation, digits.
//   mixed   the same with German umlauts/ß, typographic quotes and dashes, accented
//           Latin (some decomposed), and runs of Han/kana text.
//   cjk     Han and kana with fullwidth punctuation.
// For each: Tokenize alone, and Tokenize + ComputeFingerprints (n = 13), best and
// median of --repeat runs after a warm-up, in MB/s of input text; the baseline is
// XXH3-64 over the same documents (a memory-speed floor) timed in the same run.
//
// Usage: tokenize_bench [--workload ascii|mixed|cjk|all] [--mb N] [--repeat R] [--seed S]
//                       [--phase tokenize|both]   (one phase only, untimed: for perf stat)
#include <algorithm>
#include <chrono>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <ctime>
#include <random>
#include <string>
#include <vector>

#include <xxhash.h>

#include "tidemark/tokenizer.h"

namespace {

using Clock = std::chrono::steady_clock;

const char* const kWords[] = {
    "the", "of", "and", "to", "a", "in", "is", "that", "for", "it", "as", "was", "with", "be",
    "by", "on", "not", "he", "this", "are", "or", "his", "from", "at", "which", "but", "have",
    "an", "had", "they", "you", "were", "their", "one", "all", "we", "can", "her", "has",
    "there", "been", "if", "more", "when", "will", "would", "who", "so", "no", "model",
    "training", "data", "language", "benchmark", "question", "answer", "between", "through",
    "government", "information", "development", "university", "following", "important",
    "however", "because", "different", "example", "without", "against", "something",
    "contamination", "evaluation", "performance", "international", "particularly",
    "approximately", "responsibility", "characteristics", "water", "people", "time", "year",
    "world", "house", "city", "school", "number", "system", "program", "history", "family"};
constexpr size_t kNumWords = sizeof(kWords) / sizeof(kWords[0]);

const char* const kMixedPieces[] = {
    "Stra\xC3\x9F" "e", "M\xC3\xBC" "nchen", "gr\xC3\xB6\xC3\x9F" "er", "\xC3\xBC" "ber",
    "\xE2\x80\x9C", "\xE2\x80\x9D", "\xE2\x80\x94", "caf\xC3\xA9", "cafe\xCC\x81",
    "na\xC3\xAFve", "\xC3\x85ngstr\xC3\xB6m", "se\xC3\xB1or", "\xCE\xB1\xCE\xBB\xCF\x86\xCE\xB1",
    "\xD0\xBC\xD0\xB8\xD1\x80", "\xE6\x9D\xB1\xE4\xBA\xAC\xE3\x81\xAF", "\xE6\x97\xA5\xE6\x9C\xAC",
    "\xE3\x81\xA7\xE3\x81\x99", "\xEF\xBC\x8C", "\xE2\x80\x99" "s"};
constexpr size_t kNumMixed = sizeof(kMixedPieces) / sizeof(kMixedPieces[0]);

// Zipf(1) over the word list by inverse transform on precomputed weights.
class WordPicker {
 public:
  explicit WordPicker(size_t n) {
    double sum = 0;
    for (size_t i = 0; i < n; ++i) cdf_.push_back(sum += 1.0 / static_cast<double>(i + 1));
    for (double& c : cdf_) c /= sum;
  }
  size_t Pick(std::mt19937_64& rng) const {
    const double u = std::uniform_real_distribution<double>(0, 1)(rng);
    return static_cast<size_t>(std::lower_bound(cdf_.begin(), cdf_.end(), u) - cdf_.begin());
  }

 private:
  std::vector<double> cdf_;
};

void AppendCjk(std::mt19937_64& rng, std::string* doc, int chars) {
  for (int k = 0; k < chars; ++k) {
    if (rng() % 12 == 0) {
      *doc += (rng() % 2) ? "\xE3\x80\x82" : "\xEF\xBC\x8C";  // 。 ，
      continue;
    }
    // CJK Unified Ideographs U+4E00..U+62FF, or hiragana U+3041..U+3093.
    const char32_t cp = (rng() % 3 == 0) ? 0x3041 + static_cast<char32_t>(rng() % 0x53)
                                         : 0x4E00 + static_cast<char32_t>(rng() % 0x1500);
    doc->push_back(static_cast<char>(0xE0 | (cp >> 12)));
    doc->push_back(static_cast<char>(0x80 | ((cp >> 6) & 0x3F)));
    doc->push_back(static_cast<char>(0x80 | (cp & 0x3F)));
  }
}

std::vector<std::string> Generate(const std::string& workload, size_t total_bytes, uint64_t seed) {
  std::mt19937_64 rng(seed);
  const WordPicker picker(kNumWords);
  std::vector<std::string> docs;
  size_t bytes = 0;
  while (bytes < total_bytes) {
    std::string doc;
    const size_t target = 1000 + rng() % 2000;
    bool sentence_start = true;
    while (doc.size() < target) {
      if (workload == "cjk") {
        AppendCjk(rng, &doc, 40);
        doc += "\n";
        continue;
      }
      if (workload == "mixed" && rng() % 8 == 0) {
        doc += kMixedPieces[rng() % kNumMixed];
        doc += ' ';
        continue;
      }
      if (workload == "mixed" && rng() % 200 == 0) AppendCjk(rng, &doc, 20);
      std::string w = kWords[picker.Pick(rng)];
      if (rng() % 40 == 0) w = std::to_string(rng() % 2030);
      if (sentence_start) w[0] = static_cast<char>(std::toupper(static_cast<unsigned char>(w[0])));
      doc += w;
      sentence_start = false;
      const uint64_t r = rng() % 100;
      if (r < 6) {
        doc += ". ";
        sentence_start = true;
      } else if (r < 12) {
        doc += ", ";
      } else if (r < 13) {
        doc += "; ";
      } else if (r < 14) {
        doc += "\n";
      } else {
        doc += ' ';
      }
    }
    bytes += doc.size();
    docs.push_back(std::move(doc));
  }
  return docs;
}

struct Timing {
  double best_mbs, median_mbs;  // wall clock
  double best_cpu_mbs;          // per second of this thread's CPU time
};

double ThreadCpuSeconds() {
  timespec ts;
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

// Wall-clock MB/s, plus MB/s per CPU-second of the thread, which is the one-core
// figure on a shared machine where other processes take the core away.
template <typename F>
Timing Measure(size_t bytes, int repeat, F&& run) {
  run();  // warm-up
  std::vector<double> mbs;
  double best_cpu = 0;
  for (int r = 0; r < repeat; ++r) {
    const auto t0 = Clock::now();
    const double c0 = ThreadCpuSeconds();
    run();
    const double s = std::chrono::duration<double>(Clock::now() - t0).count();
    const double c = ThreadCpuSeconds() - c0;
    mbs.push_back(static_cast<double>(bytes) / 1e6 / s);
    best_cpu = std::max(best_cpu, static_cast<double>(bytes) / 1e6 / c);
  }
  std::sort(mbs.begin(), mbs.end());
  return {mbs.back(), mbs[mbs.size() / 2], best_cpu};
}

volatile uint64_t g_sink;
std::string g_phase = "all";

void RunWorkload(const std::string& workload, size_t mb, int repeat, uint64_t seed) {
  const auto docs = Generate(workload, mb << 20, seed);
  size_t bytes = 0;
  for (const auto& d : docs) bytes += d.size();
  tidemark::TextOptions options;  // rules v1, n = 13, seed 0
  tidemark::Tokenizer tokenizer(options);
  std::vector<tidemark::Token> tokens;
  std::vector<uint64_t> fps;
  size_t token_count = 0;

  const Timing base = Measure(bytes, repeat, [&] {
    uint64_t x = 0;
    for (const auto& d : docs) x ^= XXH3_64bits(d.data(), d.size());
    g_sink = x;
  });
  if (g_phase == "tokenize" || g_phase == "both") {
    // Only one phase, for `perf stat` (cycles and instructions per byte).
    for (int r = 0; r < repeat; ++r) {
      uint64_t x = 0;
      for (const auto& d : docs) {
        tokenizer.Tokenize(d, &tokens);
        if (g_phase == "both") tidemark::ComputeFingerprints(tokens, options, &fps);
        x ^= tokens.empty() ? 0 : tokens.back().hash;
      }
      g_sink = x;
    }
    std::printf("%s: %.1f MB x %d, phase %s\n", workload.c_str(), static_cast<double>(bytes) / 1e6,
                repeat, g_phase.c_str());
    return;
  }
  const Timing tok = Measure(bytes, repeat, [&] {
    uint64_t x = 0;
    token_count = 0;
    for (const auto& d : docs) {
      tokenizer.Tokenize(d, &tokens);
      token_count += tokens.size();
      if (!tokens.empty()) x ^= tokens.back().hash;
    }
    g_sink = x;
  });
  const Timing both = Measure(bytes, repeat, [&] {
    uint64_t x = 0;
    for (const auto& d : docs) {
      tokenizer.Tokenize(d, &tokens);
      tidemark::ComputeFingerprints(tokens, options, &fps);
      if (!fps.empty()) x ^= fps.back();
    }
    g_sink = x;
  });
  std::printf("%s: %.1f MB in %zu docs, %.2f bytes/token\n", workload.c_str(),
              static_cast<double>(bytes) / 1e6, docs.size(),
              static_cast<double>(bytes) / static_cast<double>(std::max<size_t>(token_count, 1)));
  auto line = [&](const char* what, const Timing& t) {
    std::printf("  %-22s best %7.1f  median %7.1f MB/s wall | best %7.1f MB/s per CPU-second"
                " | %.3fx baseline\n",
                what, t.best_mbs, t.median_mbs, t.best_cpu_mbs, t.best_cpu_mbs / base.best_cpu_mbs);
  };
  line("baseline XXH3-64", base);
  line("Tokenize", tok);
  line("Tokenize+Fingerprints", both);
}

}  // namespace

int main(int argc, char** argv) {
  std::string workload = "all";
  size_t mb = 32;
  int repeat = 5;
  uint64_t seed = 42;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    auto next = [&]() -> const char* {
      if (i + 1 >= argc) {
        std::fprintf(stderr, "tokenize_bench: %s needs a value\n", a.c_str());
        std::exit(2);
      }
      return argv[++i];
    };
    if (a == "--workload") {
      workload = next();
    } else if (a == "--mb") {
      mb = std::strtoull(next(), nullptr, 10);
    } else if (a == "--repeat") {
      repeat = std::max(1, std::atoi(next()));
    } else if (a == "--phase") {
      g_phase = next();
    } else if (a == "--seed") {
      seed = std::strtoull(next(), nullptr, 10);
    } else {
      std::fprintf(stderr,
                   "usage: tokenize_bench [--workload ascii|mixed|cjk|all] [--mb N] "
                   "[--repeat R] [--seed S] [--phase tokenize|both]\n");
      return 2;
    }
  }
  std::printf("tokenize_bench: 1 thread, text rules %d, n = 13, best/median of %d\n",
              tidemark::TextOptions::kRulesVersion, repeat);
  for (const char* w : {"ascii", "mixed", "cjk"}) {
    if (workload == "all" || workload == w) RunWorkload(w, mb, repeat, seed);
  }
  return 0;
}
