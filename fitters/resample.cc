// Resample: residual and case bootstrap and JCGM 101 Monte Carlo, each draw refitted on one
// reused FitWorkspace (its dense solver, or its ceres::Problem) warm-started at the full-data
// solution.
#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <string>

#include "fitters/fitter.h"
#include "fitters/internal/fit_workspace.h"
#include "fitters/internal/random.h"
#include "fitters/internal/statistics.h"

namespace sorbtrace::fitters {

ResampleResult Resample(const Model& model, const std::vector<Observation>& observations,
                        const ModelContext& context, const FitResult& full_fit,
                        const FitOptions& fit_options, const ResampleOptions& options,
                        const std::vector<double>& x_grid) {
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  ResampleResult result;
  result.x_grid = x_grid;
  const int p = model.num_parameters();
  const std::size_t n = observations.size();
  const std::size_t pp = static_cast<std::size_t>(p);
  const int num_resamples = std::max(0, options.num_resamples);
  result.parameter_low.assign(pp, kNaN);
  result.parameter_high.assign(pp, kNaN);
  result.parameter_std.assign(pp, kNaN);
  result.studentized_low.assign(pp, kNaN);
  result.studentized_high.assign(pp, kNaN);
  result.curve_low.assign(x_grid.size(), kNaN);
  result.curve_high.assign(x_grid.size(), kNaN);
  if (!full_fit.ok() || full_fit.parameters.size() != pp || full_fit.residuals.size() != n ||
      full_fit.fitted_x0.size() != n || static_cast<int>(n) <= p || !fit_options.IsValid(nullptr)) {
    result.num_failed = num_resamples;
    return result;
  }

  const int dof = static_cast<int>(n) - p;
  const bool relative = fit_options.weights == WeightConvention::kRelative;
  const double s = relative ? std::sqrt(full_fit.statistics.weighted_ssr / dof) : 1.0;

  // Centred, variance-corrected weighted residuals for the residual bootstrap.
  std::vector<double> weighted_residuals(n);
  for (std::size_t i = 0; i < n; ++i) {
    weighted_residuals[i] = full_fit.residuals[i] / observations[i].sigma_y;
  }
  const double mean_residual =
      std::accumulate(weighted_residuals.begin(), weighted_residuals.end(), 0.0) /
      static_cast<double>(n);
  const double inflation = std::sqrt(static_cast<double>(n) / dof);
  for (double& e : weighted_residuals) e = (e - mean_residual) * inflation;

  internal::FitWorkspace workspace(model, observations, context, fit_options);
  internal::Random random(options.seed);

  // Full-data standard errors in the studentised form (s^2 (J'J)^-1 at the reported solution).
  const bool studentize = options.kind != ResampleKind::kMonteCarloInputs;
  std::vector<double> se_hat(pp, kNaN);
  Eigen::MatrixXd covariance;
  if (studentize) {
    workspace.SetState(full_fit.parameters, &full_fit.fitted_x0);
    std::string error;
    if (workspace.ComputeCovariance(&covariance, &error)) {
      const double s2_hat = full_fit.statistics.weighted_ssr / dof;
      for (std::size_t j = 0; j < pp; ++j) {
        se_hat[j] = std::sqrt(s2_hat * covariance(static_cast<Eigen::Index>(j),
                                                  static_cast<Eigen::Index>(j)));
      }
    }
  }
  const bool studentize_ok =
      studentize && std::all_of(se_hat.begin(), se_hat.end(),
                                [](double se) { return std::isfinite(se) && se > 0.0; });
  std::vector<std::vector<double>> pivots(studentize_ok ? pp : 0);
  std::vector<double> x0_start(n);
  std::vector<std::size_t> source(n);
  for (int b = 0; b < num_resamples; ++b) {
    std::vector<Observation>& data = workspace.data();
    switch (options.kind) {
      case ResampleKind::kResidualBootstrap:
        for (std::size_t i = 0; i < n; ++i) {
          data[i] = observations[i];
          data[i].y =
              full_fit.fitted[i] + observations[i].sigma_y * weighted_residuals[random.Index(n)];
          x0_start[i] = full_fit.fitted_x0[i];
        }
        break;
      case ResampleKind::kCaseBootstrap:
        for (std::size_t i = 0; i < n; ++i) {
          source[i] = random.Index(n);
          data[i] = observations[source[i]];
          x0_start[i] = full_fit.fitted_x0[source[i]];
        }
        break;
      case ResampleKind::kMonteCarloInputs:
        for (std::size_t i = 0; i < n; ++i) {
          data[i] = observations[i];
          data[i].y += s * observations[i].sigma_y * random.Normal();
          if (observations[i].sigma_x0 > 0.0) {
            data[i].x[0] += s * observations[i].sigma_x0 * random.Normal();
          }
          x0_start[i] = full_fit.fitted_x0[i];
        }
        break;
    }
    workspace.DataChanged();
    const internal::SolveOutcome outcome = workspace.Solve(full_fit.parameters, &x0_start);
    if (outcome.converged) {
      result.parameter_draws.push_back(workspace.parameters());
      double weighted_ssr = 0.0;
      if (studentize_ok && workspace.LastSolveCovariance(&covariance, &weighted_ssr)) {
        const double s2 = weighted_ssr / dof;
        const std::vector<double>& draw = result.parameter_draws.back();
        bool usable = std::isfinite(s2) && s2 > 0.0;
        for (std::size_t j = 0; j < pp && usable; ++j) {
          const Eigen::Index jj = static_cast<Eigen::Index>(j);
          usable = covariance(jj, jj) > 0.0;
        }
        if (usable) {
          for (std::size_t j = 0; j < pp; ++j) {
            const Eigen::Index jj = static_cast<Eigen::Index>(j);
            pivots[j].push_back((draw[j] - full_fit.parameters[j]) /
                                std::sqrt(s2 * covariance(jj, jj)));
          }
          ++result.num_studentized;
        }
      }
    } else {
      ++result.num_failed;
    }
  }

  const std::size_t draws = result.parameter_draws.size();
  if (draws < 2) return result;
  const double alpha = 1.0 - options.confidence_level;
  std::vector<double> column(draws);
  for (std::size_t j = 0; j < pp; ++j) {
    double mean = 0.0;
    for (std::size_t d = 0; d < draws; ++d) {
      column[d] = result.parameter_draws[d][j];
      mean += column[d];
    }
    mean /= static_cast<double>(draws);
    double sum2 = 0.0;
    for (double v : column) sum2 += (v - mean) * (v - mean);
    result.parameter_std[j] = std::sqrt(sum2 / static_cast<double>(draws - 1));
    internal::PercentilePair(&column, 0.5 * alpha, 1.0 - 0.5 * alpha, &result.parameter_low[j],
                             &result.parameter_high[j]);
    if (studentize_ok && pivots[j].size() >= 2) {
      double t_low = kNaN, t_high = kNaN;
      internal::PercentilePair(&pivots[j], 0.5 * alpha, 1.0 - 0.5 * alpha, &t_low, &t_high);
      result.studentized_low[j] = full_fit.parameters[j] - t_high * se_hat[j];
      result.studentized_high[j] = full_fit.parameters[j] - t_low * se_hat[j];
    }
  }
  for (std::size_t g = 0; g < x_grid.size(); ++g) {
    const double x[kMaxInputs] = {x_grid[g], 0.0};
    for (std::size_t d = 0; d < draws; ++d) {
      column[d] = model.Evaluate(result.parameter_draws[d].data(), x, context);
    }
    internal::PercentilePair(&column, 0.5 * alpha, 1.0 - 0.5 * alpha, &result.curve_low[g],
                             &result.curve_high[g]);
  }
  return result;
}

}  // namespace sorbtrace::fitters
