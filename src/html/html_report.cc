// HTML report rendering. Everything is escaped text, inline CSS and inline SVG:
// the page reads without JavaScript and loads nothing.
#include "tidemark/html_report.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>

#include "common/env.h"
#include "common/text_util.h"

namespace tidemark {
namespace {

void Esc(std::string* out, std::string_view s) {
  // Invalid UTF-8 becomes U+FFFD (ValidUtf8Prefix walks valid runs).
  size_t i = 0;
  while (i < s.size()) {
    const size_t good = ValidUtf8Prefix(s.substr(i));
    for (size_t k = i; k < i + good; ++k) {
      const char c = s[k];
      switch (c) {
        case '&': *out += "&amp;"; break;
        case '<': *out += "&lt;"; break;
        case '>': *out += "&gt;"; break;
        case '"': *out += "&quot;"; break;
        default: out->push_back(c);
      }
    }
    i += good;
    if (i < s.size()) {
      *out += "\xEF\xBF\xBD";
      ++i;
    }
  }
}

std::string E(std::string_view s) {
  std::string out;
  Esc(&out, s);
  return out;
}

std::string Num(double v, const char* fmt = "%.3f") {
  if (!std::isfinite(v)) return "&ndash;";
  char buf[64];
  std::snprintf(buf, sizeof(buf), fmt, v);
  return buf;
}

std::string Pct(double v) {
  if (!std::isfinite(v)) return "&ndash;";
  char buf[64];
  std::snprintf(buf, sizeof(buf), "%.1f%%", 100.0 * v);
  return buf;
}

const char* kStyle = R"css(
body{font:15px/1.45 system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;margin:0;color:#1d2330;background:#f7f8fa}
main{max-width:1100px;margin:0 auto;padding:24px}
h1{font-size:26px;margin:0 0 4px}h2{font-size:20px;margin:32px 0 8px;border-bottom:2px solid #d8dde6;padding-bottom:4px}
h3{font-size:16px;margin:20px 0 6px}
.meta{color:#5b6475;font-size:13px}.meta code{font-size:12px}
.caution{background:#fff7e0;border-left:5px solid #e0a400;padding:10px 14px;margin:16px 0}
table{border-collapse:collapse;margin:8px 0;background:#fff;font-size:14px}
th,td{border:1px solid #d8dde6;padding:4px 8px;text-align:right}th{background:#eef1f6}
td.l,th.l{text-align:left}
.item{background:#fff;border:1px solid #d8dde6;border-radius:6px;padding:10px 14px;margin:10px 0}
.item .text{white-space:pre-wrap;font-family:ui-monospace,Menlo,Consolas,monospace;font-size:13px;margin:6px 0}
mark{background:#ffd36b;padding:0 1px}
.ev{font-size:13px;margin:4px 0 4px 12px;color:#333}
.ev .snip{font-family:ui-monospace,Menlo,Consolas,monospace;white-space:pre-wrap}
.tag{display:inline-block;padding:0 6px;border-radius:3px;font-size:12px;color:#fff;background:#b23b3b}
.tag.clean{background:#2f7d4a}.tag.short{background:#777}
svg text{font-family:system-ui,sans-serif}
)css";

// Whisker chart: one row per (benchmark, rule), the rate as a dot, the primary
// interval as a line with end caps. Axis from 0 to a round maximum.
void WhiskerChart(std::string* o, const Summary& s) {
  struct Row {
    std::string label;
    double rate;
    double lo, hi;
    bool has;
  };
  std::vector<Row> rows;
  double max_hi = 0.0;
  for (const BenchmarkSummary& b : s.benchmarks) {
    if (b.scopes.empty()) continue;
    for (const RuleRate& r : b.scopes[0].rules) {
      Row row{b.name + " / " + r.rule, r.rate, 0, 0, !r.intervals.empty()};
      if (row.has) {
        row.lo = r.intervals[0].ci.lower;
        row.hi = r.intervals[0].ci.upper;
        max_hi = std::max(max_hi, row.hi);
      }
      rows.push_back(row);
    }
  }
  double axis = 1.0;
  for (double cand : {0.05, 0.1, 0.2, 0.3, 0.5, 0.75, 1.0}) {
    if (max_hi <= cand) {
      axis = cand;
      break;
    }
  }
  const int left = 250, width = 560, row_h = 26, top = 10;
  const int height = top + row_h * static_cast<int>(rows.size()) + 34;
  char buf[512];
  std::snprintf(buf, sizeof(buf),
                "<svg role=\"img\" aria-label=\"contamination rates with intervals\" "
                "width=\"%d\" height=\"%d\" viewBox=\"0 0 %d %d\">",
                left + width + 30, height, left + width + 30, height);
  *o += buf;
  auto x = [&](double v) { return left + width * std::clamp(v / axis, 0.0, 1.0); };
  for (int t = 0; t <= 5; ++t) {
    const double v = axis * t / 5.0;
    std::snprintf(buf, sizeof(buf),
                  "<line x1=\"%.1f\" y1=\"%d\" x2=\"%.1f\" y2=\"%d\" stroke=\"#e3e7ee\"/>"
                  "<text x=\"%.1f\" y=\"%d\" font-size=\"11\" text-anchor=\"middle\" "
                  "fill=\"#5b6475\">%s</text>",
                  x(v), top, x(v), height - 28, x(v), height - 12, Pct(v).c_str());
    *o += buf;
  }
  for (size_t i = 0; i < rows.size(); ++i) {
    const Row& r = rows[i];
    const double y = top + row_h * (i + 0.5);
    *o += "<text x=\"" + std::to_string(left - 8) + "\" y=\"" + Num(y + 4, "%.1f") +
          "\" font-size=\"12\" text-anchor=\"end\">" + E(r.label) + "</text>";
    if (r.has) {
      std::snprintf(buf, sizeof(buf),
                    "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"#3a5f9f\" "
                    "stroke-width=\"2\"/><line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                    "stroke=\"#3a5f9f\" stroke-width=\"2\"/><line x1=\"%.1f\" y1=\"%.1f\" "
                    "x2=\"%.1f\" y2=\"%.1f\" stroke=\"#3a5f9f\" stroke-width=\"2\"/>",
                    x(r.lo), y, x(r.hi), y, x(r.lo), y - 6, x(r.lo), y + 6, x(r.hi), y - 6,
                    x(r.hi), y + 6);
      *o += buf;
    }
    if (std::isfinite(r.rate)) {
      std::snprintf(buf, sizeof(buf),
                    "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"5\" fill=\"#b23b3b\"><title>%s</title>"
                    "</circle>",
                    x(r.rate), y, E(r.label + ": " + Pct(r.rate)).c_str());
      *o += buf;
    }
  }
  *o += "</svg>";
}

// Histogram of whole-item hit fractions of judged items: "0" then ten bins of 0.1.
void Histogram(std::string* o, const BenchmarkResult& r) {
  std::vector<uint64_t> bins(11, 0);
  for (const ItemResult& it : r.items) {
    if (it.whole.too_short()) continue;
    const double f = it.whole.hit_fraction;
    if (it.whole.hits == 0) {
      ++bins[0];
    } else {
      ++bins[1 + std::min<size_t>(9, static_cast<size_t>(std::ceil(f * 10.0)) - 1)];
    }
  }
  const uint64_t maxc = std::max<uint64_t>(1, *std::max_element(bins.begin(), bins.end()));
  const int bar_w = 44, h = 140, left = 40, top = 14;
  char buf[512];
  std::snprintf(buf, sizeof(buf),
                "<svg role=\"img\" aria-label=\"histogram of hit fractions\" width=\"%d\" "
                "height=\"%d\">",
                left + bar_w * 11 + 10, h + top + 40);
  *o += buf;
  for (size_t i = 0; i < bins.size(); ++i) {
    // Square-root scale keeps the few contaminated items visible next to the many
    // clean ones; the count is printed on each bar.
    const double frac = std::sqrt(static_cast<double>(bins[i]) / static_cast<double>(maxc));
    const double bh = h * frac;
    const double xx = left + bar_w * static_cast<double>(i);
    std::snprintf(buf, sizeof(buf),
                  "<rect x=\"%.1f\" y=\"%.1f\" width=\"%d\" height=\"%.1f\" fill=\"%s\"/>"
                  "<text x=\"%.1f\" y=\"%.1f\" font-size=\"11\" text-anchor=\"middle\">%llu"
                  "</text>",
                  xx + 2, top + h - bh, bar_w - 4, bh, i == 0 ? "#2f7d4a" : "#b23b3b",
                  xx + bar_w / 2.0, top + h - bh - 3,
                  static_cast<unsigned long long>(bins[i]));
    *o += buf;
    const std::string label =
        i == 0 ? "0" : Num(0.1 * static_cast<double>(i), "&le;%.1f");
    std::snprintf(buf, sizeof(buf),
                  "<text x=\"%.1f\" y=\"%d\" font-size=\"11\" text-anchor=\"middle\" "
                  "fill=\"#5b6475\">%s</text>",
                  xx + bar_w / 2.0, top + h + 16, label.c_str());
    *o += buf;
  }
  std::snprintf(buf, sizeof(buf),
                "<text x=\"%d\" y=\"%d\" font-size=\"11\" fill=\"#5b6475\">hit fraction "
                "(items; bar height on a square-root scale)</text>",
                left, top + h + 34);
  *o += buf;
  *o += "</svg>";
}

// The item text with every matched span in <mark>.
std::string Highlight(const ItemResult& it) {
  std::string out;
  size_t pos = 0;
  for (const MatchedSpan& s : it.whole.spans) {
    if (s.byte_begin < pos || s.byte_end > it.text.size()) continue;
    Esc(&out, std::string_view(it.text).substr(pos, s.byte_begin - pos));
    out += "<mark>";
    Esc(&out, std::string_view(it.text).substr(s.byte_begin, s.byte_end - s.byte_begin));
    out += "</mark>";
    pos = s.byte_end;
  }
  Esc(&out, std::string_view(it.text).substr(std::min(pos, it.text.size())));
  return out;
}

}  // namespace

std::string RenderHtmlReport(const HtmlReportInput& in) {
  assert(in.summary != nullptr && in.results != nullptr);
  const Summary& s = *in.summary;
  const ReportContext& c = s.context;
  std::string o;
  o.reserve(1 << 16);
  o += "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
       "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
       "<title>tidemark contamination report</title><style>";
  o += kStyle;
  o += "</style></head><body><main>\n";
  o += "<h1>Benchmark contamination report</h1>\n<p class=\"meta\">tidemark " +
       E(c.tool_version);
  if (!c.created.empty()) o += " &middot; " + E(c.created);
  o += "<br>index <code>" + E(c.index_dir) + "</code> (identity <code>" +
       E(c.index_identity) + "</code>) &middot; text rules <code>" + E(c.text_options) +
       "</code> &middot; intervals at " + Pct(c.level) + "</p>\n";
  o += "<p class=\"caution\" id=\"caution\"><strong>Caution.</strong> ";
  Esc(&o, kReportCaution);
  o += " Items too short to hold one n-gram are reported apart and never counted as "
       "clean.</p>\n";

  // Summary table.
  o += "<h2 id=\"rates\">Contamination rates</h2>\n<table><tr><th class=\"l\">benchmark</th>"
       "<th class=\"l\">rule</th><th>items</th><th>judged</th><th>too short</th>"
       "<th>contaminated</th><th>rate</th><th>interval</th><th class=\"l\">method</th></tr>\n";
  for (const BenchmarkSummary& b : s.benchmarks) {
    if (b.scopes.empty()) continue;
    const ScopeSummary& sc = b.scopes[0];
    for (const RuleRate& r : sc.rules) {
      o += "<tr><td class=\"l\">" + E(b.name) + "</td><td class=\"l\">" + E(r.rule) +
           "</td><td>" + std::to_string(sc.items) + "</td><td>" + std::to_string(sc.judged) +
           "</td><td>" + std::to_string(sc.too_short) + "</td><td>" +
           std::to_string(r.contaminated) + "</td><td>" + Pct(r.rate) + "</td><td>";
      if (!r.intervals.empty()) {
        o += Pct(r.intervals[0].ci.lower) + " &ndash; " + Pct(r.intervals[0].ci.upper) +
             "</td><td class=\"l\">" + E(r.intervals[0].method);
      } else {
        o += "&ndash;</td><td class=\"l\">";
      }
      o += "</td></tr>\n";
    }
  }
  o += "</table>\n";
  WhiskerChart(&o, s);

  // Impact.
  if (!in.impact.empty()) {
    o += "<h2 id=\"impact\">Score impact</h2>\n";
    if (!in.impact_note.empty()) o += "<p class=\"meta\">" + E(in.impact_note) + "</p>\n";
    o += "<table><tr><th class=\"l\">benchmark</th><th class=\"l\">subset</th><th>items</th>"
         "<th>score</th><th>interval</th><th class=\"l\">method</th></tr>\n";
    for (const HtmlImpactRow& r : in.impact) {
      o += "<tr><td class=\"l\">" + E(r.benchmark) + "</td><td class=\"l\">" + E(r.subset) +
           "</td><td>" + std::to_string(r.items) + "</td><td>" + Num(r.score, "%.4f") +
           "</td><td>" +
           (r.has_interval ? Num(r.interval.lower, "%.4f") + " &ndash; " +
                                 Num(r.interval.upper, "%.4f")
                           : std::string("&ndash;")) +
           "</td><td class=\"l\">" + E(r.method) + "</td></tr>\n";
    }
    o += "</table>\n";
  }

  // Evidence index: (benchmark, item) -> evidence.
  std::map<std::pair<uint32_t, uint32_t>, const ItemEvidence*> ev;
  if (in.evidence != nullptr) {
    for (const ItemEvidence& e : *in.evidence) ev[{e.benchmark, e.item}] = &e;
  }

  for (size_t bi = 0; bi < s.benchmarks.size() && bi < in.results->size(); ++bi) {
    const BenchmarkSummary& b = s.benchmarks[bi];
    const BenchmarkResult& r = (*in.results)[bi];
    o += "<h2 id=\"bench-" + std::to_string(bi) + "\">" + E(b.name) + "</h2>\n";
    o += "<p class=\"meta\"><code>" + E(b.path) + "</code> &middot; checksum <code>" +
         E(b.input_checksum) + "</code> &middot; " + std::to_string(b.audited) + " of " +
         std::to_string(b.population) + " items audited";
    if (b.skips.dropped() > 0) {
      o += " &middot; " + std::to_string(b.skips.dropped()) + " records skipped";
    }
    o += "</p>\n";
    if (!b.scopes.empty()) {
      const ScopeSummary& sc = b.scopes[0];
      o += "<table><tr><th class=\"l\">Llama 2 bins (coverage over spans &ge; 10 tokens)</th>"
           "<th>clean &lt;20%</th><th>not clean &ge;20%</th><th>not dirty &lt;80%</th>"
           "<th>dirty &ge;80%</th></tr><tr><td class=\"l\">judged items</td><td>" +
           std::to_string(sc.llama2.clean) + "</td><td>" + std::to_string(sc.llama2.not_clean) +
           "</td><td>" + std::to_string(sc.llama2.not_dirty) + "</td><td>" +
           std::to_string(sc.llama2.dirty) + "</td></tr></table>\n";
      o += "<p class=\"meta\">noise filters: " +
           std::to_string(sc.filters.ignored_boilerplate) + " boilerplate n-grams ignored (" +
           std::to_string(sc.filters.items_with_boilerplate) + " items), " +
           std::to_string(sc.filters.ignored_template) + " template n-grams ignored (" +
           std::to_string(sc.filters.items_with_template) + " items); " +
           std::to_string(sc.filters.items_only_filtered) +
           " items are clean only because of the filters.</p>\n";
    }
    o += "<h3>Hit fractions</h3>\n";
    Histogram(&o, r);

    // Most contaminated items: by coverage, then hit fraction, then file order.
    std::vector<size_t> order;
    for (size_t i = 0; i < r.items.size(); ++i) {
      if (r.items[i].whole.hits > 0) order.push_back(i);
    }
    std::stable_sort(order.begin(), order.end(), [&](size_t a, size_t b2) {
      const OverlapResult& x = r.items[a].whole;
      const OverlapResult& y = r.items[b2].whole;
      if (x.coverage != y.coverage) return x.coverage > y.coverage;
      return x.hit_fraction > y.hit_fraction;
    });
    o += "<h3>Most contaminated items</h3>\n";
    if (order.empty()) o += "<p>No item has a counted hit.</p>\n";
    for (size_t k = 0; k < order.size() && k < in.top_items; ++k) {
      const size_t i = order[k];
      const ItemResult& it = r.items[i];
      o += "<div class=\"item\"><strong>" + E(it.id) + "</strong> <span class=\"meta\">line " +
           std::to_string(it.line) + " &middot; coverage " + Pct(it.whole.coverage) +
           " &middot; hit fraction " + Pct(it.whole.hit_fraction) + " &middot; longest run " +
           std::to_string(it.whole.longest_run) + " tokens &middot; max corpus count " +
           std::to_string(it.whole.max_corpus_count) + "</span> ";
      for (size_t ri = 0; ri < it.verdicts.size() && ri < r.rules.size(); ++ri) {
        const Verdict v = it.verdicts[ri];
        o += std::string("<span class=\"tag") +
             (v == Verdict::kClean ? " clean" : v == Verdict::kTooShort ? " short" : "") +
             "\">" + E(r.rules[ri].name) + ": " + std::string(VerdictName(v)) + "</span> ";
      }
      o += "<div class=\"text\">" + Highlight(it) + "</div>";
      const auto e = ev.find({static_cast<uint32_t>(bi), static_cast<uint32_t>(i)});
      if (e != ev.end()) {
        const ItemEvidence& x = *e->second;
        o += "<div class=\"ev\"><em>evidence: " + std::to_string(x.occurrences_total) +
             " occurrence(s) in the corpus";
        if (x.collisions > 0) {
          o += ", " + std::to_string(x.collisions) + " fingerprint collision(s) rejected";
        }
        o += "</em></div>";
        for (const EvidenceOccurrence& oc : x.occurrences) {
          o += "<div class=\"ev\"><code>" + E(oc.file) + ":" + std::to_string(oc.line) +
               "</code> record <code>" + E(oc.record_id) + "</code><br><span class=\"snip\">";
          const std::string_view sn = oc.snippet;
          const size_t mb = std::min<size_t>(oc.snippet_match_begin, sn.size());
          const size_t me = std::clamp<size_t>(oc.snippet_match_end, mb, sn.size());
          Esc(&o, sn.substr(0, mb));
          o += "<mark>";
          Esc(&o, sn.substr(mb, me - mb));
          o += "</mark>";
          Esc(&o, sn.substr(me));
          o += "</span></div>";
        }
      }
      o += "</div>\n";
    }
    if (order.size() > in.top_items) {
      o += "<p class=\"meta\">" + std::to_string(order.size() - in.top_items) +
           " more items with hits are in items.jsonl.</p>\n";
    }
  }
  o += "<p class=\"meta\">Rules: ";
  for (const Rule& rule : c.rules) o += "<code>" + E(rule.name) + "</code> ";
  o += "&middot; any hit: Brown et al. 2020 (GPT-3), App. C; hit fraction: Chowdhery et al. "
       "2022 (PaLM); token coverage bins: Touvron et al. 2023 (Llama 2), App. A.6. Intervals: "
       "Wilson 1927, Clopper and Pearson 1934, Newcombe 1998.</p>\n";
  o += "</main></body></html>\n";
  return o;
}

Status WriteHtmlReport(const HtmlReportInput& input, const std::string& path) {
  return WriteFileAtomically(path, RenderHtmlReport(input));
}

}  // namespace tidemark
