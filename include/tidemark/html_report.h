// The HTML report: one self-contained file (inline CSS and SVG; no script, no
// external asset, no network) with, per benchmark, the contamination rate of every
// rule with its interval as a whisker chart, a histogram of per-item hit fractions,
// the Llama 2 coverage bins, the noise-filter counts, the score impact table, and
// the most contaminated items with their matched spans highlighted and their
// evidence snippets. Built from the same Summary that the JSON report holds.
//
// Thread safety: pure functions of their arguments.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_HTML_REPORT_H_
#define TIDEMARK_INCLUDE_TIDEMARK_HTML_REPORT_H_

#include <string>
#include <vector>

#include "tidemark/evidence.h"
#include "tidemark/probe.h"
#include "tidemark/report.h"
#include "tidemark/stats.h"
#include "tidemark/status.h"

namespace tidemark {

/// One row of the impact table (built by the caller from the impact analysis).
struct HtmlImpactRow {
  std::string benchmark;
  std::string subset;    ///< "all", "clean", "dirty", "clean - dirty", ...
  uint64_t items = 0;
  double score = 0.0;    ///< accuracy or mean score; NaN when undefined
  bool has_interval = false;
  Interval interval;
  std::string method;    ///< "newcombe", "bootstrap", ...
};

struct HtmlReportInput {
  const Summary* summary = nullptr;                    ///< required
  const std::vector<BenchmarkResult>* results = nullptr;  ///< required, same order
  const std::vector<ItemEvidence>* evidence = nullptr;    ///< optional
  std::vector<HtmlImpactRow> impact;                   ///< optional
  std::string impact_note;                             ///< e.g. the results file and rule
  size_t top_items = 20;                               ///< per benchmark
};

/// The page. REQUIRES: summary and results set.
std::string RenderHtmlReport(const HtmlReportInput& input);

/// Writes the page atomically.
Status WriteHtmlReport(const HtmlReportInput& input, const std::string& path);

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_HTML_REPORT_H_
