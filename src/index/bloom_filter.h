// Blocked Bloom filter with 512-bit (cache-line) blocks (Putze, Sanders, Singler 2007):
// a key sets k bits inside one block, so a query costs one cache miss. The block is
// chosen by the fingerprint's 32 bits just below the shard bits (fingerprints are
// uniform hashes already), so the block index grows with the key: a shard's sorted
// keys fill the filter front to back, which made building it about 3x faster than
// blocks picked by a further hash. Bit positions are independent 9-bit slices of a hash stream, not double hashing
// (Kirsch and Mitzenmacher 2006): inside one 512-bit block, double hashing's arithmetic
// progressions overlap and measured 2.5x the formula's rate at 16 bits per key (see
// docs/index_format.md "Bloom filter section", which defines the exact bit layout).
//
// Thread safety: BloomFilterBuilder is single-owner; BloomFilterView is an immutable
// view over memory (an mmap'd shard) and may be queried from many threads.
#ifndef TIDEMARK_SRC_INDEX_BLOOM_FILTER_H_
#define TIDEMARK_SRC_INDEX_BLOOM_FILTER_H_

#include <cstdint>
#include <span>
#include <vector>

#include "index/format.h"

namespace tidemark {

/// Read-only view of a filter's blocks. REQUIRES: the memory outlives the view.
class BloomFilterView {
 public:
  BloomFilterView() = default;
  BloomFilterView(const uint8_t* blocks, uint64_t num_blocks, uint32_t k, uint32_t shard_bits)
      : blocks_(blocks), num_blocks_(num_blocks), k_(k), shard_bits_(shard_bits) {}

  /// The block a key maps to (for prefetching before MayContain).
  const uint8_t* BlockFor(uint64_t fp) const {
    return blocks_ + BlockIndex(fp, shard_bits_, num_blocks_) * index_format::kBloomBlockBytes;
  }
  /// False: certainly absent. True: present or a false positive.
  bool MayContain(uint64_t fp) const {
    const uint64_t h = index_format::Mix64(fp);
    const uint8_t* block = BlockFor(fp);
    uint64_t w = 0;
    for (uint32_t i = 0; i < k_; ++i) {
      if (i % 7 == 0) w = index_format::BloomWord(h, i / 7);
      const uint32_t pos = static_cast<uint32_t>(w & 511);
      w >>= 9;
      if ((block[pos >> 3] & (1u << (pos & 7))) == 0) return false;
    }
    return true;
  }
  /// Fraction of bits set (inspect).
  double FillRatio() const;
  uint64_t num_blocks() const { return num_blocks_; }
  uint32_t k() const { return k_; }

  /// Multiply-shift range reduction (Lemire 2019) of the 32 fingerprint bits below
  /// the top `shard_bits` (docs/index_format.md "Bloom filter section").
  static uint64_t BlockIndex(uint64_t fp, uint32_t shard_bits, uint64_t num_blocks) {
    return (((fp << shard_bits) >> 32) * num_blocks) >> 32;
  }

 private:
  const uint8_t* blocks_ = nullptr;
  uint64_t num_blocks_ = 0;
  uint32_t k_ = 0;
  uint32_t shard_bits_ = 0;
};

/// Builds the blocks for `num_keys` keys at `bits_per_key`, for a shard of an index
/// with `shard_bits` (keys added in ascending order touch the blocks in order).
class BloomFilterBuilder {
 public:
  /// The largest k the format allows (index_format::BloomKFor).
  static constexpr uint32_t kMaxK = 16;
  /// `storage`: a buffer to reuse (its capacity is kept; the contents are reset).
  BloomFilterBuilder(uint64_t num_keys, uint32_t bits_per_key, uint32_t shard_bits,
                     std::vector<uint8_t> storage = {});
  void Add(uint64_t fp);
  /// Adds every key; fastest when they are ascending (any order is correct).
  void AddAll(std::span<const uint64_t> keys);
  const std::vector<uint8_t>& bytes() const { return bytes_; }
  /// Moves the blocks out (the builder is empty afterwards).
  std::vector<uint8_t> TakeBytes() { return std::move(bytes_); }
  uint64_t num_blocks() const { return num_blocks_; }
  uint32_t k() const { return k_; }
  BloomFilterView view() const {
    return BloomFilterView(bytes_.data(), num_blocks_, k_, shard_bits_);
  }

 private:
  uint64_t num_blocks_;
  uint32_t k_;
  uint32_t shard_bits_;
  std::vector<uint8_t> bytes_;
};

/// Expected false-positive rate of a 512-bit blocked filter with k bits per key
/// at `bits_per_key` (Putze, Sanders, Singler 2007): sum over the Poisson-distributed
/// block load i of (1 - (1 - 1/B)^(i k))^k.
double BlockedBloomExpectedFpr(double bits_per_key, uint32_t k);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_BLOOM_FILTER_H_
