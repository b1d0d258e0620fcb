// ShardWriter: sorted unique fingerprints with counts -> one shard file
// (docs/index_format.md "Shard file"). Keys are kept in memory (about 10 bytes per
// key) until Finish, which lays out the Bloom filter, bucket directory, bit-packed
// remainders and counts, and writes the file in one sequential pass.
//
// Thread safety: one owner. Distinct writers may run in distinct threads.
#ifndef TIDEMARK_SRC_INDEX_SHARD_WRITER_H_
#define TIDEMARK_SRC_INDEX_SHARD_WRITER_H_

#include <algorithm>
#include <array>
#include <cassert>
#include <cstring>
#include <condition_variable>
#include <cstdint>
#include <deque>
#include <mutex>
#include <thread>
#include <string_view>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "common/env.h"
#include "index/format.h"
#include "index/manifest.h"
#include "tidemark/status.h"

namespace tidemark {

/// Parameters every shard of an index shares, plus which shard this is.
struct ShardParams {
  uint32_t shard_bits = 8;
  uint32_t shard_id = 0;
  uint32_t bloom_bits_per_key = 10;
  uint64_t params_hash = 0;  ///< XXH3 of TextOptions::ToString()
};

/// What the manifest records about a written shard.
struct ShardFileInfo {
  uint32_t shard_id = 0;
  uint64_t keys = 0;
  uint64_t bytes = 0;
  uint64_t header_xxh3 = 0;
  uint64_t total_count = 0;
  uint64_t total_docs = 0;
};

/// A shard file ready to be written: its header and sections (owned, not yet laid out
/// in one buffer: WriteShardImage streams them with the padding between), and what the
/// manifest records of it.
struct ShardImage {
  std::string header;
  std::vector<uint8_t> bloom, counts, docs;
  std::string dir, rem, count_ex, doc_ex;
  /// Not written: the writer's per-key count bytes, kept for reuse with the image.
  std::vector<uint8_t> work_counts, work_docs;
  std::array<uint64_t, 7> offsets{};  ///< of each section (docs/index_format.md order)
  ShardFileInfo info;
  std::string_view Section(int i) const;
};

/// Writes `image` to `path` (created or truncated) and fsyncs it; or, with `sync`
/// false, closes it with its writeback started, for the caller to make durable with
/// Env::SyncFilesystem (one flush for a whole segment) before anything refers to it.
Status WriteShardImage(const ShardImage& image, const std::string& path, Env* env, bool direct,
                       bool sync = true);

class ShardWriter {
 public:
  explicit ShardWriter(const ShardParams& params);
  ShardWriter(const ShardWriter&) = delete;
  ShardWriter& operator=(const ShardWriter&) = delete;

  /// REQUIRES: fp strictly greater than the previous key, ShardOf(fp) == shard_id,
  /// 1 <= docs <= count. Counts above 2^32-1 saturate.
  void Add(uint64_t fp, uint64_t count, uint64_t docs);
  uint64_t size() const { return keys().size(); }

  /// The bulk form of Add: the keys live in the caller's array `keys` (which must
  /// outlive Finish); AddCounts is called once per key, in order, and the key count
  /// is the number of AddCounts calls. keys[i] must hold the i-th key (ascending,
  /// unique) by the time Finish runs. REQUIRES: no Add before or after.
  /// `recycle`: an image already written, whose buffers are reused (no allocation,
  /// no page faults, no heap growth); BuildImage then reuses the rest of them.
  void UseKeys(const uint64_t* keys, size_t capacity, ShardImage* recycle = nullptr);
  void AddCounts(uint64_t count, uint64_t docs) {
    assert(external_ && added_ < external_capacity_);
    assert(count >= 1 && docs >= 1 && docs <= count);
    if (count < index_format::kCountEscape) [[likely]] {  // both fit in a byte
      counts_[added_] = static_cast<uint8_t>(count);
      docs_[added_] = static_cast<uint8_t>(docs);
      ++added_;
      not_single_ |= count != 1;  // (docs <= count)
      total_count_ += count;  // no wrap: at most 2^32-1 keys of at most 2^32-1 each
      total_docs_ += docs;
      return;
    }
    AddLargeCounts(count, docs);
  }
  /// AddCounts(1, 1) m times.
  void AddSingles(size_t m) {
    assert(external_ && added_ + m <= external_capacity_);
    std::memset(counts_.data() + added_, 1, m);
    std::memset(docs_.data() + added_, 1, m);
    added_ += m;
    total_count_ += m;
    total_docs_ += m;
  }

  /// Writes the shard to `path` (created or truncated) and fsyncs it. `direct`
  /// writes around the page cache (FileOptions::direct).
  Status Finish(const std::string& path, Env* env, ShardFileInfo* info, bool direct = false);
  /// The file's bytes without writing them (Finish = BuildImage + WriteShardImage);
  /// `path` only names the file in errors. In bulk mode the caller's keys may be
  /// reused once this returns. The sections are built in *out's existing buffers.
  Status BuildImage(const std::string& path, ShardImage* out);

