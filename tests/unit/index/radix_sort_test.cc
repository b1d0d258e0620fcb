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

}  // namespace
}  // namespace tidemark
