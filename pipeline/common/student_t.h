// The two-sided Student-t coverage factor, the one definition used by the uncertainty budgets
// (reduce::StudentTCoverageFactor, reduce::CoverageFactor) and the fitting engine's parameter
// intervals and bands (fitters internal CoverageFactor). Header only (Boost.Math is header
// only), so the fitting engine uses it without linking the pipeline's common library.
#pragma once

#include <boost/math/distributions/normal.hpp>
#include <boost/math/distributions/students_t.hpp>
#include <cmath>

namespace sorbtrace {

// k_p = t_{(1+p)/2}(nu): the quantile of Student's t with `degrees_of_freedom` nu (not
// truncated) at (1 + p) / 2, so that [-k_p, k_p] holds the coverage probability p (JCGM
// 100:2008, G.3.4); the standard normal quantile for infinite nu (the limit of t). p in (0, 1)
// and nu > 0 (Boost.Math raises std::domain_error otherwise).
inline double StudentTCoverageFactor(double degrees_of_freedom, double coverage_probability) {
  const double upper = 0.5 * (1.0 + coverage_probability);
  if (!std::isfinite(degrees_of_freedom)) {
    return boost::math::quantile(boost::math::normal_distribution<double>(0.0, 1.0), upper);
  }
  return boost::math::quantile(boost::math::students_t_distribution<double>(degrees_of_freedom),
                               upper);
}

}  // namespace sorbtrace
