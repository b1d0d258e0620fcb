// SegmentBuilder: documents' fingerprints -> the shard files of one new segment.
//
// Each worker owns a fixed-capacity buffer (its share of the memory budget), carved
// into chunks that each hold keys of one shard, so keys are grouped by shard as they
// arrive. A document's fingerprints are de-duplicated; each distinct one is appended
// once (one document), repeats inside the document go to a small "extra occurrences"
// list. A full buffer is sorted shard by shard and spilled as a run file. Finish, if
// nothing was spilled, sorts each shard's keys from all workers at once, collapses
// them into counts and writes the shard (the disk write overlapping the next shard's
// sort); otherwise it k-way merges the runs shard by shard. Shards are finished in
// parallel. The result depends only on the multiset of documents.
//
// Thread safety: AddDocument(w, ...) may run concurrently for distinct w; everything
// else is single-owner.
#ifndef TIDEMARK_SRC_INDEX_SEGMENT_BUILDER_H_
#define TIDEMARK_SRC_INDEX_SEGMENT_BUILDER_H_

#include <atomic>
#include <cstdint>
#include <functional>
#include <memory>
#include <mutex>
#include <span>
#include <string>
#include <vector>

#include "common/env.h"
#include "index/kway_merge.h"
#include "index/manifest.h"
#include "index/shard_writer.h"
#include "tidemark/progress.h"
#include "tidemark/status.h"

namespace tidemark {

/// Throttled, thread-safe progress reporting for one long operation.
class ProgressReporter {
 public:
  explicit ProgressReporter(ProgressSink* sink) : sink_(sink) {}
  void set_total(uint64_t total) { total_ = total; }
  void AddBytes(uint64_t n) { done_.fetch_add(n, std::memory_order_relaxed); }
  void AddRecords(uint64_t n) { records_.fetch_add(n, std::memory_order_relaxed); }
  /// Counts `unit`s (a string literal) for reports of `phase` (a string literal):
  /// done of total. Reports of other phases carry no units.
  void SetUnits(std::string_view phase, uint64_t done, uint64_t total, std::string_view unit);
  /// Reports at most every 100 ms unless `force`.
  void Report(std::string_view phase, bool force = false);
  uint64_t done() const { return done_.load(); }

 private:
  ProgressSink* sink_;
  std::mutex mu_;
  uint64_t total_ = 0;
  std::atomic<uint64_t> done_{0};
  std::atomic<uint64_t> records_{0};
  std::atomic<int64_t> last_ns_{0};
  // Guarded by mu_.
  std::string_view units_phase_;
  std::string_view unit_;
  uint64_t done_units_ = 0;
  uint64_t total_units_ = 0;
};

/// Makes the shard files a BackgroundShardWriter wrote into `dir` (closed without an
/// fsync each) durable: one filesystem flush, reported as phase "syncing" (on a disk
/// with a write cache it can take seconds), then the directory's entries.
Status SyncNewShards(Env* env, const std::string& dir, ProgressReporter* progress);

class SegmentBuilder {
 public:
  /// `buffer_bytes` is split evenly across `workers`; runs go to `run_dir` (created
  /// on first spill). `merge_budget` bounds the memory of concurrent shard writers.
  SegmentBuilder(const ShardParams& params, int workers, uint64_t buffer_bytes,
                 uint64_t merge_budget, std::string run_dir, Env* env,
                 ProgressReporter* progress, bool direct_writes = true);
  ~SegmentBuilder();

  /// Adds one document (its fingerprints in any order). REQUIRES: 0 <= worker < workers.
  Status AddDocument(int worker, std::span<const uint64_t> fps);

  /// Merges everything into `staging_dir`/shard-NNNNN.tms (with `threads` threads)
  /// and fills seg->shards, ngrams_total, ngrams_distinct, bytes.
  Status Finish(const std::string& staging_dir, int threads, ManifestSegment* seg);

  uint64_t spills() const { return spills_.load(); }
  uint64_t spilled_bytes() const { return spilled_bytes_.load(); }
  uint64_t ngrams_total() const;

