#include "fitters/internal/statistics.h"

#include <algorithm>
#include <boost/math/distributions/chi_squared.hpp>
#include <cmath>
#include <functional>
#include <limits>
#include <numeric>

#include "pipeline/common/student_t.h"

namespace sorbtrace::fitters::internal {
namespace {
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
}

RunsTestResult WaldWolfowitzRunsTest(const std::vector<double>& sequence) {
  RunsTestResult result;
  int previous_sign = 0;
  for (double value : sequence) {
    const int sign = value > 0.0 ? 1 : (value < 0.0 ? -1 : 0);
    if (sign == 0) continue;
    if (sign > 0) ++result.num_positive;
    if (sign < 0) ++result.num_negative;
    if (sign != previous_sign) ++result.runs;
    previous_sign = sign;
  }
  const double n1 = result.num_positive;
  const double n2 = result.num_negative;
  const double n = n1 + n2;
  if (n1 < 1.0 || n2 < 1.0 || n < 3.0) return result;
  const double mean = 2.0 * n1 * n2 / n + 1.0;
  const double variance = 2.0 * n1 * n2 * (2.0 * n1 * n2 - n) / (n * n * (n - 1.0));
  if (!(variance > 0.0)) return result;
  result.defined = true;
  result.z = (result.runs - mean) / std::sqrt(variance);
  result.p_value = std::min(1.0, std::erfc(std::abs(result.z) / std::sqrt(2.0)));
  return result;
}

double CoverageFactor(WeightConvention convention, int degrees_of_freedom,
                      double confidence_level) {
  if (!(confidence_level > 0.0 && confidence_level < 1.0)) return kNaN;
  // Known variance (kAbsolute): the normal quantile, the t of infinite degrees of freedom.
  if (convention == WeightConvention::kAbsolute) {
    return StudentTCoverageFactor(std::numeric_limits<double>::infinity(), confidence_level);
  }
  if (degrees_of_freedom < 1) return kNaN;
  return StudentTCoverageFactor(static_cast<double>(degrees_of_freedom), confidence_level);
}

double ChiSquareUpperTail(double value, int degrees_of_freedom) {
  if (degrees_of_freedom < 1 || !std::isfinite(value) || value < 0.0) return kNaN;
  return boost::math::cdf(boost::math::complement(
      boost::math::chi_squared_distribution<double>(static_cast<double>(degrees_of_freedom)),
      value));
}

namespace {

// Position of quantile q among `count` sorted values (type 7): index below and fraction.
void QuantilePosition(std::size_t count, double q, std::size_t* below, double* fraction) {
  const double position = std::clamp(q, 0.0, 1.0) * static_cast<double>(count - 1);
  *below = static_cast<std::size_t>(std::floor(position));
  *fraction = position - static_cast<double>(*below);
}

// Interpolated quantile from [first, last) once the element at `nth` is in its sorted place
// (everything after it not smaller): the next order statistic is the minimum of the rest.
double Interpolate(std::vector<double>::iterator nth, std::vector<double>::iterator last,
                   double fraction) {
  const double low = *nth;
  const double high = nth + 1 < last ? *std::min_element(nth + 1, last) : low;
  return low + fraction * (high - low);
}

}  // namespace

double Percentile(std::vector<double>* values, double q) {
  if (values->empty()) return kNaN;
  std::size_t below = 0;
  double fraction = 0.0;
  QuantilePosition(values->size(), q, &below, &fraction);
  // The two order statistics needed, without a full sort (NaN-free input: the same values a
  // sort would give).
  const auto nth = values->begin() + static_cast<std::ptrdiff_t>(below);
  std::nth_element(values->begin(), nth, values->end());
  return Interpolate(nth, values->end(), fraction);
}

namespace {

// The `count` smallest values (less = std::less) or largest (std::greater) of `values`, sorted
// in that order, by one pass with a heap of `count` elements: far cheaper than a selection over
// all values when count is a few percent of them.
template <typename Compare>
std::vector<double> Extremes(const std::vector<double>& values, std::size_t count,
                             Compare compare) {
  std::vector<double> heap(values.begin(), values.begin() + static_cast<std::ptrdiff_t>(count));
  std::make_heap(heap.begin(), heap.end(), compare);  // front: the least extreme kept
  for (std::size_t i = count; i < values.size(); ++i) {
    if (compare(values[i], heap.front())) {
      std::pop_heap(heap.begin(), heap.end(), compare);
      heap.back() = values[i];
      std::push_heap(heap.begin(), heap.end(), compare);
    }
  }
  std::sort_heap(heap.begin(), heap.end(), compare);
  return heap;
}

}  // namespace

void PercentilePair(std::vector<double>* values, double q_low, double q_high, double* low,
                    double* high) {
  if (values->empty() || !(q_low <= q_high)) {
    *low = Percentile(values, q_low);
    *high = Percentile(values, q_high);
    return;
  }
  const std::size_t count = values->size();
  std::size_t below_low = 0;
  std::size_t below_high = 0;
  double fraction_low = 0.0;
  double fraction_high = 0.0;
  QuantilePosition(count, q_low, &below_low, &fraction_low);
  QuantilePosition(count, q_high, &below_high, &fraction_high);
  // Order statistics below_low, below_low + 1 and below_high, below_high + 1 are needed.
  const std::size_t num_low = std::min(below_low + 2, count);
  const std::size_t num_high = count - below_high;
  if (8 * (num_low + num_high) <= count) {
    // Tails of a few percent (e.g. a 95 % interval): two heap passes.
    const std::vector<double> smallest = Extremes(*values, num_low, std::less<double>());
    const std::vector<double> largest = Extremes(*values, num_high, std::greater<double>());
    const double low_below = smallest[below_low];
    const double low_above = below_low + 1 < num_low ? smallest[below_low + 1] : low_below;
    *low = low_below + fraction_low * (low_above - low_below);
    // largest is in decreasing order: order statistic below_high is its last element.
    const double high_below = largest[num_high - 1];
    const double high_above = num_high >= 2 ? largest[num_high - 2] : high_below;
    *high = high_below + fraction_high * (high_above - high_below);
    return;
  }
  const auto nth_low = values->begin() + static_cast<std::ptrdiff_t>(below_low);
  std::nth_element(values->begin(), nth_low, values->end());
  *low = Interpolate(nth_low, values->end(), fraction_low);
  // Everything from nth_low on is not smaller than it: the upper order statistic lies there.
  const auto nth_high = values->begin() + static_cast<std::ptrdiff_t>(below_high);
  if (nth_high > nth_low) std::nth_element(nth_low + 1, nth_high, values->end());
  *high = Interpolate(nth_high, values->end(), fraction_high);
}

FitStatistics ComputeStatistics(const std::vector<Observation>& observations,
                                const std::vector<double>& residuals_y, double x_terms,
                                int num_parameters,
                                const std::vector<double>& residuals_at_observed_x) {
  FitStatistics s;
  const std::size_t count = observations.size();
  s.num_observations = static_cast<int>(count);
  s.num_parameters = num_parameters;
  s.degrees_of_freedom = s.num_observations - num_parameters;
  const double n = static_cast<double>(count);
  const double k = static_cast<double>(num_parameters);

  double sum_w = 0.0, sum_wy = 0.0, weighted_ssr_y = 0.0, relative_sum = 0.0;
  double descriptive_weighted_ssr = 0.0;
  int relative_count = 0;
  for (std::size_t i = 0; i < count; ++i) {
    const Observation& o = observations[i];
    const double w = 1.0 / (o.sigma_y * o.sigma_y);
    const double r = residuals_y[i];
    const double d = residuals_at_observed_x[i];
    sum_w += w;
    sum_wy += w * o.y;
    weighted_ssr_y += w * r * r;
    descriptive_weighted_ssr += w * d * d;
    s.ssr += d * d;
    if (o.y != 0.0) {
      relative_sum += std::abs(d) / std::abs(o.y);
      ++relative_count;
    }
  }
  const double y_mean_w = sum_w > 0.0 ? sum_wy / sum_w : 0.0;
  double sst_w = 0.0;
  for (const Observation& o : observations) {
    const double d = o.y - y_mean_w;
    sst_w += d * d / (o.sigma_y * o.sigma_y);
  }
  s.weighted_ssr = weighted_ssr_y + x_terms;
  s.rmse = count > 0 ? std::sqrt(s.ssr / n) : kNaN;
  s.residual_std = s.degrees_of_freedom > 0
                       ? std::sqrt(s.weighted_ssr / static_cast<double>(s.degrees_of_freedom))
                       : kNaN;
  s.r_squared = sst_w > 0.0 ? 1.0 - descriptive_weighted_ssr / sst_w : kNaN;
  s.adjusted_r_squared =
      s.degrees_of_freedom > 0 ? 1.0 - (1.0 - s.r_squared) * (n - 1.0) / (n - k) : kNaN;
  s.mean_relative_deviation_percent =
      relative_count > 0 ? 100.0 * relative_sum / static_cast<double>(relative_count) : kNaN;
  if (count > 0) {
    const double log_term = n * std::log(s.weighted_ssr / n);
    s.aic = log_term + 2.0 * k;
    s.aicc = (n - k - 1.0) > 0.0 ? s.aic + 2.0 * k * (k + 1.0) / (n - k - 1.0) : kNaN;
    s.bic = log_term + k * std::log(n);
  }
  s.chi_square_p_value = ChiSquareUpperTail(s.weighted_ssr, s.degrees_of_freedom);

  // Runs of residual signs, points ordered by x (x[0], then x[1]); stable for ties.
  std::vector<std::size_t> order(count);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    return observations[a].x < observations[b].x;
  });
  std::vector<double> ordered(count);
  for (std::size_t i = 0; i < count; ++i) ordered[i] = residuals_at_observed_x[order[i]];
  const RunsTestResult runs = WaldWolfowitzRunsTest(ordered);
  s.runs = runs.runs;
  s.runs_test_p_value = runs.p_value;
  return s;
}

}  // namespace sorbtrace::fitters::internal

namespace sorbtrace::fitters {

std::vector<double> AkaikeWeights(const std::vector<double>& aicc) {
  constexpr double kInfinityAicc = std::numeric_limits<double>::infinity();
  std::vector<double> weights(aicc.size(), 0.0);
  const auto takes_part = [](double a) { return !std::isnan(a) && a != kInfinityAicc; };
  double least = kInfinityAicc;
  for (double a : aicc) {
    if (takes_part(a)) least = std::min(least, a);
  }
  if (least == kInfinityAicc) return weights;
  double sum = 0.0;
  for (std::size_t i = 0; i < aicc.size(); ++i) {
    if (!takes_part(aicc[i])) continue;
    // Exact fits (least = -inf): equal weights among them, the limit of exp(-Delta / 2).
    const bool exact = std::isinf(least);
    weights[i] = exact ? (aicc[i] == least ? 1.0 : 0.0) : std::exp(-0.5 * (aicc[i] - least));
    sum += weights[i];
  }
  for (double& w : weights) w /= sum;
  return weights;
}

}  // namespace sorbtrace::fitters
