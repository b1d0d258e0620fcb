#include "tidemark/stats.h"

#include <algorithm>
#include <cmath>
#include <exception>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include <boost/math/distributions/beta.hpp>
#include <boost/math/distributions/hypergeometric.hpp>
#include <boost/math/distributions/normal.hpp>

namespace tidemark {
namespace {

Status CheckLevel(double level) {
  if (!(level > 0.0 && level < 1.0)) {
    return Status::InvalidArgument("confidence level must be between 0 and 1 (exclusive), got " +
                                   std::to_string(level));
  }
  return Status::Ok();
}

Status CheckCounts(uint64_t x, uint64_t n) {
  if (n == 0) return Status::InvalidArgument("interval needs at least one trial (n = 0)");
  if (x > n) {
    return Status::InvalidArgument("successes exceed trials: x = " + std::to_string(x) +
                                   ", n = " + std::to_string(n));
  }
  return Status::Ok();
}

// Wilson 1927 for a real-valued (effective) sample size: p is the observed share,
// m the sample size the variance is computed with.
Interval WilsonFromShare(double p, double m, double z) {
  const double z2 = z * z;
  const double denom = 1.0 + z2 / m;
  const double center = (p + z2 / (2.0 * m)) / denom;
  const double half = z * std::sqrt(p * (1.0 - p) / m + z2 / (4.0 * m * m)) / denom;
  return {std::max(0.0, center - half), std::min(1.0, center + half)};
}

}  // namespace

Result<double> NormalCritical(double level) {
  TM_RETURN_IF_ERROR(CheckLevel(level));
  try {
    const boost::math::normal_distribution<double> normal(0.0, 1.0);
    return boost::math::quantile(boost::math::complement(normal, (1.0 - level) / 2.0));
  } catch (const std::exception& e) {
    return Status::InvalidArgument(std::string("normal quantile: ") + e.what());
  }
}

Result<Interval> WilsonInterval(uint64_t x, uint64_t n, double level) {
  TM_RETURN_IF_ERROR(CheckCounts(x, n));
  TM_ASSIGN_OR_RETURN(const double z, NormalCritical(level));
  const double nd = static_cast<double>(n);
  Interval ci = WilsonFromShare(static_cast<double>(x) / nd, nd, z);
  // The score interval contains 0 (1) exactly when x = 0 (x = n); rounding in the
  // formula can leave a residue of ~1e-17 there.
  if (x == 0) ci.lower = 0.0;
  if (x == n) ci.upper = 1.0;
  return ci;
}

Result<Interval> ClopperPearsonInterval(uint64_t x, uint64_t n, double level) {
  TM_RETURN_IF_ERROR(CheckCounts(x, n));
  TM_RETURN_IF_ERROR(CheckLevel(level));
  // Clopper and Pearson 1934: lower = Beta(x, n - x + 1) quantile at alpha/2,
  // upper = Beta(x + 1, n - x) quantile at 1 - alpha/2 (upper taken from the
  // complement, which keeps precision when alpha/2 is small).
  const double alpha2 = (1.0 - level) / 2.0;
  const double xd = static_cast<double>(x);
  const double nd = static_cast<double>(n);
  Interval ci{0.0, 1.0};
  try {
    if (x > 0) {
      const boost::math::beta_distribution<double> lo(xd, nd - xd + 1.0);
      ci.lower = boost::math::quantile(lo, alpha2);
    }
    if (x < n) {
      const boost::math::beta_distribution<double> hi(xd + 1.0, nd - xd);
      ci.upper = boost::math::quantile(boost::math::complement(hi, alpha2));
    }
  } catch (const std::exception& e) {
    return Status::InvalidArgument(std::string("beta quantile: ") + e.what());
  }
  return ci;
}

std::string_view SampleIntervalMethodName(SampleIntervalMethod method) {
  switch (method) {
    case SampleIntervalMethod::kWilsonFpc: return "wilson_fpc";
    case SampleIntervalMethod::kHypergeometric: return "hypergeometric";
  }
  return "unknown";
}

namespace {

Status CheckSample(uint64_t x, uint64_t n, uint64_t population) {
  TM_RETURN_IF_ERROR(CheckCounts(x, n));
  if (n > population) {
    return Status::InvalidArgument("sample larger than the population: n = " +
                                   std::to_string(n) + ", N = " + std::to_string(population));
  }
  return Status::Ok();
}

}  // namespace

Result<Interval> WilsonFpcInterval(uint64_t x, uint64_t n, uint64_t population,
                                   double level) {
  TM_RETURN_IF_ERROR(CheckSample(x, n, population));
  TM_ASSIGN_OR_RETURN(const double z, NormalCritical(level));
  const double nd = static_cast<double>(n);
  const double big_n = static_cast<double>(population);
  const double p = static_cast<double>(x) / nd;
  if (n == population) return Interval{p, p};  // a census: no sampling error
  // Cochran 1977, eq. 3.4: Var(p) = p(1-p)/n * (N-n)/(N-1); Wilson's formula with
  // the sample size replaced by n * (N-1)/(N-n) uses exactly that variance.
  const double n_eff = nd * (big_n - 1.0) / (big_n - nd);
  Interval ci = WilsonFromShare(p, n_eff, z);
  // The population holds at least the x seen and at most N - (n - x).
  ci.lower = std::max(ci.lower, static_cast<double>(x) / big_n);
  ci.upper = std::min(ci.upper, static_cast<double>(population - n + x) / big_n);
  return ci;
}

namespace {

// P(X <= x) and P(X >= x) for X ~ Hypergeometric(M successes, n draws, N units),
// guarding the ends of the support (Boost refuses x outside it).
double HyperCdf(uint64_t x, uint64_t m, uint64_t n, uint64_t big_n) {
  const uint64_t lo = (n + m > big_n) ? n + m - big_n : 0;
  const uint64_t hi = std::min(m, n);
  if (x < lo) return 0.0;
  if (x >= hi) return 1.0;
  const boost::math::hypergeometric_distribution<double> d(
      static_cast<unsigned>(m), static_cast<unsigned>(n), static_cast<unsigned>(big_n));
  return boost::math::cdf(d, static_cast<unsigned>(x));
}

double HyperUpperTail(uint64_t x, uint64_t m, uint64_t n, uint64_t big_n) {
  if (x == 0) return 1.0;
  const uint64_t lo = (n + m > big_n) ? n + m - big_n : 0;
  const uint64_t hi = std::min(m, n);
  if (x <= lo) return 1.0;
  if (x > hi) return 0.0;
  const boost::math::hypergeometric_distribution<double> d(
      static_cast<unsigned>(m), static_cast<unsigned>(n), static_cast<unsigned>(big_n));
  return boost::math::cdf(boost::math::complement(d, static_cast<unsigned>(x - 1)));
}

}  // namespace

Result<Interval> HypergeometricInterval(uint64_t x, uint64_t n, uint64_t population,
                                        double level) {
  TM_RETURN_IF_ERROR(CheckSample(x, n, population));
  TM_RETURN_IF_ERROR(CheckLevel(level));
  if (population > kMaxExactPopulation) {
    return Status::InvalidArgument("exact sample interval supports populations up to " +
                                   std::to_string(kMaxExactPopulation) + ", got " +
                                   std::to_string(population));
  }
  const double alpha2 = (1.0 - level) / 2.0;
  const uint64_t big_n = population;
  // Feasible population counts: M in [x, N - (n - x)].
  const uint64_t m_min = x;
  const uint64_t m_max = big_n - (n - x);
  try {
    // P(X >= x | M) rises with M: the lower bound is the smallest M where it
    // exceeds alpha/2 (at M = m_max every draw holds at least x successes, so P = 1).
    uint64_t lo = m_min, hi = m_max;
    while (lo < hi) {
      const uint64_t mid = lo + (hi - lo) / 2;
      if (HyperUpperTail(x, mid, n, big_n) > alpha2) {
        hi = mid;
      } else {
        lo = mid + 1;
      }
    }
    const uint64_t m_lower = lo;
    // P(X <= x | M) falls with M: the upper bound is the largest M where it
    // exceeds alpha/2 (at M = m_min = x, P = 1).
    lo = m_min;
    hi = m_max;
    while (lo < hi) {
      const uint64_t mid = lo + (hi - lo + 1) / 2;
      if (HyperCdf(x, mid, n, big_n) > alpha2) {
        lo = mid;
      } else {
        hi = mid - 1;
      }
    }
    const uint64_t m_upper = lo;
    const double nd = static_cast<double>(big_n);
    return Interval{static_cast<double>(m_lower) / nd, static_cast<double>(m_upper) / nd};
  } catch (const std::exception& e) {
    return Status::InvalidArgument(std::string("hypergeometric distribution: ") + e.what());
  }
}

Result<Interval> SampleProportionInterval(SampleIntervalMethod method, uint64_t x,
                                          uint64_t n, uint64_t population, double level) {
  switch (method) {
    case SampleIntervalMethod::kWilsonFpc:
      return WilsonFpcInterval(x, n, population, level);
    case SampleIntervalMethod::kHypergeometric:
      return HypergeometricInterval(x, n, population, level);
  }
  return Status::InvalidArgument("unknown sample interval method");
}

Result<Interval> NewcombeDifferenceInterval(uint64_t x1, uint64_t n1, uint64_t x2,
                                            uint64_t n2, double level) {
  // Newcombe 1998 (Statistics in Medicine 17:873-890), method 10: with Wilson
  // intervals (l1, u1) and (l2, u2),
  //   lower = d - sqrt((p1 - l1)^2 + (u2 - p2)^2),
  //   upper = d + sqrt((u1 - p1)^2 + (p2 - l2)^2),  d = p1 - p2.
  TM_ASSIGN_OR_RETURN(const Interval w1, WilsonInterval(x1, n1, level));
  TM_ASSIGN_OR_RETURN(const Interval w2, WilsonInterval(x2, n2, level));
  const double p1 = static_cast<double>(x1) / static_cast<double>(n1);
  const double p2 = static_cast<double>(x2) / static_cast<double>(n2);
  const double d = p1 - p2;
  const double lower = d - std::sqrt((p1 - w1.lower) * (p1 - w1.lower) +
                                     (w2.upper - p2) * (w2.upper - p2));
  const double upper = d + std::sqrt((w1.upper - p1) * (w1.upper - p1) +
                                     (p2 - w2.lower) * (p2 - w2.lower));
  return Interval{std::max(-1.0, lower), std::min(1.0, upper)};
}

namespace {

// Unbiased draw from [0, bound) by rejection (the standard library's
// uniform_int_distribution is not specified bit-for-bit across implementations;
// mt19937_64 is).
uint64_t DrawBelow(std::mt19937_64& gen, uint64_t bound) {
  const uint64_t limit = std::numeric_limits<uint64_t>::max() -
                         std::numeric_limits<uint64_t>::max() % bound;
  uint64_t r;
  do {
    r = gen();
  } while (r >= limit);
  return r % bound;
}

double Mean(std::span<const double> v) {
  // Pairwise summation would be more precise; Kahan keeps the bootstrap cheap.
  double sum = 0.0, comp = 0.0;
  for (const double x : v) {
    const double y = x - comp;
    const double t = sum + y;
    comp = (t - sum) - y;
    sum = t;
  }
  return sum / static_cast<double>(v.size());
}

double ResampledMean(std::mt19937_64& gen, std::span<const double> v) {
  double sum = 0.0;
  for (size_t i = 0; i < v.size(); ++i) sum += v[DrawBelow(gen, v.size())];
  return sum / static_cast<double>(v.size());
}

// Quantile by linear interpolation between order statistics (Hyndman and Fan 1996,
// definition 7; numpy's default). REQUIRES: sorted non-empty.
double Quantile(const std::vector<double>& sorted, double q) {
  const double h = q * static_cast<double>(sorted.size() - 1);
  const size_t i = static_cast<size_t>(std::floor(h));
  if (i + 1 >= sorted.size()) return sorted.back();
  return sorted[i] + (h - static_cast<double>(i)) * (sorted[i + 1] - sorted[i]);
}

}  // namespace

Result<BootstrapResult> BootstrapMeanDifference(std::span<const double> a,
                                                std::span<const double> b,
                                                const BootstrapOptions& options) {
  TM_RETURN_IF_ERROR(CheckLevel(options.level));
  if (a.empty() || b.empty()) {
    return Status::InvalidArgument("bootstrap needs at least one value in each group (sizes " +
                                   std::to_string(a.size()) + " and " +
                                   std::to_string(b.size()) + ")");
  }
  if (options.replicates < 100) {
    return Status::InvalidArgument("bootstrap needs at least 100 replicates, got " +
                                   std::to_string(options.replicates));
  }
  for (const auto group : {a, b}) {
    for (const double v : group) {
      if (!std::isfinite(v)) return Status::InvalidArgument("bootstrap value is not finite");
    }
  }
  std::mt19937_64 gen(options.seed);
  std::vector<double> reps(options.replicates);
  for (double& r : reps) {
    const double ma = ResampledMean(gen, a);
    r = ma - ResampledMean(gen, b);
  }
  std::sort(reps.begin(), reps.end());
  const double alpha2 = (1.0 - options.level) / 2.0;
  BootstrapResult result;
  result.estimate = Mean(a) - Mean(b);
  result.interval = {Quantile(reps, alpha2), Quantile(reps, 1.0 - alpha2)};
  result.replicates = options.replicates;
  return result;
}

}  // namespace tidemark
