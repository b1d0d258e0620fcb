#include "index/bloom_filter.h"

#include <bit>
#include <cmath>

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

void BloomFilterBuilder::AddAll(std::span<const uint64_t> keys) {
  AddAllVisiting(keys, [](size_t, uint64_t) {});
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
