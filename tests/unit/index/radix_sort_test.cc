#include "index/radix_sort.h"

#include <catch2/catch.hpp>

#include <algorithm>
#include <span>
#include <vector>

#include "index_test_util.h"

namespace tidemark {
namespace {

TEST_CASE("SortShard sorts several inputs like std::sort", "[index][sort]") {
  testing::SplitMix64 rng(5);
  // Shard bits 0, 8 and 16; uniform keys, duplicates, keys that differ only in their
  // low bits (the fix-up path), and sizes around the small-sort cut-off.
  for (const uint32_t bits : {0u, 8u, 16u}) {
    for (const size_t n : {size_t{0}, size_t{5}, size_t{192}, size_t{193}, size_t{4000}, size_t{300000}}) {
      for (int kind = 0; kind < 3; ++kind) {
        const uint64_t top = bits == 0 ? 0 : (uint64_t{0x5a5a} >> (16 - bits)) << (64 - bits);
        const uint64_t low_mask = bits == 0 ? ~0ull : (~0ull >> bits);
        std::vector<uint64_t> all(n);
        for (auto& x : all) {
          uint64_t r = rng.Next();
          if (kind == 1) r %= 1000;            // many duplicates, low bits only
          if (kind == 2 && r % 2) r &= 0xFFFF;  // half share all bits above 16
          x = top | (r & low_mask);
        }
        // Split into three inputs of uneven length.
        const size_t a = n / 5, b = n / 2;
        const std::vector<std::span<const uint64_t>> inputs = {
            std::span<const uint64_t>(all.data(), a), std::span<const uint64_t>(all.data() + a, b - a),
            std::span<const uint64_t>(all.data() + b, n - b)};
        std::vector<uint64_t> out(n), scratch(n);
        SortShard(inputs, bits, out.data(), scratch.data());
        std::vector<uint64_t> want = all;
        std::sort(want.begin(), want.end());
        INFO("bits " << bits << " n " << n << " kind " << kind);
        CHECK(out == want);
      }
    }
  }
}

TEST_CASE("SortUnique gives the distinct keys of several inputs with their multiplicities",
          "[index][sort]") {
  testing::SplitMix64 rng(11);
  SortUniqueScratch sc;  // reused across cases, as the index build does
  // Uniform keys (buckets of a few hundred), many duplicates, keys differing only in
  // their low bits (the fix-up), and one key repeated past the oversized-bucket
  // cut-off (the SortShard fallback), at shard bits 0, 8 and 16.
  for (const uint32_t bits : {0u, 8u, 16u}) {
    for (const size_t n : {size_t{1}, size_t{7}, size_t{300}, size_t{5000}, size_t{200000}}) {
      for (int kind = 0; kind < 4; ++kind) {
        const uint64_t top = bits == 0 ? 0 : (uint64_t{0x5a5a} >> (16 - bits)) << (64 - bits);
        const uint64_t low_mask = bits == 0 ? ~0ull : (~0ull >> bits);
        std::vector<uint64_t> all(n);
        for (auto& x : all) {
          uint64_t r = rng.Next();
          if (kind == 1) r %= 1000;
          if (kind == 2 && r % 2) r &= 0xFFFF;
          if (kind == 3 && r % 4 != 0) r = 0x123456789abcdefull;
          x = top | (r & low_mask);
        }
        const size_t a = n / 3;
        const std::vector<std::span<const uint64_t>> inputs = {
            std::span<const uint64_t>(all.data(), a), std::span<const uint64_t>(all.data() + a, n - a)};
        std::vector<uint64_t> out(n);
        std::vector<std::pair<uint64_t, uint64_t>> got;
        const size_t u = SortUnique(inputs, bits, out.data(), &sc, [&](uint64_t* k, size_t m) {
          return CollapseRuns(k, m, [&](uint64_t fp, uint64_t times) { got.emplace_back(fp, times); });
        });
        std::vector<uint64_t> sorted = all;
        std::sort(sorted.begin(), sorted.end());
        std::vector<std::pair<uint64_t, uint64_t>> want;
        for (const uint64_t k : sorted) {
          if (!want.empty() && want.back().first == k) {
            ++want.back().second;
          } else {
            want.emplace_back(k, 1);
          }
        }
        INFO("bits " << bits << " n " << n << " kind " << kind);
        REQUIRE(u == want.size());
        CHECK(got == want);
        for (size_t i = 0; i < u; ++i) REQUIRE(out[i] == want[i].first);
      }
    }
  }
}

}  // namespace
}  // namespace tidemark
