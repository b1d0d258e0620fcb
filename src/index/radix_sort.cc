#include "index/radix_sort.h"

#include <algorithm>
#include <bit>
#include <cstring>
#include <vector>

namespace tidemark {
namespace {

// Below this size std::sort (introsort) beats another radix pass.
constexpr size_t kSmallSort = 192;

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