 private:
  // Per-document distinct keys in O(n): an open-addressing set of keys whose slots
  // are marked in an occupancy bitmap (a few hundred bytes, cleared per document, so
  // the key slots themselves are never cleared and most probes stay in L1). Repeated
  // keys are listed apart.
  struct DocSet {
    std::vector<uint64_t> keys;
    std::vector<uint64_t> occupied;  // bit i: slot i holds a key of this document
    std::vector<uint64_t> distinct;  // in first-seen order
    std::vector<uint64_t> repeats;   // each occurrence after the first
  };
  // A worker's buffer: an arena of capacity_slots_ keys (reserved address space,
  // committed as it fills) carved into chunks of chunk_slots_ keys, each chunk
  // holding keys of one shard. Keys are thus grouped by shard as they arrive, and a
  // shard's keys are the spans of its chunks.
  //
  // Appends go through software write-combining: each shard's keys are collected in a
  // cache line of `stage` and a full line is copied to the arena with non-temporal
  // stores, so that the hundreds of scattered append streams neither read the arena's
  // lines before writing them nor stall on them (Wassenberg and Sanders 2011,
  // "Engineering a multi-core radix sort", section 3.1). A shard's last, partial line
  // reaches the arena in FlushStaging.
  struct Worker {
    uint64_t* arena = nullptr;  // mmap'ed: page-aligned, so every chunk line is too
    size_t chunks_used = 0;
    size_t populated = 0;  // arena slots prefaulted (PrefaultArena)
    std::vector<std::vector<uint32_t>> shard_chunks;  // per shard, its chunks in order
    std::vector<uint32_t> fill;  // per shard, keys in its last chunk (chunk_slots_: none open)
    std::vector<uint64_t*> base;  // per shard, its last chunk (valid if fill < chunk)
    struct alignas(64) Line {
      uint64_t keys[8];
    };
    std::vector<Line> stage;  // per shard, keys not yet in the arena (fill % 8 of them)
    std::vector<ExtraCount> extras;
    uint64_t keys = 0;  // keys in the arena
    uint64_t ngrams = 0;
    DocSet doc;
  };
  // Copies every shard's partial staging line to the arena and orders the
  // non-temporal stores before what follows. REQUIRES: on w's adding thread, or after
  // that thread synchronized with this one.
  void FlushStaging(Worker* w);
  void FreeArena(Worker* w);
  // The spans of shard s's keys in w. REQUIRES: FlushStaging(w) since the last add.
  void ShardSpans(const Worker& w, uint32_t s, std::vector<std::span<const uint64_t>>* out) const;
  // Appends fp as key f of shard s's open chunk (through its staging line).
  void Append(Worker* w, uint32_t s, uint32_t f, uint64_t fp);
  // Adds a key that opens a chunk or repeats in its document (may spill first).
  Status AddSlow(Worker* w, uint64_t fp, uint32_t count);
  Status Spill(Worker* w);
  void ResetBuffer(Worker* w);
  // Commits the arena's pages ahead of use, a stretch at a time.
  void PrefaultArena(Worker* w);
  // Slots in use if `more_chunks` chunks and `more_extras` extras were added.
  bool Fits(const Worker& w, size_t more_chunks, size_t more_extras) const {
    return (w.chunks_used + more_chunks) * chunk_slots_ + 2 * (w.extras.size() + more_extras) <=
           capacity_slots_;
  }
  // The buffers (nothing spilled): per shard, gather every worker's keys, sort,
  // count and write.
  Status FinishInMemory(const std::string& staging_dir, int conc_max, ManifestSegment* seg);
  // Runs (everything spilled): per shard, k-way merge the runs and write.
  Status FinishFromRuns(const std::string& staging_dir, int conc_max, ManifestSegment* seg);
  void ReportShardDone(std::atomic<uint32_t>* done);
  // Runs fn(shard, writer) for every shard on `conc` threads, the shard files going
  // through one background writer; reports progress; the first error wins.
  Status ForEachShard(int conc, const std::function<Status(uint32_t, BackgroundShardWriter*)>& fn);

  ShardParams params_;
  uint32_t num_shards_;
  size_t capacity_slots_;
  size_t chunk_slots_;
  uint64_t merge_budget_;
  std::string run_dir_;
  Env* env_;
  ProgressReporter* progress_;
  bool direct_writes_;
  std::vector<Worker> workers_;
  std::mutex runs_mu_;
  std::vector<std::string> run_paths_;
  bool run_dir_made_ = false;
  std::atomic<uint64_t> spills_{0};
  std::atomic<uint64_t> spilled_bytes_{0};
};

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_SEGMENT_BUILDER_H_
