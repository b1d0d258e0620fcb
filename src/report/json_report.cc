// The JSON report (schema: docs/report_schema.md) and the per-item JSON Lines file.
#include <string>
#include <vector>

#include "common/env.h"
#include "common/text_util.h"
#include "report/report_util.h"
#include "tidemark/report.h"

namespace tidemark {

using report::AppendJsonNumber;
using report::AppendUint;

namespace {

// `"key": ` (the writers place commas and newlines themselves, so the layout stays
// as documented: one member a line down to the rule rows).
void Key(std::string* out, std::string_view key) {
  AppendJsonString(out, key);
  *out += ": ";
}

void Indent(std::string* out, int depth) { out->append(static_cast<size_t>(depth) * 2, ' '); }

void AppendInterval(std::string* out, const Interval& ci) {
  *out += "{\"lower\": ";
  AppendJsonNumber(out, ci.lower);
  *out += ", \"upper\": ";
  AppendJsonNumber(out, ci.upper);
  *out += "}";
}

void AppendRule(std::string* out, const Rule& r) {
  *out += "{\"name\": ";
  AppendJsonString(out, r.name);
  *out += ", \"kind\": ";
  AppendJsonString(out, report::RuleKindName(r.kind));
  *out += ", \"threshold\": ";
  AppendJsonNumber(out, r.threshold);
  *out += ", \"min_span\": ";
  AppendUint(out, r.min_span);
  *out += ", \"required_n\": ";
  AppendUint(out, static_cast<uint64_t>(r.required_n < 0 ? 0 : r.required_n));
  *out += "}";
}

void AppendScope(std::string* out, const ScopeSummary& s, int d) {
  Indent(out, d);
  *out += "{\n";
  Indent(out, d + 1);
  Key(out, "scope");
  AppendJsonString(out, s.is_field ? "field" : "item");
  *out += ",\n";
  Indent(out, d + 1);
  Key(out, "field");
  if (s.is_field) {
    AppendJsonString(out, s.scope);
  } else {
    *out += "null";
  }
  *out += ",\n";
  const std::pair<const char*, uint64_t> counts[] = {
      {"items", s.items},   {"judged", s.judged}, {"too_short", s.too_short},
      {"ngrams", s.ngrams}, {"hits", s.hits}};
  for (const auto& [k, v] : counts) {
    Indent(out, d + 1);
    Key(out, k);
    AppendUint(out, v);
    *out += ",\n";
  }
  Indent(out, d + 1);
  Key(out, "judged_population");
  if (s.judged_population > 0) {
    AppendUint(out, s.judged_population);
  } else {
    *out += "null";
  }
  *out += ",\n";
  Indent(out, d + 1);
  Key(out, "rules");
  *out += "[";
  for (size_t i = 0; i < s.rules.size(); ++i) {
    const RuleRate& r = s.rules[i];
    *out += i == 0 ? "\n" : ",\n";
    Indent(out, d + 2);
    *out += "{\"rule\": ";
    AppendJsonString(out, r.rule);
    *out += ", \"contaminated\": ";
    AppendUint(out, r.contaminated);
    *out += ", \"rate\": ";
    AppendJsonNumber(out, r.rate);
    *out += ", \"primary_interval\": ";
    if (r.intervals.empty()) {
      *out += "null";
    } else {
      AppendJsonString(out, r.intervals[0].method);
    }
    *out += ", \"intervals\": {";
    for (size_t k = 0; k < r.intervals.size(); ++k) {
      if (k > 0) *out += ", ";
      Key(out, r.intervals[k].method);
      AppendInterval(out, r.intervals[k].ci);
    }
    *out += "}}";
  }
  if (!s.rules.empty()) {
    *out += "\n";
    Indent(out, d + 1);
  }
  *out += "],\n";
  Indent(out, d + 1);
  Key(out, "llama2");
  *out += "{\"clean\": ";
  AppendUint(out, s.llama2.clean);
  *out += ", \"not_clean\": ";
  AppendUint(out, s.llama2.not_clean);
  *out += ", \"not_dirty\": ";
  AppendUint(out, s.llama2.not_dirty);
  *out += ", \"dirty\": ";
  AppendUint(out, s.llama2.dirty);
  *out += "},\n";
  Indent(out, d + 1);
  Key(out, "filters");
  *out += "{\"items_with_boilerplate\": ";
  AppendUint(out, s.filters.items_with_boilerplate);
  *out += ", \"ignored_boilerplate\": ";
  AppendUint(out, s.filters.ignored_boilerplate);
  *out += ", \"items_with_template\": ";
  AppendUint(out, s.filters.items_with_template);
  *out += ", \"ignored_template\": ";
  AppendUint(out, s.filters.ignored_template);
  *out += ", \"items_only_filtered\": ";
  AppendUint(out, s.filters.items_only_filtered);
  *out += "}\n";
  Indent(out, d);
  *out += "}";
}

void AppendBenchmark(std::string* out, const BenchmarkSummary& b, int d) {
  Indent(out, d);
  *out += "{\n";
  const std::pair<const char*, const std::string*> strings[] = {
      {"name", &b.name}, {"path", &b.path}, {"input_checksum", &b.input_checksum}};
  for (const auto& [k, v] : strings) {
    Indent(out, d + 1);
    Key(out, k);
    AppendJsonString(out, *v);
    *out += ",\n";
  }
  Indent(out, d + 1);
  Key(out, "population");
  AppendUint(out, b.population);
  *out += ",\n";
  Indent(out, d + 1);
  Key(out, "audited");
  AppendUint(out, b.audited);
  *out += ",\n";
  Indent(out, d + 1);
  Key(out, "sample_mode");
  *out += b.sample_mode ? "true" : "false";
  *out += ",\n";
  Indent(out, d + 1);
  Key(out, "sample_seed");
  if (b.sample_mode) {
    AppendUint(out, b.sample_seed);
  } else {
    *out += "null";
  }
  *out += ",\n";
  Indent(out, d + 1);
  Key(out, "skipped");
  *out += "{\"total\": ";
  AppendUint(out, b.skips.total());
  *out += ", \"dropped\": ";
  AppendUint(out, b.skips.dropped());
  *out += ", \"by_reason\": {";
  for (size_t r = 0; r < b.skips.counts.size(); ++r) {
    if (r > 0) *out += ", ";
    Key(out, SkipReasonName(static_cast<SkipReason>(r)));
    AppendUint(out, b.skips.counts[r]);
  }
  *out += "}, \"examples\": [";
  for (size_t i = 0; i < b.skips.examples.size(); ++i) {
    if (i > 0) *out += ", ";
    AppendJsonString(out, b.skips.examples[i]);
  }
  *out += "]},\n";
  Indent(out, d + 1);
  Key(out, "scopes");
  *out += "[\n";
  for (size_t i = 0; i < b.scopes.size(); ++i) {
    AppendScope(out, b.scopes[i], d + 2);
    *out += i + 1 < b.scopes.size() ? ",\n" : "\n";
  }
  Indent(out, d + 1);
  *out += "]\n";
  Indent(out, d);
  *out += "}";
}

}  // namespace

std::string RenderJsonReport(const Summary& summary) {
  const ReportContext& c = summary.context;
  std::string out = "{\n";
  out += "  \"schema_version\": ";
  AppendUint(&out, kReportSchemaVersion);
  out += ",\n  \"tool\": {\"name\": \"tidemark\", \"version\": ";
  AppendJsonString(&out, c.tool_version);
  out += "},\n";
  if (!c.created.empty()) {
    out += "  \"created\": ";
    AppendJsonString(&out, c.created);
    out += ",\n";
  }
  out += "  \"caution\": ";
  AppendJsonString(&out, kReportCaution);
  out += ",\n  \"index\": {\"dir\": ";
  AppendJsonString(&out, c.index_dir);
  out += ", \"identity\": ";
  AppendJsonString(&out, c.index_identity);
  out += ", \"text_options\": ";
  AppendJsonString(&out, c.text_options);
  out += "},\n  \"level\": ";
  AppendJsonNumber(&out, c.level);
  out += ",\n  \"sample_interval\": ";
  AppendJsonString(&out, SampleIntervalMethodName(c.sample_interval));
  out += ",\n  \"rules\": [";
  for (size_t i = 0; i < c.rules.size(); ++i) {
    out += i == 0 ? "\n    " : ",\n    ";
    AppendRule(&out, c.rules[i]);
  }
  out += c.rules.empty() ? "],\n" : "\n  ],\n";
  const ProbeOptions& p = c.probe;
  out += "  \"probe_options\": {\"boilerplate_cap\": ";
  AppendUint(&out, p.boilerplate_cap);
  out += ", \"template_share\": ";
  AppendJsonNumber(&out, p.template_share);
  out += ", \"min_template_items\": ";
  AppendUint(&out, p.min_template_items);
  out += ", \"sample_size\": ";
  AppendUint(&out, p.sample_size);
  out += ", \"sample_seed\": ";
  AppendUint(&out, p.sample_seed);
  out += "},\n  \"benchmarks\": [";
  for (size_t i = 0; i < summary.benchmarks.size(); ++i) {
    out += i == 0 ? "\n" : ",\n";
    AppendBenchmark(&out, summary.benchmarks[i], 2);
  }
  out += summary.benchmarks.empty() ? "]\n}\n" : "\n  ]\n}\n";
  return out;
}

Status WriteJsonReport(const Summary& summary, const std::string& path, Env* env) {
  return WriteFileAtomically(path, RenderJsonReport(summary), report::EnvOrDefault(env));
}

namespace {

void AppendOverlap(std::string* out, const OverlapResult& o, const std::vector<Rule>& rules,
                   const std::vector<Verdict>* verdicts) {
  *out += "{\"tokens\": ";
  AppendUint(out, o.tokens);
  *out += ", \"ngrams\": ";
  AppendUint(out, o.ngrams);
  *out += ", \"hits\": ";
  AppendUint(out, o.hits);
  *out += ", \"ignored_boilerplate\": ";
  AppendUint(out, o.ignored_boilerplate);
  *out += ", \"ignored_template\": ";
  AppendUint(out, o.ignored_template);
  *out += ", \"hit_fraction\": ";
  AppendJsonNumber(out, o.hit_fraction);
  *out += ", \"coverage\": ";
  AppendJsonNumber(out, o.coverage);
  *out += ", \"coverage_llama2\": ";
  AppendJsonNumber(out, SpanCoverage(o, kLlama2MinSpan));
  *out += ", \"longest_run\": ";
  AppendUint(out, o.longest_run);
  *out += ", \"max_corpus_count\": ";
  AppendUint(out, o.max_corpus_count);
  *out += ", \"llama2_bin\": ";
  AppendJsonString(out, Llama2BinName(ClassifyLlama2(o)));
  *out += ", \"verdicts\": {";
  for (size_t r = 0; r < rules.size(); ++r) {
    if (r > 0) *out += ", ";
    AppendJsonString(out, rules[r].name);
    *out += ": ";
    const Verdict v = (verdicts != nullptr && verdicts->size() == rules.size())
                          ? (*verdicts)[r]
                          : EvaluateRule(rules[r], o);
    AppendJsonString(out, VerdictName(v));
  }
  *out += "}, \"spans\": [";
  for (size_t i = 0; i < o.spans.size(); ++i) {
    const MatchedSpan& s = o.spans[i];
    if (i > 0) *out += ", ";
    *out += "[";
    AppendUint(out, s.token_begin);
    *out += ", ";
    AppendUint(out, s.token_end);
    *out += ", ";
    AppendUint(out, s.byte_begin);
    *out += ", ";
    AppendUint(out, s.byte_end);
    *out += "]";
  }
  *out += "], \"hit_fingerprints\": [";
  for (size_t i = 0; i < o.hit_fingerprints.size(); ++i) {
    if (i > 0) *out += ", ";
    AppendJsonString(out, Hex64(o.hit_fingerprints[i]));
  }
  *out += "]}";
}

}  // namespace

Status WriteItemsJsonl(const std::vector<BenchmarkResult>& results, const std::string& path,
                       Env* env) {
  report::StreamingFileWriter file(path, env);
  TM_RETURN_IF_ERROR(file.Open());
  for (const BenchmarkResult& b : results) {
    const std::vector<std::string>& fields = b.spec.read.fields;
    for (const ItemResult& item : b.items) {
      std::string* out = file.buffer();
      *out += "{\"benchmark\": ";
      AppendJsonString(out, b.spec.name);
      *out += ", \"id\": ";
      AppendJsonString(out, item.id);
      *out += ", \"line\": ";
      AppendUint(out, item.line);
      *out += ", \"item\": ";
      AppendOverlap(out, item.whole, b.rules, &item.verdicts);
      *out += ", \"fields\": {";
      for (size_t f = 0; f < fields.size() && f < item.fields.size(); ++f) {
        if (f > 0) *out += ", ";
        AppendJsonString(out, fields[f]);
        *out += ": ";
        AppendOverlap(out, item.fields[f], b.rules, nullptr);
      }
      *out += "}}\n";
      TM_RETURN_IF_ERROR(file.MaybeFlush());
    }
  }
  return file.Commit();
}

}  // namespace tidemark
