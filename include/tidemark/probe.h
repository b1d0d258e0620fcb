// Probe: benchmark items against an index -> per-item overlap, rule verdicts.
//
// Thread safety: ProbeBenchmark parallelizes internally (oneTBB) and may be called
// concurrently for distinct benchmarks on one Index.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_PROBE_H_
#define TIDEMARK_INCLUDE_TIDEMARK_PROBE_H_

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "tidemark/index.h"
#include "tidemark/reader.h"
#include "tidemark/status.h"

namespace tidemark {

/// A maximal run of item tokens covered by matched n-grams.
struct MatchedSpan {
  uint32_t token_begin = 0;  ///< first covered token
  uint32_t token_end = 0;    ///< one past the last covered token
  uint32_t byte_begin = 0;   ///< original bytes of the item text
  uint32_t byte_end = 0;
};

/// Overlap of one text (one field, or the whole item) with the corpus.
struct OverlapResult {
  uint32_t tokens = 0;
  uint32_t ngrams = 0;               ///< max(0, tokens - n + 1)
  uint32_t hits = 0;                 ///< matched n-grams after the noise filters
  uint32_t ignored_boilerplate = 0;  ///< matched, but corpus count above the cap
  uint32_t ignored_template = 0;     ///< shared by too many items of the benchmark
  double hit_fraction = 0.0;         ///< hits / ngrams (0 when ngrams == 0)
  double coverage = 0.0;             ///< tokens inside a hit / tokens
  uint32_t longest_run = 0;          ///< longest matched span, in tokens
  uint64_t max_corpus_count = 0;     ///< largest corpus count among the hits
  std::vector<MatchedSpan> spans;
  /// Fingerprints of the hits (for the evidence pass), capped by ProbeOptions.
  std::vector<uint64_t> hit_fingerprints;
  bool too_short() const { return ngrams == 0; }
};

/// A rule's judgement of one item.
enum class Verdict { kClean, kContaminated, kTooShort };
std::string_view VerdictName(Verdict v);  // "clean", "contaminated", "too_short"

/// A decision rule. Built-ins cite their publication in probe/rules.cc.
struct Rule {
  enum class Kind {
    kAnyHit,        ///< any single n-gram hit (Brown et al. 2020, GPT-3, App. C)
    kHitFraction,   ///< hit fraction >= threshold (Chowdhery et al. 2022, PaLM: 8-grams, 0.7)
    kCoverage,      ///< token coverage >= threshold over spans >= min_span tokens
                    ///< (Touvron et al. 2023, Llama 2, App. A.6: 0.8 dirty, 0.2 clean)
    kLongestRun,    ///< longest matched run >= threshold tokens (user rule)
  };
  std::string name;        ///< "gpt3", "palm", "llama2", or a user name
  Kind kind = Kind::kAnyHit;
  double threshold = 0.0;  ///< meaning depends on kind
  uint32_t min_span = 0;   ///< kCoverage: ignore matched spans shorter than this
  int required_n = 0;      ///< n the rule was published with (0: any)
};

/// Built-in presets by name: "gpt3" (any hit, n=13), "palm" (hit fraction >= 0.7,
/// n=8), "llama2" (coverage >= 0.8 over spans >= 10 tokens, n any). NotFound otherwise.
Result<Rule> PresetRule(const std::string& name);

/// A preset name, or a user rule "[NAME=]KIND>=VALUE[,span=K]" with KIND one of
/// "fraction" (hit fraction, 0..1), "coverage" (token coverage, 0..1; span=K sets
/// min_span), "run" (longest run in tokens, >= 1), e.g. "strict=coverage>=0.5,span=10".
/// InvalidArgument quoting the text when it does not parse.
Result<Rule> ParseRule(std::string_view spec);

/// InvalidArgument when the rule was published for another n than the index's:
/// "rule 'palm' needs 8-grams; this index was built with n=13; rebuild with
/// `tidemark index build -n 8`". OK when rule.required_n is 0 or equals index_n.
Status CheckRuleN(const Rule& rule, int index_n);

/// Share of the tokens inside matched spans of at least `min_span` tokens (the
/// union of the spans, so overlapping spans count once); 0 when tokens == 0.
double SpanCoverage(const OverlapResult& overlap, uint32_t min_span);

/// The rule's verdict. kTooShort whenever overlap.ngrams == 0, whatever the rule.
Verdict EvaluateRule(const Rule& rule, const OverlapResult& overlap);

/// Touvron et al. 2023 (Llama 2, App. A.6) bins by token coverage over matched spans
/// of >= 10 tokens: "clean" < 20%, "not clean" >= 20%, "not dirty" < 80%, "dirty"
/// >= 80%. The four published bins overlap; these three disjoint classes make them:
/// clean = kClean; not clean = kMixed + kDirty; not dirty = kClean + kMixed;
/// dirty = kDirty.
enum class Llama2Bin { kTooShort, kClean, kMixed, kDirty };
inline constexpr uint32_t kLlama2MinSpan = 10;
inline constexpr double kLlama2CleanBelow = 0.2;
inline constexpr double kLlama2DirtyFrom = 0.8;
Llama2Bin ClassifyLlama2(const OverlapResult& overlap);
std::string_view Llama2BinName(Llama2Bin bin);  // "too_short", "clean", "mixed", "dirty"

struct ItemResult {
  std::string id;
  uint64_t line = 0;                   ///< in the benchmark file
  std::string text;                    ///< the whole item text (fields joined); spans index it
  OverlapResult whole;                 ///< all fields joined
  std::vector<OverlapResult> fields;   ///< one per BenchmarkSpec field
  std::vector<Verdict> verdicts;       ///< one per rule (on `whole`)
};

struct BenchmarkSpec {
  std::string name;         ///< shown in reports
  std::string path;
  ReadOptions read;         ///< fields, id field, format
};

struct ProbeOptions {
  std::vector<Rule> rules;            ///< default: {gpt3-style any hit at the index's n}
  uint64_t boilerplate_cap = 0;       ///< ignore hits with corpus count above this; 0: off
  double template_share = 0.0;        ///< ignore n-grams in more than this share of items; 0: off
  uint32_t min_template_items = 3;    ///< ...and in at least this many items
  size_t max_hit_fingerprints = 256;  ///< per item, kept for the evidence pass
  /// Sample mode: audit a seeded random subset of this many items (0: all).
  uint64_t sample_size = 0;
  uint64_t sample_seed = 1;
};

struct BenchmarkResult {
  BenchmarkSpec spec;
  std::vector<Rule> rules;             ///< the rules applied; ItemResult::verdicts follow them
  std::vector<ItemResult> items;       ///< in file order (sampled subset in sample mode)
  uint64_t population = 0;             ///< items in the file (before sampling)
  SkipStats skips;
  std::string input_checksum;          ///< XXH3-64 hex of the benchmark file bytes
};

/// Probes one benchmark. Checks rule n requirements against the index first
/// (InvalidArgument saying which n to build with).
Result<BenchmarkResult> ProbeBenchmark(const Index& index, const BenchmarkSpec& spec,
                                       const ProbeOptions& options);

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_PROBE_H_
