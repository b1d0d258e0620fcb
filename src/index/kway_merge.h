// Sorted sources of (fingerprint, count, docs) records and their k-way merge into a
// shard: the in-memory buffers of a build, spilled runs on disk (run files, a temporary
// format described in docs/index_format.md "Sorted runs"), and existing shard files.
//
// Thread safety: a source is used by one thread. RunFile readers share one fd and use
// pread, so distinct shard ranges of one run may be read from distinct threads.
#ifndef TIDEMARK_SRC_INDEX_KWAY_MERGE_H_
#define TIDEMARK_SRC_INDEX_KWAY_MERGE_H_

#include <cstdint>
#include <functional>
#include <memory>
#include <queue>
#include <span>
#include <string>
#include <vector>

#define XXH_STATIC_LINKING_ONLY  // XXH3_state_t on the stack
#include <xxhash.h>

#include "common/env.h"
#include "index/shard_reader.h"
#include "index/shard_writer.h"
#include "tidemark/status.h"

namespace tidemark {

struct MergeRecord {
  uint64_t fp = 0;
  uint64_t count = 0;
  uint64_t docs = 0;
};

/// Extra occurrences of a fingerprint inside one document (beyond the first).
struct ExtraCount {
  uint64_t fp = 0;
  uint64_t extra = 0;
  bool operator<(const ExtraCount& o) const { return fp < o.fp; }
};

/// Ascending, unique fingerprints. Next returns false at the end or on error.
class SortedSource {
 public:
  virtual ~SortedSource() = default;
  virtual bool Next(MergeRecord* rec) = 0;
  virtual Status status() const { return Status::Ok(); }
};

/// Collapses a sorted buffer: each occurrence in `main` is one document (count 1,
/// docs 1); `extras` (sorted by fp) add occurrences. REQUIRES: both sorted; every
/// extra's fp also occurs in main.
class BufferSource final : public SortedSource {
 public:
  BufferSource(std::span<const uint64_t> main, std::span<const ExtraCount> extras)
      : main_(main), extras_(extras) {}
  bool Next(MergeRecord* rec) override;

 private:
  std::span<const uint64_t> main_;
  std::span<const ExtraCount> extras_;
  size_t i_ = 0, e_ = 0;
};

/// Walks an open shard file in key order.
class ShardSource final : public SortedSource {
 public:
  explicit ShardSource(const ShardReader* shard) : shard_(shard) {}
  bool Next(MergeRecord* rec) override;

 private:
  const ShardReader* shard_;
  uint64_t i_ = 0, bucket_ = 0;
};

/// Writes a run file: shards in increasing order, records ascending within a shard.
class RunWriter {
 public:
  RunWriter(std::string path, uint32_t shard_bits, Env* env);
  Status Open();
  /// REQUIRES: shard ids non-decreasing across calls, fp ascending within a shard.
  Status Add(uint32_t shard, const MergeRecord& rec);
  Status Finish();
  uint64_t bytes() const { return bytes_; }

 private:
  Status FlushBuffer();
  void CloseShard();
  std::string path_;
  uint32_t shard_bits_;
  Env* env_;
  std::unique_ptr<WritableFile> file_;
  std::string buf_;
  uint64_t bytes_ = 0;
  int64_t cur_shard_ = -1;
  uint64_t prev_fp_ = 0;
  struct Range {
    uint64_t offset = 0, bytes = 0, records = 0, xxh3 = 0;
  };
  std::vector<Range> ranges_;
  XXH3_state_t state_;  // checksum of the current shard's records
};

/// An opened run file (its per-shard table).
class RunFile {
 public:
  static Result<std::unique_ptr<RunFile>> Open(const std::string& path, uint32_t shard_bits);
  ~RunFile();
  RunFile(const RunFile&) = delete;
  RunFile& operator=(const RunFile&) = delete;
  /// Source over one shard's records; reads in `buffer_bytes` chunks.
  std::unique_ptr<SortedSource> ShardRange(uint32_t shard, size_t buffer_bytes) const;
  uint64_t RecordsIn(uint32_t shard) const { return ranges_[shard].records; }
  const std::string& path() const { return path_; }

  struct Range {
    uint64_t offset = 0, bytes = 0, records = 0, xxh3 = 0;
  };

 private:
  RunFile() = default;
  std::string path_;
  int fd_ = -1;
  std::vector<Range> ranges_;
};

/// Reused buffers of RadixMergeSources (one per thread).
struct RadixMergeScratch {
  struct Special {
    uint64_t fp, count, docs;
    bool operator<(const Special& o) const { return fp < o.fp; }
  };
  std::vector<uint64_t> plain, sorted, out;
  std::vector<Special> special;
};

/// Merges `sources` (records of one shard with `shard_bits`) into `writer` (bulk mode,
/// with `recycle`'s buffers): the same records as MergeSources, found without a heap.
/// The common record (count 1, one document) keeps only its key, and those keys of
/// all sources are radix-sorted together; the others are sorted apart and summed in
/// while the sorted keys are collapsed. A source out of order is Corruption. The keys
/// live in scratch->out until the writer's BuildImage has run.
Status RadixMergeSources(std::vector<std::unique_ptr<SortedSource>>& sources, uint32_t shard_bits,
                         RadixMergeScratch* scratch, ShardWriter* writer, ShardImage* recycle);

/// Merges `sources`, summing counts and docs of equal fingerprints (saturating at
/// 2^64-1), and calls `emit(const MergeRecord&)` -> Status in ascending order.
template <typename Emit>
Status MergeSources(std::vector<std::unique_ptr<SortedSource>>& sources, Emit&& emit) {
  struct Head {
    uint64_t fp;
    size_t src;
    bool operator>(const Head& o) const { return fp > o.fp || (fp == o.fp && src > o.src); }
  };
  auto sat_add = [](uint64_t a, uint64_t b) {
    const uint64_t s = a + b;
    return s < a ? ~uint64_t{0} : s;
  };
  std::vector<MergeRecord> cur(sources.size());
  std::priority_queue<Head, std::vector<Head>, std::greater<Head>> heap;
  for (size_t i = 0; i < sources.size(); ++i) {
    if (sources[i]->Next(&cur[i])) {
      heap.push({cur[i].fp, i});
    } else {
      TM_RETURN_IF_ERROR(sources[i]->status());
    }
  }
  while (!heap.empty()) {
    MergeRecord out;
    out.fp = heap.top().fp;
    while (!heap.empty() && heap.top().fp == out.fp) {
      const size_t i = heap.top().src;
      heap.pop();
      out.count = sat_add(out.count, cur[i].count);
      out.docs = sat_add(out.docs, cur[i].docs);
      if (sources[i]->Next(&cur[i])) {
        if (cur[i].fp <= out.fp) {
          return Status::Corruption("merge input not sorted after fingerprint " +
                                    std::to_string(out.fp));
        }
        heap.push({cur[i].fp, i});
      } else {
        TM_RETURN_IF_ERROR(sources[i]->status());
      }
    }
    TM_RETURN_IF_ERROR(emit(out));
  }
  return Status::Ok();
}

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_KWAY_MERGE_H_
