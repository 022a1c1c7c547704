// Internal to the pores stage: deterministic random draws and percentiles. The normal
// variates come from std::mt19937_64 through our own Box-Muller transform, so the numbers do
// not depend on the standard library's distributions.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <random>
#include <vector>

#include "fitters/model.h"
#include "pipeline/common/draw_statistics.h"

namespace sorbtrace::pores::internal {

class NormalSource {
 public:
  explicit NormalSource(std::uint64_t seed) : engine_(seed) {}
  double Uniform();  // [0, 1), 53 random bits
  double Normal();   // standard normal (Box-Muller, both variates used)

 private:
  std::mt19937_64 engine_;
  bool has_spare_ = false;
  double spare_ = 0.0;
};

// num_draws parameter vectors from N(mean, covariance) by the Cholesky factor (Eigen LLT; for a
// covariance that is not positive definite, the symmetric square root with negative
// eigenvalues set to 0). Each draw is clamped to the parameter bounds in `specs` (may be
// empty). Returns {} when the covariance does not match the mean or is not finite.
std::vector<std::vector<double>> MultivariateNormalDraws(
    const std::vector<double>& mean, const Eigen::MatrixXd& covariance, int num_draws,
    std::uint64_t seed, const std::vector<fitters::ParameterSpec>& specs);

// Quantile p (0..1) with linear interpolation between order statistics (Hyndman & Fan 1996
// type 7). Reorders `values`. NaN for an empty vector.
double Quantile(std::vector<double>& values, double p);

// Quantiles p_low <= p_high of the same values in one pass (as Quantile). Reorders `values`.
void QuantilePair(std::vector<double>& values, double p_low, double p_high, double* low,
                  double* high);

// As QuantilePair on values[0..n), without modifying them; `scratch` holds reusable buffers
// (for loops over many columns).
struct QuantileScratch {
  std::vector<double> lower, upper, copy;
};
void QuantilePairOf(const double* values, std::size_t n, double p_low, double p_high,
                    QuantileScratch* scratch, double* low, double* high);

// Sample standard deviation (n - 1); 0 for fewer than two values. For ordering only (the
// stepwise merge's |z|); an uncertainty stated from draws is DrawStatisticsOf
// (pipeline/common/draw_statistics.h), finite also where the draws have no variance.
double StandardDeviation(const std::vector<double>& values);

}  // namespace sorbtrace::pores::internal
