// Evidence pass: where in the corpus the flagged benchmark items occur.
// docs/evidence.md is the user's guide and defines every offset.
//
// The hit fingerprints of the probed items are collected into a table, the corpus
// files listed in the index manifest are read once more, and every n-gram whose
// fingerprint is in the table is re-checked on the real tokens: its n token hashes
// and normalized tokens must equal those of the benchmark n-gram, so a 64-bit
// fingerprint collision never reaches the report (it is counted instead). Verified
// matches of one item inside one record that overlap or touch are merged into one
// occurrence, reported with the file, line, record id, offsets and a snippet of the
// original text.
//
// Thread safety: the passes parallelize internally with oneTBB (blocks of a file in
// parallel, results combined in input order, so the output does not depend on the
// thread count) and call EvidenceOptions::progress from worker threads.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_EVIDENCE_H_
#define TIDEMARK_INCLUDE_TIDEMARK_EVIDENCE_H_

#include <cstdint>
#include <string>
#include <utility>
#include <vector>

#include "tidemark/probe.h"
#include "tidemark/progress.h"
#include "tidemark/reader.h"
#include "tidemark/status.h"
#include "tidemark/text_options.h"

namespace tidemark {

class Env;  // common/env.h

/// One benchmark n-gram to look for.
struct EvidenceTarget {
  uint64_t fingerprint = 0;
  std::vector<uint64_t> token_hashes;  ///< the n token hashes of the benchmark n-gram
  std::vector<std::string> tokens;     ///< the n normalized tokens
  uint32_t benchmark = 0;              ///< index into the results
  uint32_t item = 0;                   ///< index into BenchmarkResult::items
};

/// One place an item occurs: a maximal run of verified matching n-grams in one record.
struct EvidenceOccurrence {
  std::string file;           ///< corpus file as read (after --corpus-root remapping)
  uint64_t line = 0;          ///< 1-based line of the record (1 for a whole-file text)
  std::string record_id;      ///< the reader's record id
  /// Byte offset of the record's line start in the UNCOMPRESSED stream of the file.
  uint64_t line_offset = 0;
  /// [text_begin, text_end): bytes of the record text (the text fields' decoded
  /// values joined with field_joiner, exactly Record::text) covered by the run.
  uint32_t text_begin = 0;
  uint32_t text_end = 0;
  /// [raw_begin, raw_end): the same span in the uncompressed file bytes (for JSONL,
  /// inside the JSON string token, escapes included). -1 when not determinable.
  int64_t raw_begin = -1;
  int64_t raw_end = -1;
  uint32_t ngrams = 0;        ///< verified matching n-grams in the run
  uint32_t tokens = 0;        ///< corpus tokens in the run
  uint64_t first_fingerprint = 0;
  /// Original corpus text around the span (valid UTF-8, at most about
  /// 2 * snippet_context + span bytes, the span itself clipped to max_snippet_span).
  std::string snippet;
  uint32_t snippet_match_begin = 0;  ///< the matched bytes inside `snippet`
  uint32_t snippet_match_end = 0;
};

struct ItemEvidence {
  uint32_t benchmark = 0;
  uint32_t item = 0;
  std::string benchmark_name;
  std::string id;
  uint64_t targets = 0;            ///< hit fingerprints looked for
  uint64_t occurrences_total = 0;  ///< all occurrences found (uncapped)
  uint64_t collisions = 0;         ///< fingerprint matches whose tokens differ
  std::vector<EvidenceOccurrence> occurrences;  ///< first ones in corpus order, capped
};

struct EvidenceOptions {
  size_t max_occurrences_per_item = 5;
  size_t snippet_context = 80;     ///< bytes of context on each side
  size_t max_snippet_span = 400;   ///< longest matched span shown in a snippet
  /// Only items contaminated under some rule (else: every item with hit fingerprints).
  bool only_contaminated = true;
  /// Corpus root remapping: a manifest path starting with `first` is read at
  /// `second` + the rest (the corpus moved since indexing).
  std::vector<std::pair<std::string, std::string>> root_remaps;
  size_t block_bytes = 1 << 20;  // 1 MiB: fuller pipelines on 2 cores than 4 MiB (bench/clean_bench)
  ProgressSink* progress = nullptr;
};

struct EvidenceStats {
  uint64_t files = 0;
  uint64_t records = 0;
  uint64_t bytes = 0;            ///< uncompressed bytes scanned
  uint64_t targets = 0;
  uint64_t unresolved = 0;       ///< hit fingerprints not among the item's own n-grams
  uint64_t candidates = 0;       ///< corpus n-grams whose fingerprint is a target's
  uint64_t verified = 0;         ///< ... whose tokens match too
  uint64_t collisions = 0;       ///< ... whose tokens differ (64-bit collisions)
  SkipStats skips;
};

struct EvidenceReport {
  std::vector<ItemEvidence> items;  ///< by (benchmark, item)
  EvidenceStats stats;
};

/// Re-reads each benchmark (spec.path, spec.read; its checksum must still match
/// input_checksum when that is set) and turns the items' hit fingerprints into
/// targets with their token hashes and tokens. *unresolved counts hit fingerprints
/// that are not an n-gram of their item (a changed file, other text options).
Result<std::vector<EvidenceTarget>> CollectEvidenceTargets(const std::vector<BenchmarkResult>& results,
                                                           const TextOptions& text,
                                                           const EvidenceOptions& options,
                                                           uint64_t* unresolved);

/// Scans `corpus_files` for the targets. REQUIRES: the targets' benchmark/item
/// indices are valid in `results`.
Result<EvidenceReport> ScanForEvidence(const std::vector<BenchmarkResult>& results,
                                       const std::vector<EvidenceTarget>& targets,
                                       const std::vector<std::string>& corpus_files,
                                       const ReadOptions& read, const TextOptions& text,
                                       const EvidenceOptions& options);

/// The whole pass against an index: its manifest gives the corpus files, the read
/// options and the text options.
Result<EvidenceReport> RunEvidencePass(const std::vector<BenchmarkResult>& results,
                                       const std::string& index_dir,
                                       const EvidenceOptions& options);

/// Applies options.root_remaps to a path (first matching prefix wins).
std::string RemapCorpusPath(const std::string& path, const EvidenceOptions& options);

/// Writes one JSON object per occurrence (docs/evidence.md), atomically.
Status WriteEvidenceJsonl(const EvidenceReport& report, const std::string& path,
                          Env* env = nullptr);

/// Reads per-item JSON Lines (fields benchmark, id, and hit_fingerprints as 16-digit
/// hex strings, at the top level or under "item") and attaches the fingerprints to
/// the items of `benchmarks` (matched by benchmark name and id; items listed there
/// count as contaminated). `benchmarks` gives each benchmark's spec; its items are
/// read from the benchmark file. Lines of other benchmarks are skipped; NotFound
/// for an unknown id.
Result<std::vector<BenchmarkResult>> LoadProbeItems(const std::string& path,
                                                    const std::vector<BenchmarkSpec>& benchmarks);

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_EVIDENCE_H_
