#include "index/bloom_filter.h"

#include <bit>
#include <cmath>
#include <utility>
#ifdef __SSE2__
#include <emmintrin.h>
#endif

namespace tidemark {

double BloomFilterView::FillRatio() const {
  if (num_blocks_ == 0) return 0.0;
  uint64_t set = 0;
  const uint64_t words = num_blocks_ * index_format::kBloomBlockBytes / 8;
  for (uint64_t i = 0; i < words; ++i) {
    set += static_cast<uint64_t>(std::popcount(index_format::LoadLE64(blocks_ + i * 8)));
  }
  return static_cast<double>(set) / static_cast<double>(words * 64);
}

BloomFilterBuilder::BloomFilterBuilder(uint64_t num_keys, uint32_t bits_per_key,
                                       uint32_t shard_bits, std::vector<uint8_t> storage)
    : num_blocks_(index_format::BloomBlocksFor(num_keys, bits_per_key)),
      k_(index_format::BloomKFor(bits_per_key)),
      shard_bits_(shard_bits),
      bytes_(std::move(storage)) {
  bytes_.assign(num_blocks_ * index_format::kBloomBlockBytes, 0);
}

namespace {

// ORs the k bit positions of a key with mixed hash h into a 512-bit mask: bit j of a
// block is bit j mod 64 of little-endian word j / 64. (A GCC vector-extension mask
// measured 1.5x slower here without AVX-512 code generation.)
inline void SetPositions(uint64_t h, uint32_t k, uint64_t* mask) {
  uint64_t w = 0;
  for (uint32_t i = 0, slot = 7; i < k; ++i, ++slot) {
    if (slot == 7) {
      w = index_format::BloomWord(h, i / 7);
      slot = 0;
    }
    const uint32_t pos = static_cast<uint32_t>(w & 511);
    w >>= 9;
    mask[pos >> 6] |= uint64_t{1} << (pos & 63);
  }
}

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
    if (bits != 0) index_format::StoreLE64(block + 8 * j, index_format::LoadLE64(block + 8 * j) | bits);
  }
}

inline void OrBlock(uint8_t* block, const uint64_t* mask) {
  for (int j = 0; j < 8; ++j) {
    index_format::StoreLE64(block + 8 * j, index_format::LoadLE64(block + 8 * j) | mask[j]);
  }
}

}  // namespace

void BloomFilterBuilder::Add(uint64_t fp) {
  uint64_t mask[8] = {};
  SetPositions(index_format::Mix64(fp), k_, mask);
  OrBlock(bytes_.data() + BloomFilterView::BlockIndex(fp, shard_bits_, num_blocks_) *
                              index_format::kBloomBlockBytes,
          mask);
}

namespace {

// Marks the k positions of a key with mixed hash h in map (see AddAll). A
// compile-time k unrolls the loop; positions past the 7th come from further words of
// the stream.
template <uint32_t kK>
inline void MarkPositions(uint64_t h, uint8_t* map) {
  uint64_t w = h;
  for (uint32_t i = 0; i < kK; ++i) {
    if (i > 0 && i % 7 == 0) w = index_format::BloomWord(h, i / 7);
    map[w & 511] = 0x80;
    w >>= 9;
  }
}

template <uint32_t kK>
void AddAllK(std::span<const uint64_t> keys, uint32_t shard_bits, uint64_t num_blocks,
             uint8_t* blocks) {
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
  for (const uint64_t fp : keys) {
    const uint64_t b = BloomFilterView::BlockIndex(fp, shard_bits, num_blocks);
    if (b != cur) {
      if (prev != kNone) FoldMap(maps[m ^ 1], blocks + prev * index_format::kBloomBlockBytes);
      prev = cur;
      cur = b;
      m ^= 1;
    }
    MarkPositions<kK>(index_format::Mix64(fp), maps[m]);
  }
  if (prev != kNone) FoldMap(maps[m ^ 1], blocks + prev * index_format::kBloomBlockBytes);
  if (cur != kNone) FoldMap(maps[m], blocks + cur * index_format::kBloomBlockBytes);
}

template <uint32_t... kKs>
void DispatchAddAll(uint32_t k, std::span<const uint64_t> keys, uint32_t shard_bits,
                    uint64_t num_blocks, uint8_t* blocks, std::integer_sequence<uint32_t, kKs...>) {
  ((k == kKs + 1 ? AddAllK<kKs + 1>(keys, shard_bits, num_blocks, blocks) : void()), ...);
}

}  // namespace

void BloomFilterBuilder::AddAll(std::span<const uint64_t> keys) {
  static_assert(kMaxK == 16);
  DispatchAddAll(k_, keys, shard_bits_, num_blocks_, bytes_.data(),
                 std::make_integer_sequence<uint32_t, kMaxK>());
}

double BlockedBloomExpectedFpr(double bits_per_key, uint32_t k) {
  const double block_bits = index_format::kBloomBlockBits;
  const double lambda = block_bits / bits_per_key;
  // Poisson(i; lambda) computed in log space; terms beyond lambda + 40 sqrt(lambda)
  // are negligible.
  const int max_i = static_cast<int>(lambda + 40.0 * std::sqrt(lambda) + 50.0);
  double sum = 0.0;
  for (int i = 0; i <= max_i; ++i) {
    const double log_p = -lambda + i * std::log(lambda) - std::lgamma(i + 1.0);
    // k positions drawn independently (with replacement) per key.
    const double unset = std::pow(1.0 - 1.0 / block_bits, static_cast<double>(i) * k);
    sum += std::exp(log_p) * std::pow(1.0 - unset, static_cast<double>(k));
  }
  return sum;
}

}  // namespace tidemark
