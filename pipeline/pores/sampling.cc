// Random draws and percentiles of the pores stage.

#include "pipeline/pores/sampling.h"

#include <Eigen/Cholesky>
#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <limits>

namespace sorbtrace::pores::internal {
namespace {
constexpr double kTwoPi = 6.283185307179586476925;
constexpr double kTwoToMinus53 = 1.0 / 9007199254740992.0;  // 2^-53
}  // namespace

double NormalSource::Uniform() { return static_cast<double>(engine_() >> 11) * kTwoToMinus53; }

double NormalSource::Normal() {
  if (has_spare_) {
    has_spare_ = false;
    return spare_;
  }
  // Box & Muller (1958): u1 in (0, 1] so that the logarithm is finite.
  const double u1 = 1.0 - Uniform();
  const double u2 = Uniform();
  const double radius = std::sqrt(-2.0 * std::log(u1));
  spare_ = radius * std::sin(kTwoPi * u2);
  has_spare_ = true;
  return radius * std::cos(kTwoPi * u2);
}

std::vector<std::vector<double>> MultivariateNormalDraws(
    const std::vector<double>& mean, const Eigen::MatrixXd& covariance, int num_draws,
    std::uint64_t seed, const std::vector<fitters::ParameterSpec>& specs) {
  const Eigen::Index p = static_cast<Eigen::Index>(mean.size());
  if (p == 0 || covariance.rows() != p || covariance.cols() != p || !covariance.allFinite() ||
      num_draws <= 0) {
    return {};
  }
  const Eigen::MatrixXd symmetric = 0.5 * (covariance + covariance.transpose());
  Eigen::MatrixXd factor;
  Eigen::LLT<Eigen::MatrixXd> llt(symmetric);
  if (llt.info() == Eigen::Success) {
    factor = llt.matrixL();
  } else {
    Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(symmetric);
    if (eigen.info() != Eigen::Success) return {};
    const Eigen::VectorXd root = eigen.eigenvalues().cwiseMax(0.0).cwiseSqrt();
    factor = eigen.eigenvectors() * root.asDiagonal();
  }
  NormalSource normal(seed);
  std::vector<std::vector<double>> draws;
  draws.reserve(static_cast<std::size_t>(num_draws));
  Eigen::VectorXd z(p);
  for (int d = 0; d < num_draws; ++d) {
    for (Eigen::Index i = 0; i < p; ++i) z(i) = normal.Normal();
    const Eigen::VectorXd delta = factor * z;
    std::vector<double> draw(mean.size());
    for (Eigen::Index i = 0; i < p; ++i) {
      const std::size_t k = static_cast<std::size_t>(i);
      double value = mean[k] + delta(i);
      if (k < specs.size()) value = std::clamp(value, specs[k].lower_bound, specs[k].upper_bound);
      draw[k] = value;
    }
    draws.push_back(std::move(draw));
  }
  return draws;
}

double Quantile(std::vector<double>& values, double p) {
  if (values.empty()) return std::numeric_limits<double>::quiet_NaN();
  const double position = std::clamp(p, 0.0, 1.0) * static_cast<double>(values.size() - 1);
  const std::size_t k = static_cast<std::size_t>(std::floor(position));
  const double fraction = position - static_cast<double>(k);
  std::nth_element(values.begin(), values.begin() + static_cast<std::ptrdiff_t>(k), values.end());
  const double low = values[k];
  if (fraction <= 0.0 || k + 1 >= values.size()) return low;
  const double high =
      *std::min_element(values.begin() + static_cast<std::ptrdiff_t>(k + 1), values.end());
  return low + fraction * (high - low);
}

double StandardDeviation(const std::vector<double>& values) {
  if (values.size() < 2) return 0.0;
  double mean = 0.0;
  for (double v : values) mean += v;
  mean /= static_cast<double>(values.size());
  double sum = 0.0;
  for (double v : values) sum += (v - mean) * (v - mean);
  return std::sqrt(sum / static_cast<double>(values.size() - 1));
}

}  // namespace sorbtrace::pores::internal
