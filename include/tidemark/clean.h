// Cleaning: vet a corpus (typically fine-tuning data) against benchmarks without a
// corpus index, and write a cleaned copy. docs/cleaning.md is the user's guide.
//
// The benchmark items are tokenized and fingerprinted with the same text rules as
// everything else (tokenizer.h) into an in-memory table fingerprint -> items. Each
// corpus record is then tokenized and every n-gram looked up; a record is
// contaminated when its hits reach CleanOptions::min_hits and its token coverage
// reaches min_coverage. The cleaned copy keeps the input's format and compression;
// contaminated records are dropped (CleanMode::kDrop) or have the matched byte spans
// of their text replaced (kRedact). Every other byte stays as it was: untouched
// records are copied byte for byte, and in a redacted JSON record only the JSON string
// values of the text fields change. A JSONL log lists every drop and redaction.
//
// Thread safety: CleanCorpus parallelizes internally with oneTBB (blocks of a file in
// parallel, written in input order) and reports to CleanOptions::progress from
// worker threads. A BenchmarkTable is immutable after Build; Find may be called from
// many threads.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_CLEAN_H_
#define TIDEMARK_INCLUDE_TIDEMARK_CLEAN_H_

#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "tidemark/probe.h"
#include "tidemark/progress.h"
#include "tidemark/reader.h"
#include "tidemark/status.h"
#include "tidemark/text_options.h"

namespace tidemark {

class Env;  // common/env.h

/// A benchmark to clean against.
struct CleanBenchmark {
  std::string name;  ///< shown in the log; defaults to the file's base name
  std::string path;
  ReadOptions read;  ///< text fields, id field
};

/// Which benchmark item an n-gram belongs to.
struct ItemRef {
  uint32_t benchmark = 0;  ///< index into the benchmark list
  uint32_t item = 0;       ///< index into BenchmarkTable::items(benchmark)
};

/// The n-grams of a set of benchmarks, in memory.
class BenchmarkTable {
 public:
  struct Item {
    std::string id;
    uint64_t line = 0;
    uint32_t tokens = 0;
    std::vector<uint64_t> fingerprints;  ///< one per n-gram, in text order
  };
  struct BenchmarkInfo {
    CleanBenchmark spec;
    std::vector<Item> items;
    uint64_t too_short = 0;         ///< items with fewer than n tokens
    uint64_t ignored_template = 0;  ///< distinct n-grams dropped by the template filter
    SkipStats skips;
    std::string input_checksum;     ///< XXH3-64 hex of the file bytes
  };

  /// Reads and fingerprints every benchmark. Template filter (as in the probe): an
  /// n-gram found in more than `template_share` of a benchmark's items and in at least
  /// `min_template_items` of them is not kept; template_share 0 turns it off.
  static Result<std::unique_ptr<BenchmarkTable>> Build(const std::vector<CleanBenchmark>& benchmarks,
                                                       const TextOptions& text,
                                                       double template_share = 0.0,
                                                       uint32_t min_template_items = 3);
  ~BenchmarkTable();

  /// Items containing `fp` (sorted by benchmark, item); empty when absent.
  std::span<const ItemRef> Find(uint64_t fp) const;
  /// Replaces *positions with the indices i of fps whose fps[i] is in the table
  /// (one call per record: the hot loop of cleaning).
  void MatchPositions(std::span<const uint64_t> fps, std::vector<uint32_t>* positions) const;
  /// Index of `fp` among the distinct kept fingerprints (for per-n-gram flags), or -1.
  int64_t Slot(uint64_t fp) const;
  size_t distinct_ngrams() const;

  const std::vector<BenchmarkInfo>& benchmarks() const { return benchmarks_; }
  const TextOptions& text() const { return text_; }

