// Impact analysis: model results joined with verdicts; clean vs dirty scores with
// Newcombe (0/1) or bootstrap (numeric) intervals on the difference.
#include "tidemark/impact.h"

#include <charconv>
#include <cstdio>
#include <cmath>
#include <limits>
#include <string>
#include <string_view>
#include <unordered_map>
#include <vector>

#include <simdjson.h>

#include "common/env.h"
#include "common/text_util.h"
#include "report/report_util.h"
#include "tidemark/report.h"

namespace tidemark {
namespace {

bool EndsWith(std::string_view s, std::string_view suffix) {
  return s.size() >= suffix.size() && s.substr(s.size() - suffix.size()) == suffix;
}

std::string Where(const std::string& path, uint64_t line) {
  return path + ":" + std::to_string(line);
}

// Adds an entry, refusing duplicate ids and non-finite scores.
Status AddEntry(ModelResults* r, std::unordered_map<std::string, uint64_t>* seen,
                std::string id, double score, uint64_t line) {
  if (!std::isfinite(score)) {
    return Status::BadInput(Where(r->path, line) + ": score is not a finite number");
  }
  const auto [it, inserted] = seen->emplace(id, line);
  if (!inserted) {
    return Status::BadInput(Where(r->path, line) + ": duplicate id '" + ClipExcerpt(id) +
                            "' (first at line " + std::to_string(it->second) + ")");
  }
  if (score != 0.0 && score != 1.0) r->binary = false;
  r->entries.push_back({std::move(id), score, line});
  return Status::Ok();
}

Status ReadJsonl(std::string_view data, const ModelResultsOptions& opt, ModelResults* r) {
  simdjson::dom::parser parser;
  std::unordered_map<std::string, uint64_t> seen;
  uint64_t line_no = 0;
  size_t pos = 0;
  while (pos < data.size()) {
    size_t end = data.find('\n', pos);
    if (end == std::string_view::npos) end = data.size();
    std::string_view line = data.substr(pos, end - pos);
    pos = end + 1;
    ++line_no;
    if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
    if (line.find_first_not_of(" \t") == std::string_view::npos) continue;
    const std::string where = Where(r->path, line_no);
    simdjson::dom::element doc;
    if (parser.parse(line.data(), line.size()).get(doc) != simdjson::SUCCESS ||
        !doc.is_object()) {
      return Status::BadInput(where + ": not a JSON object: '" + ClipExcerpt(line) + "'");
    }
    simdjson::dom::element id_el;
    if (doc[opt.id_field].get(id_el) != simdjson::SUCCESS) {
      return Status::BadInput(where + ": no id field '" + opt.id_field + "'");
    }
    std::string id;
    if (id_el.is_string()) {
      id = std::string(std::string_view(id_el.get_string().value_unsafe()));
    } else if (id_el.is_int64()) {
      id = std::to_string(id_el.get_int64().value_unsafe());
    } else if (id_el.is_uint64()) {
      id = std::to_string(id_el.get_uint64().value_unsafe());
    } else {
      return Status::BadInput(where + ": id field '" + opt.id_field +
                              "' is not a string or an integer");
    }
    simdjson::dom::element score_el;
    std::string score_field = opt.score_field;
    if (score_field.empty()) {
      score_field = doc["correct"].error() == simdjson::SUCCESS ? "correct" : "score";
    }
    if (doc[score_field].get(score_el) != simdjson::SUCCESS) {
      return Status::BadInput(where + ": no score field '" + score_field + "'");
    }
    double score;
    if (score_el.is_bool()) {
      score = score_el.get_bool().value_unsafe() ? 1.0 : 0.0;
    } else if (score_el.is_number()) {
      score = score_el.get_double().value_unsafe();
    } else {
      return Status::BadInput(where + ": score field '" + score_field +
                              "' is not a number or boolean");
    }
    TM_RETURN_IF_ERROR(AddEntry(r, &seen, std::move(id), score, line_no));
  }
  return Status::Ok();
}

// RFC 4180 records: fields, and the line each record starts on. A quoted field may
// span lines. BadInput on an unterminated quote or a stray quote.
Status NextCsvRecord(std::string_view data, size_t* pos, uint64_t* line,
                     std::vector<std::string>* fields, const std::string& path) {
  fields->assign(1, std::string());
  const uint64_t start_line = *line;
  bool quoted = false, was_quoted = false;
  size_t i = *pos;
  while (i < data.size()) {
    const char c = data[i];
    if (quoted) {
      if (c == '"') {
        if (i + 1 < data.size() && data[i + 1] == '"') {
          fields->back() += '"';
          i += 2;
          continue;
        }
        quoted = false;
        ++i;
        continue;
      }
      if (c == '\n') ++*line;
      fields->back() += c;
      ++i;
      continue;
    }
    if (c == '"') {
      if (!fields->back().empty() || was_quoted) {
        return Status::BadInput(Where(path, *line) + ": stray quote inside a CSV field");
      }
      quoted = was_quoted = true;
      ++i;
      continue;
    }
    if (c == ',') {
      fields->emplace_back();
      was_quoted = false;
      ++i;
      continue;
    }
    if (c == '\r' && i + 1 < data.size() && data[i + 1] == '\n') ++i;
    if (c == '\n' || c == '\r') {
      ++i;
      ++*line;
      *pos = i;
      return Status::Ok();
    }
    fields->back() += c;
    ++i;
  }
  if (quoted) {
    return Status::BadInput(Where(path, start_line) + ": unterminated quoted CSV field");
  }
  *pos = i;
  ++*line;
  return Status::Ok();
}

Status ReadCsv(std::string_view data, const ModelResultsOptions& opt, ModelResults* r) {
  size_t pos = 0;
  uint64_t line = 1;
  std::vector<std::string> header, row;
  if (data.substr(0, 3) == "\xEF\xBB\xBF") pos = 3;  // UTF-8 byte order mark
  TM_RETURN_IF_ERROR(NextCsvRecord(data, &pos, &line, &header, r->path));
  const auto column = [&](const std::string& name) -> int {
    for (size_t i = 0; i < header.size(); ++i) {
      if (header[i] == name) return static_cast<int>(i);
    }
    return -1;
  };
  const int id_col = column(opt.id_field);
  std::string score_field = opt.score_field;
  if (score_field.empty()) score_field = column("correct") >= 0 ? "correct" : "score";
  const int score_col = column(score_field);
  if (id_col < 0 || score_col < 0) {
    return Status::BadInput(Where(r->path, 1) + ": header lacks column '" +
                            (id_col < 0 ? opt.id_field : score_field) + "'");
  }
  std::unordered_map<std::string, uint64_t> seen;
  while (pos < data.size()) {
    const uint64_t row_line = line;
    TM_RETURN_IF_ERROR(NextCsvRecord(data, &pos, &line, &row, r->path));
    if (row.size() == 1 && row[0].empty()) continue;  // blank line
    if (row.size() != header.size()) {
      return Status::BadInput(Where(r->path, row_line) + ": " + std::to_string(row.size()) +
                              " columns, header has " + std::to_string(header.size()));
    }
    const std::string& cell = row[static_cast<size_t>(score_col)];
    double score = 0.0;
    const auto [ptr, ec] = std::from_chars(cell.data(), cell.data() + cell.size(), score);
    if (cell.empty() || ec != std::errc() || ptr != cell.data() + cell.size()) {
      return Status::BadInput(Where(r->path, row_line) + ": score '" + ClipExcerpt(cell) +
                              "' is not a number");
    }
    TM_RETURN_IF_ERROR(AddEntry(r, &seen, row[static_cast<size_t>(id_col)], score, row_line));
  }
  return Status::Ok();
}

GroupScore Finish(uint64_t items, double sum, bool binary, double level) {
  GroupScore g;
  g.items = items;
  g.sum = sum;
  g.mean = items == 0 ? std::numeric_limits<double>::quiet_NaN()
                      : sum / static_cast<double>(items);
  if (binary && items > 0) {
    const auto w = WilsonInterval(static_cast<uint64_t>(std::llround(sum)), items, level);
    if (w.ok()) {
      g.has_interval = true;
      g.interval = *w;
    }
  }
  return g;
}

}  // namespace

Result<ModelResults> ReadModelResults(const std::string& path,
                                      const ModelResultsOptions& options) {
  TM_ASSIGN_OR_RETURN(const std::string data, ReadFileToString(path));
  ModelResults r;
  r.path = path;
  if (EndsWith(path, ".csv")) {
    TM_RETURN_IF_ERROR(ReadCsv(data, options, &r));
  } else {
    TM_RETURN_IF_ERROR(ReadJsonl(data, options, &r));
  }
  return r;
}

Result<ImpactResult> ComputeImpact(const BenchmarkResult& benchmark,
                                   const ModelResults& results,
                                   const ImpactOptions& options) {
  if (!(options.level > 0.0 && options.level < 1.0)) {
    return Status::InvalidArgument("confidence level must be between 0 and 1 (exclusive)");
  }
  if (benchmark.rules.empty()) {
    return Status::InvalidArgument("benchmark '" + benchmark.spec.name + "' has no rule verdicts");
  }
  size_t rule = 0;
  if (!options.rule.empty()) {
    rule = benchmark.rules.size();
    for (size_t i = 0; i < benchmark.rules.size(); ++i) {
      if (benchmark.rules[i].name == options.rule) rule = i;
    }
    if (rule == benchmark.rules.size()) {
      return Status::InvalidArgument("benchmark '" + benchmark.spec.name + "' was not judged by rule '" +
                                     options.rule + "'");
    }
  }
  std::unordered_map<std::string_view, size_t> by_id;
  for (size_t i = 0; i < results.entries.size(); ++i) by_id.emplace(results.entries[i].id, i);

  ImpactResult out;
  out.benchmark = benchmark.spec.name;
  out.rule = benchmark.rules[rule].name;
  out.binary = results.binary;
  out.audited = benchmark.items.size();
  std::vector<double> clean, dirty;
  uint64_t short_n = 0, all_n = 0;
  double short_sum = 0, all_sum = 0;
  std::unordered_map<std::string_view, bool> item_ids;
  uint64_t matched = 0;
  for (const ItemResult& item : benchmark.items) {
    if (!item_ids.emplace(item.id, true).second) {
      return Status::InvalidArgument("benchmark '" + benchmark.spec.name + "' has two items with id '" +
                                     ClipExcerpt(item.id) + "'; the join by id is ambiguous");
    }
    const auto it = by_id.find(item.id);
    if (it == by_id.end()) {
      ++out.missing;
      if (out.missing_examples.size() < options.max_missing_examples) {
        out.missing_examples.push_back(item.id);
      }
      continue;
    }
    ++matched;
    const double score = results.entries[it->second].score;
    const Verdict v = rule < item.verdicts.size()
                          ? item.verdicts[rule]
                          : EvaluateRule(benchmark.rules[rule], item.whole);
    ++all_n;
    all_sum += score;
    switch (v) {
      case Verdict::kClean: clean.push_back(score); break;
      case Verdict::kContaminated: dirty.push_back(score); break;
      case Verdict::kTooShort: ++short_n; short_sum += score; break;
    }
  }
  out.unmatched = results.entries.size() - matched;
  double clean_sum = 0, dirty_sum = 0;
  for (const double s : clean) clean_sum += s;
  for (const double s : dirty) dirty_sum += s;
  out.clean = Finish(clean.size(), clean_sum, out.binary, options.level);
  out.dirty = Finish(dirty.size(), dirty_sum, out.binary, options.level);
  out.too_short = Finish(short_n, short_sum, out.binary, options.level);
  out.overall = Finish(all_n, all_sum, out.binary, options.level);
  out.clean_minus_overall = out.clean.mean - out.overall.mean;  // NaN propagates
  if (!clean.empty() && !dirty.empty()) {
    out.has_difference = true;
    out.difference = out.clean.mean - out.dirty.mean;
    if (out.binary) {
      // Newcombe 1998 (Statistics in Medicine 17:873-890), method 10.
      TM_ASSIGN_OR_RETURN(
          out.difference_interval,
          NewcombeDifferenceInterval(static_cast<uint64_t>(std::llround(clean_sum)), clean.size(),
                                     static_cast<uint64_t>(std::llround(dirty_sum)), dirty.size(),
                                     options.level));
      out.difference_method = "newcombe";
    } else {
      // Efron and Tibshirani 1993: percentile bootstrap of the difference of means.
      BootstrapOptions b = options.bootstrap;
      b.level = options.level;
      TM_ASSIGN_OR_RETURN(const BootstrapResult br, BootstrapMeanDifference(clean, dirty, b));
      out.difference_interval = br.interval;
      out.difference_method = "bootstrap_percentile";
    }
  }
  return out;
}

namespace {

using report::AppendJsonNumber;
using report::AppendUint;

void AppendGroup(std::string* out, const GroupScore& g) {
  *out += "{\"items\": ";
  AppendUint(out, g.items);
  *out += ", \"sum\": ";
  AppendJsonNumber(out, g.sum);
  *out += ", \"mean\": ";
  AppendJsonNumber(out, g.mean);
  *out += ", \"interval\": ";
  if (g.has_interval) {
    *out += "{\"lower\": ";
    AppendJsonNumber(out, g.interval.lower);
    *out += ", \"upper\": ";
    AppendJsonNumber(out, g.interval.upper);
    *out += "}";
  } else {
    *out += "null";
  }
  *out += "}";
}

std::string Score(const GroupScore& g, bool binary) {
  if (g.items == 0) return "n/a";
  if (binary) return report::FormatPercent(g.mean, 1) + " (" + std::to_string(g.items) + ")";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.4g (%llu)", g.mean, static_cast<unsigned long long>(g.items));
  return buf;
}

std::string Diff(double v, bool binary) {
  if (!std::isfinite(v)) return "n/a";
  char buf[64];
  if (binary) {
    std::snprintf(buf, sizeof buf, "%+.1f pts", 100.0 * v);
  } else {
    std::snprintf(buf, sizeof buf, "%+.4g", v);
  }
  return buf;
}

}  // namespace

std::string RenderImpactJson(const std::vector<ImpactResult>& impacts, double level) {
  std::string out = "{\n  \"schema_version\": 1,\n  \"level\": ";
  AppendJsonNumber(&out, level);
  out += ",\n  \"caution\": ";
  AppendJsonString(&out, kReportCaution);
  out += ",\n  \"impacts\": [";
  for (size_t i = 0; i < impacts.size(); ++i) {
    const ImpactResult& m = impacts[i];
    out += i == 0 ? "\n    {" : ",\n    {";
    out += "\"benchmark\": ";
    AppendJsonString(&out, m.benchmark);
    out += ", \"rule\": ";
    AppendJsonString(&out, m.rule);
    out += ", \"binary\": ";
    out += m.binary ? "true" : "false";
    out += ",\n     \"clean\": ";
    AppendGroup(&out, m.clean);
    out += ",\n     \"dirty\": ";
    AppendGroup(&out, m.dirty);
    out += ",\n     \"too_short\": ";
    AppendGroup(&out, m.too_short);
    out += ",\n     \"overall\": ";
    AppendGroup(&out, m.overall);
    out += ",\n     \"difference\": ";
    if (m.has_difference) {
      out += "{\"estimate\": ";
      AppendJsonNumber(&out, m.difference);
      out += ", \"lower\": ";
      AppendJsonNumber(&out, m.difference_interval.lower);
      out += ", \"upper\": ";
      AppendJsonNumber(&out, m.difference_interval.upper);
      out += ", \"method\": ";
      AppendJsonString(&out, m.difference_method);
      out += "}";
    } else {
      out += "null";
    }
    out += ",\n     \"clean_minus_overall\": ";
    AppendJsonNumber(&out, m.clean_minus_overall);
    out += ", \"audited\": ";
    AppendUint(&out, m.audited);
    out += ", \"missing\": ";
    AppendUint(&out, m.missing);
    out += ", \"unmatched\": ";
    AppendUint(&out, m.unmatched);
    out += ", \"missing_examples\": [";
    for (size_t k = 0; k < m.missing_examples.size(); ++k) {
      if (k > 0) out += ", ";
      AppendJsonString(&out, m.missing_examples[k]);
    }
    out += "]}";
  }
  out += impacts.empty() ? "]\n}\n" : "\n  ]\n}\n";
  return out;
}

std::string RenderImpactMarkdown(const std::vector<ImpactResult>& impacts, double level) {
  char lv[32];
  std::snprintf(lv, sizeof lv, "%g%%", 100.0 * level);
  std::string out =
      "| Benchmark | Rule | Full | Clean subset | Dirty | Too short | Clean − dirty | " +
      std::string(lv) + " CI | Clean − full | Missing results |\n";
  out += "| --- | --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |\n";
  for (const ImpactResult& m : impacts) {
    std::string ci = "n/a";
    if (m.has_difference) {
      ci = Diff(m.difference_interval.lower, m.binary) + " to " +
           Diff(m.difference_interval.upper, m.binary) +
           (m.difference_method == "newcombe" ? " (Newcombe)" : " (bootstrap)");
    }
    out += "| " + m.benchmark + " | " + m.rule + " | " + Score(m.overall, m.binary) + " | " +
           Score(m.clean, m.binary) + " | " + Score(m.dirty, m.binary) + " | " +
           Score(m.too_short, m.binary) + " | " +
           (m.has_difference ? Diff(m.difference, m.binary) : "n/a") + " | " + ci + " | " +
           Diff(m.clean_minus_overall, m.binary) + " | " + std::to_string(m.missing) + " |\n";
  }
  return out;
}

Status WriteImpactJson(const std::vector<ImpactResult>& impacts, double level,
                       const std::string& path, Env* env) {
  return WriteFileAtomically(path, RenderImpactJson(impacts, level), report::EnvOrDefault(env));
}

}  // namespace tidemark
