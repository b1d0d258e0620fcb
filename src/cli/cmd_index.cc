// `tidemark index build|add|merge|inspect|verify|dump`: the n-gram index
// (docs/index_format.md, docs/cli.md).
#include <cinttypes>
#include <cstdio>
#include <memory>

#include "cli/cli_common.h"
#include "cli/commands.h"
#include "index/manifest.h"
#include "tidemark/index.h"
#include "tidemark/index_builder.h"
#include "tidemark/reader.h"

namespace tidemark::cli {
namespace {

struct IndexFlags {
  std::string dir;
  std::string out;
  std::vector<std::string> inputs;
  std::string memory;
  int threads = 0;
  uint32_t shards = 256;
  uint32_t bloom_bits = 10;
  int ngram = 13;
  uint64_t seed = 0;
  bool strip_accents = false;
  std::vector<std::string> fields;
  std::string id_field;
  std::string format = "auto";
  bool text_lines = false;
  bool strict = false;
  std::string temp_dir;
  bool cached_writes = false;
  bool no_sync = false;
  bool show_shards = false;
  // Which text/read/layout flags were given (for `add`, which defaults to the index's).
  CLI::Option* o_shards = nullptr;
  CLI::Option* o_bloom = nullptr;
  CLI::Option* o_ngram = nullptr;
  CLI::Option* o_seed = nullptr;
  CLI::Option* o_accents = nullptr;
  CLI::Option* o_fields = nullptr;
  CLI::Option* o_id = nullptr;
  CLI::Option* o_format = nullptr;
  CLI::Option* o_lines = nullptr;
};

Result<InputFormat> FormatFromName(const std::string& s) {
  if (s == "auto") return InputFormat::kAuto;
  if (s == "jsonl" || s == "ndjson") return InputFormat::kJsonl;
  if (s == "json") return InputFormat::kJsonArray;
  if (s == "csv") return InputFormat::kCsv;
  if (s == "txt" || s == "text") return InputFormat::kText;
  return Status::InvalidArgument("--format: unknown format '" + s + "' (auto, jsonl, json, csv, txt)");
}

Result<uint32_t> ShardBitsFor(uint32_t shards) {
  if (shards == 0 || (shards & (shards - 1)) != 0 || shards > 65536) {
    return Status::InvalidArgument("--shards " + std::to_string(shards) +
                                   ": must be a power of two from 1 to 65536");
  }
  uint32_t b = 0;
  while ((1u << b) < shards) ++b;
  return b;
}

// Options from flags; for `add`, unset flags take the index's values.
Result<IndexBuildOptions> OptionsFromFlags(const IndexFlags& f, const IndexManifest* existing) {
  IndexBuildOptions o;
  if (existing != nullptr) {
    o.text = existing->text;
    o.read = existing->read;
    o.shard_bits = existing->shard_bits;
    o.bloom_bits_per_key = existing->bloom_bits_per_key;
  }
  auto given = [existing](const CLI::Option* opt) { return existing == nullptr || opt->count() > 0; };
  if (given(f.o_ngram)) o.text.ngram = f.ngram;
  if (given(f.o_seed)) o.text.seed = f.seed;
  if (given(f.o_accents)) o.text.strip_accents = f.strip_accents;
  if (given(f.o_fields) && !f.fields.empty()) o.read.fields = f.fields;
  if (given(f.o_id)) o.read.id_field = f.id_field;
  if (given(f.o_format)) {
    TM_ASSIGN_OR_RETURN(o.read.format, FormatFromName(f.format));
  }
  if (given(f.o_lines)) o.read.text_lines = f.text_lines;
  if (given(f.o_shards)) {
    TM_ASSIGN_OR_RETURN(o.shard_bits, ShardBitsFor(f.shards));
  }
  if (given(f.o_bloom)) o.bloom_bits_per_key = f.bloom_bits;
  o.read.strict = f.strict;
  o.threads = f.threads;
  o.temp_dir = f.temp_dir;
  o.direct_writes = !f.cached_writes;
  o.sync = !f.no_sync;
  if (!f.memory.empty()) {
    TM_ASSIGN_OR_RETURN(o.memory_budget, ParseByteSize(f.memory));
    if (o.memory_budget == 0) return Status::InvalidArgument("--memory must be positive");
  }
  TM_RETURN_IF_ERROR(o.text.Validate());
  return o;
}

std::string SkipSummary(const SkipStats& s) {
  std::string out;
  for (size_t i = 0; i < s.counts.size(); ++i) {
    if (s.counts[i] == 0) continue;
    out += out.empty() ? "" : ", ";
    out += std::string(SkipReasonName(static_cast<SkipReason>(i))) + " " + std::to_string(s.counts[i]);
  }
  return out.empty() ? "none" : out;
}

int RunBuildOrAdd(const IndexFlags& f, bool add) {
  std::unique_ptr<IndexManifest> existing;
  if (add) {
    auto m = ReadManifest(f.dir);
    if (!m.ok()) return ReportError(m.status());
    existing = std::make_unique<IndexManifest>(std::move(m).value());
  }
  auto opts = OptionsFromFlags(f, existing.get());
  if (!opts.ok()) return ReportError(opts.status());
  auto inputs = ExpandInputs(f.inputs);
  if (!inputs.ok()) return ReportError(inputs.status());
  if (inputs->empty()) return ReportError(Status::InvalidArgument("no input files"));
  ProgressPrinter printer(add ? "index add" : "index build");
  opts->progress = &printer;
  IndexBuildStats st;
  const std::string& dir = add ? f.dir : f.out;
  Status s = add ? AddSegment(dir, *inputs, *opts, &st) : BuildIndex(dir, *inputs, *opts, &st);
  printer.Finish();
  for (const std::string& e : st.skips.examples) Info("skipped: " + e);
  if (!s.ok()) return ReportError(s);
  const double mbps = st.seconds > 0 ? static_cast<double>(st.bytes_read) / 1e6 / st.seconds : 0.0;
  char line[512];
  std::snprintf(line, sizeof(line),
                "%s %s: %" PRIu64 " files (%s), %" PRIu64 " records, skipped: %s; %" PRIu64
                " n-grams, %" PRIu64 " distinct, %s (%.2f bytes/n-gram), %" PRIu64
                " spills; %.1f s, %.1f MB/s of input on disk",
                add ? "added segment to" : "built", dir.c_str(), st.files,
                FormatBytes(static_cast<double>(st.bytes_read)).c_str(), st.records,
                SkipSummary(st.skips).c_str(), st.ngrams_total, st.ngrams_distinct,
                FormatBytes(static_cast<double>(st.index_bytes)).c_str(),
                st.ngrams_distinct > 0 ? static_cast<double>(st.index_bytes) / static_cast<double>(st.ngrams_distinct) : 0.0,
                st.spills, st.seconds, mbps);
  Info(line);
  return kExitOk;
}

int RunMerge(const IndexFlags& f) {
  ProgressPrinter printer("index merge");
  IndexMergeOptions o;
  o.threads = f.threads;
  o.direct_writes = !f.cached_writes;
  o.sync = !f.no_sync;
  o.progress = &printer;
  if (!f.memory.empty()) {
    auto m = ParseByteSize(f.memory);
    if (!m.ok()) return ReportError(m.status());
    o.memory_budget = *m;
  }
  IndexMergeStats st;
  Status s;
  std::string target;
  if (f.out.empty()) {
    if (f.inputs.size() != 1) {
      return ReportError(Status::InvalidArgument(
          "merge: give one index to compact in place, or -o OUT with the indexes to merge"));
    }
    target = f.inputs[0];
    s = MergeSegments(target, o, &st);
  } else {
    target = f.out;
    s = MergeIndexes(target, f.inputs, o, &st);
  }
  printer.Finish();
  if (!s.ok()) return ReportError(s);
  char line[256];
  if (st.segment_id == 0) {
    std::snprintf(line, sizeof(line), "%s: one segment already; nothing to merge", target.c_str());
  } else {
    std::snprintf(line, sizeof(line),
                  "merged %u segments into %s/seg-%06u: %" PRIu64 " distinct n-grams, %s; %.1f s",
                  st.segments_in, target.c_str(), st.segment_id, st.ngrams_distinct,
                  FormatBytes(static_cast<double>(st.index_bytes)).c_str(), st.seconds);
  }
  Info(line);
  return kExitOk;
}

int RunInspect(const IndexFlags& f) {
  IndexInspection in;
  Status s = InspectIndex(f.dir, &in);
  if (!s.ok()) return ReportError(s);
  auto m = IndexManifest::Parse(in.manifest_json, f.dir);
  if (!m.ok()) return ReportError(m.status());
  std::printf("index       %s\n", f.dir.c_str());
  std::printf("identity    %s\n", in.identity.c_str());
  std::printf("format      tidemark-index version %d\n", m->format_version);
  std::printf("text        %s\n", m->text.ToString().c_str());
  std::string fields;
  for (const auto& x : m->read.fields) fields += (fields.empty() ? "" : ",") + x;
  std::printf("read        fields=%s id_field=%s format=%s\n", fields.c_str(),
              m->read.id_field.empty() ? "(record number)" : m->read.id_field.c_str(),
              std::string(InputFormatName(m->read.format)).c_str());
  std::printf("shards      %u per segment\n", 1u << m->shard_bits);
  std::printf("bloom       %u bits/key, k=%u, 512-bit blocks; formula FPR %.4f%%, from fill %.4f%%\n",
              m->bloom_bits_per_key, m->bloom_k(), 100 * in.bloom_formula_fpr,
              100 * in.bloom_mean_expected_fpr);
  std::printf("segments    %zu\n", m->segments.size());
  std::printf("files       %zu\n", m->AllFiles().size());
  std::printf("records     %" PRIu64 "\n", m->records());
  SkipStats sk;
  sk.counts = m->skipped();
  std::printf("skipped     %s\n", SkipSummary(sk).c_str());
  std::printf("n-grams     %" PRIu64 " total, %" PRIu64 " distinct%s\n", in.ngrams_total,
              in.ngrams_distinct, m->segments.size() > 1 ? " (summed over segments)" : "");
  std::printf("size        %" PRIu64 " bytes, %.3f bytes per distinct n-gram\n", in.bytes,
              in.bytes_per_ngram);
  for (const auto& seg : m->segments) {
    std::printf("segment %u   %zu files, %" PRIu64 " records, %" PRIu64 " distinct, built by %s in %.1f s\n",
                seg.id, seg.files.size(), seg.records, seg.ngrams_distinct, seg.build.tool.c_str(),
                seg.build.seconds);
  }
  if (f.show_shards) {
    std::printf("\nsegment shard        keys      bytes  b/key  bucket_bits rem_bits  bloom_fill  est_fpr  max_count\n");
    for (const auto& sh : in.shards) {
      std::printf("%7u %5u %11" PRIu64 " %10" PRIu64 " %6.2f %12u %8u %10.4f %8.5f %10" PRIu64 "\n",
                  sh.segment_id, sh.shard_id, sh.keys, sh.bytes,
                  sh.keys > 0 ? static_cast<double>(sh.bytes) / static_cast<double>(sh.keys) : 0.0,
                  sh.bucket_bits, sh.remainder_bits, sh.bloom_fill, sh.bloom_expected_fpr, sh.max_count);
    }
  }
  return kExitOk;
}

int RunVerify(const IndexFlags& f) {
  IndexVerifyReport r;
  Status s = VerifyIndex(f.dir, f.threads, &r);
  if (!s.ok()) return ReportError(s);
  char line[256];
  std::snprintf(line, sizeof(line),
                "%s: ok (%" PRIu64 " shard files, %" PRIu64 " n-grams, %s checked)", f.dir.c_str(),
                r.shards_checked, r.keys_checked, FormatBytes(static_cast<double>(r.bytes_checked)).c_str());
  std::printf("%s\n", line);
  return kExitOk;
}

int RunDump(const IndexFlags& f) {
  FILE* out = stdout;
  if (!f.out.empty()) {
    out = std::fopen(f.out.c_str(), "w");
    if (out == nullptr) return ReportError(Status::IOError(f.out + ": cannot create"));
  }
  Status s = DumpIndex(f.dir, [out](uint64_t fp, const NgramInfo& info) {
    if (std::fprintf(out, "%016" PRIx64 " %u %u\n", fp, info.count, info.docs) < 0) {
      return Status::IOError("write failed");
    }
    return CancelRequested() ? Status::Cancelled("dump interrupted") : Status::Ok();
  });
  if (out != stdout && std::fclose(out) != 0 && s.ok()) s = Status::IOError(f.out + ": write failed");
  if (!s.ok()) return ReportError(s);
  return kExitOk;
}

void AddCachedWritesFlag(CLI::App* sub, IndexFlags* f) {
  sub->add_flag("--cached-writes", f->cached_writes,
                "Write shard files through the page cache (default: around it, with "
                "O_DIRECT where the filesystem allows; same bytes, less CPU, the corpus "
                "stays cached)");
  sub->add_flag("--no-sync", f->no_sync,
                "Do not flush the new files to stable storage before finishing (faster on "
                "network filesystems and slow disks; a crash of tidemark is still safe, but "
                "after a power failure or OS crash soon after, the index may fail to open: "
                "rebuild it then)");
}

void AddBuildFlags(CLI::App* sub, IndexFlags* f) {
  sub->add_option("--memory", f->memory,
                  "Memory budget, e.g. 512M, 4G (default: a quarter of RAM)");
  sub->add_option("--threads", f->threads, "Worker threads (default: all cores)");
  f->o_shards = sub->add_option("--shards", f->shards, "Shards, a power of two (default 256)");
  f->o_bloom = sub->add_option("--bloom-bits", f->bloom_bits,
                               "Bloom filter bits per n-gram, 1-64 (default 10: about 1% false "
                               "positives)");
  f->o_ngram = sub->add_option("-n,--ngram", f->ngram, "Words per n-gram (default 13)");
  f->o_seed = sub->add_option("--seed", f->seed, "Hash seed (default 0)");
  f->o_accents = sub->add_flag("--strip-accents", f->strip_accents, "Fold accents away");
  f->o_fields = sub->add_option("--field", f->fields,
                                "Text field: key or JSON Pointer (repeatable; default: text)");
  f->o_id = sub->add_option("--id-field", f->id_field, "Id field (default: record number)");
  f->o_format = sub->add_option("--format", f->format, "Input format: auto, jsonl, json, csv, txt");
  f->o_lines = sub->add_flag("--text-lines", f->text_lines, ".txt: one document per line");
  sub->add_flag("--strict", f->strict, "Stop at the first bad record");
  sub->add_option("--temp-dir", f->temp_dir,
                  "Where sorted runs are spilled (default: inside the index directory)");
  AddCachedWritesFlag(sub, f);
}

}  // namespace

void RegisterIndex(CLI::App& app) {
  auto f = std::make_shared<IndexFlags>();
  CLI::App* index = app.add_subcommand("index", "Build, extend, merge, check and dump n-gram indexes");
  index->require_subcommand(1);

  CLI::App* build = index->add_subcommand("build", "Index corpus files into a new index directory");
  build->add_option("-o,--out", f->out, "Index directory to create")->required();
  build->add_option("inputs", f->inputs, "Corpus files, directories or @list files")->required();
  AddBuildFlags(build, f.get());
  build->callback([f] { SetHandler([f] { return RunBuildOrAdd(*f, false); }); });

  CLI::App* add = index->add_subcommand("add", "Add corpus files to an index as a new segment");
  add->add_option("index", f->dir, "Index directory")->required();
  add->add_option("inputs", f->inputs, "Corpus files, directories or @list files")->required();
  AddBuildFlags(add, f.get());
  add->callback([f] { SetHandler([f] { return RunBuildOrAdd(*f, true); }); });

  CLI::App* merge = index->add_subcommand(
      "merge", "Compact an index's segments into one, or merge indexes into a new one (-o)");
  merge->add_option("indexes", f->inputs, "Index directory (or several, with -o)")->required();
  merge->add_option("-o,--out", f->out, "Write the merged index here instead of in place");
  merge->add_option("--threads", f->threads, "Worker threads (default: all cores)");
  merge->add_option("--memory", f->memory, "Memory budget, e.g. 4G");
  AddCachedWritesFlag(merge, f.get());
  merge->callback([f] { SetHandler([f] { return RunMerge(*f); }); });

  CLI::App* inspect = index->add_subcommand("inspect", "Print an index's manifest and shard statistics");
  inspect->add_option("index", f->dir, "Index directory")->required();
  inspect->add_flag("--shards", f->show_shards, "One line per shard file");
  inspect->callback([f] { SetHandler([f] { return RunInspect(*f); }); });

  CLI::App* verify = index->add_subcommand("verify", "Check every checksum and invariant of an index");
  verify->add_option("index", f->dir, "Index directory")->required();
  verify->add_option("--threads", f->threads, "Worker threads (default: all cores)");
  verify->callback([f] { SetHandler([f] { return RunVerify(*f); }); });

  CLI::App* dump = index->add_subcommand(
      "dump", "Print every n-gram fingerprint with its count and document count");
  dump->add_option("index", f->dir, "Index directory")->required();
  dump->add_option("-o,--out", f->out, "Write to FILE instead of stdout");
  dump->callback([f] { SetHandler([f] { return RunDump(*f); }); });
}

}  // namespace tidemark::cli
