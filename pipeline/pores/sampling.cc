// Random draws and percentiles of the pores stage.

#include "pipeline/pores/sampling.h"

#include <Eigen/Cholesky>
#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <functional>
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

void QuantilePairOf(const double* values, std::size_t n, double p_low, double p_high,
                    QuantileScratch* scratch, double* low, double* high) {
  const auto position = [n](double p) {
    return std::clamp(p, 0.0, 1.0) * static_cast<double>(n - 1);
  };
  const double pos_low = n > 0 ? position(p_low) : 0.0;
  const double pos_high = n > 0 ? position(p_high) : 0.0;
  const std::size_t k_low = static_cast<std::size_t>(std::floor(pos_low));
  const std::size_t k_high = static_cast<std::size_t>(std::floor(pos_high));
  const std::size_t lower_count = k_low + 2;   // order statistics 0 .. k_low + 1
  const std::size_t upper_count = n - k_high;  // order statistics k_high .. n - 1
  if (n > 0 && k_low < k_high && 4 * (lower_count + upper_count) <= n) {
    // Tails of a large sample (the 2.5 % / 97.5 % band): one pass keeping the lower_count
    // smallest values in a max-heap and the upper_count largest in a min-heap: O(n) with few
    // heap operations, instead of two full partitions.
    std::vector<double>& lower = scratch->lower;
    std::vector<double>& upper = scratch->upper;
    lower.assign(values, values + lower_count);
    upper.assign(values, values + upper_count);
    std::make_heap(lower.begin(), lower.end());
    std::make_heap(upper.begin(), upper.end(), std::greater<>());
    double lower_top = lower.front();
    double upper_top = upper.front();
    for (std::size_t i = std::min(lower_count, upper_count); i < n; ++i) {
      const double v = values[i];
      if (i >= lower_count && v < lower_top) {
        std::pop_heap(lower.begin(), lower.end());
        lower.back() = v;
        std::push_heap(lower.begin(), lower.end());
        lower_top = lower.front();
      }
      if (i >= upper_count && v > upper_top) {
        std::pop_heap(upper.begin(), upper.end(), std::greater<>());
        upper.back() = v;
        std::push_heap(upper.begin(), upper.end(), std::greater<>());
        upper_top = upper.front();
      }
    }
    std::sort(lower.begin(), lower.end());
    std::sort(upper.begin(), upper.end());
    const double v_low = lower[k_low];
    const double v_low_next = lower[k_low + 1];
    const double v_high = upper[0];
    const double v_high_next = upper_count > 1 ? upper[1] : v_high;
    *low = v_low + (pos_low - static_cast<double>(k_low)) * (v_low_next - v_low);
    *high = v_high + (pos_high - static_cast<double>(k_high)) * (v_high_next - v_high);
    return;
  }
  scratch->copy.assign(values, values + n);
  *low = Quantile(scratch->copy, p_low);
  scratch->copy.assign(values, values + n);
  *high = Quantile(scratch->copy, p_high);
}

void QuantilePair(std::vector<double>& values, double p_low, double p_high, double* low,
                  double* high) {
  QuantileScratch scratch;
  QuantilePairOf(values.data(), values.size(), p_low, p_high, &scratch, low, high);
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
