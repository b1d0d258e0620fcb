// Building, extending, compacting, checking and dumping an index directory
// (docs/index_format.md). The corpus is read with the readers (reader.h) and turned
// into fingerprints with the tokenizer (tokenizer.h); fingerprints go to per-worker
// buffers that are sorted and spilled as runs when the memory budget is reached, and
// are k-way merged shard by shard at the end.
//
// Every function writes new files into staging names and publishes them by renaming,
// with the manifest written last, so an interrupted call (Ctrl-C, kill -9, disk full)
// never leaves a directory that opens as an index with partial contents. One writer at
// a time per index directory (a LOCK file is flock'ed); readers may keep an Index open
// while a writer adds or merges.
//
// Thread safety: each call is single-owner and parallelizes internally with oneTBB;
// the ProgressSink is called from worker threads.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_INDEX_BUILDER_H_
#define TIDEMARK_INCLUDE_TIDEMARK_INDEX_BUILDER_H_

#include <cstdint>
#include <functional>
#include <span>
#include <string>
#include <vector>

#include "tidemark/index.h"
#include "tidemark/progress.h"
#include "tidemark/reader.h"
#include "tidemark/status.h"
#include "tidemark/text_options.h"

namespace tidemark {

class Env;  // src/common/env.h: the OS seam (tests inject failures through it)

struct IndexBuildOptions {
  TextOptions text;
  ReadOptions read;
  /// log2 of the number of shards, 0..16 (default 256 shards).
  uint32_t shard_bits = 8;
  /// Bloom filter bits per distinct n-gram, 1..64; 10 gives about 1% false positives.
  uint32_t bloom_bits_per_key = 10;
  /// Bytes of RAM the build may use in all (buffers, merge, pipeline); 0: a quarter of
  /// physical memory. Below the working minimum (about 64 MiB for corpus builds) the
  /// buffers shrink to a small floor: fine for tests, slow for real corpora.
  uint64_t memory_budget = 0;
  /// Worker threads; 0: all hardware threads.
  int threads = 0;
  /// Where sorted runs are spilled (a `.tmp-<pid>` directory is made inside); empty:
  /// the index directory itself (same disk as the index).
  std::string temp_dir;
  /// Write shard files around the page cache (O_DIRECT, where the filesystem has
  /// it): less CPU per byte written and the corpus stays cached; the first probe
  /// then reads the index from disk. Same bytes either way.
  bool direct_writes = true;
  /// Make the new files durable (one filesystem flush, then the manifest, each
  /// fsync'ed) before the index is complete. false (`--no-sync`): skip every flush;
  /// faster where flushing is slow (network filesystems, a disk with a large write
  /// cache), and a crash of the process is still safe, but a power failure or OS
  /// crash soon after may leave files short, which opening the index then reports:
  /// rebuild it.
  bool sync = true;
  /// OS seam; nullptr: Env::Default().
  Env* env = nullptr;
  /// Progress ("reading", "spilling", "merging"); may be nullptr.
  ProgressSink* progress = nullptr;
};

/// What a build or add did (also stored in the manifest).
struct IndexBuildStats {
  uint64_t files = 0;
  uint64_t bytes_read = 0;   ///< on-disk bytes of the corpus files
  uint64_t records = 0;      ///< records indexed
  SkipStats skips;           ///< per reason, with the first examples
  uint64_t ngrams_total = 0;
  uint64_t ngrams_distinct = 0;  ///< in the new segment
  uint64_t index_bytes = 0;      ///< shard bytes of the new segment
  uint64_t spills = 0;           ///< sorted runs written
  uint64_t spilled_bytes = 0;
  uint32_t segment_id = 0;
  double seconds = 0;
  double seconds_reading = 0;  ///< reading, tokenizing, buffering and spilling
  double seconds_writing = 0;  ///< sorting, merging and writing the shard files
  double cpu_seconds_reading = 0;  ///< process CPU time (user + system) of the first phase
  double cpu_seconds_writing = 0;  ///< ... and of the second
};

/// Indexes `inputs` (files, already expanded: see ExpandInputs) into a new index at
/// `dir`. `dir` must not exist, be empty, or hold only the left-overs of an
/// interrupted build (removed here). REQUIRES: options.text.Validate().ok().
Status BuildIndex(const std::string& dir, const std::vector<std::string>& inputs,
                  const IndexBuildOptions& options, IndexBuildStats* stats);

/// Adds `inputs` as a new segment of the index at `dir`. The options' text, read,
/// shard and Bloom parameters must equal the index's (kMismatch naming each); a file
/// already in the index is kInvalidArgument.
Status AddSegment(const std::string& dir, const std::vector<std::string>& inputs,
                  const IndexBuildOptions& options, IndexBuildStats* stats);

/// For tests and tools that have fingerprints rather than text: one entry per
/// document (any order, duplicates allowed). Builds a new index (`add` false) or adds
/// a segment (`add` true). The manifest lists no corpus files; records = documents.
Status BuildIndexFromDocuments(const std::string& dir,
                               std::span<const std::vector<uint64_t>> documents,
                               const IndexBuildOptions& options, bool add,
                               IndexBuildStats* stats);

struct IndexMergeOptions {
  int threads = 0;
  uint64_t memory_budget = 0;
  bool direct_writes = true;  ///< as IndexBuildOptions::direct_writes
  bool sync = true;           ///< as IndexBuildOptions::sync
  Env* env = nullptr;
  ProgressSink* progress = nullptr;
};

struct IndexMergeStats {
  uint32_t segments_in = 0;
  uint32_t segment_id = 0;  ///< of the merged segment (0: nothing to do)
  uint64_t ngrams_distinct = 0;
  uint64_t index_bytes = 0;
  double seconds = 0;
};

/// Compacts all segments of the index at `dir` into one, shard by shard. Every input
/// shard's checksums are verified first. The old segments are removed after the new
/// manifest is in place. One segment: nothing to do (OK).
Status MergeSegments(const std::string& dir, const IndexMergeOptions& options,
                     IndexMergeStats* stats);

/// Writes a new index at `out_dir` holding all segments of the `inputs` indexes
/// merged into one (e.g. one index per Slurm task). Their parameters must agree and
/// their corpus files must be disjoint.
Status MergeIndexes(const std::string& out_dir, const std::vector<std::string>& inputs,
                    const IndexMergeOptions& options, IndexMergeStats* stats);

/// Per-shard statistics (inspect).
struct ShardStats {
  uint32_t segment_id = 0;
  uint32_t shard_id = 0;
  std::string path;
  uint64_t keys = 0;
  uint64_t bytes = 0;
  uint64_t bloom_bytes = 0;
  uint32_t bucket_bits = 0;
  uint32_t remainder_bits = 0;
  double bloom_fill = 0;          ///< fraction of Bloom bits set
  double bloom_expected_fpr = 0;  ///< fill^k (from the measured fill)
  uint64_t total_count = 0;
  uint64_t total_docs = 0;
  uint64_t max_count = 0;
};

struct IndexInspection {
  std::string manifest_json;  ///< the manifest as stored
  std::string identity;
  uint64_t ngrams_distinct = 0;
  uint64_t ngrams_total = 0;
  uint64_t bytes = 0;
  double bytes_per_ngram = 0;
  double bloom_formula_fpr = 0;  ///< blocked-filter formula (Putze et al. 2007)
  double bloom_mean_expected_fpr = 0;  ///< key-weighted mean of the shards' fill^k
  std::vector<ShardStats> shards;
};

/// Reads the manifest and every shard header (no checksums).
Status InspectIndex(const std::string& dir, IndexInspection* out);

struct IndexVerifyReport {
  uint64_t shards_checked = 0;
  uint64_t bytes_checked = 0;
  uint64_t keys_checked = 0;
};

/// Checks the manifest, every shard's header, section checksums and invariants
/// (sorted, unique, counts consistent, manifest totals). The first damage is a
/// kCorruption naming the file and byte offset.
Status VerifyIndex(const std::string& dir, int threads, IndexVerifyReport* report);

/// Calls `fn(fp, info)` for every distinct fingerprint of the index in ascending
/// order, counts summed over segments. Stops at the first non-OK Status from fn.
Status DumpIndex(const std::string& dir,
                 const std::function<Status(uint64_t fp, const NgramInfo& info)>& fn);

/// Removes left-overs of interrupted writers of dead processes: `.tmp-<pid>` run
/// directories in `temp_root` and, in `dir`, segment staging directories, manifest
/// temp files and segment directories the manifest does not list.
Status RemoveStaleFiles(const std::string& dir, const std::string& temp_root, Env* env);

/// Parses "512M", "4G", "1.5GiB", "123456" into bytes (K/M/G/T = 2^10.., optional
/// "B"/"iB"). kInvalidArgument otherwise.
Result<uint64_t> ParseByteSize(const std::string& text);

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_INDEX_BUILDER_H_
