// Blocked Bloom filter with 512-bit (cache-line) blocks (Putze, Sanders, Singler 2007):
// a key sets k bits inside one block chosen by its hash, so a query costs one cache
// miss. Bit positions are independent 9-bit slices of a hash stream, not double hashing
// (Kirsch and Mitzenmacher 2006): inside one 512-bit block, double hashing's arithmetic
// progressions overlap and measured 2.5x the formula's rate at 16 bits per key (see
// docs/index_format.md "Bloom filter section", which defines the exact bit layout).
//
// Thread safety: BloomFilterBuilder is single-owner; BloomFilterView is an immutable
// view over memory (an mmap'd shard) and may be queried from many threads.
#ifndef TIDEMARK_SRC_INDEX_BLOOM_FILTER_H_
#define TIDEMARK_SRC_INDEX_BLOOM_FILTER_H_

#include <cstdint>
#include <vector>

#include "index/format.h"

namespace tidemark {

/// Read-only view of a filter's blocks. REQUIRES: the memory outlives the view.
class BloomFilterView {
 public:
  BloomFilterView() = default;
  BloomFilterView(const uint8_t* blocks, uint64_t num_blocks, uint32_t k)
      : blocks_(blocks), num_blocks_(num_blocks), k_(k) {}

  /// The block a key maps to (for prefetching before MayContain).
  const uint8_t* BlockFor(uint64_t fp) const {
    const uint64_t h = index_format::Mix64(fp);
    return blocks_ + BlockIndex(h, num_blocks_) * index_format::kBloomBlockBytes;
  }
  /// False: certainly absent. True: present or a false positive.
  bool MayContain(uint64_t fp) const {
    const uint64_t h = index_format::Mix64(fp);
    const uint8_t* block = blocks_ + BlockIndex(h, num_blocks_) * index_format::kBloomBlockBytes;
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

  /// Multiply-shift range reduction (Lemire 2019) of the hash's high 32 bits.
  static uint64_t BlockIndex(uint64_t h, uint64_t num_blocks) {
    return ((h >> 32) * num_blocks) >> 32;
  }

 private:
  const uint8_t* blocks_ = nullptr;
  uint64_t num_blocks_ = 0;
  uint32_t k_ = 0;
};

/// Builds the blocks for `num_keys` keys at `bits_per_key`.
class BloomFilterBuilder {
 public:
  BloomFilterBuilder(uint64_t num_keys, uint32_t bits_per_key);
  void Add(uint64_t fp);
  const std::vector<uint8_t>& bytes() const { return bytes_; }
  uint64_t num_blocks() const { return num_blocks_; }
  uint32_t k() const { return k_; }
  BloomFilterView view() const { return BloomFilterView(bytes_.data(), num_blocks_, k_); }

 private:
  uint64_t num_blocks_;
  uint32_t k_;
  std::vector<uint8_t> bytes_;
};

/// Expected false-positive rate of a 512-bit blocked filter with k bits per key
/// at `bits_per_key` (Putze, Sanders, Singler 2007): sum over the Poisson-distributed
/// block load i of (1 - (1 - 1/B)^(i k))^k.
double BlockedBloomExpectedFpr(double bits_per_key, uint32_t k);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_BLOOM_FILTER_H_
