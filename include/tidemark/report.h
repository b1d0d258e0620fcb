// Reports: probe results -> per benchmark, per scope (whole item, each field) and
// per rule counts, contamination rates and confidence intervals; and the writers
// that put them into files: a JSON report (schema: docs/report_schema.md), per-item
// JSON Lines and CSV, a Markdown summary for a paper appendix, and a compact plain
// text table for a terminal. Every report carries kReportCaution. Files are written
// atomically (temp file + rename); nothing half-written is ever visible.
//
// Thread safety: pure functions of their arguments; distinct calls may run
// concurrently (writers to distinct paths).
#ifndef TIDEMARK_INCLUDE_TIDEMARK_REPORT_H_
#define TIDEMARK_INCLUDE_TIDEMARK_REPORT_H_

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "tidemark/probe.h"
#include "tidemark/reader.h"
#include "tidemark/stats.h"
#include "tidemark/status.h"

namespace tidemark {

class Env;  // common/env.h; the file-system seam (nullptr: the default POSIX one)

/// Version of the JSON report schema (docs/report_schema.md). Bumped on any change
/// that a reader of an older version could misread.
inline constexpr int kReportSchemaVersion = 1;

/// Stated in every report.
inline constexpr std::string_view kReportCaution =
    "n-gram overlap finds verbatim and near-verbatim leaks; paraphrases, translations "
    "and rewrites can slip past it, so a clean result is not proof of a clean model.";

/// Where the results came from and how they were judged.
struct ReportContext {
  std::string tool_version;
  std::string index_dir;
  std::string index_identity;
  std::string text_options;  ///< TextOptions::ToString() of the index
  /// Rules to report. Empty: each benchmark's BenchmarkResult::rules.
  std::vector<Rule> rules;
  ProbeOptions probe;
  double level = 0.95;  ///< confidence level of every interval
  /// ISO 8601 time of the audit; empty: left out (reproducible output for tests).
  std::string created;
  /// Primary interval in sample mode (docs/statistics.md says why this default).
  SampleIntervalMethod sample_interval = SampleIntervalMethod::kHypergeometric;
};

/// One interval with the name of its method ("wilson", "clopper_pearson",
/// "wilson_fpc", "hypergeometric").
struct NamedInterval {
  std::string method;
  Interval ci;
};

/// One rule's result over one scope.
struct RuleRate {
  std::string rule;
  uint64_t contaminated = 0;
  double rate = 0.0;                    ///< contaminated / judged; NaN when judged == 0
  std::vector<NamedInterval> intervals; ///< [0] is the primary; empty when judged == 0
};

/// Llama 2 bins (Touvron et al. 2023, App. A.6) over judged items.
struct Llama2Counts {
  uint64_t clean = 0;      ///< coverage < 20%
  uint64_t not_clean = 0;  ///< >= 20%
  uint64_t not_dirty = 0;  ///< < 80%
  uint64_t dirty = 0;      ///< >= 80%
};

/// What the noise filters removed.
struct FilterCounts {
  uint64_t items_with_boilerplate = 0;  ///< items with ignored_boilerplate > 0
  uint64_t ignored_boilerplate = 0;     ///< n-grams, summed over items
  uint64_t items_with_template = 0;
  uint64_t ignored_template = 0;
  /// Items with no counted hit but some ignored ones: the filters alone made them clean.
  uint64_t items_only_filtered = 0;
};

/// The whole item ("item") or one field.
struct ScopeSummary {
  std::string scope;  ///< "item" or the field name as given in BenchmarkSpec
  bool is_field = false;
  uint64_t items = 0;
  uint64_t judged = 0;
  uint64_t too_short = 0;
  uint64_t ngrams = 0;  ///< summed over items
  uint64_t hits = 0;
  /// Sample mode: the population of judged items the interval refers to,
  /// round(N * judged / items) clamped to [judged, N - too_short]; else 0.
  uint64_t judged_population = 0;
  std::vector<RuleRate> rules;
  Llama2Counts llama2;
  FilterCounts filters;
};

struct BenchmarkSummary {
  std::string name;
  std::string path;
  std::string input_checksum;
  uint64_t population = 0;  ///< items in the file
  uint64_t audited = 0;     ///< items probed (the sample in sample mode)
  bool sample_mode = false;
  uint64_t sample_seed = 0;
  SkipStats skips;
  std::vector<ScopeSummary> scopes;  ///< [0] is "item", then one per field
};

struct Summary {
  ReportContext context;
  std::vector<BenchmarkSummary> benchmarks;
};

/// Counts, rates and intervals for every benchmark, scope and rule. Whole-item
/// verdicts come from ItemResult::verdicts when they match the rule list, else
/// (and for fields always) from EvaluateRule. InvalidArgument for a bad level or
/// inconsistent results (more items than the population).
Result<Summary> Summarize(const std::vector<BenchmarkResult>& results,
                          const ReportContext& context);

/// `--fail-above RATE`: true when, for some benchmark and rule, the whole-item rate
/// (a point estimate over judged items) is strictly above `rate`. Benchmarks with
/// nothing judged never trigger it.
bool AnyRateAbove(const Summary& summary, double rate);

/// The JSON report (one object, schema_version 1, newline at the end).
std::string RenderJsonReport(const Summary& summary);
/// The Markdown summary: caution, context, one table per benchmark.
std::string RenderMarkdownReport(const Summary& summary);
/// A compact aligned plain-text table (whole-item scope) plus the caution.
std::string RenderTerminalTable(const Summary& summary);

/// Writes RenderJsonReport / RenderMarkdownReport atomically to `path`.
Status WriteJsonReport(const Summary& summary, const std::string& path, Env* env = nullptr);
Status WriteMarkdownReport(const Summary& summary, const std::string& path,
                           Env* env = nullptr);

/// One JSON object per item (docs/report_schema.md, "Per-item JSON Lines"),
/// streamed to `path` atomically.
Status WriteItemsJsonl(const std::vector<BenchmarkResult>& results, const std::string& path,
                       Env* env = nullptr);
/// One CSV row per item with per-field columns (RFC 4180: header row, CRLF line
/// ends, fields quoted when they hold a comma, quote, CR or LF), streamed
/// atomically. Columns are the union over the benchmarks; absent cells are empty.
Status WriteItemsCsv(const std::vector<BenchmarkResult>& results, const std::string& path,
                     Env* env = nullptr);

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_REPORT_H_
