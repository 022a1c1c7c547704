// Draws of an output quantity (Monte Carlo trials, bootstrap refits, band draws) reduced to the
// statement of that quantity, and the Student-t variate the draws of a Type A input with few
// degrees of freedom use. The one definition for the fitting engine's resampled intervals and
// for every uncertainty the pores stage takes from draws. Header only (Boost.Math is header
// only), so the fitting engine uses it without linking the pipeline's common library.
//
// Why percentiles and not the draws' standard deviation: an input whose value comes from a Type
// A evaluation with nu degrees of freedom is drawn from the scaled and shifted t distribution
// t_nu(x_bar, s^2 / n) (JCGM 101:2008, 6.4.9.7). For nu <= 2 that distribution has no finite
// variance (the variance of t_nu is nu / (nu - 2) for nu > 2 only), so a standard deviation of
// the draws does not converge as the number of draws grows and says nothing. Its quantiles are
// finite for every nu > 0. JCGM 101:2008 7.7 states the coverage interval from the draws'
// order statistics; the probabilistically symmetric interval (7.7.1: equal probability
// (1 - p) / 2 in each tail) is used here.
//
// The standard uncertainty u is the half-width of the central interval of probability
// P1 = erf(1 / sqrt(2)) = 0.682689... (the probability within one standard deviation of a
// normal distribution): the standard deviation for normal draws, and for the t_nu(x_bar,
// s^2 / n) of a Type A input about s / sqrt(n) itself (the 84.13 % point of t_nu is 1.32 for
// nu = 2, 1.09 for nu = 5, against 1 for the normal), i.e. close to the GUM's standard
// uncertainty of that input, which JCGM 100:2008 G.3 states as s / sqrt(n) and widens only
// through the coverage factor t_nu. The half-width U of the 95 % interval over u is then the
// draws' own coverage factor (1.96 for normal draws, 3.26 for t_2): heavy tails show in k, not
// in u. A choice of this project (JCGM 101 gives u as the standard deviation, 7.6, which does
// not exist for nu <= 2); measured in tests/coverage/resampled_coverage_test.cc: with three
// specimens (nu <= 2) the percentile-based U / 1.96 was 1.9 times the scatter of the estimates
// it describes, this u 1.1-1.3 times.
#pragma once

#include <algorithm>
#include <boost/math/distributions/students_t.hpp>
#include <cmath>
#include <cstddef>
#include <limits>
#include <span>
#include <vector>