 private:
  BenchmarkTable();
  struct Impl;
  std::unique_ptr<Impl> impl_;
  std::vector<BenchmarkInfo> benchmarks_;
  TextOptions text_;
};

enum class CleanMode { kDrop, kRedact };

struct CleanOptions {
  TextOptions text;           ///< default n = 13
  ReadOptions corpus_read;    ///< text fields of the corpus records (JSONL) / text_lines (.txt)
  CleanMode mode = CleanMode::kDrop;
  std::string replacement = "[REDACTED]";  ///< kRedact: put in place of each matched span
  uint32_t min_hits = 1;      ///< contaminated when hits >= min_hits ...
  double min_coverage = 0.0;  ///< ... and token coverage >= min_coverage
  double template_share = 0.0;
  uint32_t min_template_items = 3;
  int compression_level = 0;  ///< 0: default (zstd 3, gzip 6)
  size_t block_bytes = 1 << 20;
  size_t max_logged_matches = 16;  ///< per log line; matches_total gives the count
  /// The removal log; empty: <output_dir>/tidemark-clean-log.jsonl.
  std::string log_path;
  /// Also write, per benchmark, the items no corpus record matched (see
  /// WriteCleanBenchmarkSubset) to <output_dir>/<this>/<name>.clean.<ext>; empty: off.
  std::string benchmark_subset_dir;
  /// Write the cleaned copies around the page cache (O_DIRECT where the filesystem
  /// has it, with write-behind); same bytes either way (see FileOptions::direct).
  bool direct_writes = true;
  ProgressSink* progress = nullptr;
  Env* env = nullptr;  ///< nullptr: Env::Default()
};

/// Per corpus file.
struct CleanFileStats {
  std::string input;
  std::string output;
  uint64_t records = 0;      ///< records checked
  uint64_t contaminated = 0;
  uint64_t dropped = 0;
  uint64_t redacted = 0;
  uint64_t redact_fallback_drops = 0;  ///< kRedact records that had to be dropped (see docs)
  uint64_t spans_redacted = 0;
  uint64_t passed_unchecked = 0;  ///< lines the reader skipped (malformed, blank): copied as is
  uint64_t bytes_in = 0;     ///< uncompressed
  uint64_t bytes_out = 0;    ///< uncompressed
  SkipStats skips;
};

struct CleanSummary {
  std::vector<CleanFileStats> files;
  std::string log_path;
  uint64_t log_entries = 0;
  size_t distinct_ngrams = 0;
  /// Per benchmark: its items judged against this corpus (verdict kContaminated when
  /// any kept n-gram of the item occurs in some corpus record; kTooShort below n
  /// tokens; otherwise kClean), with whole.hits = matched n-gram positions.
  std::vector<BenchmarkResult> benchmarks;
  std::vector<uint64_t> ignored_template;  ///< per benchmark
  std::vector<std::string> benchmark_subsets;  ///< paths written, if asked
};

/// Cleans `corpus_files` (JSONL / .txt, plain, .zst or .gz) into `output_dir`,
/// keeping each file's path relative to the inputs' common directory. Refuses to
/// overwrite an input. Rerunning on the same inputs gives byte-identical outputs.
Result<CleanSummary> CleanCorpus(const BenchmarkTable& table,
                                 const std::vector<std::string>& corpus_files,
                                 const std::string& output_dir, const CleanOptions& options);

/// Writes the clean subset of a probed (or cleaned-against) benchmark: the items of
/// `result` whose verdict under rule `rule_index` is kClean (too-short and
/// contaminated items are left out), in their original format, each record's bytes
/// exactly as in result.spec.path (JSONL / text lines: the lines; CSV: the header
/// row and the records; the input's compression is undone, and `out_path`'s
/// extension .zst/.gz picks the output compression). In sample mode only the sampled
/// items can be written. Returns the number of items written.
Result<uint64_t> WriteCleanBenchmarkSubset(const BenchmarkResult& result, const std::string& out_path,
                                           size_t rule_index = 0, Env* env = nullptr);

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_CLEAN_H_
