// tidemark evidence: where in the corpus the flagged benchmark items occur
// (docs/evidence.md).
#include <memory>
#include <string>
#include <vector>

#include "cli/cli_common.h"
#include "cli/commands.h"
#include "tidemark/evidence.h"

namespace tidemark::cli {
namespace {

struct EvidenceArgs {
  std::string index_dir;
  std::string probe_results;
  std::vector<std::string> benchmarks;
  std::vector<std::string> benchmark_fields = {"text"};
  std::string benchmark_id;
  std::vector<std::string> roots;
  std::string output;
  size_t max_occurrences = 5;
  size_t context = 80;
  bool all_items = false;
};

int Run(const EvidenceArgs& a) {
  EvidenceOptions opt;
  opt.max_occurrences_per_item = a.max_occurrences;
  opt.snippet_context = a.context;
  opt.only_contaminated = !a.all_items;
  for (const std::string& r : a.roots) {
    const size_t eq = r.find('=');
    if (eq == std::string::npos || eq == 0) {
      return ReportError(Status::InvalidArgument("--corpus-root wants OLD=NEW, got " + r));
    }
    opt.root_remaps.emplace_back(r.substr(0, eq), r.substr(eq + 1));
  }
  std::vector<BenchmarkSpec> specs;
  for (const std::string& b : a.benchmarks) {
    BenchmarkSpec s;
    const size_t eq = b.find('=');
    if (eq != std::string::npos) {
      s.name = b.substr(0, eq);
      s.path = b.substr(eq + 1);
    } else {
      s.path = b;
    }
    s.read.fields = a.benchmark_fields;
    s.read.id_field = a.benchmark_id;
    specs.push_back(std::move(s));
  }
  Result<std::vector<BenchmarkResult>> results = LoadProbeItems(a.probe_results, specs);
  if (!results.ok()) return ReportError(results.status());
  ProgressPrinter progress("evidence");
  opt.progress = &progress;
  Result<EvidenceReport> report = RunEvidencePass(*results, a.index_dir, opt);
  progress.Finish();
  if (!report.ok()) return ReportError(report.status());
  if (Status s = WriteEvidenceJsonl(*report, a.output); !s.ok()) return ReportError(s);
  const EvidenceStats& st = report->stats;
  uint64_t with = 0;
  for (const ItemEvidence& it : report->items) with += it.occurrences_total > 0 ? 1 : 0;
  Info("evidence: " + std::to_string(report->items.size()) + " items looked for, " +
       std::to_string(with) + " found; " + std::to_string(st.records) + " records in " +
       std::to_string(st.files) + " files (" + FormatBytes(static_cast<double>(st.bytes)) + "); " +
       std::to_string(st.verified) + " verified n-gram matches, " + std::to_string(st.collisions) +
       " fingerprint collisions rejected, " + std::to_string(st.unresolved) +
       " hit fingerprints not in their item; written to " + a.output);
  return kExitOk;
}

}  // namespace

void RegisterEvidence(CLI::App& app) {
  auto a = std::make_shared<EvidenceArgs>();
  CLI::App* c = app.add_subcommand("evidence",
                                   "Find where flagged benchmark items occur in the indexed corpus");
  c->add_option("--index", a->index_dir, "Index directory (its manifest lists the corpus)")->required();
  c->add_option("--probe-results", a->probe_results,
                "Per-item JSON Lines with benchmark, id, hit_fingerprints")->required();
  c->add_option("--benchmark", a->benchmarks, "Benchmark file, or NAME=FILE; repeatable")->required();
  c->add_option("--benchmark-field", a->benchmark_fields, "Benchmark text field; repeatable (default text)");
  c->add_option("--benchmark-id", a->benchmark_id, "Benchmark id field (default: record number)");
  c->add_option("--corpus-root", a->roots, "OLD=NEW: read corpus files under OLD from NEW; repeatable");
  c->add_option("-o,--output", a->output, "Evidence JSON Lines file")->required();
  c->add_option("--max-occurrences", a->max_occurrences, "Occurrences kept per item (default 5)");
  c->add_option("--context", a->context, "Snippet context bytes on each side (default 80)");
  c->add_flag("--all-items", a->all_items, "Every item with hit fingerprints, not only contaminated ones");
  c->callback([a] { SetHandler([a] { return Run(*a); }); });
}

}  // namespace tidemark::cli