 private:
  std::span<const uint64_t> keys() const {
    return external_ ? std::span<const uint64_t>(external_keys_, added_)
                     : std::span<const uint64_t>(keys_);
  }
  void AddLargeCounts(uint64_t count, uint64_t docs);

  ShardParams params_;
  std::vector<uint64_t> keys_;
  const uint64_t* external_keys_ = nullptr;
  size_t external_capacity_ = 0;
  size_t added_ = 0;  // AddCounts calls (counts_/docs_ are pre-sized in bulk mode)
  bool external_ = false;
  // Per key: count and doc count if below kCountEscape, else kCountEscape and an entry
  // in the exception list. BuildImage encodes them (docs/index_format.md "Counts").
  std::vector<uint8_t> counts_;
  std::vector<uint8_t> docs_;
  bool not_single_ = false;  // some key has a count other than 1
  std::vector<std::pair<uint32_t, uint32_t>> count_exceptions_;
  std::vector<std::pair<uint32_t, uint32_t>> doc_exceptions_;
  uint64_t total_count_ = 0;
  uint64_t total_docs_ = 0;
};

/// Writes shard images on background threads, so that building the next shards
/// overlaps the disk writes of the last ones. Thread-safe. The files are not fsync'ed
/// one by one: after Finish the owner calls Env::SyncFilesystem once (see the
/// figures below).
/// At most `max_pending` images wait besides the `writers` being written; Submit
/// blocks beyond that, bounding the memory held. The first error stops further writes
/// and is returned by Finish. Two writers keep two files' writes in flight. On the
/// project's 2-core test VM, 256 files of 6.7 MB written by two threads went at
/// 230-275 MB/s with an fdatasync each and 300-400 MB/s with one syncfs at the end;
/// later, one thread against two, 4 or 8 MiB writes, with or without fallocate, all
/// landed within the disk's run-to-run spread of 317-587 MB/s (docs/performance.md,
/// "Index build reworked" and "The 2x build target against this machine's floors").
class BackgroundShardWriter {
 public:
  static constexpr size_t kDefaultWriters = 2;

  BackgroundShardWriter(Env* env, bool direct, size_t max_pending,
                        size_t writers = kDefaultWriters)
      : env_(env), direct_(direct), max_pending_(max_pending) {
    for (size_t i = 0; i < std::max<size_t>(writers, 1); ++i) threads_.emplace_back([this] { Loop(); });
  }
  ~BackgroundShardWriter() { (void)Finish(); }

  void Submit(ShardImage image, std::string path) {
    std::unique_lock<std::mutex> lock(mu_);
    space_.wait(lock, [&] { return queue_.size() < max_pending_ || !status_.ok(); });
    if (!status_.ok()) return;
    queue_.push_back({std::move(image), std::move(path)});
    ready_.notify_one();
  }
  // An image already written, for its buffers (or an empty one). Reusing them keeps
  // the large per-shard buffers out of malloc: allocated on one thread and freed on
  // another, they fragmented its per-thread arenas (peak RSS of a spilling build rose
  // from 0.87x to 1.23x its budget).
  ShardImage TakeWritten() {
    std::lock_guard<std::mutex> lock(mu_);
    if (written_.empty()) return ShardImage{};
    ShardImage image = std::move(written_.back());
    written_.pop_back();
    return image;
  }
  bool failed() {
    std::lock_guard<std::mutex> lock(mu_);
    return !status_.ok();
  }
  Status Finish() {
    {
      std::lock_guard<std::mutex> lock(mu_);
      done_ = true;
      ready_.notify_all();
    }
    for (std::thread& t : threads_) {
      if (t.joinable()) t.join();
    }
    written_.clear();
    return status_;
  }

 private:
  struct Job {
    ShardImage image;
    std::string path;
  };
  void Loop() {
    while (true) {
      Job job;
      {
        std::unique_lock<std::mutex> lock(mu_);
        ready_.wait(lock, [&] { return !queue_.empty() || done_; });
        if (queue_.empty()) return;
        job = std::move(queue_.front());
        queue_.pop_front();
        if (!status_.ok()) {
          space_.notify_all();
          continue;
        }
      }
      Status st = WriteShardImage(job.image, job.path, env_, direct_, /*sync=*/false);
      std::lock_guard<std::mutex> lock(mu_);
      if (!st.ok() && status_.ok()) status_ = st;
      written_.push_back(std::move(job.image));
      space_.notify_all();
    }
  }

  Env* env_;
  bool direct_;
  size_t max_pending_;
  std::mutex mu_;
  std::condition_variable ready_, space_;
  std::deque<Job> queue_;
  std::vector<ShardImage> written_;  // for TakeWritten; freed by Finish
  bool done_ = false;
  Status status_;
  std::vector<std::thread> threads_;  // last: start after the members they use
};

/// Lays out shard `shard` of a segment (in `image`'s reused buffers) as
/// `staging_dir`/shard-NNNNN.tms, records it in *manifest_shard and queues its write.
Status SubmitShard(ShardWriter* writer, uint32_t shard, const std::string& staging_dir,
                   ShardImage image, BackgroundShardWriter* io, ManifestShard* manifest_shard);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_SHARD_WRITER_H_
