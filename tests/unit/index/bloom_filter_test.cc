#include "index/bloom_filter.h"

#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <string>

#include "index_test_util.h"
#include "test_util.h"

namespace tidemark {
namespace {

using testing::SplitMix64;

// Measured false-positive rate of a filter with `n` keys, probed with `probes` keys
// that were not inserted.
double MeasureFpr(uint64_t n, uint32_t bits_per_key, uint64_t probes, uint64_t seed) {
  BloomFilterBuilder b(n, bits_per_key, 0);
  SplitMix64 rng(seed);
  std::vector<uint64_t> keys(n);
  for (auto& k : keys) {
    k = rng.Next();
    b.Add(k);
  }
  const BloomFilterView v = b.view();
  for (const uint64_t k : keys) REQUIRE(v.MayContain(k));  // no false negatives, ever
  SplitMix64 other(seed ^ 0xA5A5A5A5DEADBEEFull);
  uint64_t fp = 0;
  for (uint64_t i = 0; i < probes; ++i) fp += v.MayContain(other.Next());
  return static_cast<double>(fp) / static_cast<double>(probes);
}

TEST_CASE("blocked Bloom filter FPR matches the Putze-Sanders-Singler formula at two sizes",
          "[index][bloom]") {
  // Formula: Putze, Sanders, Singler 2007 ("Cache-, Hash- and Space-Efficient Bloom
  // Filters"), blocked filter with B = 512 bits and k independent bits per key.
  // Tolerance: 10% relative plus 4 binomial standard deviations of the measurement.
  struct Case {
    uint64_t n;
    uint32_t bits;
  };
  for (const Case c : {Case{20000, 10}, Case{400000, 10}, Case{400000, 16}, Case{20000, 8}}) {
    const uint32_t k = index_format::BloomKFor(c.bits);
    const double expected = BlockedBloomExpectedFpr(c.bits, k);
    const uint64_t probes = 2000000;
    const double measured = MeasureFpr(c.n, c.bits, probes, 42 + c.n + c.bits);
    const double sigma = std::sqrt(expected * (1 - expected) / static_cast<double>(probes));
    INFO("n=" << c.n << " bits/key=" << c.bits << " k=" << k << " expected=" << expected
              << " measured=" << measured);
    CHECK(std::abs(measured - expected) <= 0.10 * expected + 4 * sigma);
  }
}

TEST_CASE("default 10 bits per key gives about 1% false positives", "[index][bloom]") {
  const double f = BlockedBloomExpectedFpr(10, index_format::BloomKFor(10));
  CHECK(index_format::BloomKFor(10) == 6);
  CHECK(f > 0.009);
  CHECK(f < 0.011);
  // A blocked filter is never better than a classic one with the same bits and k:
  // classic (1 - e^(-k/c))^k for c = 10, k = 7 is 0.00819372 (REFERENCES.md).
  const double classic = std::pow(1 - std::exp(-7.0 / 10.0), 7.0);
  CHECK(std::abs(classic - 0.00819372) < 1e-7);
  CHECK(f > classic);
}

TEST_CASE("the FPR formula agrees with scipy's Poisson pmf", "[index][bloom]") {
  // Independent evaluation of the same sum with scipy.stats.poisson (Debian
  // python3-scipy), so our log-space Poisson terms are checked.
  if (!testing::PathExists("/usr/bin/python3")) {
    WARN("no /usr/bin/python3; skipped");
    return;
  }
  int rc = 0;
  const std::string out = testing::RunCommand(
      "/usr/bin/python3 -c \"from scipy.stats import poisson\n"
      "B=512\n"
      "for c,k in [(8,5),(10,6),(16,10)]:\n"
      "  lam=B/c\n"
      "  print(repr(sum(poisson.pmf(i,lam)*(1-(1-1/B)**(i*k))**k for i in range(0,600))))\"",
      &rc);
  if (rc != 0) {
    WARN("scipy not available (scripts/setup.sh installs python3-scipy): " << out);
    return;
  }
  double v[3];
  REQUIRE(std::sscanf(out.c_str(), "%lf %lf %lf", &v[0], &v[1], &v[2]) == 3);
  CHECK(BlockedBloomExpectedFpr(8, 5) == Approx(v[0]).epsilon(1e-9));
  CHECK(BlockedBloomExpectedFpr(10, 6) == Approx(v[1]).epsilon(1e-9));
  CHECK(BlockedBloomExpectedFpr(16, 10) == Approx(v[2]).epsilon(1e-9));
}

TEST_CASE("AddAll sets the same bits as Add, in any key order", "[index][bloom]") {
  SplitMix64 rng(17);
  std::vector<uint64_t> keys(30000);
  for (auto& k : keys) k = (rng.Next() >> 8) | (0x33ull << 56);
  BloomFilterBuilder one(keys.size(), 10, 8), sorted(keys.size(), 10, 8), shuffled(keys.size(), 10, 8);
  for (const uint64_t k : keys) one.Add(k);
  shuffled.AddAll(keys);
  std::sort(keys.begin(), keys.end());
  sorted.AddAll(keys);
  CHECK(sorted.bytes() == one.bytes());
  CHECK(shuffled.bytes() == one.bytes());
}

TEST_CASE("Bloom bit layout follows docs/index_format.md", "[index][bloom]") {
  // One key in a one-block filter sets exactly the k documented bit positions.
  BloomFilterBuilder b(1, 10, 8);
  REQUIRE(b.num_blocks() == 1);
  const uint64_t fp = 0x0123456789abcdefull;
  b.Add(fp);
  const uint64_t h = index_format::Mix64(fp);
  std::vector<uint8_t> want(64, 0);
  for (uint32_t i = 0; i < b.k(); ++i) {
    // position i: 9-bit slice i % 7 of word i / 7, word 0 being h and word j >= 1
    // Mix64(h + j * 0x9e3779b97f4a7c15) (the SplitMix64 stream seeded with h)
    const uint64_t w = i / 7 == 0 ? h : index_format::Mix64(h + (i / 7) * 0x9e3779b97f4a7c15ull);
    const uint32_t pos = static_cast<uint32_t>((w >> (9 * (i % 7))) & 511);
    const uint32_t word = pos / 64, bit = pos % 64;
    // bit j of the block is bit (j mod 64) of little-endian word j / 64
    want[word * 8 + bit / 8] |= static_cast<uint8_t>(1u << (bit % 8));
  }
  CHECK(b.bytes() == want);
  // The block: multiply-shift (Lemire 2019) of the 32 fingerprint bits below the
  // shard bits; ascending keys of one shard give non-decreasing blocks.
  BloomFilterBuilder big(100000, 10, 8);
  const uint64_t nb = big.num_blocks();
  CHECK(BloomFilterView::BlockIndex(0x12ffffffff000000ull, 8, nb) == nb - 1);
  CHECK(BloomFilterView::BlockIndex(0x1200000000ffffffull, 8, nb) == 0);
  CHECK(BloomFilterView::BlockIndex(0x1280000000000000ull, 8, nb) == nb / 2);
  SplitMix64 rng(3);
  std::vector<uint64_t> keys(5000);
  for (auto& k : keys) k = (rng.Next() >> 8) | (0x12ull << 56);
  std::sort(keys.begin(), keys.end());
  for (size_t i = 1; i < keys.size(); ++i) {
    REQUIRE(BloomFilterView::BlockIndex(keys[i - 1], 8, nb) <= BloomFilterView::BlockIndex(keys[i], 8, nb));
  }
  // SplitMix64 finalizer test value: Mix64(0) == 0 and Mix64(1) is the splitmix64
  // output for state 1 - 0x9e3779b97f4a7c15 (from memory: the first output of
  // splitmix64 seeded with 0 is 0xe220a8397b1dcdaf).
  CHECK(index_format::Mix64(0x9e3779b97f4a7c15ull) == 0xe220a8397b1dcdafull);
}

}  // namespace
}  // namespace tidemark
