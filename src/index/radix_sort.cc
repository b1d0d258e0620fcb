#include "index/radix_sort.h"

#include <algorithm>
#include <bit>
#include <cstring>
#include <vector>

namespace tidemark {
namespace {

// Below this size std::sort (introsort) beats another radix pass.
constexpr size_t kSmallSort = 192;

void SortByte(uint64_t* a, size_t n, int shift) {
  if (n <= kSmallSort) {
    std::sort(a, a + n);
    return;
  }
  size_t count[256] = {};
  for (size_t i = 0; i < n; ++i) ++count[(a[i] >> shift) & 255];
  size_t start[256], next[256];
  size_t sum = 0;
  int nonempty = 0;
  for (int d = 0; d < 256; ++d) {
    start[d] = next[d] = sum;
    sum += count[d];
    nonempty += count[d] != 0;
  }
  if (nonempty > 1) {
    for (int d = 0; d < 256; ++d) {
      const size_t end = start[d] + count[d];
      while (next[d] < end) {
        uint64_t v = a[next[d]];
        int vd = static_cast<int>((v >> shift) & 255);
        while (vd != d) {
          std::swap(v, a[next[vd]++]);
          vd = static_cast<int>((v >> shift) & 255);
        }
        a[next[d]++] = v;
      }
    }
  }
  if (shift == 0) return;
  for (int d = 0; d < 256; ++d) {
    if (count[d] > 1) SortByte(a + start[d], count[d], shift - 8);
  }
}

// LSD radix sort of a[0..n) on the low `bits` bits (the higher bits are equal), 8 bits
// a pass, ping-ponging with `tmp` (n entries); passes whose digit is constant are
// skipped. Used below the first byte, where a bucket is small enough to stay in cache.
void SortLsd(uint64_t* a, size_t n, int bits, uint64_t* tmp) {
  uint64_t* src = a;
  uint64_t* dst = tmp;
  for (int shift = 0; shift < bits; shift += 8) {
    size_t count[256] = {};
    for (size_t i = 0; i < n; ++i) ++count[(src[i] >> shift) & 255];
    if (count[(src[0] >> shift) & 255] == n) continue;
    size_t sum = 0;
    for (size_t& c : count) {
      const size_t t = c;
      c = sum;
      sum += t;
    }
    for (size_t i = 0; i < n; ++i) dst[count[(src[i] >> shift) & 255]++] = src[i];
    std::swap(src, dst);
  }
  if (src != a) std::memcpy(a, src, n * sizeof(uint64_t));
}

}  // namespace

void RadixSort64(uint64_t* keys, size_t n) {
  if (n <= kSmallSort) {
    std::sort(keys, keys + n);
    return;
  }
  // One in-place MSD pass on the top byte (for the default 256 shards: by shard), then
  // each bucket by LSD with a scratch buffer as large as the largest bucket (for random
  // keys 1/256 of the input: the memory budget is not exceeded in practice).
  size_t count[256] = {};
  for (size_t i = 0; i < n; ++i) ++count[keys[i] >> 56];
  size_t start[256], next[256];
  size_t sum = 0, largest = 0;
  for (int d = 0; d < 256; ++d) {
    start[d] = next[d] = sum;
    sum += count[d];
    largest = std::max(largest, count[d]);
  }
  if (largest == n || largest > n / 8) {
    SortByte(keys, n, 56);  // skewed input: stay in place
    return;
  }
  for (int d = 0; d < 256; ++d) {
    const size_t end = start[d] + count[d];
    while (next[d] < end) {
      uint64_t v = keys[next[d]];
      int vd = static_cast<int>(v >> 56);
      while (vd != d) {
        std::swap(v, keys[next[vd]++]);
        vd = static_cast<int>(v >> 56);
      }
      keys[next[d]++] = v;
    }
  }
  std::vector<uint64_t> tmp(largest);
  for (int d = 0; d < 256; ++d) {
    if (count[d] <= kSmallSort) {
      std::sort(keys + start[d], keys + start[d] + count[d]);
    } else {
      SortLsd(keys + start[d], count[d], 56, tmp.data());
    }
  }
}

void PartitionByTopBits(uint64_t* keys, size_t n, uint32_t bits, size_t* cuts) {
  const size_t groups = size_t{1} << bits;
  if (bits == 0 || n == 0) {
    cuts[0] = 0;
    for (size_t d = 1; d <= groups; ++d) cuts[d] = n;
    return;
  }
  const int shift = 64 - static_cast<int>(bits);
  std::vector<size_t> count(groups, 0), next(groups);
  for (size_t i = 0; i < n; ++i) ++count[keys[i] >> shift];
  size_t sum = 0;
  for (size_t d = 0; d < groups; ++d) {
    cuts[d] = next[d] = sum;
    sum += count[d];
  }
  cuts[groups] = n;
  for (size_t d = 0; d < groups; ++d) {
    const size_t end = cuts[d + 1];
    while (next[d] < end) {
      uint64_t v = keys[next[d]];
      size_t vd = static_cast<size_t>(v >> shift);
      while (vd != d) {
        std::swap(v, keys[next[vd]++]);
        vd = static_cast<size_t>(v >> shift);
      }
      keys[next[d]++] = v;
    }
  }
}

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
  if (low == 0) return;
  // Fix-up: sort each run of keys that agree above bit `low`.
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

}  // namespace tidemark
