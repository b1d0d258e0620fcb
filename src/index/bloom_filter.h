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

#include <cstddef>
#include <cstdint>
#include <span>
#include <utility>
#include <vector>
#ifdef __SSE2__
#include <emmintrin.h>
#endif

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
  /// AddAll that also calls visit(i, keys[i]) for every key in order, so that a
  /// caller's own pass over the keys shares this one (ShardWriter lays out the
  /// directory and the remainders this way). The visitor is taken and returned by
  /// value: a visitor that keeps its state in members (not in references to the
  /// caller's variables) can have that state kept in registers, because the byte
  /// stores of the filter cannot alias it.
  template <typename Visit>
  Visit AddAllVisiting(std::span<const uint64_t> keys, Visit visit);
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

namespace bloom_detail {

// ORs the positions marked in map (byte j == 0x80: bit j is set) into block, and
// clears the map. Bit j of a block is bit j mod 64 of little-endian word j / 64, which
// is what the byte sign bits give, 16 at a time, in order.
inline void FoldMap(uint8_t* map, uint8_t* block) {
  for (int j = 0; j < 8; ++j) {
    uint8_t* m = map + 64 * j;
    uint64_t bits = 0;
#ifdef __SSE2__
    for (int q = 0; q < 4; ++q) {
      const __m128i v = _mm_load_si128(reinterpret_cast<const __m128i*>(m + 16 * q));
      bits |= static_cast<uint64_t>(static_cast<uint32_t>(_mm_movemask_epi8(v))) << (16 * q);
      _mm_store_si128(reinterpret_cast<__m128i*>(m + 16 * q), _mm_setzero_si128());
    }
#else
    for (int q = 0; q < 64; ++q) {
      bits |= static_cast<uint64_t>(m[q] >> 7) << q;
      m[q] = 0;
    }
#endif
    if (bits != 0) {
      index_format::StoreLE64(block + 8 * j, index_format::LoadLE64(block + 8 * j) | bits);
    }
  }
}

// Marks the k positions of a key with mixed hash h in map. A compile-time k, and the
// pragma (GCC 12 left the loop of 6 rolled at -O2), unroll the loop: adding 2^20 sorted
// keys at 10 bits per key took 5.4-6.1 ns a key unrolled against 6.7-9.0 rolled (three
// alternating runs, best of 40 each). Positions past the 7th come from further words
// of the stream.
template <uint32_t kK>
inline void MarkPositions(uint64_t h, uint8_t* map) {
  uint64_t w = h;
#pragma GCC unroll 16
  for (uint32_t i = 0; i < kK; ++i) {
    if (i > 0 && i % 7 == 0) w = index_format::BloomWord(h, i / 7);
    map[w & 511] = 0x80;
    w >>= 9;
  }
}

template <uint32_t kK, typename Visit>
Visit AddAllK(std::span<const uint64_t> keys, uint32_t shard_bits, uint64_t num_blocks,
              uint8_t* blocks, Visit visit) {
  // Ascending keys visit each block in one stretch. A stretch's bit positions are
  // marked as bytes of a 512-byte map (plain stores, no read-modify-write) that is
  // folded into its block later. ORing each position into a 64-bit word of a mask
  // instead chains every update through the last one to the same word
  // (store-to-load forwarding) and measured about twice as slow per key. Two maps take
  // turns: a map is folded one stretch after it was filled, so the 16-byte loads of the
  // fold no longer wait for the byte stores just made to it.
  alignas(64) uint8_t maps[2][index_format::kBloomBlockBits] = {};
  constexpr uint64_t kNone = ~uint64_t{0};
  uint64_t cur = kNone, prev = kNone;
  int m = 0;
  for (size_t i = 0; i < keys.size(); ++i) {
    const uint64_t fp = keys[i];
    const uint64_t b = BloomFilterView::BlockIndex(fp, shard_bits, num_blocks);
    if (b != cur) {
      if (prev != kNone) FoldMap(maps[m ^ 1], blocks + prev * index_format::kBloomBlockBytes);
      prev = cur;
      cur = b;
      m ^= 1;
    }
    MarkPositions<kK>(index_format::Mix64(fp), maps[m]);
    visit(i, fp);
  }
  if (prev != kNone) FoldMap(maps[m ^ 1], blocks + prev * index_format::kBloomBlockBytes);
  if (cur != kNone) FoldMap(maps[m], blocks + cur * index_format::kBloomBlockBytes);
  return visit;
}

// AddAllK for the k of the filter (1..kMaxK, checked by the constructor).
template <uint32_t kK, uint32_t kMaxK, typename Visit>
Visit DispatchAddAll(uint32_t k, std::span<const uint64_t> keys, uint32_t shard_bits,
                     uint64_t num_blocks, uint8_t* blocks, Visit visit) {
  if constexpr (kK < kMaxK) {
    if (k != kK) {
      return DispatchAddAll<kK + 1, kMaxK>(k, keys, shard_bits, num_blocks, blocks,
                                           std::move(visit));
    }
  }
  return AddAllK<kK>(keys, shard_bits, num_blocks, blocks, std::move(visit));
}

}  // namespace bloom_detail

template <typename Visit>
Visit BloomFilterBuilder::AddAllVisiting(std::span<const uint64_t> keys, Visit visit) {
  static_assert(kMaxK == 16);
  return bloom_detail::DispatchAddAll<1, kMaxK>(k_, keys, shard_bits_, num_blocks_,
                                                bytes_.data(), std::move(visit));
}

/// Expected false-positive rate of a 512-bit blocked filter with k bits per key
/// at `bits_per_key` (Putze, Sanders, Singler 2007): sum over the Poisson-distributed
/// block load i of (1 - (1 - 1/B)^(i k))^k.
double BlockedBloomExpectedFpr(double bits_per_key, uint32_t k);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_BLOOM_FILTER_H_
