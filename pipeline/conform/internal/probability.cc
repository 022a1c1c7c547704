#include "pipeline/conform/internal/probability.h"

#include <boost/math/distributions/normal.hpp>
#include <boost/math/distributions/students_t.hpp>
#include <boost/math/tools/roots.hpp>
#include <cmath>
#include <cstdint>
#include <limits>
#include <utility>

namespace sorbtrace::conform::internal {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Bisection to 52 bits: the acceptance limit to double precision (IEEE 754 mantissa).
constexpr int kRootBits = 52;
constexpr std::uintmax_t kMaxRootIterations = 200;

}  // namespace

double StandardCdf(double z, double degrees_of_freedom) {
  if (std::isinf(z)) return z > 0 ? 1.0 : 0.0;
  if (std::isinf(degrees_of_freedom)) {
    return boost::math::cdf(boost::math::normal_distribution<double>(0.0, 1.0), z);
  }
  return boost::math::cdf(boost::math::students_t_distribution<double>(degrees_of_freedom), z);
}

double StandardQuantile(double p, double degrees_of_freedom) {
  if (std::isinf(degrees_of_freedom)) {
    return boost::math::quantile(boost::math::normal_distribution<double>(0.0, 1.0), p);
  }
  return boost::math::quantile(boost::math::students_t_distribution<double>(degrees_of_freedom), p);
}

double ConformanceProbability(double y, double u, double degrees_of_freedom, double lower,
                              double upper) {
  if (u == 0.0) return (y >= lower && y <= upper) ? 1.0 : 0.0;
  // Upper tail and lower tail separately (1 - F(z) via F(-z)): keeps small tail
  // probabilities accurate instead of differencing two numbers near 1.
  const double above = StandardCdf(-(upper - y) / u, degrees_of_freedom);
  const double below = StandardCdf((lower - y) / u, degrees_of_freedom);
  return std::max(0.0, 1.0 - above - below);
}

double UpperAcceptanceLimitTwoSided(double u, double degrees_of_freedom, double lower, double upper,
                                    double p_required) {
  const double mid = 0.5 * (lower + upper);
  auto excess = [&](double a) {
    return ConformanceProbability(a, u, degrees_of_freedom, lower, upper) - p_required;
  };
  if (excess(mid) < 0.0) return kNaN;
  // p_c(upper) <= 1/2 < p_required: the root lies in [mid, upper].
  std::uintmax_t iterations = kMaxRootIterations;
  const auto bracket = boost::math::tools::bisect(
      excess, mid, upper, boost::math::tools::eps_tolerance<double>(kRootBits), iterations);
  // The lower end of the bracket still satisfies p_c >= p_required.
  return excess(bracket.second) >= 0.0 ? bracket.second : bracket.first;
}

}  // namespace sorbtrace::conform::internal
