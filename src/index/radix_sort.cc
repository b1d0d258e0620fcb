#include "index/radix_sort.h"

#include <algorithm>

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

}  // namespace

void RadixSort64(uint64_t* keys, size_t n) { SortByte(keys, n, 56); }

}  // namespace tidemark
