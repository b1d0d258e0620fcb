// Human-readable reports: the Markdown summary (tables for a paper appendix) and
// the compact plain-text table for a terminal.
#include <algorithm>
#include <cstdio>
#include <string>
#include <vector>

#include "common/env.h"
#include "report/report_util.h"
#include "tidemark/report.h"

namespace tidemark {
namespace {

using report::FormatPercent;

std::string MethodTitle(std::string_view method) {
  if (method == "wilson") return "Wilson";
  if (method == "clopper_pearson") return "Clopper-Pearson";
  if (method == "wilson_fpc") return "Wilson-FPC";
  if (method == "hypergeometric") return "exact hypergeometric";
  return std::string(method);
}

std::string LevelText(double level) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%g%%", 100.0 * level);
  return buf;
}

std::string IntervalText(const Interval& ci, std::string_view dash) {
  return FormatPercent(ci.lower) + std::string(dash) + FormatPercent(ci.upper);
}

// A Markdown table cell: pipes escaped, line breaks flattened.
std::string Cell(std::string_view s) {
  std::string out;
  for (const char c : s) {
    if (c == '|') {
      out += "\\|";
    } else if (c == '\n' || c == '\r') {
      out += ' ';
    } else {
      out += c;
    }
  }
  return out;
}

std::string Row(const std::vector<std::string>& cells) {
  std::string out = "|";
  for (const std::string& c : cells) out += " " + c + " |";
  return out + "\n";
}

// The interval methods used in a benchmark (the first judged row names them).
std::vector<std::string> MethodsOf(const BenchmarkSummary& b) {
  for (const ScopeSummary& s : b.scopes) {
    for (const RuleRate& r : s.rules) {
      if (r.intervals.empty()) continue;
      std::vector<std::string> m;
      for (const NamedInterval& ni : r.intervals) m.push_back(ni.method);
      return m;
    }
  }
  return b.sample_mode ? std::vector<std::string>{"hypergeometric", "wilson_fpc"}
                       : std::vector<std::string>{"wilson", "clopper_pearson"};
}

std::string RuleText(const Rule& r) {
  std::string t = "`" + r.name + "`: " + std::string(report::RuleKindName(r.kind));
  char buf[64];
  switch (r.kind) {
    case Rule::Kind::kAnyHit: break;
    case Rule::Kind::kHitFraction:
    case Rule::Kind::kCoverage:
      std::snprintf(buf, sizeof buf, " >= %g", r.threshold);
      t += buf;
      break;
    case Rule::Kind::kLongestRun:
      std::snprintf(buf, sizeof buf, " >= %g tokens", r.threshold);
      t += buf;
      break;
  }
  if (r.min_span > 0) t += ", spans >= " + std::to_string(r.min_span) + " tokens";
  if (r.required_n > 0) t += ", " + std::to_string(r.required_n) + "-grams";
  return t;
}

}  // namespace

