#include "index/radix_sort.h"

#include <algorithm>
#include <bit>
#include <cstring>
#include <vector>

namespace tidemark {
namespace {

// Below this size std::sort (introsort) beats another radix pass.
constexpr size_t kSmallSort = 192;

// Insertion sort, fast when keys are nearly in order.
void InsertionSort(uint64_t* d, size_t m) {
  for (size_t a = 1; a < m; ++a) {
    const uint64_t v = d[a];
    if (v < d[a - 1]) {
      size_t b = a;
      do {
        d[b] = d[b - 1];
        --b;
      } while (b > 0 && d[b - 1] > v);
      d[b] = v;
    }
  }
}

// Sorts runs of keys that agree above bit `low` (the fix-up after radix passes).
void FixUp(uint64_t* out, size_t n, uint32_t low) {
  size_t i = 0;
  while (i < n) {
    const uint64_t prefix = out[i] >> low;
    size_t j = i + 1;
    while (j < n && (out[j] >> low) == prefix) ++j;
    if (j - i > 1) {
      if (j - i <= 16) {
        for (size_t a = i + 1; a < j; ++a) {
          const uint64_t v = out[a];
          size_t b = a;
          while (b > i && out[b - 1] > v) {
            out[b] = out[b - 1];
            --b;
          }
          out[b] = v;
        }
      } else {
        std::sort(out + i, out + j);
      }
    }
    i = j;
  }
}

}  // namespace

void SortShard(std::span<const std::span<const uint64_t>> inputs, uint32_t fixed_bits,
               uint64_t* out, uint64_t* scratch) {
  size_t n = 0;
  for (const auto& in : inputs) n += in.size();
  auto copy_all = [&](uint64_t* dst) {
    for (const auto& in : inputs) {
      if (!in.empty()) std::memcpy(dst, in.data(), in.size() * sizeof(uint64_t));
      dst += in.size();
    }
  };
  const uint32_t free_bits = fixed_bits >= 64 ? 0 : 64 - fixed_bits;
  if (n <= kSmallSort || free_bits == 0) {
    copy_all(out);
    std::sort(out, out + n);
    return;
  }
  // Radix on the top R free bits, R ~ log2(n) + 1: for hashed keys the groups left
  // sharing those bits average half a key, so the fix-up below is a linear scan.
  constexpr uint32_t kMaxDigit = 11;
  constexpr uint32_t kMaxPasses = 4;
  const uint32_t r = std::min<uint32_t>(free_bits, std::min<uint32_t>(
                                                       kMaxDigit * kMaxPasses,
                                                       static_cast<uint32_t>(std::bit_width(n)) + 1));
  const uint32_t passes = (r + kMaxDigit - 1) / kMaxDigit;
  const uint32_t digit = (r + passes - 1) / passes;
  const uint32_t low = free_bits - r;  // lowest bit the passes look at
  struct Pass {
    uint32_t shift, width;
    std::vector<size_t> count;
  };
  std::vector<Pass> plan;
  for (uint32_t p = 0; p < passes; ++p) {
    const uint32_t shift = low + p * digit;
    const uint32_t width = std::min(digit, low + r - shift);
    plan.push_back({shift, width, std::vector<size_t>(size_t{1} << width, 0)});
  }
  // All histograms in one read of the input.
  for (const auto& in : inputs) {
    for (const uint64_t k : in) {
      for (Pass& p : plan) ++p.count[(k >> p.shift) & ((uint64_t{1} << p.width) - 1)];
    }
  }
  // A pass whose digit is the same for every key changes nothing: drop it.
  const uint64_t first = [&] {
    for (const auto& in : inputs) {
      if (!in.empty()) return in[0];
    }
    return uint64_t{0};
  }();
  std::erase_if(plan, [&](const Pass& p) {
    return p.count[(first >> p.shift) & ((uint64_t{1} << p.width) - 1)] == n;
  });
  if (plan.empty()) {
    copy_all(out);
  } else {
    // Ping-pong so that the last pass lands in `out`.
    uint64_t* dst = plan.size() % 2 == 1 ? out : scratch;
    uint64_t* other = dst == out ? scratch : out;
    for (size_t pi = 0; pi < plan.size(); ++pi) {
      Pass& p = plan[pi];
      size_t sum = 0;
      for (size_t& c : p.count) {
        const size_t t = c;
        c = sum;
        sum += t;
      }
      const uint64_t mask = (uint64_t{1} << p.width) - 1;
      size_t* pos = p.count.data();
      const uint32_t shift = p.shift;
      if (pi == 0) {
        for (const auto& in : inputs) {
          for (const uint64_t k : in) dst[pos[(k >> shift) & mask]++] = k;
        }
      } else {
        for (size_t i = 0; i < n; ++i) {
          const uint64_t k = other[i];
          dst[pos[(k >> shift) & mask]++] = k;
        }
      }
      std::swap(dst, other);
    }
  }
  // Fix-up: sort each run of keys that agree above bit `low`.
  if (low > 0) FixUp(out, n, low);
}

namespace {

// Buckets of about 2^kBucketLog2 keys: a bucket, its counting array and its sorted
// copy stay in L1.
constexpr uint32_t kBucketLog2 = 8;
// At most 2^kMaxDigit buckets. On a shard of 10^6 random keys the partition took
// 3.5-3.9 ns a key with 2^10 buckets and 6-8 ns with 2^11 (best of 7 runs each), the
// per-bucket sorts 6.2-6.7 ns either way: more write heads than the caches keep open
// cost more than larger buckets do.
constexpr uint32_t kMaxDigit = 10;
// Buckets larger than this (many equal keys, or skewed input) go to SortShard.
constexpr size_t kLargeBucket = size_t{1} << 14;

}  // namespace

uint32_t SortUniqueDigitBits(size_t n, uint32_t fixed_bits) {
  const uint32_t free_bits = fixed_bits >= 64 ? 0 : 64 - fixed_bits;
  const auto w = static_cast<uint32_t>(std::bit_width(n));
  const uint32_t d = w > kBucketLog2 ? w - kBucketLog2 : 0;
  return std::min({d, kMaxDigit, free_bits});
}

void PartitionByDigit(std::span<const std::span<const uint64_t>> inputs, uint32_t fixed_bits,
                      uint32_t digit_bits, SortUniqueScratch* sc) {
  size_t n = 0;
  for (const auto& in : inputs) n += in.size();
  if (sc->partitioned.size() < n) sc->partitioned.resize(n);
  const size_t buckets = size_t{1} << digit_bits;
  sc->starts.assign(buckets + 1, 0);
  uint64_t* const dst = sc->partitioned.data();
  if (digit_bits == 0) {
    for (const auto& in : inputs) {
      if (!in.empty()) std::memcpy(dst + sc->starts[1], in.data(), in.size() * sizeof(uint64_t));
      sc->starts[1] += in.size();
    }
    return;
  }
  const uint32_t shift = 64 - fixed_bits - digit_bits;
  const uint64_t mask = buckets - 1;
  size_t* const count = sc->starts.data() + 1;
  for (const auto& in : inputs) {
    for (const uint64_t k : in) ++count[(k >> shift) & mask];
  }
  // count[d] (= starts[d + 1]) becomes the start of bucket d and is the write position
  // of its keys; after the scatter it is the end of bucket d, as starts[d + 1] must be.
  size_t sum = 0;
  for (size_t d = 0; d < buckets; ++d) {
    const size_t c = count[d];
    count[d] = sum;
    sum += c;
  }
  for (const auto& in : inputs) {
    for (const uint64_t k : in) dst[count[(k >> shift) & mask]++] = k;
  }
}

void SortBucket(const uint64_t* src, size_t m, uint32_t fixed_bits, uint64_t* dst,
                SortUniqueScratch* sc) {
  const uint32_t free_bits = fixed_bits >= 64 ? 0 : 64 - fixed_bits;
  if (m <= 24 || free_bits == 0) {
    std::memcpy(dst, src, m * sizeof(uint64_t));
    InsertionSort(dst, m);
    return;
  }
  if (m > kLargeBucket) {
    if (sc->spare.size() < m) sc->spare.resize(m);
    const std::span<const uint64_t> in(src, m);
    SortShard(std::span<const std::span<const uint64_t>>(&in, 1), fixed_bits, dst, sc->spare.data());
    return;
  }
  // One counting pass on the top r free bits, r ~ log2(m) + 1, then the fix-up.
  const uint32_t r = std::min(free_bits, static_cast<uint32_t>(std::bit_width(m)) + 1);
  const uint32_t shift = free_bits - r;
  const uint64_t mask = (uint64_t{1} << r) - 1;
  sc->counts.assign((size_t{1} << r) + 1, 0);
  uint32_t* const c = sc->counts.data() + 1;
  for (size_t i = 0; i < m; ++i) ++c[(src[i] >> shift) & mask];
  uint32_t sum = 0;
  for (size_t d = 0; d < (size_t{1} << r); ++d) {
    const uint32_t t = c[d];
    c[d] = sum;
    sum += t;
  }
  for (size_t i = 0; i < m; ++i) dst[c[(src[i] >> shift) & mask]++] = src[i];
  // Keys are now ordered by their top r free bits; only keys sharing those (about one
  // in four) can be out of order, next to each other. One insertion pass over the
  // whole bucket puts them right with a rarely taken branch; finding the groups first
  // (FixUp) mispredicted on every group boundary and measured ~2x slower.
  if (shift > 0) InsertionSort(dst, m);
}

}  // namespace tidemark