namespace sorbtrace {

// What draws of one quantity state (DrawStatisticsOf).
struct DrawStatistics {
  std::size_t count = 0;               // finite draws used (non-finite draws are left out)
  double coverage_probability = 0.95;  // p
  double central = std::numeric_limits<double>::quiet_NaN();  // median: the 50 % point
  // Probabilistically symmetric coverage interval [q_{(1-p)/2}, q_{(1+p)/2}] (JCGM 101:2008,
  // 7.7.1), quantiles by linear interpolation between order statistics (R. J. Hyndman, Y. Fan,
  // Am. Stat. 50 (1996) 361, type 7).
  double low = std::numeric_limits<double>::quiet_NaN();
  double high = std::numeric_limits<double>::quiet_NaN();
  // U = (high - low) / 2: the half-width of that interval.
  double expanded_uncertainty = 0.0;
  // u: the half-width of the central interval of probability kOneSigmaProbability (see the file
  // comment): the standard deviation for normal draws (to within the sampling error of the
  // quantiles), finite for draws that have none. 0 with fewer than two finite draws or draws
  // whose central interval has zero width (nothing to state).
  double standard_uncertainty = 0.0;
  // k = U / u: the draws' own coverage factor for p (1.96 for normal draws, larger for heavy
  // tails); 0 where u is 0. A statement "value +- k' u" covers the draws' p interval for every
  // k' >= k (CoverageFactorOfDraws).
  double coverage_factor = 0.0;
};

// erf(1 / sqrt(2)): the probability of a normal distribution within one standard deviation of
// its mean (Abramowitz & Stegun 1964, 26.2.2 and Table 26.1: P(1) = 0.682689492).
inline constexpr double kOneSigmaProbability = 0.6826894921370859;

namespace internal {

// Type 7 quantile q of the sorted values (size n >= 1).
inline double SortedQuantile(const std::vector<double>& sorted, double q) {
  const double position = std::clamp(q, 0.0, 1.0) * static_cast<double>(sorted.size() - 1);
  const std::size_t below = static_cast<std::size_t>(std::floor(position));
  const double fraction = position - static_cast<double>(below);
  const double low = sorted[below];
  const double high = below + 1 < sorted.size() ? sorted[below + 1] : low;
  return low + fraction * (high - low);
}

}  // namespace internal

// The reduction of draws to {central value, coverage interval, U, u, k = U / u} at coverage
// probability p in (0, 1) (see DrawStatistics). Non-finite draws are left out (a refit that
// diverged is no draw of the quantity).
inline DrawStatistics DrawStatisticsOf(std::span<const double> draws, double coverage_probability) {
  DrawStatistics s;
  s.coverage_probability = coverage_probability;
  std::vector<double> sorted;
  sorted.reserve(draws.size());
  for (double v : draws) {
    if (std::isfinite(v)) sorted.push_back(v);
  }
  s.count = sorted.size();
  if (sorted.empty()) return s;
  std::sort(sorted.begin(), sorted.end());
  const double tail = 0.5 * (1.0 - coverage_probability);
  s.central = internal::SortedQuantile(sorted, 0.5);
  s.low = internal::SortedQuantile(sorted, tail);
  s.high = internal::SortedQuantile(sorted, 1.0 - tail);
  if (s.count < 2) return s;
  s.expanded_uncertainty = 0.5 * (s.high - s.low);
  const double one_sigma_tail = 0.5 * (1.0 - kOneSigmaProbability);
  s.standard_uncertainty = 0.5 * (internal::SortedQuantile(sorted, 1.0 - one_sigma_tail) -
                                  internal::SortedQuantile(sorted, one_sigma_tail));
  if (s.standard_uncertainty > 0.0) {
    s.coverage_factor = s.expanded_uncertainty / s.standard_uncertainty;
  }
  return s;
}

// The coverage factor of a statement "value +- k u" of draws reduced by DrawStatisticsOf: the
// larger of the nominal k (the sheet's, e.g. 2) and the draws' own U / u
// (DrawStatistics::coverage_factor; 0 = none), so that the stated interval is never narrower
// than the draws' coverage interval (heavy tails widen k, not u).
inline double CoverageFactorOfDraws(double draws_coverage_factor, double nominal_k) {
  return std::max(nominal_k, draws_coverage_factor);
}

// One draw of the standard Student-t distribution with nu > 0 degrees of freedom (any real nu,
// e.g. a Welch-Satterthwaite value) by inversion of its distribution function (the inverse
// transform; JCGM 101:2008, 6.4.9.7 and annex C, clause from memory) from one uniform value v in
// [0, 1) (53 random bits): v is moved to the middle of its 2^-53 cell, m = v + 2^-54, and the
// upper half is taken from the lower tail by symmetry, t(m) = -t(1 - m) with 1 - m formed from
// 1 - v (exact), so the quantile function never sees 0 or 1 (m itself would round to 1 at the top
// cell: the quantile overflows there) and the draw is always finite (|t| < 1e16 for nu = 1).
// Infinite nu: the standard normal quantile. The scaled and shifted t_nu(x_bar, s^2 / n) of a
// Type A input is x_bar + (s / sqrt(n)) times this: the standard uncertainty s / sqrt(n)
// itself, without the factor sqrt(nu / (nu - 2)) (JCGM 101:2008, 6.4.9.7).
inline double StudentTVariate(double uniform_0_1, double nu) {
  constexpr double kHalfCell = 0.5 / 9007199254740992.0;  // 2^-54: half of the 2^-53 cell
  const double v = std::clamp(uniform_0_1, 0.0, 1.0 - 2.0 * kHalfCell);
  const bool upper = v >= 0.5;
  const double tail = upper ? (1.0 - v) - kHalfCell : v + kHalfCell;  // in (0, 0.5]
  double lower_quantile = 0.0;
  if (!std::isfinite(nu)) {
    lower_quantile =
        boost::math::quantile(boost::math::normal_distribution<double>(0.0, 1.0), tail);
  } else {
    // Evaluated in double (no promotion to long double, Boost.Math's default): one inversion per
    // draw, where the promoted powl/ibeta were a fifth of a Monte Carlo run's time.
    using DoublePolicy =
        boost::math::policies::policy<boost::math::policies::promote_double<false>>;
    lower_quantile =
        boost::math::quantile(boost::math::students_t_distribution<double, DoublePolicy>(nu), tail);
  }
  return upper ? -lower_quantile : lower_quantile;
}

}  // namespace sorbtrace
