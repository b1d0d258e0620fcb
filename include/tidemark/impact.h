// Impact analysis: does contamination change a model's score? Joins per-item model
// results (id + 0/1 correctness or a numeric score) with a benchmark's verdicts and
// compares clean items with contaminated ones, and the full benchmark with its
// clean subset (Brown et al. 2020, "Language Models are Few-Shot Learners",
// App. C). The difference clean - dirty gets Newcombe's hybrid score interval for
// 0/1 results and a seeded percentile bootstrap for numeric scores
// (docs/statistics.md).
//
// Thread safety: pure functions of their arguments.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_IMPACT_H_
#define TIDEMARK_INCLUDE_TIDEMARK_IMPACT_H_

#include <cstdint>
#include <string>
#include <vector>

#include "tidemark/probe.h"
#include "tidemark/stats.h"
#include "tidemark/status.h"

namespace tidemark {

class Env;

/// Per-item model results, read from JSON Lines or CSV.
struct ModelResults {
  struct Entry {
    std::string id;
    double score = 0.0;
    uint64_t line = 0;  ///< in the results file
  };
  std::string path;
  std::vector<Entry> entries;
  /// Every score is 0 or 1 (JSON true/false count as 1/0).
  bool binary = true;
};

struct ModelResultsOptions {
  std::string id_field = "id";
  /// The score column/key; empty: "correct" if present, else "score".
  std::string score_field;
};

/// Reads `path`: ".csv" (header row, RFC 4180 quoting) or JSON Lines (anything
/// else; blank lines skipped). Ids are strings or integers (JSON) / cells (CSV);
/// scores are numbers or booleans (JSON) / numbers (CSV). BadInput naming
/// file:line for a malformed line, a missing or non-numeric score, a non-finite
/// score, or a duplicate id (quoting the line of its first use).
Result<ModelResults> ReadModelResults(const std::string& path,
                                      const ModelResultsOptions& options = {});

/// Mean score of a group of items.
struct GroupScore {
  uint64_t items = 0;
  double sum = 0.0;   ///< correct items when binary
  double mean = 0.0;  ///< NaN when items == 0
  /// Wilson interval of the accuracy (binary results, items > 0); else absent.
  bool has_interval = false;
  Interval interval;
};

struct ImpactOptions {
  /// Rule whose verdicts split the items (name in BenchmarkResult::rules); empty:
  /// the first rule.
  std::string rule;
  double level = 0.95;
  BootstrapOptions bootstrap;  ///< level is taken from `level`
  /// Missing ids listed in the result, at most this many.
  size_t max_missing_examples = 20;
};

struct ImpactResult {
  std::string benchmark;
  std::string rule;
  bool binary = true;
  GroupScore clean;      ///< items the rule judged clean
  GroupScore dirty;      ///< judged contaminated
  GroupScore too_short;  ///< not judged (shown apart, in neither group)
  GroupScore overall;    ///< every audited item with a result (the full benchmark)
  /// clean.mean - dirty.mean with its interval; absent when a group is empty.
  bool has_difference = false;
  double difference = 0.0;
  Interval difference_interval;
  std::string difference_method;  ///< "newcombe" or "bootstrap_percentile"
  /// Brown et al. 2020, App. C: score on the clean subset minus the full score.
  double clean_minus_overall = 0.0;  ///< NaN when clean or overall is empty
  uint64_t audited = 0;               ///< items in the BenchmarkResult
  uint64_t missing = 0;               ///< audited items without a model result
  std::vector<std::string> missing_examples;
  /// Results whose id is not an audited item (in sample mode most of them are).
  uint64_t unmatched = 0;
};

/// Joins results to verdicts by item id. InvalidArgument when the rule is unknown,
/// the level is bad, or the benchmark has two items with one id (ambiguous join).
Result<ImpactResult> ComputeImpact(const BenchmarkResult& benchmark,
                                   const ModelResults& results,
                                   const ImpactOptions& options = {});

/// JSON object (one line per member; schema in docs/report_schema.md, "Impact").
std::string RenderImpactJson(const std::vector<ImpactResult>& impacts, double level);
/// Markdown table: clean vs dirty vs full, with the difference and its interval.
std::string RenderImpactMarkdown(const std::vector<ImpactResult>& impacts, double level);
/// Writes RenderImpactJson atomically.
Status WriteImpactJson(const std::vector<ImpactResult>& impacts, double level,
                       const std::string& path, Env* env = nullptr);

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_IMPACT_H_
