// Known-answer and property tests for tidemark/stats.h. Published values are
// quoted from the papers named beside them (as listed in REFERENCES.md); the
// statsmodels/scipy grid comparisons live in tests/reference/stats/.
#include <catch2/catch.hpp>

#include <cmath>
#include <random>
#include <vector>

#include "tidemark/stats.h"

namespace tidemark {
namespace {

// Published figures are rounded to 4 decimals.
bool Near4(double ours, double published) { return std::abs(ours - published) <= 0.5e-4 + 1e-12; }

TEST_CASE("normal critical value", "[stats]") {
  // z for 95%: 1.959963984540054 (REFERENCES.md); 1.6448536269514722 and
  // 2.5758293035489004 are the standard 90% and 99% values (scipy.stats.norm.isf).
  CHECK(std::abs(*NormalCritical(0.95) - 1.959963984540054) < 1e-15);
  CHECK(std::abs(*NormalCritical(0.90) - 1.6448536269514722) < 1e-14);
  CHECK(std::abs(*NormalCritical(0.99) - 2.5758293035489004) < 1e-14);
  CHECK(NormalCritical(0.0).status().code() == StatusCode::kInvalidArgument);
  CHECK(NormalCritical(1.0).status().code() == StatusCode::kInvalidArgument);
  CHECK(!NormalCritical(std::nan("")).ok());
}

TEST_CASE("Wilson and Clopper-Pearson: Newcombe 1998 Table I", "[stats]") {
  // Newcombe RG, Statistics in Medicine 1998;17:857-872, Table I: method 3 (Wilson
  // score) and method 5 (Clopper-Pearson exact), 95%.
  struct Row { uint64_t x, n; double wl, wu, cl, cu; };
  const Row rows[] = {{81, 263, 0.2553, 0.3662, 0.2527, 0.3676},
                      {15, 148, 0.0624, 0.1605, 0.0578, 0.1617},
                      {0, 20, 0.0, 0.1611, 0.0, 0.1684},
                      {1, 29, 0.0061, 0.1718, 0.0009, 0.1776}};
  for (const Row& r : rows) {
    INFO(r.x << "/" << r.n);
    const auto w = WilsonInterval(r.x, r.n, 0.95);
    const auto c = ClopperPearsonInterval(r.x, r.n, 0.95);
    REQUIRE(w.ok());
    REQUIRE(c.ok());
    CHECK(Near4(w->lower, r.wl));
    CHECK(Near4(w->upper, r.wu));
    CHECK(Near4(c->lower, r.cl));
    CHECK(Near4(c->upper, r.cu));
  }
}

TEST_CASE("Wilson and Clopper-Pearson: edge values", "[stats]") {
  // Edge values from statsmodels 0.13.5 (REFERENCES.md), 6 decimals.
  const auto near6 = [](double a, double b) { return std::abs(a - b) <= 0.5e-6; };
  auto w = *WilsonInterval(0, 1, 0.95);
  CHECK(w.lower == 0.0);
  CHECK(near6(w.upper, 0.793451));
  w = *WilsonInterval(1, 1, 0.95);
  CHECK(near6(w.lower, 0.206549));
  CHECK(w.upper == 1.0);
  w = *WilsonInterval(999, 1000, 0.95);
  CHECK(near6(w.lower, 0.994357));
  CHECK(near6(w.upper, 0.999823));
  auto c = *ClopperPearsonInterval(0, 1, 0.95);
  CHECK(c.lower == 0.0);
  CHECK(near6(c.upper, 0.975));
  c = *ClopperPearsonInterval(1, 1, 0.95);
  CHECK(near6(c.lower, 0.025));
  CHECK(c.upper == 1.0);
  c = *ClopperPearsonInterval(999, 1000, 0.95);
  CHECK(near6(c.lower, 0.994441));
  CHECK(near6(c.upper, 0.999975));
  // x = 0 and x = n are exact ends, never rounding residue.
  CHECK(ClopperPearsonInterval(0, 2000, 0.99)->lower == 0.0);
  CHECK(ClopperPearsonInterval(2000, 2000, 0.99)->upper == 1.0);
  CHECK(WilsonInterval(0, 2000, 0.99)->lower == 0.0);
  CHECK(WilsonInterval(2000, 2000, 0.99)->upper == 1.0);
}

TEST_CASE("interval arguments are validated", "[stats]") {
  CHECK(WilsonInterval(0, 0, 0.95).status().code() == StatusCode::kInvalidArgument);
  CHECK(WilsonInterval(3, 2, 0.95).status().code() == StatusCode::kInvalidArgument);
  CHECK(ClopperPearsonInterval(1, 2, 1.5).status().code() == StatusCode::kInvalidArgument);
  CHECK(WilsonFpcInterval(1, 11, 10, 0.95).status().code() == StatusCode::kInvalidArgument);
  CHECK(HypergeometricInterval(1, 5, kMaxExactPopulation + 1, 0.95).status().code() ==
        StatusCode::kInvalidArgument);
  CHECK(HypergeometricInterval(1, 5, kMaxExactPopulation, 0.95).ok());
  CHECK(NewcombeDifferenceInterval(1, 0, 1, 2, 0.95).status().code() ==
        StatusCode::kInvalidArgument);
}

TEST_CASE("Newcombe difference interval: Newcombe 1998 Table II", "[stats]") {
  // Newcombe RG, Statistics in Medicine 1998;17:873-890, Table II, method 10.
  struct Row { uint64_t x1, n1, x2, n2; double lo, hi; };
  const Row rows[] = {{56, 70, 48, 80, 0.0524, 0.3339}, {9, 10, 3, 10, 0.1705, 0.8090},
                      {6, 7, 2, 7, 0.0582, 0.8062},     {5, 56, 0, 29, -0.0381, 0.1926},
                      {0, 10, 0, 20, -0.1611, 0.2775},  {10, 10, 0, 20, 0.6791, 1.0000}};
  for (const Row& r : rows) {
    INFO(r.x1 << "/" << r.n1 << " - " << r.x2 << "/" << r.n2);
    const auto d = NewcombeDifferenceInterval(r.x1, r.n1, r.x2, r.n2, 0.95);
    REQUIRE(d.ok());
    CHECK(Near4(d->lower, r.lo));
    CHECK(Near4(d->upper, r.hi));
  }
}

TEST_CASE("finite-population intervals: limits and properties", "[stats]") {
  // A census has no sampling error: both methods give the point.
  auto f = *WilsonFpcInterval(7, 50, 50, 0.95);
  CHECK(f.lower == 7.0 / 50);
  CHECK(f.upper == 7.0 / 50);
  auto h = *HypergeometricInterval(7, 50, 50, 0.95);
  CHECK(h.lower == 7.0 / 50);
  CHECK(h.upper == 7.0 / 50);
  // A huge population: the correction vanishes, Wilson-FPC tends to Wilson, and
  // the exact hypergeometric interval to Clopper-Pearson (the binomial limit).
  const auto w = *WilsonInterval(12, 300, 0.95);
  f = *WilsonFpcInterval(12, 300, 4000000000ull, 0.95);
  CHECK(std::abs(f.lower - w.lower) < 1e-6);
  CHECK(std::abs(f.upper - w.upper) < 1e-6);
  const auto cp = *ClopperPearsonInterval(12, 300, 0.95);
  h = *HypergeometricInterval(12, 300, kMaxExactPopulation, 0.95);
  CHECK(std::abs(h.lower - cp.lower) < 1e-5);
  CHECK(std::abs(h.upper - cp.upper) < 1e-5);
  // Sampling half the population narrows the interval (by about sqrt(1/2)).
  f = *WilsonFpcInterval(30, 500, 1000, 0.95);
  const auto w2 = *WilsonInterval(30, 500, 0.95);
  CHECK(f.upper - f.lower < w2.upper - w2.lower);
  // Bounds respect what the sample proves: at least x and at most N - (n - x)
  // contaminated units.
  h = *HypergeometricInterval(0, 9, 10, 0.95);
  CHECK(h.lower == 0.0);
  CHECK(h.upper == 0.1);
  f = *WilsonFpcInterval(9, 9, 10, 0.95);
  CHECK(f.lower >= 0.9);
  CHECK(f.upper == 1.0);
  CHECK(SampleIntervalMethodName(SampleIntervalMethod::kHypergeometric) == "hypergeometric");
  CHECK(SampleProportionInterval(SampleIntervalMethod::kWilsonFpc, 9, 9, 10, 0.95)->lower ==
        f.lower);
}

TEST_CASE("bootstrap: seeded determinism", "[stats]") {
  const std::vector<double> a = {0.9, 0.7, 1.0, 0.4, 0.8, 0.65, 0.9, 0.3};
  const std::vector<double> b = {0.5, 0.6, 0.2, 0.45, 0.7, 0.1};
  BootstrapOptions opt;
  opt.replicates = 2000;
  opt.seed = 42;
  const auto r1 = *BootstrapMeanDifference(a, b, opt);
  const auto r2 = *BootstrapMeanDifference(a, b, opt);
  CHECK(r1.interval.lower == r2.interval.lower);
  CHECK(r1.interval.upper == r2.interval.upper);
  CHECK(std::abs(r1.estimate - (5.65 / 8 - 2.55 / 6)) < 1e-12);
  CHECK(r1.interval.lower < r1.estimate);
  CHECK(r1.estimate < r1.interval.upper);
  opt.seed = 43;
  const auto r3 = *BootstrapMeanDifference(a, b, opt);
  CHECK((r3.interval.lower != r1.interval.lower || r3.interval.upper != r1.interval.upper));
  // Errors.
  CHECK(!BootstrapMeanDifference({}, b, opt).ok());
  opt.replicates = 10;
  CHECK(!BootstrapMeanDifference(a, b, opt).ok());
  opt.replicates = 1000;
  const std::vector<double> bad = {1.0, std::nan("")};
  CHECK(!BootstrapMeanDifference(a, bad, opt).ok());
}

TEST_CASE("bootstrap agrees with the normal-theory interval on a large sample", "[stats]") {
  // Two skewed groups (exponential scores) of 4000 and 3000 values from a fixed
  // seed. By the central limit theorem the normal-theory interval
  // d +- z * sqrt(s1^2/n1 + s2^2/n2) is accurate here; the percentile bootstrap
  // must agree to within 5% of its half-width (Monte Carlo error with 20000
  // replicates is about 1%; skewness shifts the ends by well under 5%).
  std::mt19937_64 gen(7);
  std::exponential_distribution<double> e1(1.0), e2(1.25);
  std::vector<double> a(4000), b(3000);
  for (double& v : a) v = e1(gen);
  for (double& v : b) v = e2(gen);
  const auto mean_var = [](const std::vector<double>& v) {
    double m = 0;
    for (double x : v) m += x;
    m /= double(v.size());
    double s = 0;
    for (double x : v) s += (x - m) * (x - m);
    return std::pair<double, double>{m, s / double(v.size() - 1)};
  };
  const auto [ma, va] = mean_var(a);
  const auto [mb, vb] = mean_var(b);
  const double z = *NormalCritical(0.95);
  const double half = z * std::sqrt(va / double(a.size()) + vb / double(b.size()));
  BootstrapOptions opt;
  opt.replicates = 20000;
  opt.seed = 2024;
  const auto r = *BootstrapMeanDifference(a, b, opt);
  CHECK(std::abs(r.estimate - (ma - mb)) < 1e-12);
  INFO("normal: " << (ma - mb - half) << " .. " << (ma - mb + half) << "  bootstrap: "
                  << r.interval.lower << " .. " << r.interval.upper);
  CHECK(std::abs(r.interval.lower - (ma - mb - half)) < 0.05 * half);
  CHECK(std::abs(r.interval.upper - (ma - mb + half)) < 0.05 * half);
}

}  // namespace
}  // namespace tidemark
