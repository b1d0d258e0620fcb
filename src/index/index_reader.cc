// Index::Open and the batched lookup path (docs/index_format.md "What a reader must do").
#include <tbb/parallel_for.h>
#include <tbb/task_arena.h>

#include <algorithm>
#include <atomic>
#include <mutex>

#include "common/env.h"
#include "index/format.h"
#include "index/index_internal.h"
#include "index/manifest.h"
#include "index/shard_reader.h"
#include "tidemark/index.h"

namespace tidemark {

namespace fmt = index_format;

namespace {

class IndexImpl final : public Index {
 public:
  IndexImpl(std::string dir, IndexManifest manifest, std::vector<std::unique_ptr<ShardReader>> readers)
      : dir_(std::move(dir)),
        manifest_(std::move(manifest)),
        identity_(manifest_.Identity()),
        readers_(std::move(readers)),
        num_segments_(manifest_.segments.size()) {}

  Status CheckTextOptions(const TextOptions& wanted) const override {
    Status s = CompareTextOptions(manifest_.text, wanted);
    if (!s.ok()) return s.WithContext(dir_);
    return s;
  }
  const TextOptions& text_options() const override { return manifest_.text; }
  const IndexManifest& manifest() const override { return manifest_; }
  std::string identity() const override { return identity_; }
  const std::string& dir() const override { return dir_; }

  void Lookup(std::span<const uint64_t> fps, std::span<NgramInfo> out) const override {
    assert(out.size() == fps.size());
    const uint32_t s = manifest_.shard_bits;
    const size_t nseg = num_segments_;
    if (nseg == 0) {
      std::fill(out.begin(), out.end(), NgramInfo{});
      return;
    }
    // In groups, so that the cache misses of a group overlap: each stage touches one
    // new cache line per candidate and prefetches the line the next stage needs
    // (Bloom block -> directory entry -> remainders -> counts).
    constexpr size_t kGroup = 32;
    constexpr size_t kMaxCand = kGroup * 4;
    struct Cand {
      const ShardReader* shard;
      uint32_t i;  // position in the group
      uint64_t lo, hi;
      int64_t at;
    };
    Cand cand[kMaxCand];
    for (size_t base = 0; base < fps.size(); base += kGroup) {
      const size_t m = std::min(kGroup, fps.size() - base);
      for (size_t i = 0; i < m; ++i) {
        const uint64_t fp = fps[base + i];
        const ShardReader* const* row = &readers_[fmt::ShardOf(fp, s) * nseg];
        for (size_t g = 0; g < nseg; ++g) __builtin_prefetch(row[g]->bloom().BlockFor(fp));
        out[base + i] = NgramInfo{};
      }
      size_t nc = 0;
      for (size_t i = 0; i < m; ++i) {
        const uint64_t fp = fps[base + i];
        const ShardReader* const* row = &readers_[fmt::ShardOf(fp, s) * nseg];
        for (size_t g = 0; g < nseg; ++g) {
          if (!row[g]->bloom().MayContain(fp)) continue;
          if (nc == kMaxCand) {  // many segments: confirm right away
            row[g]->ExactInto(fp, &out[base + i]);
            continue;
          }
          __builtin_prefetch(row[g]->DirEntryFor(fp));
          cand[nc++] = Cand{row[g], static_cast<uint32_t>(i), 0, 0, -1};
        }
      }
      for (size_t j = 0; j < nc; ++j) {
        Cand& c = cand[j];
        c.shard->BucketRange(fps[base + c.i], &c.lo, &c.hi);
        if (c.lo < c.hi) {
          // A bucket's remainders span about 2-3 cache lines; fetch the first two.
          __builtin_prefetch(c.shard->RemainderAddr(c.lo));
          __builtin_prefetch(c.shard->RemainderAddr(c.lo) + 64);
        }
      }
      for (size_t j = 0; j < nc; ++j) {
        Cand& c = cand[j];
        c.at = c.shard->FindInRange(fps[base + c.i], c.lo, c.hi);
        if (c.at >= 0) c.shard->PrefetchCounts(static_cast<uint64_t>(c.at));
      }
      for (size_t j = 0; j < nc; ++j) {
        const Cand& c = cand[j];
        if (c.at >= 0) c.shard->AddCountsAt(static_cast<uint64_t>(c.at), &out[base + c.i]);
      }
    }
  }

 private:
  std::string dir_;
  IndexManifest manifest_;
  std::string identity_;
  // readers_[shard * num_segments_ + segment]; raw pointers for the hot loop.
  struct Readers {
    explicit Readers(std::vector<std::unique_ptr<ShardReader>> v) : owned(std::move(v)) {
      raw.reserve(owned.size());
      for (auto& r : owned) raw.push_back(r.get());
    }
    const ShardReader* const& operator[](size_t i) const { return raw[i]; }
    std::vector<std::unique_ptr<ShardReader>> owned;
    std::vector<const ShardReader*> raw;
  } readers_;
  size_t num_segments_;
};

}  // namespace

Result<std::vector<std::unique_ptr<ShardReader>>> OpenAllShards(const std::string& dir,
                                                                const IndexManifest& m,
                                                                bool verify_checksums,
                                                                int threads) {
  const uint32_t num_shards = 1u << m.shard_bits;
  const size_t nseg = m.segments.size();
  std::vector<std::unique_ptr<ShardReader>> readers(num_shards * nseg);
  std::mutex mu;
  Status first;
  std::atomic<bool> failed{false};
  auto record = [&](Status st) {
    std::lock_guard<std::mutex> lock(mu);
    if (first.ok()) first = std::move(st);
    failed = true;
  };
  tbb::task_arena arena(threads > 0 ? threads : tbb::task_arena::automatic);
  arena.execute([&] {
    tbb::parallel_for(size_t{0}, readers.size(), [&](size_t idx) {
      if (failed.load(std::memory_order_relaxed)) return;
      const uint32_t shard = static_cast<uint32_t>(idx / nseg);
      const ManifestSegment& seg = m.segments[idx % nseg];
      const std::string path =
          JoinPath(JoinPath(dir, fmt::SegmentDirName(seg.id)), fmt::ShardFileName(shard));
      ShardParams p;
      p.shard_bits = m.shard_bits;
      p.shard_id = shard;
      p.bloom_bits_per_key = m.bloom_bits_per_key;
      p.params_hash = m.params_hash();
      auto r = ShardReader::Open(path, p);
      if (!r.ok()) return record(r.status());
      const ManifestShard& ms = seg.shards[shard];
      if ((*r)->size() != ms.keys || (*r)->file_bytes() != ms.bytes ||
          (*r)->header_xxh3() != ms.header_xxh3) {
        return record(Status::Corruption(path + "@0: shard does not match its manifest entry "
                                                "(keys, size or header checksum)"));
      }
      if (verify_checksums) {
        Status st = (*r)->VerifyChecksums();
        if (!st.ok()) return record(std::move(st));
      }
      readers[idx] = std::move(r).value();
    });
  });
  if (!first.ok()) return first;
  return readers;
}

Result<std::unique_ptr<Index>> Index::Open(const std::string& dir) {
  return Open(dir, IndexOpenOptions{});
}

Result<std::unique_ptr<Index>> Index::Open(const std::string& dir, const IndexOpenOptions& options) {
  TM_ASSIGN_OR_RETURN(IndexManifest m, ReadManifest(dir));
  TM_ASSIGN_OR_RETURN(auto readers, OpenAllShards(dir, m, options.verify_checksums, options.threads));
  return std::unique_ptr<Index>(new IndexImpl(dir, std::move(m), std::move(readers)));
}

}  // namespace tidemark
