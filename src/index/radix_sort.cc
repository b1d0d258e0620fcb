#include "index/radix_sort.h"

#include <algorithm>
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

}  // namespace tidemark
