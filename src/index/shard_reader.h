// ShardReader: a read-only, mmap'd shard file (docs/index_format.md "Shard file").
// Open validates the header (magic, version, header checksum, field ranges, section
// bounds, expected parameters); VerifyChecksums checks every section's XXH3;
// VerifyInvariants checks sorted, unique keys, the directory and the counts.
//
// Thread safety: after Open, every const method may be called from many threads.
#ifndef TIDEMARK_SRC_INDEX_SHARD_READER_H_
#define TIDEMARK_SRC_INDEX_SHARD_READER_H_

#include <array>
#include <cstdint>
#include <memory>
#include <string>

#include "index/bloom_filter.h"
#include "index/format.h"
#include "index/shard_writer.h"
#include "tidemark/index.h"
#include "tidemark/status.h"

namespace tidemark {

class ShardReader {
 public:
  /// Maps `path` and validates its header against `expected` (shard_bits, shard_id,
  /// bloom_bits_per_key, params_hash). Errors are kCorruption / kUnsupported naming
  /// path@offset.
  static Result<std::unique_ptr<ShardReader>> Open(const std::string& path,
                                                   const ShardParams& expected);
  ~ShardReader();
  ShardReader(const ShardReader&) = delete;
  ShardReader& operator=(const ShardReader&) = delete;

  /// XXH3 of every section (and zero padding, exact file end).
  Status VerifyChecksums() const;
  /// Sorted, unique, in-shard keys; monotone directory; 1 <= docs <= count; exception
  /// tables consistent; header totals equal the sums.
  Status VerifyInvariants() const;

  uint64_t size() const { return n_; }
  uint64_t KeyAt(uint64_t i) const;
  /// Occurrences of key i (docs/index_format.md "Counts and doc counts").
  uint32_t CountAt(uint64_t i) const {
    if (cw_ == 0) return 1;
    const uint32_t code = Code(counts_, cw_, cmask_, i);
    return code != cmask_ ? code + 1 : Exception(count_ex_, count_ex_n_, i);
  }
  /// Key i's count and the number of documents holding it, decoding the count once.
  void CountsAt(uint64_t i, uint32_t* count, uint32_t* docs) const {
    *count = CountAt(i);
    if (dw_ == 0) {
      *docs = *count;
      return;
    }
    const uint32_t code = Code(docs_, dw_, dmask_, i);
    *docs = code != dmask_ ? *count - code : Exception(doc_ex_, doc_ex_n_, i);
  }

  /// Exact lookup (no Bloom): index of fp, or -1.
  int64_t Find(uint64_t fp) const;
  /// Bloom first, exact second; adds to *info (saturating).
  void LookupInto(uint64_t fp, NgramInfo* info) const {
    if (bloom_.MayContain(fp)) ExactInto(fp, info);
  }
  /// Exact only; adds to *info (saturating).
  void ExactInto(uint64_t fp, NgramInfo* info) const;
  const BloomFilterView& bloom() const { return bloom_; }
  /// Sequential access for merge and dump: bucket j holds keys [DirAt(j), DirAt(j+1)).
  uint64_t num_buckets() const { return bucket_mask_ + 1; }
  uint64_t DirAt(uint64_t j) const { return index_format::LoadLE32(dir_ + j * 4); }
  uint64_t MakeKey(uint64_t bucket, uint64_t remainder) const {
    return shard_prefix_ | (bucket << w_) | remainder;
  }
  uint64_t RemainderAt(uint64_t i) const {
    const uint64_t bit = i * w_;
    return (index_format::LoadLE64(rem_ + (bit >> 3)) >> (bit & 7)) & rem_mask_;
  }
  /// Staged exact lookup (the batched path prefetches between the stages):
  /// the key range of fp's bucket, clamped to the file.
  void BucketRange(uint64_t fp, uint64_t* lo, uint64_t* hi) const {
    const uint64_t j = BucketOf(fp);
    *hi = index_format::LoadLE32(dir_ + (j + 1) * 4);
    *lo = index_format::LoadLE32(dir_ + j * 4);
    if (*hi > n_) *hi = n_;
    if (*lo > *hi) *lo = *hi;
  }
  const uint8_t* RemainderAddr(uint64_t i) const { return rem_ + ((i * w_) >> 3); }
  /// Index of fp within [lo, hi), or -1. REQUIRES: fp is in this shard.
  int64_t FindInRange(uint64_t fp, uint64_t lo, uint64_t hi) const {
    const uint64_t r = fp & rem_mask_;
    for (uint64_t i = lo; i < hi; ++i) {
      const uint64_t ri = RemainderAt(i);
      if (ri == r) return static_cast<int64_t>(i);
      if (ri > r) break;
    }
    return -1;
  }
  void PrefetchCounts(uint64_t i) const {
    __builtin_prefetch(counts_ + ((i * cw_) >> 3));
    __builtin_prefetch(docs_ + ((i * dw_) >> 3));
  }
  /// Adds key i's count and doc count to *info (saturating).
  void AddCountsAt(uint64_t i, NgramInfo* info) const;
  /// Address of fp's directory entry (prefetch).
  const uint8_t* DirEntryFor(uint64_t fp) const { return dir_ + BucketOf(fp) * 4; }

  const std::string& path() const { return path_; }
  uint64_t file_bytes() const { return file_bytes_; }
  uint32_t bucket_bits() const { return b_; }
  uint32_t remainder_bits() const { return w_; }
  uint64_t total_count() const { return total_count_; }
  uint64_t total_docs() const { return total_docs_; }
  uint64_t header_xxh3() const { return header_xxh3_; }
  struct SectionInfo {
    uint64_t offset = 0, bytes = 0, xxh3 = 0;
  };
  const SectionInfo& section(int i) const { return sections_[i]; }

 private:
  ShardReader() = default;
  uint64_t BucketOf(uint64_t fp) const { return (fp >> w_) & bucket_mask_; }
  // Code i of a stream of `width`-bit codes (width 1, 2, 4 or 8: never across bytes).
  static uint32_t Code(const uint8_t* codes, uint32_t width, uint32_t mask, uint64_t i) {
    const uint64_t bit = i * width;
    return (codes[bit >> 3] >> (bit & 7)) & mask;
  }
  // The exact value of escaped key i (binary search), 0 if missing (damage).
  static uint32_t Exception(const uint8_t* ex, uint64_t ex_n, uint64_t i);

  std::string path_;
  void* map_ = nullptr;
  uint64_t file_bytes_ = 0;
  const uint8_t* base_ = nullptr;
  uint32_t s_ = 0, shard_id_ = 0, b_ = 0, w_ = 0;
  uint64_t n_ = 0;
  uint64_t shard_prefix_ = 0;
  uint64_t bucket_mask_ = 0, rem_mask_ = 0;
  uint64_t total_count_ = 0, total_docs_ = 0, header_xxh3_ = 0;
  std::array<SectionInfo, index_format::kNumSections> sections_{};
  BloomFilterView bloom_;
  const uint8_t* dir_ = nullptr;
  const uint8_t* rem_ = nullptr;
  const uint8_t* counts_ = nullptr;  // codes (after the section's width header)
  const uint8_t* docs_ = nullptr;
  uint32_t cw_ = 0, dw_ = 0;        // code widths
  uint32_t cmask_ = 0, dmask_ = 0;  // escape codes, 2^width - 1
  const uint8_t* count_ex_ = nullptr;
  const uint8_t* doc_ex_ = nullptr;
  uint64_t count_ex_n_ = 0, doc_ex_n_ = 0;
};

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_SHARD_READER_H_
