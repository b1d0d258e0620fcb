// Per-item CSV (RFC 4180): one row per item, whole-item columns, one verdict
// column per rule, then the same figures per field. Layout: docs/report_schema.md.
#include <algorithm>
#include <string>
#include <vector>

#include "report/report_util.h"
#include "tidemark/report.h"

namespace tidemark {
namespace {

using report::AppendCsvField;
using report::AppendJsonNumber;
using report::AppendUint;

constexpr const char* kStatColumns[] = {
    "tokens",      "ngrams",           "hits",       "ignored_boilerplate",
    "ignored_template", "hit_fraction", "coverage", "coverage_llama2",
    "longest_run", "max_corpus_count", "llama2_bin"};

void AddUnique(std::vector<std::string>* v, const std::string& s) {
  if (std::find(v->begin(), v->end(), s) == v->end()) v->push_back(s);
}

// Appends the stat cells of one overlap, each preceded by a comma.
void AppendStats(std::string* out, const OverlapResult& o) {
  const uint64_t ints[] = {o.tokens, o.ngrams, o.hits, o.ignored_boilerplate,
                           o.ignored_template};
  for (const uint64_t v : ints) {
    *out += ',';
    AppendUint(out, v);
  }
  const double reals[] = {o.hit_fraction, o.coverage, SpanCoverage(o, kLlama2MinSpan)};
  for (const double v : reals) {
    *out += ',';
    AppendJsonNumber(out, v);
  }
  *out += ',';
  AppendUint(out, o.longest_run);
  *out += ',';
  AppendUint(out, o.max_corpus_count);
  *out += ',';
  *out += Llama2BinName(ClassifyLlama2(o));
}

void AppendEmptyCells(std::string* out, size_t n) { out->append(n, ','); }

// Verdict cells for the rule-name union `names`; empty where the benchmark lacks
// the rule.
void AppendVerdicts(std::string* out, const std::vector<std::string>& names,
                    const std::vector<Rule>& rules, const OverlapResult& o,
                    const std::vector<Verdict>* verdicts) {
  for (const std::string& name : names) {
    *out += ',';
    for (size_t r = 0; r < rules.size(); ++r) {
      if (rules[r].name != name) continue;
      const Verdict v = (verdicts != nullptr && verdicts->size() == rules.size())
                            ? (*verdicts)[r]
                            : EvaluateRule(rules[r], o);
      *out += VerdictName(v);
      break;
    }
  }
}

}  // namespace

Status WriteItemsCsv(const std::vector<BenchmarkResult>& results, const std::string& path,
                     Env* env) {
  std::vector<std::string> rule_names, field_names;
  for (const BenchmarkResult& b : results) {
    for (const Rule& r : b.rules) AddUnique(&rule_names, r.name);
    for (const std::string& f : b.spec.read.fields) AddUnique(&field_names, f);
  }
  constexpr size_t kStats = std::size(kStatColumns);
  report::StreamingFileWriter file(path, env);
  TM_RETURN_IF_ERROR(file.Open());
  std::string* out = file.buffer();
  *out += "benchmark,id,line";
  for (const char* c : kStatColumns) {
    *out += ',';
    *out += c;
  }
  for (const std::string& r : rule_names) {
    *out += ',';
    AppendCsvField(out, "rule." + r);
  }
  for (const std::string& f : field_names) {
    for (const char* c : kStatColumns) {
      *out += ',';
      AppendCsvField(out, "field." + f + "." + c);
    }
    for (const std::string& r : rule_names) {
      *out += ',';
      AppendCsvField(out, "field." + f + ".rule." + r);
    }
  }
  *out += "\r\n";
  for (const BenchmarkResult& b : results) {
    const std::vector<std::string>& fields = b.spec.read.fields;
    for (const ItemResult& item : b.items) {
      out = file.buffer();
      AppendCsvField(out, b.spec.name);
      *out += ',';
      AppendCsvField(out, item.id);
      *out += ',';
      AppendUint(out, item.line);
      AppendStats(out, item.whole);
      AppendVerdicts(out, rule_names, b.rules, item.whole, &item.verdicts);
      for (const std::string& f : field_names) {
        const auto it = std::find(fields.begin(), fields.end(), f);
        const size_t k = static_cast<size_t>(it - fields.begin());
        if (it == fields.end() || k >= item.fields.size()) {
          AppendEmptyCells(out, kStats + rule_names.size());
          continue;
        }
        AppendStats(out, item.fields[k]);
        AppendVerdicts(out, rule_names, b.rules, item.fields[k], nullptr);
      }
      *out += "\r\n";
      TM_RETURN_IF_ERROR(file.MaybeFlush());
    }
  }
  return file.Commit();
}

}  // namespace tidemark
