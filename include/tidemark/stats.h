// Statistics for contamination reports: confidence intervals for a proportion
// (Wilson score, Clopper-Pearson exact), for a proportion estimated from a simple
// random sample of a finite population (Wilson with the finite-population
// correction, exact hypergeometric), for a difference of two independent
// proportions (Newcombe's hybrid score interval) and a seeded percentile bootstrap
// for a difference of two means. Methods and their sources: docs/statistics.md.
//
// Thread safety: pure functions of their arguments (the bootstrap owns its seeded
// generator per call).
#ifndef TIDEMARK_INCLUDE_TIDEMARK_STATS_H_
#define TIDEMARK_INCLUDE_TIDEMARK_STATS_H_

#include <cstdint>
#include <span>
#include <string_view>

#include "tidemark/status.h"

namespace tidemark {

/// A two-sided confidence interval [lower, upper].
struct Interval {
  double lower = 0.0;
  double upper = 0.0;
};

/// z = Phi^-1(1 - (1 - level) / 2), e.g. 1.959963984540054 for level 0.95.
/// InvalidArgument unless 0 < level < 1.
Result<double> NormalCritical(double level);

/// Wilson score interval for x successes in n trials (Wilson 1927).
/// InvalidArgument when n == 0, x > n or level is not in (0, 1).
Result<Interval> WilsonInterval(uint64_t x, uint64_t n, double level);

/// Clopper-Pearson exact interval from beta quantiles (Clopper and Pearson 1934);
/// lower is 0 when x == 0, upper is 1 when x == n. Same errors as WilsonInterval.
Result<Interval> ClopperPearsonInterval(uint64_t x, uint64_t n, double level);

/// How a finite-population (sample mode) interval is computed.
enum class SampleIntervalMethod {
  kWilsonFpc,       ///< Wilson with the finite-population correction (Cochran 1977)
  kHypergeometric,  ///< exact: hypergeometric tail inversion for the population count
};
/// "wilson_fpc" or "hypergeometric".
std::string_view SampleIntervalMethodName(SampleIntervalMethod method);

/// Wilson score interval for the share of a finite population of `population`
/// units, from x successes in a simple random sample of n drawn without
/// replacement: the Wilson formula with effective sample size
/// n * (N - 1) / (N - n), i.e. the binomial variance times (N - n) / (N - 1)
/// (Cochran 1977, Sampling Techniques, 3rd ed., section 3.2). When n == N the
/// interval is the point x / n. Bounds are clipped to the feasible range
/// [x / N, (N - n + x) / N]. InvalidArgument when n == 0, x > n, n > N or the
/// level is not in (0, 1).
Result<Interval> WilsonFpcInterval(uint64_t x, uint64_t n, uint64_t population,
                                   double level);

/// Largest population HypergeometricInterval accepts: Boost 1.74's
/// hypergeometric_distribution takes unsigned counts and computes n + M - N in
/// int, which overflows unless n + M <= INT_MAX; 2^30 - 1 keeps it safe for any
/// n, M <= N.
inline constexpr uint64_t kMaxExactPopulation = (uint64_t{1} << 30) - 1;

/// Exact interval for the same setting: the smallest and largest population
/// counts M whose hypergeometric tail probabilities P(X >= x | M) and
/// P(X <= x | M) exceed (1 - level) / 2, divided by N (the finite-population
/// analogue of Clopper-Pearson). Populations up to kMaxExactPopulation only:
/// InvalidArgument beyond.
Result<Interval> HypergeometricInterval(uint64_t x, uint64_t n, uint64_t population,
                                        double level);

/// Dispatches on `method`.
Result<Interval> SampleProportionInterval(SampleIntervalMethod method, uint64_t x,
                                          uint64_t n, uint64_t population, double level);

/// Newcombe's hybrid score interval for p1 - p2 of two independent proportions,
/// x1/n1 and x2/n2, built from the two Wilson intervals (Newcombe 1998,
/// Statistics in Medicine 17:873-890, method 10). Same errors as WilsonInterval.
Result<Interval> NewcombeDifferenceInterval(uint64_t x1, uint64_t n1, uint64_t x2,
                                            uint64_t n2, double level);

struct BootstrapOptions {
  double level = 0.95;
  uint32_t replicates = 10000;
  uint64_t seed = 1;
};

struct BootstrapResult {
  double estimate = 0.0;  ///< mean(a) - mean(b) on the data
  Interval interval;      ///< percentile interval of the replicates
  uint32_t replicates = 0;
};

/// Percentile bootstrap interval for mean(a) - mean(b) of two independent groups
/// (Efron and Tibshirani 1993, An Introduction to the Bootstrap, ch. 13): each
/// replicate resamples each group with replacement to its own size. Deterministic
/// for a given seed on every platform (mt19937_64 with our own unbiased bounded
/// draw; quantiles by linear interpolation between order statistics).
/// InvalidArgument when a group is empty, a value is not finite, replicates < 100
/// or the level is not in (0, 1).
Result<BootstrapResult> BootstrapMeanDifference(std::span<const double> a,
                                                std::span<const double> b,
                                                const BootstrapOptions& options);

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_STATS_H_
