// `tidemark probe`: benchmarks against an index -> reports.
#include <cmath>
#include <ctime>
#include <filesystem>
#include <map>

#include "cli/cli_common.h"
#include "cli/commands.h"
#include "tidemark/evidence.h"
#include "tidemark/html_report.h"
#include "tidemark/impact.h"
#include "tidemark/index.h"
#include "tidemark/plan.h"
#include "tidemark/probe.h"
#include "tidemark/report.h"
#include "tidemark_version.h"

namespace tidemark::cli {
namespace {

struct ProbeFlags {
  std::string index_dir;
  std::string plan_path;
  std::vector<std::string> benchmarks;  // [NAME=]PATH
  std::vector<std::string> fields;      // F or NAME:F
  std::vector<std::string> id_fields;   // F or NAME:F
  std::string format = "auto";
  std::vector<std::string> rules;
  uint64_t boilerplate_cap = 0;
  double template_share = -1;  // -1: not given
  double level = 0;            // 0: not given
  uint64_t sample = 0;
  uint64_t sample_seed = 1;
  bool sample_seed_given = false;
  std::string out_dir;
  double fail_above = -1;
  bool strict = false;
  int ngram = 0;
  bool evidence = false;
  std::vector<std::string> corpus_roots;  // OLD=NEW
  size_t max_evidence = 5;
  size_t top_items = 20;
  std::vector<std::string> model_results;  // NAME=FILE
  std::string impact_rule;
  std::string score_field;
  bool skip_checksums = false;
};

void AddImpactRows(const ImpactResult& r, std::vector<HtmlImpactRow>* rows) {
  auto group = [&](const char* name, const GroupScore& g) {
    HtmlImpactRow row;
    row.benchmark = r.benchmark;
    row.subset = name;
    row.items = g.items;
    row.score = g.mean;
    row.has_interval = g.has_interval;
    row.interval = g.interval;
    row.method = g.has_interval ? "wilson" : "";
    rows->push_back(row);
  };
  group("all audited", r.overall);
  group("clean", r.clean);
  group("contaminated", r.dirty);
  if (r.too_short.items > 0) group("too short (not judged)", r.too_short);
  HtmlImpactRow diff;
  diff.benchmark = r.benchmark;
  diff.subset = "clean - contaminated";
  diff.items = r.clean.items + r.dirty.items;
  diff.score = r.has_difference ? r.difference : std::nan("");
  diff.has_interval = r.has_difference;
  diff.interval = r.difference_interval;
  diff.method = r.difference_method;
  rows->push_back(diff);
  HtmlImpactRow cm;
  cm.benchmark = r.benchmark;
  cm.subset = "clean - all (Brown et al. 2020)";
  cm.items = r.clean.items;
  cm.score = r.clean_minus_overall;
  rows->push_back(cm);
}

// "bench/quiz.jsonl.zst" -> "quiz".
std::string BenchmarkNameFromPath(const std::string& path) {
  std::filesystem::path p = std::filesystem::path(path).filename();
  while (p.has_extension()) p = p.stem();
  return p.string();
}

// 0.95 -> "95%".
std::string FormatLevel(double level) {
  char buf[32];
  std::snprintf(buf, sizeof(buf), "%g%%", 100.0 * level);
  return buf;
}

std::string NowIso8601() {
  const std::time_t t = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&t, &tm);
  char buf[32];
  std::strftime(buf, sizeof(buf), "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buf;
}

// "NAME:VALUE" where NAME is a benchmark name -> (NAME, VALUE); else ("", text).
std::pair<std::string, std::string> SplitScoped(const std::string& text,
                                                const std::vector<BenchmarkSpec>& specs) {
  const size_t colon = text.find(':');
  if (colon != std::string::npos && !text.empty() && text[0] != '/') {
    const std::string name = text.substr(0, colon);
    for (const BenchmarkSpec& s : specs) {
      if (s.name == name) return {name, text.substr(colon + 1)};
    }
  }
  return {"", text};
}

Result<AuditPlan> PlanFromFlags(const ProbeFlags& f) {
  AuditPlan plan;
  if (!f.plan_path.empty()) {
    TM_ASSIGN_OR_RETURN(plan, LoadAuditPlan(f.plan_path));
  }
  if (!f.index_dir.empty()) plan.index_dir = f.index_dir;
  if (plan.index_dir.empty()) return Status::InvalidArgument("--index DIR is required");
  TM_ASSIGN_OR_RETURN(const InputFormat format, ParseInputFormat(f.format));
  for (const std::string& b : f.benchmarks) {
    BenchmarkSpec spec;
    const size_t eq = b.find('=');
    spec.path = eq == std::string::npos ? b : b.substr(eq + 1);
    std::string name = eq == std::string::npos ? BenchmarkNameFromPath(spec.path) : b.substr(0, eq);
    spec.name = name;
    spec.read.format = format;
    for (const BenchmarkSpec& other : plan.benchmarks) {
      if (other.name == spec.name) {
        return Status::InvalidArgument("benchmark name '" + spec.name +
                                       "' given twice; name them: --benchmark NAME=PATH");
      }
    }
    plan.benchmarks.push_back(spec);
  }
  if (plan.benchmarks.empty()) {
    return Status::InvalidArgument("no benchmark: give --benchmark [NAME=]PATH or --plan FILE");
  }
  // Fields: unscoped ones apply to every benchmark given on the command line;
  // scoped ones (NAME:FIELD) to that benchmark only.
  std::map<std::string, std::vector<std::string>> scoped_fields;
  std::vector<std::string> all_fields;
  for (const std::string& x : f.fields) {
    auto [name, field] = SplitScoped(x, plan.benchmarks);
    (name.empty() ? all_fields : scoped_fields[name]).push_back(field);
  }
  std::map<std::string, std::string> scoped_ids;
  std::string all_id;
  for (const std::string& x : f.id_fields) {
    auto [name, field] = SplitScoped(x, plan.benchmarks);
    (name.empty() ? all_id : scoped_ids[name]) = field;
  }
  for (BenchmarkSpec& spec : plan.benchmarks) {
    if (scoped_fields.count(spec.name)) {
      spec.read.fields = scoped_fields[spec.name];
    } else if (!all_fields.empty()) {
      spec.read.fields = all_fields;
    }
    if (scoped_ids.count(spec.name)) {
      spec.read.id_field = scoped_ids[spec.name];
    } else if (!all_id.empty()) {
      spec.read.id_field = all_id;
    }
    spec.read.strict = spec.read.strict || f.strict;
  }
  if (!f.rules.empty()) {
    plan.probe.rules.clear();
    plan.rule_specs = f.rules;
    for (const std::string& r : f.rules) {
      TM_ASSIGN_OR_RETURN(Rule rule, ParseRule(r));
      plan.probe.rules.push_back(rule);
    }
  }
  if (f.boilerplate_cap > 0) plan.probe.boilerplate_cap = f.boilerplate_cap;
  if (f.template_share >= 0) plan.probe.template_share = f.template_share;
  if (f.level > 0) plan.level = f.level;
  if (f.sample > 0) plan.probe.sample_size = f.sample;
  if (f.sample_seed_given) plan.probe.sample_seed = f.sample_seed;
  if (!f.out_dir.empty()) plan.output_dir = f.out_dir;
  if (f.fail_above >= 0) plan.fail_above = f.fail_above;
  return plan;
}

int RunProbe(const ProbeFlags& flags) {
  auto plan_or = PlanFromFlags(flags);
  if (!plan_or.ok()) return ReportError(plan_or.status());
  AuditPlan plan = std::move(plan_or).value();

  IndexOpenOptions open_options;
  open_options.verify_checksums = !flags.skip_checksums;
  auto index_or = Index::Open(plan.index_dir, open_options);
  if (!index_or.ok()) return ReportError(index_or.status());
  const Index& index = **index_or;
  if (flags.ngram > 0) {
    TextOptions wanted = index.text_options();
    wanted.ngram = flags.ngram;
    const Status s = index.CheckTextOptions(wanted);
    if (!s.ok()) return ReportError(s);
  }
  // No rule given: ProbeBenchmark applies its default (any single hit) and records
  // it in BenchmarkResult::rules, which the reports then use.

  std::vector<BenchmarkResult> results;
  for (const BenchmarkSpec& spec : plan.benchmarks) {
    auto r = ProbeBenchmark(index, spec, plan.probe);
    if (!r.ok()) return ReportError(r.status().WithContext("benchmark " + spec.name));
    const SkipStats& sk = r->skips;
    std::string line = "probed " + spec.name + ": " + std::to_string(r->items.size()) +
                       " items";
    if (r->items.size() != r->population) {
      line += " (sample of " + std::to_string(r->population) + ")";
    }
    if (sk.dropped() > 0) line += ", " + std::to_string(sk.dropped()) + " records skipped";
    Info(line);
    for (const std::string& ex : sk.examples) Info("  skipped: " + ex);
    results.push_back(std::move(r).value());
  }

  ReportContext ctx;
  ctx.tool_version = TIDEMARK_VERSION;
  ctx.index_dir = plan.index_dir;
  ctx.index_identity = index.identity();
  ctx.text_options = index.text_options().ToString();
  ctx.rules = results.empty() ? plan.probe.rules : results[0].rules;
  ctx.probe = plan.probe;
  ctx.level = plan.level;
  ctx.created = NowIso8601();
  auto summary = Summarize(results, ctx);
  if (!summary.ok()) return ReportError(summary.status());

  // Evidence pass: stream the corpus once more for the hit fingerprints of the
  // contaminated items.
  EvidenceReport evidence;
  if (flags.evidence) {
    EvidenceOptions eo;
    eo.max_occurrences_per_item = flags.max_evidence;
    for (const std::string& m : flags.corpus_roots) {
      const size_t eq = m.find('=');
      if (eq == std::string::npos) {
        return ReportError(Status::InvalidArgument("--corpus-root wants OLD=NEW, got '" + m + "'"));
      }
      eo.root_remaps.emplace_back(m.substr(0, eq), m.substr(eq + 1));
    }
    ProgressPrinter progress("evidence");
    eo.progress = &progress;
    auto ev = RunEvidencePass(results, plan.index_dir, eo);
    progress.Finish();
    if (!ev.ok()) return ReportError(ev.status());
    evidence = std::move(ev).value();
    const EvidenceStats& st = evidence.stats;
    Info("evidence: " + std::to_string(st.records) + " corpus records scanned, " +
         std::to_string(st.verified) + " verified matches for " +
         std::to_string(evidence.items.size()) + " items, " + std::to_string(st.collisions) +
         " fingerprint collisions rejected");
  }

  // Impact: how much the contamination moves a model's score.
  std::vector<ImpactResult> impacts;
  for (const std::string& m : flags.model_results) {
    const size_t eq = m.find('=');
    const std::string name = eq == std::string::npos ? "" : m.substr(0, eq);
    const std::string path = eq == std::string::npos ? m : m.substr(eq + 1);
    const BenchmarkResult* target = nullptr;
    for (const BenchmarkResult& r : results) {
      if (r.spec.name == name || (name.empty() && results.size() == 1)) target = &r;
    }
    if (target == nullptr) {
      return ReportError(Status::InvalidArgument(
          "--results " + m + ": name the benchmark, NAME=FILE (NAME one of the probed ones)"));
    }
    ModelResultsOptions mo;
    mo.score_field = flags.score_field;
    auto mr = ReadModelResults(path, mo);
    if (!mr.ok()) return ReportError(mr.status());
    ImpactOptions io;
    io.rule = flags.impact_rule;
    io.level = plan.level;
    auto imp = ComputeImpact(*target, *mr, io);
    if (!imp.ok()) return ReportError(imp.status());
    if (imp->missing > 0) {
      Info("impact " + target->spec.name + ": " + std::to_string(imp->missing) +
           " audited items have no model result (counted, not scored)");
    }
    impacts.push_back(std::move(imp).value());
  }

  if (!plan.output_dir.empty()) {
    std::error_code ec;
    std::filesystem::create_directories(plan.output_dir, ec);
    if (ec) {
      return ReportError(Status::IOError(plan.output_dir + ": cannot create: " + ec.message()));
    }
    Status s;
    const std::string& d = plan.output_dir;
    if (s.ok()) s = WriteJsonReport(*summary, d + "/report.json");
    if (s.ok()) s = WriteMarkdownReport(*summary, d + "/summary.md");
    if (s.ok()) s = WriteItemsJsonl(results, d + "/items.jsonl");
    if (s.ok()) s = WriteItemsCsv(results, d + "/items.csv");
    if (s.ok() && flags.evidence) s = WriteEvidenceJsonl(evidence, d + "/evidence.jsonl");
    HtmlReportInput html;
    html.summary = &*summary;
    html.results = &results;
    html.evidence = flags.evidence ? &evidence.items : nullptr;
    html.top_items = flags.top_items;
    for (const ImpactResult& r : impacts) AddImpactRows(r, &html.impact);
    if (!impacts.empty()) {
      html.impact_note = "Items split by the verdicts of rule '" + impacts[0].rule +
                         "'; intervals at " + FormatLevel(plan.level) +
                         ". Too-short items are in neither group.";
      if (s.ok()) s = WriteImpactJson(impacts, plan.level, d + "/impact.json");
    }
    if (s.ok()) s = WriteHtmlReport(html, d + "/report.html");
    if (!s.ok()) return ReportError(s);
    Info("reports written to " + d + "/ (report.json, report.html, summary.md, items.jsonl, "
         "items.csv" + std::string(flags.evidence ? ", evidence.jsonl" : "") +
         std::string(impacts.empty() ? "" : ", impact.json") + ")");
  }
  std::string table = RenderTerminalTable(*summary);
  if (!impacts.empty()) table += "\n" + RenderImpactMarkdown(impacts, plan.level);
  std::fwrite(table.data(), 1, table.size(), stdout);
  std::fflush(stdout);
  if (plan.fail_above && AnyRateAbove(*summary, *plan.fail_above)) {
    Info("contamination above --fail-above " + std::to_string(*plan.fail_above));
    return kExitContaminated;
  }
  return kExitOk;
}

}  // namespace

void RegisterProbe(CLI::App& app) {
  auto flags = std::make_shared<ProbeFlags>();
  CLI::App* sub = app.add_subcommand(
      "probe", "Probe benchmarks against an index and report contamination rates");
  sub->add_option("-i,--index", flags->index_dir, "Index directory (tidemark index build)");
  sub->add_option("--plan", flags->plan_path, "Audit plan file (TOML; docs/cli.md)")
      ->check(CLI::ExistingFile);
  sub->add_option("-b,--benchmark", flags->benchmarks,
                  "Benchmark file, optionally named: NAME=PATH (repeatable)");
  sub->add_option("--field", flags->fields,
                  "Text field: key or JSON Pointer; NAME:FIELD for one benchmark "
                  "(repeatable; default: text)");
  sub->add_option("--id-field", flags->id_fields,
                  "Id field (NAME:FIELD for one benchmark); default: record number");
  sub->add_option("--format", flags->format, "Benchmark format: auto, jsonl, json, csv, txt")
      ->capture_default_str();
  sub->add_option("-r,--rule", flags->rules,
                  "Rule: gpt3, palm, llama2, or NAME=fraction|coverage|run>=X[,span=K] "
                  "(repeatable; default: any single hit)");
  sub->add_option("--boilerplate-cap", flags->boilerplate_cap,
                  "Ignore n-grams seen more than this many times in the corpus (0: off)");
  sub->add_option("--template-share", flags->template_share,
                  "Ignore n-grams shared by more than this share of a benchmark's items "
                  "(0: off)");
  sub->add_option("--level", flags->level, "Confidence level of intervals (default 0.95)");
  sub->add_option("--sample", flags->sample,
                  "Audit a seeded random sample of this many items per benchmark");
  sub->add_option_function<uint64_t>(
         "--sample-seed",
         [flags](const uint64_t& v) {
           flags->sample_seed = v;
           flags->sample_seed_given = true;
         },
         "Seed of the sample (default 1, or the plan's)");
  sub->add_option("-n,--ngram", flags->ngram,
                  "Expected n; an index built with another n is an error");
  sub->add_option("-o,--out", flags->out_dir,
                  "Write report.json, summary.md, items.jsonl, items.csv here");
  sub->add_option("--fail-above", flags->fail_above,
                  "Exit 3 when some benchmark's contamination rate exceeds this");
  sub->add_flag("--strict", flags->strict, "Stop at the first bad benchmark record");
  sub->add_flag("--skip-checksums", flags->skip_checksums,
                "Check only shard headers when opening the index (for indexes far larger "
                "than RAM; run `tidemark index verify` separately)");
  sub->add_flag("--evidence", flags->evidence,
                "Scan the indexed corpus again for where contaminated items occur");
  sub->add_option("--corpus-root", flags->corpus_roots,
                  "OLD=NEW: read corpus files indexed under OLD from NEW (moved corpus)");
  sub->add_option("--max-evidence", flags->max_evidence, "Occurrences kept per item")
      ->capture_default_str();
  sub->add_option("--results", flags->model_results,
                  "NAME=FILE: per-item model results (JSONL/CSV: id + correct 0/1 or score) "
                  "for the score impact of benchmark NAME (repeatable)");
  sub->add_option("--impact-rule", flags->impact_rule,
                  "Rule whose verdicts split clean from contaminated (default: the first)");
  sub->add_option("--score-field", flags->score_field,
                  "Score key/column of the results (default: correct, else score)");
  sub->add_option("--top-items", flags->top_items,
                  "Most contaminated items shown per benchmark in report.html")
      ->capture_default_str();
  sub->callback([flags] { SetHandler([flags] { return RunProbe(*flags); }); });
}

}  // namespace tidemark::cli
