#include "index/radix_sort.h"

#include <catch2/catch.hpp>

#include <algorithm>
#include <vector>

#include "index_test_util.h"

namespace tidemark {
namespace {

TEST_CASE("RadixSort64 sorts like std::sort", "[index][sort]") {
  testing::SplitMix64 rng(7);
  for (const size_t n : {size_t{0}, size_t{1}, size_t{100}, size_t{5000}, size_t{300000}}) {
    std::vector<uint64_t> v(n);
    for (auto& x : v) {
      x = rng.Next();
      if (x % 3 == 0) x &= 0xFF000000000000FFull;  // shared high bytes, duplicates
    }
    std::vector<uint64_t> want = v;
    std::sort(want.begin(), want.end());
    RadixSort64(v.data(), v.size());
    CHECK(v == want);
  }
  // Skewed: one top byte for all keys (the in-place MSD path), and a few top bytes.
  for (const uint64_t mask : {0x00FFFFFFFFFFFFFFull, 0x03FFFFFFFFFFFFFFull}) {
    std::vector<uint64_t> v(200000);
    for (auto& x : v) x = (rng.Next() & mask) | 0x4000000000000000ull;
    std::vector<uint64_t> want = v;
    std::sort(want.begin(), want.end());
    RadixSort64(v.data(), v.size());
    CHECK(v == want);
  }
}

}  // namespace
}  // namespace tidemark
