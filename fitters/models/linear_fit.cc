#include "fitters/models/linear_fit.h"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>

namespace sorbtrace::fitters::models {

LinearFit WeightedLinearLeastSquares(const std::vector<std::vector<double>>& design,
                                     const std::vector<double>& y,
                                     const std::vector<double>& weights) {
  LinearFit fit;
  if (design.empty() || design.size() != y.size() || y.size() != weights.size()) return fit;
  const Eigen::Index k = static_cast<Eigen::Index>(design.front().size());
  std::vector<Eigen::Index> rows;
  for (std::size_t i = 0; i < design.size(); ++i) {
    if (weights[i] > 0.0 && std::isfinite(weights[i]) && std::isfinite(y[i]) &&
        static_cast<Eigen::Index>(design[i].size()) == k &&
        std::all_of(design[i].begin(), design[i].end(), [](double v) { return std::isfinite(v); }))
      rows.push_back(static_cast<Eigen::Index>(i));
  }
  const Eigen::Index n = static_cast<Eigen::Index>(rows.size());
  if (k == 0 || n < k) return fit;
  Eigen::MatrixXd a(n, k);
  Eigen::VectorXd b(n);
  for (Eigen::Index r = 0; r < n; ++r) {
    const auto i = static_cast<std::size_t>(rows[static_cast<std::size_t>(r)]);
    const double sqrt_w = std::sqrt(weights[i]);
    for (Eigen::Index j = 0; j < k; ++j) a(r, j) = sqrt_w * design[i][static_cast<std::size_t>(j)];
    b(r) = sqrt_w * y[i];
  }
  const Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr(a);
  if (qr.rank() < k) return fit;
  const Eigen::VectorXd c = qr.solve(b);
  if (!c.allFinite()) return fit;
  fit.ok = true;
  fit.coefficients.assign(c.data(), c.data() + k);
  fit.weighted_ssr = (a * c - b).squaredNorm();
  return fit;
}

LinearFit WeightedStraightLine(const std::vector<double>& x, const std::vector<double>& y,
                               const std::vector<double>& weights) {
  std::vector<std::vector<double>> design;
  design.reserve(x.size());
  for (double xi : x) design.push_back({1.0, xi});
  return WeightedLinearLeastSquares(design, y, weights);
}

std::vector<Observation> PositivePointsInside(const std::vector<Observation>& observations,
                                              double x_low, double x_high) {
  std::vector<Observation> kept;
  for (const Observation& o : observations) {
    if (std::isfinite(o.x[0]) && o.x[0] > x_low && o.x[0] < x_high && std::isfinite(o.y) &&
        o.y > 0.0)
      kept.push_back(o);
  }
  return kept;
}

double MaxResponse(const std::vector<Observation>& observations) {
  double y_max = 0.0;
  for (const Observation& o : observations)
    if (std::isfinite(o.y)) y_max = std::max(y_max, o.y);
  return y_max;
}

double CandidateCost(const std::vector<Observation>& observations,
                     const std::function<double(const double* x)>& evaluate) {
  double cost = 0.0;
  for (const Observation& o : observations) {
    const double f = evaluate(o.x.data());
    const double sigma = o.sigma_y > 0.0 ? o.sigma_y : 1.0;
    const double r = (o.y - f) / sigma;
    if (!std::isfinite(r)) return kInfinity;
    cost += r * r;
  }
  return cost;
}

bool AllFinite(const std::vector<double>& values) {
  return std::all_of(values.begin(), values.end(), [](double v) { return std::isfinite(v); });
}

std::vector<double> ClampToBounds(std::vector<double> point, const ModelInfo& info) {
  for (std::size_t i = 0; i < point.size() && i < info.parameters.size(); ++i) {
    const ParameterSpec& spec = info.parameters[i];
    point[i] = std::clamp(point[i], spec.lower_bound, std::max(spec.lower_bound, spec.upper_bound));
  }
  return point;
}

std::vector<std::vector<double>> CleanStartingPoints(
    const std::vector<std::vector<double>>& candidates, const ModelInfo& info) {
  std::vector<std::vector<double>> points;
  for (const std::vector<double>& candidate : candidates) {
    if (candidate.size() != info.parameters.size() || !AllFinite(candidate)) continue;
    std::vector<double> point = ClampToBounds(candidate, info);
    if (std::find(points.begin(), points.end(), point) == points.end())
      points.push_back(std::move(point));
  }
  return points;
}

}  // namespace sorbtrace::fitters::models
