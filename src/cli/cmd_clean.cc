// tidemark clean: vet a corpus against benchmarks and write a cleaned copy
// (docs/cleaning.md).
#include <chrono>
#include <memory>
#include <string>
#include <vector>

#include "cli/cli_common.h"
#include "cli/commands.h"
#include "tidemark/clean.h"

namespace tidemark::cli {
namespace {

struct CleanArgs {
  std::vector<std::string> benchmarks;
  std::vector<std::string> benchmark_fields = {"text"};
  std::string benchmark_id;
  std::vector<std::string> fields = {"text"};
  std::string id_field;
  bool text_lines = false;
  std::string mode = "drop";
  std::string replacement = "[REDACTED]";
  std::string output_dir;
  std::string log_path;
  std::string clean_benchmarks;
  int ngram = 13;
  uint64_t seed = 0;
  bool strip_accents = false;
  uint32_t min_hits = 1;
  double min_coverage = 0.0;
  double template_share = 0.0;
  uint32_t min_template_items = 3;
  int level = 0;
  uint64_t max_record_bytes = 64ull << 20;
  bool strict = false;
  bool cached_writes = false;
  std::vector<std::string> corpus;
};

int Run(const CleanArgs& a) {
  CleanOptions opt;
  opt.text.ngram = a.ngram;
  opt.text.seed = a.seed;
  opt.text.strip_accents = a.strip_accents;
  if (Status s = opt.text.Validate(); !s.ok()) return ReportError(s);
  if (a.mode == "drop") {
    opt.mode = CleanMode::kDrop;
  } else if (a.mode == "redact") {
    opt.mode = CleanMode::kRedact;
  } else {
    return ReportError(Status::InvalidArgument("--mode must be drop or redact, got " + a.mode));
  }
  opt.replacement = a.replacement;
  opt.min_hits = a.min_hits;
  opt.min_coverage = a.min_coverage;
  opt.template_share = a.template_share;
  opt.min_template_items = a.min_template_items;
  opt.compression_level = a.level;
  opt.log_path = a.log_path;
  opt.benchmark_subset_dir = a.clean_benchmarks;
  opt.direct_writes = !a.cached_writes;
  opt.corpus_read.fields = a.fields;
  opt.corpus_read.text_lines = a.text_lines;
  opt.corpus_read.id_field = a.id_field;
  opt.corpus_read.max_record_bytes = a.max_record_bytes;
  opt.corpus_read.strict = a.strict;

  std::vector<CleanBenchmark> benches;
  for (const std::string& b : a.benchmarks) {
    CleanBenchmark cb;
    cb.path = b;
    cb.read.fields = a.benchmark_fields;
    cb.read.id_field = a.benchmark_id;
    cb.read.strict = a.strict;
    benches.push_back(std::move(cb));
  }
  const auto start = std::chrono::steady_clock::now();
  Result<std::unique_ptr<BenchmarkTable>> table =
      BenchmarkTable::Build(benches, opt.text, opt.template_share, opt.min_template_items);
  if (!table.ok()) return ReportError(table.status());
  for (size_t i = 0; i < (*table)->benchmarks().size(); ++i) {
    const auto& b = (*table)->benchmarks()[i];
    std::string line = "benchmark " + b.spec.name + ": " + std::to_string(b.items.size()) +
                       " items, " + std::to_string(b.too_short) + " shorter than n=" +
                       std::to_string(a.ngram);
    if (b.ignored_template > 0) {
      line += ", " + std::to_string(b.ignored_template) + " template n-grams ignored";
    }
    if (b.skips.total() > 0) line += ", " + std::to_string(b.skips.dropped()) + " records skipped";
    Info(line);
  }
  Result<std::vector<std::string>> inputs = ExpandInputs(a.corpus);
  if (!inputs.ok()) return ReportError(inputs.status());
  ProgressPrinter progress("clean");
  opt.progress = &progress;
  Result<CleanSummary> summary = CleanCorpus(**table, *inputs, a.output_dir, opt);
  progress.Finish();
  if (!summary.ok()) return ReportError(summary.status());
  uint64_t records = 0, contaminated = 0, dropped = 0, redacted = 0, fallback = 0, unchecked = 0;
  uint64_t bytes = 0;
  SkipStats skips;
  for (const CleanFileStats& f : summary->files) {
    records += f.records;
    contaminated += f.contaminated;
    dropped += f.dropped;
    redacted += f.redacted;
    fallback += f.redact_fallback_drops;
    unchecked += f.passed_unchecked;
    bytes += f.bytes_in;
    skips.Add(f.skips);
    if (Globals().verbosity > 0) {
      Info(f.input + " -> " + f.output + ": " + std::to_string(f.records) + " records, " +
           std::to_string(f.contaminated) + " contaminated");
    }
  }
  for (const std::string& e : skips.examples) {
    if (Globals().verbosity > 0) Info("  skipped: " + e);
  }
  const double secs =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  std::string line = "clean: " + std::to_string(summary->files.size()) + " files, " +
                     std::to_string(records) + " records, " + std::to_string(contaminated) +
                     " contaminated (" + std::to_string(dropped) + " dropped, " +
                     std::to_string(redacted) + " redacted";
  if (fallback > 0) line += ", " + std::to_string(fallback) + " dropped because redaction was not possible";
  line += ")";
  if (unchecked > 0) line += ", " + std::to_string(unchecked) + " unreadable/blank lines copied unchecked";
  for (size_t r = 0; r < static_cast<size_t>(SkipReason::kCount); ++r) {
    if (skips.counts[r] > 0) {
      line += ", " + std::string(SkipReasonName(static_cast<SkipReason>(r))) + " " +
              std::to_string(skips.counts[r]);
    }
  }
  line += ", " + FormatBytes(static_cast<double>(bytes)) + " in " + std::to_string(secs).substr(0, 5) +
          " s (" + FormatBytes(secs > 0 ? static_cast<double>(bytes) / secs : 0.0) + "/s); log " +
          summary->log_path;
  Info(line);
  for (size_t i = 0; i < summary->benchmarks.size(); ++i) {
    const BenchmarkResult& b = summary->benchmarks[i];
    uint64_t hit = 0;
    for (const ItemResult& it : b.items) hit += it.verdicts[0] == Verdict::kContaminated ? 1 : 0;
    std::string l = "benchmark " + b.spec.name + ": " + std::to_string(hit) + " of " +
                    std::to_string(b.items.size()) + " items found in this corpus";
    if (i < summary->benchmark_subsets.size()) l += "; clean subset " + summary->benchmark_subsets[i];
    Info(l);
  }
  return kExitOk;
}

}  // namespace

void RegisterClean(CLI::App& app) {
  auto a = std::make_shared<CleanArgs>();
  CLI::App* c = app.add_subcommand(
      "clean", "Vet a corpus against benchmarks (no index needed) and write a cleaned copy");
  c->add_option("--benchmark", a->benchmarks, "Benchmark file (JSONL/JSON/CSV); repeatable")
      ->required();
  c->add_option("--benchmark-field", a->benchmark_fields,
                "Benchmark text field (key or JSON Pointer); repeatable (default text)");
  c->add_option("--benchmark-id", a->benchmark_id, "Benchmark id field (default: record number)");
  c->add_option("--field", a->fields, "Corpus text field (key or JSON Pointer); repeatable (default text)");
  c->add_option("--id-field", a->id_field, "Corpus record id field, for the log (default: line number)");
  c->add_flag("--text-lines", a->text_lines, "A .txt corpus file holds one document per line");
  c->add_option("--mode", a->mode, "drop: remove contaminated records; redact: replace matched spans")
      ->required();
  c->add_option("--replacement", a->replacement, "Redaction replacement (default [REDACTED])");
  c->add_option("-o,--output", a->output_dir, "Output directory")->required();
  c->add_option("--log", a->log_path, "Removal log (default OUTDIR/tidemark-clean-log.jsonl)");
  c->add_flag("--cached-writes", a->cached_writes,
              "Write the cleaned files through the page cache (default: around it, with "
              "O_DIRECT where the filesystem allows; same bytes, less CPU)");
  c->add_option("--clean-benchmarks", a->clean_benchmarks,
                "Write each benchmark's items not found in the corpus to OUTDIR/DIR");
  c->add_option("-n,--ngram", a->ngram, "Word n-gram length (default 13)");
  c->add_option("--seed", a->seed, "Fingerprint hash seed (default 0)");
  c->add_flag("--strip-accents", a->strip_accents, "Strip accents before matching");
  c->add_option("--min-hits", a->min_hits, "A record is contaminated from this many n-gram hits (default 1)");
  c->add_option("--min-coverage", a->min_coverage,
                "...and when at least this share of its tokens is matched (default 0)");
  c->add_option("--template-share", a->template_share,
                "Ignore n-grams in more than this share of a benchmark's items (default 0: off)");
  c->add_option("--min-template-items", a->min_template_items,
                "...and in at least this many items (default 3)");
  c->add_option("--level", a->level, "zstd/gzip output level (default zstd 3, gzip 6)");
  c->add_option("--max-record-bytes", a->max_record_bytes, "Longest corpus record (default 64 MiB)");
  c->add_flag("--strict", a->strict, "Stop at the first unreadable record");
  c->add_option("corpus", a->corpus, "Corpus files, directories or @lists")->required();
  c->callback([a] { SetHandler([a] { return Run(*a); }); });
}

}  // namespace tidemark::cli
