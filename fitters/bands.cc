// DeltaMethodBand: first-order (delta method) confidence and prediction bands.
#include <cmath>
#include <limits>

#include "fitters/fitter.h"
#include "fitters/internal/statistics.h"

namespace sorbtrace::fitters {

std::vector<BandPoint> DeltaMethodBand(const Model& model, const FitResult& fit,
                                       const ModelContext& context,
                                       const std::vector<double>& x_grid, double confidence_level) {
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  std::vector<BandPoint> band;
  const int p = model.num_parameters();
  if (static_cast<int>(fit.parameters.size()) != p) return band;  // no solution to draw
  const bool have_covariance =
      fit.summary.covariance_available && fit.covariance.rows() == p && fit.covariance.cols() == p;
  const int dof = fit.statistics.degrees_of_freedom;
  const double k = internal::CoverageFactor(fit.weight_convention, dof, confidence_level);
  const double s2 = dof > 0 ? fit.statistics.weighted_ssr / dof : kNaN;
  const double new_point_variance = fit.weight_convention == WeightConvention::kRelative
                                        ? s2 * fit.mean_sigma_y_squared
                                        : fit.mean_sigma_y_squared;
  Eigen::VectorXd gradient(p);
  band.reserve(x_grid.size());
  for (double x0 : x_grid) {
    const double x[kMaxInputs] = {x0, 0.0};
    BandPoint point;
    point.x = x0;
    point.y = model.Evaluate(fit.parameters.data(), x, context);
    if (have_covariance) {
      model.Gradient(fit.parameters.data(), x, context, gradient.data());
      const double variance = std::max(0.0, gradient.dot(fit.covariance * gradient));
      const double half = k * std::sqrt(variance);
      const double half_prediction = k * std::sqrt(variance + new_point_variance);
      point.confidence_low = point.y - half;
      point.confidence_high = point.y + half;
      point.prediction_low = point.y - half_prediction;
      point.prediction_high = point.y + half_prediction;
    } else {
      point.confidence_low = point.confidence_high = kNaN;
      point.prediction_low = point.prediction_high = kNaN;
    }
    band.push_back(point);
  }
  return band;
}

}  // namespace sorbtrace::fitters
