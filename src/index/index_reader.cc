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
    // In groups, so that the cache misses of a group overlap: prefetch all Bloom
    // blocks, then test them and prefetch the directory entries of the maybes, then
    // confirm exactly.
    constexpr size_t kGroup = 16;
    const ShardReader* maybe[kGroup * 4];
    uint32_t maybe_i[kGroup * 4];
    for (size_t base = 0; base < fps.size(); base += kGroup) {
      const size_t m = std::min(kGroup, fps.size() - base);
      for (size_t i = 0; i < m; ++i) {
        const uint64_t fp = fps[base + i];
        const ShardReader* const* row = &readers_[fmt::ShardOf(fp, s) * nseg];
        for (size_t g = 0; g < nseg; ++g) __builtin_prefetch(row[g]->bloom().BlockFor(fp));
        out[base + i] = NgramInfo{};
      }
      size_t nm = 0;
      for (size_t i = 0; i < m; ++i) {
        const uint64_t fp = fps[base + i];
        const ShardReader* const* row = &readers_[fmt::ShardOf(fp, s) * nseg];
        for (size_t g = 0; g < nseg; ++g) {
          if (!row[g]->bloom().MayContain(fp)) continue;
          if (nm == kGroup * 4) {  // many segments: confirm right away
            row[g]->ExactInto(fp, &out[base + i]);
            continue;
          }
          __builtin_prefetch(row[g]->DirEntryFor(fp));
          maybe[nm] = row[g];
          maybe_i[nm] = static_cast<uint32_t>(i);
          ++nm;
        }
      }
      for (size_t j = 0; j < nm; ++j) {
        maybe[j]->ExactInto(fps[base + maybe_i[j]], &out[base + maybe_i[j]]);
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