std::string RenderMarkdownReport(const Summary& summary) {
  const ReportContext& c = summary.context;
  const std::string level = LevelText(c.level);
  std::string out = "# tidemark contamination report\n\n";
  out += "> **Caution.** " + std::string(kReportCaution) + "\n\n";
  out += "- Tool: tidemark " + c.tool_version + "\n";
  out += "- Index: `" + c.index_dir + "`, identity `" + c.index_identity +
         "`, text options `" + c.text_options + "`\n";
  if (!c.rules.empty()) {
    out += "- Rules:";
    for (size_t i = 0; i < c.rules.size(); ++i) out += (i ? "; " : " ") + RuleText(c.rules[i]);
    out += "\n";
  }
  out += "- Confidence level: " + level + "\n";
  out += "- Noise filters: boilerplate cap " +
         (c.probe.boilerplate_cap > 0 ? std::to_string(c.probe.boilerplate_cap) : "off") +
         ", template share ";
  if (c.probe.template_share > 0) {
    char buf[64];
    std::snprintf(buf, sizeof buf, "%g (in at least %u items)", c.probe.template_share,
                  c.probe.min_template_items);
    out += buf;
  } else {
    out += "off";
  }
  out += "\n";
  if (!c.created.empty()) out += "- Created: " + c.created + "\n";
  out += "\nRates are over judged items: items with fewer tokens than n have no n-gram, "
         "cannot be judged and are counted as too short, never as clean.\n";

  for (const BenchmarkSummary& b : summary.benchmarks) {
    out += "\n## Benchmark " + Cell(b.name) + "\n\n";
    out += "File `" + b.path + "` (XXH3-64 " + b.input_checksum + "); ";
    if (b.sample_mode) {
      out += "a seeded simple random sample of " + std::to_string(b.audited) + " of " +
             std::to_string(b.population) + " items (seed " + std::to_string(b.sample_seed) +
             "); intervals are for the whole file (finite-population methods)";
    } else {
      out += std::to_string(b.audited) + " items audited";
    }
    out += "; records skipped while reading: " + std::to_string(b.skips.dropped()) + ".\n\n";
    const std::vector<std::string> methods = MethodsOf(b);
    std::vector<std::string> head = {"Scope", "Rule", "Items", "Judged", "Too short",
                                     "Contaminated", "Rate"};
    for (const std::string& m : methods) head.push_back(level + " CI (" + MethodTitle(m) + ")");
    out += Row(head);
    std::vector<std::string> align = {"---", "---", "---:", "---:", "---:", "---:", "---:"};
    for (size_t i = 0; i < methods.size(); ++i) align.push_back("---:");
    out += Row(align);
    for (const ScopeSummary& s : b.scopes) {
      for (const RuleRate& r : s.rules) {
        std::vector<std::string> row = {Cell(s.scope), Cell(r.rule), std::to_string(s.items),
                                        std::to_string(s.judged), std::to_string(s.too_short),
                                        std::to_string(r.contaminated), FormatPercent(r.rate)};
        for (const std::string& m : methods) {
          const auto it = std::find_if(r.intervals.begin(), r.intervals.end(),
                                       [&](const NamedInterval& ni) { return ni.method == m; });
          row.push_back(it == r.intervals.end() ? "n/a" : IntervalText(it->ci, " – "));
        }
        out += Row(row);
      }
    }
    out += "\nLlama 2 token-coverage bins (Touvron et al. 2023, App. A.6; tokens in matched "
           "spans of at least 10 tokens; judged items):\n\n";
    out += Row({"Scope", "Judged", "Clean (< 20%)", "Not clean (≥ 20%)", "Not dirty (< 80%)",
                "Dirty (≥ 80%)"});
    out += Row({"---", "---:", "---:", "---:", "---:", "---:"});
    for (const ScopeSummary& s : b.scopes) {
      out += Row({Cell(s.scope), std::to_string(s.judged), std::to_string(s.llama2.clean),
                  std::to_string(s.llama2.not_clean), std::to_string(s.llama2.not_dirty),
                  std::to_string(s.llama2.dirty)});
    }
    out += "\nNoise filters (matched n-grams not counted as hits):\n\n";
    out += Row({"Scope", "Items with boilerplate", "Boilerplate n-grams", "Items with template",
                "Template n-grams", "Items clean only after filtering"});
    out += Row({"---", "---:", "---:", "---:", "---:", "---:"});
    for (const ScopeSummary& s : b.scopes) {
      const FilterCounts& f = s.filters;
      out += Row({Cell(s.scope), std::to_string(f.items_with_boilerplate),
                  std::to_string(f.ignored_boilerplate), std::to_string(f.items_with_template),
                  std::to_string(f.ignored_template), std::to_string(f.items_only_filtered)});
    }
  }
  return out;
}

Status WriteMarkdownReport(const Summary& summary, const std::string& path, Env* env) {
  return WriteFileAtomically(path, RenderMarkdownReport(summary), report::EnvOrDefault(env));
}

std::string RenderTerminalTable(const Summary& summary) {
  const std::string level = LevelText(summary.context.level);
  std::vector<std::vector<std::string>> rows;
  rows.push_back({"benchmark", "rule", "judged", "too short", "contaminated", "rate",
                  level + " interval", "method"});
  for (const BenchmarkSummary& b : summary.benchmarks) {
    if (b.scopes.empty()) continue;
    const ScopeSummary& s = b.scopes[0];
    for (const RuleRate& r : s.rules) {
      const bool has = !r.intervals.empty();
      rows.push_back({b.name, r.rule, std::to_string(s.judged), std::to_string(s.too_short),
                      std::to_string(r.contaminated), FormatPercent(r.rate),
                      has ? IntervalText(r.intervals[0].ci, " - ") : "n/a",
                      has ? r.intervals[0].method : "-"});
    }
  }
  const size_t cols = rows[0].size();
  std::vector<size_t> width(cols, 0);
  for (const auto& row : rows) {
    for (size_t i = 0; i < cols; ++i) width[i] = std::max(width[i], row[i].size());
  }
  // Text columns left-aligned, counts and rates right-aligned.
  const bool right[] = {false, false, true, true, true, true, true, false};
  std::string out;
  for (const auto& row : rows) {
    std::string line;
    for (size_t i = 0; i < cols; ++i) {
      if (i > 0) line += "  ";
      const std::string pad(width[i] - row[i].size(), ' ');
      line += right[i] ? pad + row[i] : row[i] + pad;
    }
    while (!line.empty() && line.back() == ' ') line.pop_back();
    out += line + "\n";
  }
  out += "caution: " + std::string(kReportCaution) + "\n";
  return out;
}

}  // namespace tidemark
