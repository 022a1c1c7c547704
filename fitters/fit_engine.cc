// FitModel: multi-start weighted least squares on one ceres::Problem, then covariance,
// intervals, statistics and guard-rail flags.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <exception>
#include <limits>

#include "fitters/fitter.h"
#include "fitters/internal/fit_workspace.h"
#include "fitters/internal/random.h"
#include "fitters/internal/statistics.h"
#include "fitters/numerical_failure.h"
#include "pipeline/common/number_text.h"

namespace sorbtrace::fitters {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Fixed state of the random stream of the multi-start perturbations (any constant works; this
// is the 64-bit golden-ratio constant of Knuth's multiplicative hashing).
constexpr std::uint64_t kMultistartStream = 0x9E3779B97F4A7C15ULL;
// Multi-start perturbations multiply each parameter by 10^u, u uniform in [-1, 1]: one decade
// either way (common practice for scale-free restarts).
constexpr double kPerturbationDecades = 1.0;

bool AllFinite(const std::vector<double>& v) {
  return std::all_of(v.begin(), v.end(), [](double x) { return std::isfinite(x); });
}

std::string CheckObservations(const Model& model, const std::vector<Observation>& observations) {
  for (std::size_t i = 0; i < observations.size(); ++i) {
    const Observation& o = observations[i];
    for (int k = 0; k < model.num_inputs(); ++k) {
      if (!std::isfinite(o.x[static_cast<std::size_t>(k)])) {
        return fmt::format("observation {}: x[{}] is not finite", i, k);
      }
    }
    if (!std::isfinite(o.y)) return fmt::format("observation {}: y is not finite", i);
    if (!(o.sigma_y > 0.0) || !std::isfinite(o.sigma_y)) {
      return fmt::format("observation {}: sigma_y = {} must be finite and > 0", i, o.sigma_y);
    }
    if (!(o.sigma_x0 >= 0.0) || !std::isfinite(o.sigma_x0)) {
      return fmt::format("observation {}: sigma_x0 = {} must be finite and >= 0", i, o.sigma_x0);
    }
  }
  return {};
}

// The base starting points followed by num_multistarts deterministic perturbations of each.
std::vector<std::vector<double>> ExpandStarts(const std::vector<std::vector<double>>& base,
                                              const ModelInfo& info, int num_multistarts) {
  std::vector<std::vector<double>> starts;
  internal::MultistartRandom random(kMultistartStream);
  for (const std::vector<double>& point : base) {
    starts.push_back(point);
    for (int k = 0; k < num_multistarts; ++k) {
      std::vector<double> perturbed = point;
      for (std::size_t j = 0; j < perturbed.size(); ++j) {
        const double u = 2.0 * random.Uniform() - 1.0;  // [-1, 1)
        const ParameterSpec& spec = info.parameters[j];
        if (perturbed[j] != 0.0) {
          perturbed[j] *= std::pow(10.0, kPerturbationDecades * u);
        } else if (std::isfinite(spec.lower_bound) && std::isfinite(spec.upper_bound)) {
          perturbed[j] = spec.lower_bound + 0.5 * (u + 1.0) * (spec.upper_bound - spec.lower_bound);
        } else {
          perturbed[j] = u;
        }
      }
      starts.push_back(std::move(perturbed));
    }
  }
  return starts;
}

const char* LossName(LossKind loss) {
  switch (loss) {
    case LossKind::kSquared:
      return "squared";
    case LossKind::kHuber:
      return "Huber";
    case LossKind::kSoftLOne:
      return "soft L1";
    case LossKind::kCauchy:
      return "Cauchy";
  }
  return "?";
}

FitResult FitModelUnguarded(const Model& model, const std::vector<Observation>& observations,
                            const ModelContext& context, const FitOptions& options) {
  FitResult result;
  result.model_name = model.name();
  result.weight_convention = options.weights;
  FitSummary& summary = result.summary;
  const ModelInfo& info = model.info();
  const int n = static_cast<int>(observations.size());
  const int p = model.num_parameters();

  std::string error;
  if (!options.IsValid(&error)) {
    summary.termination = FitTermination::kFailure;
    summary.message = "invalid fit options: " + error;
    summary.flags.push_back(summary.message);
    return result;
  }
  error = CheckObservations(model, observations);
  if (!error.empty()) {
    summary.termination = FitTermination::kFailure;
    summary.message = "invalid data: " + error;
    summary.flags.push_back(summary.message);
    return result;
  }
  if (n <= p) {
    summary.termination = FitTermination::kTooFewPoints;
    summary.message = fmt::format("too few points: n = {} <= p = {} parameters", n, p);
    summary.flags.push_back(summary.message);
    return result;
  }

  std::vector<std::vector<double>> base = options.starting_points.empty()
                                              ? model.StartingPoints(observations, context)
                                              : options.starting_points;
  std::erase_if(base, [&](const std::vector<double>& s) {
    return static_cast<int>(s.size()) != p || !AllFinite(s);
  });
  if (base.empty()) {
    summary.termination = FitTermination::kFailure;
    summary.message = fmt::format("no usable starting point (each needs {} finite values)", p);
    summary.flags.push_back(summary.message);
    return result;
  }
  const std::vector<std::vector<double>> starts = ExpandStarts(base, info, options.num_multistarts);

  internal::FitWorkspace workspace(model, observations, context, options);
  if (options.errors_in_variables && workspace.num_errors_in_variables() == 0) {
    summary.flags.emplace_back(
        "errors in variables requested but no point has sigma_x0 > 0: ordinary fit");
  }

  // Multi-start search; keep the lowest cost among converged starts (else among all).
  int best = -1;
  bool best_converged = false;
  double best_cost = std::numeric_limits<double>::infinity();
  std::vector<double> best_x0;
  for (const std::vector<double>& start : starts) {
    const internal::SolveOutcome outcome = workspace.Solve(start, nullptr);
    StartReport report;
    report.start = workspace.ClampToBounds(start);
    report.solution = workspace.parameters();
    report.cost = outcome.cost;
    report.iterations = outcome.iterations;
    report.converged = outcome.converged;
    report.termination = outcome.message;
    summary.starts.push_back(std::move(report));
    if (outcome.failed) continue;
    const bool better = (outcome.converged && !best_converged) ||
                        (outcome.converged == best_converged && outcome.cost < best_cost);
    if (better) {
      best = static_cast<int>(summary.starts.size()) - 1;
      best_converged = outcome.converged;
      best_cost = outcome.cost;
      best_x0 = workspace.x0_true();
    }
  }
  summary.starts_tried = static_cast<int>(summary.starts.size());
  if (best < 0) {
    summary.termination = FitTermination::kFailure;
    summary.message = fmt::format("all {} starts failed; first: {}", summary.starts_tried,
                                  summary.starts.front().termination);
    summary.flags.push_back(summary.message);
    return result;
  }
  const StartReport& chosen = summary.starts[static_cast<std::size_t>(best)];
  summary.iterations = chosen.iterations;
  summary.termination =
      best_converged ? FitTermination::kConverged : FitTermination::kNoConvergence;
  summary.message =
      fmt::format("start {} of {}: {}", best + 1, summary.starts_tried, chosen.termination);
  if (!best_converged) {
    summary.flags.push_back(
        fmt::format("no convergence: no start met the tolerances within {} iterations; best start "
                    "reported",
                    options.max_iterations));
  }

  // The solution and what follows from it.
  workspace.SetState(chosen.solution, &best_x0);
  result.parameters = chosen.solution;
  const std::vector<Observation>& data = workspace.data();
  result.fitted.resize(static_cast<std::size_t>(n));
  result.residuals.resize(static_cast<std::size_t>(n));
  result.fitted_x0.resize(static_cast<std::size_t>(n));
  result.x0_is_fitted = workspace.errors_in_variables_mask();
  double x_terms = 0.0;
  double sum_sigma2 = 0.0;
  std::vector<double>& residuals_at_observed_x = result.residuals_at_observed_x;
  residuals_at_observed_x.resize(static_cast<std::size_t>(n));
  int outside_range = 0;
  for (std::size_t i = 0; i < data.size(); ++i) {
    const Observation& o = data[i];
    const bool eiv = result.x0_is_fitted[i] != 0;
    std::array<double, kMaxInputs> x = o.x;
    if (eiv) {
      x[0] = best_x0[i];
      const double rx = (o.x[0] - x[0]) / o.sigma_x0;
      x_terms += rx * rx;
    }
    result.fitted_x0[i] = x[0];
    result.fitted[i] = model.Evaluate(result.parameters.data(), x.data(), context);
    result.residuals[i] = o.y - result.fitted[i];
    residuals_at_observed_x[i] =
        eiv ? o.y - model.Evaluate(result.parameters.data(), o.x.data(), context)
            : result.residuals[i];
    sum_sigma2 += o.sigma_y * o.sigma_y;
    if (o.x[0] < info.x_min || o.x[0] > info.x_max) ++outside_range;
  }
  result.mean_sigma_y_squared = sum_sigma2 / n;
  if (outside_range > 0) {
    summary.flags.push_back(fmt::format("{} of {} points outside the model's range x = {} .. {}",
                                        outside_range, n, info.x_min, info.x_max));
  }
  result.statistics =
      internal::ComputeStatistics(data, result.residuals, x_terms, p, residuals_at_observed_x);
  const FitStatistics& stats = result.statistics;
  if (!AllFinite(result.fitted)) summary.flags.emplace_back("model not finite at some data points");

  // Covariance.
  const double s2 = stats.weighted_ssr / stats.degrees_of_freedom;
  Eigen::MatrixXd unscaled;
  std::string covariance_error;
  summary.covariance_available = workspace.ComputeCovariance(&unscaled, &covariance_error);
  if (options.weights == WeightConvention::kRelative) {
    summary.covariance_convention = fmt::format(
        "relative weights: C = s^2 (J'J)^-1, s^2 = weighted SSR / (n - p) = {}; "
        "Student-t intervals, {} degrees of freedom",
        common::FormatSignificant(s2, common::kDiagnosticDigits), stats.degrees_of_freedom);
  } else {
    summary.covariance_convention = fmt::format(
        "absolute uncertainties: C = (J'J)^-1 unscaled; normal coverage factor; chi-square "
        "check: weighted SSR = {} on {} degrees of freedom, p = {}",
        common::FormatSignificant(stats.weighted_ssr, common::kDiagnosticDigits),
        stats.degrees_of_freedom,
        common::FormatProbability(stats.chi_square_p_value, common::kProbabilityDigits));
  }
  if (options.loss != LossKind::kSquared) {
    summary.covariance_convention +=
        fmt::format("; robust {} loss (scale {}): Jacobian robustified as in Ceres",
                    LossName(options.loss), options.loss_scale);
  }
  if (summary.covariance_available) {
    result.covariance =
        options.weights == WeightConvention::kRelative ? Eigen::MatrixXd(s2 * unscaled) : unscaled;
    result.correlation.resize(p, p);
    for (int a = 0; a < p; ++a) {
      for (int b = 0; b < p; ++b) {
        const double d = std::sqrt(result.covariance(a, a) * result.covariance(b, b));
        result.correlation(a, b) = d > 0.0 ? result.covariance(a, b) / d : kNaN;
      }
    }
  } else {
    summary.flags.push_back("covariance unavailable: " + covariance_error);
  }
  result.coverage_factor =
      internal::CoverageFactor(options.weights, stats.degrees_of_freedom, options.confidence_level);

  // Estimates, bounds.
  for (int j = 0; j < p; ++j) {
    const ParameterSpec& spec = info.parameters[static_cast<std::size_t>(j)];
    ParameterEstimate e;
    e.name = spec.name;
    e.unit = spec.unit;
    e.value = result.parameters[static_cast<std::size_t>(j)];
    e.standard_error = summary.covariance_available ? std::sqrt(result.covariance(j, j)) : kNaN;
    e.interval_low = e.value - result.coverage_factor * e.standard_error;
    e.interval_high = e.value + result.coverage_factor * e.standard_error;
    if (summary.covariance_available && !(e.standard_error <= std::abs(e.value))) {
      // Relative standard error above 100 %: common practice for "not determined".
      summary.flags.push_back(fmt::format(
          "parameter {} = {} poorly determined: standard error {} exceeds its value", e.name,
          common::FormatAtUncertainty(e.value, e.standard_error,
                                      common::kUncertaintySignificantDigits),
          common::FormatSignificant(e.standard_error, common::kUncertaintySignificantDigits)));
    }
    if (options.use_bounds) {
      const auto near = [&](double bound) {
        return std::isfinite(bound) && std::abs(e.value - bound) <=
                                           options.bound_tolerance * std::max(1.0, std::abs(bound));
      };
      if (near(spec.lower_bound) || near(spec.upper_bound)) {
        e.at_bound = true;
        summary.flags.push_back(fmt::format(
            "parameter {} = {} at its bound [{}, {}]: its interval is not reliable", e.name,
            common::FormatSignificant(e.value, common::kDiagnosticDigits),
            common::FormatSetting(spec.lower_bound), common::FormatSetting(spec.upper_bound)));
      }
    }
    result.estimates.push_back(std::move(e));
  }
  if (!std::isfinite(stats.aicc)) {
    summary.flags.emplace_back("AICc undefined: n - p - 1 <= 0");
  }
  if (options.weights == WeightConvention::kAbsolute && std::isfinite(stats.chi_square_p_value) &&
      stats.chi_square_p_value < 0.05) {
    // 5 % significance: common practice.
    summary.flags.push_back(fmt::format(
        "chi-square check fails: weighted SSR = {} on {} degrees of freedom (p = {}); "
        "stated uncertainties too small or model inadequate",
        common::FormatSignificant(stats.weighted_ssr, common::kDiagnosticDigits),
        stats.degrees_of_freedom,
        common::FormatProbability(stats.chi_square_p_value, common::kProbabilityDigits)));
  }
  for (const std::string& flag : model.PhysicalFlags(result.parameters.data())) {
    summary.flags.push_back(kPhysicsFlagPrefix + flag);
  }
  return result;
}

}  // namespace

bool FitOptions::IsValid(std::string* error) const {
  const auto fail = [&](const std::string& what) {
    if (error != nullptr) *error = what;
    return false;
  };
  if (max_iterations < 1) return fail("max_iterations must be >= 1");
  if (!(function_tolerance >= 0.0) || !(gradient_tolerance >= 0.0) ||
      !(parameter_tolerance >= 0.0)) {
    return fail("tolerances must be >= 0");
  }
  if (!(loss_scale > 0.0) || !std::isfinite(loss_scale)) return fail("loss_scale must be > 0");
  if (!(scaled_step_tolerance >= 0.0) || !std::isfinite(scaled_step_tolerance)) {
    return fail("scaled_step_tolerance must be >= 0");
  }
  if (scaled_step_tolerance > 0.0 &&
      !std::all_of(parameter_scale.begin(), parameter_scale.end(),
                   [](double v) { return v > 0.0 && std::isfinite(v); })) {
    return fail("parameter_scale must hold positive finite values");
  }
  if (num_multistarts < 0) return fail("num_multistarts must be >= 0");
  if (!(confidence_level > 0.0 && confidence_level < 1.0)) {
    return fail("confidence_level must be in (0, 1)");
  }
  if (!(covariance_min_reciprocal_condition_number > 0.0 &&
        covariance_min_reciprocal_condition_number < 1.0)) {
    return fail("covariance_min_reciprocal_condition_number must be in (0, 1)");
  }
  if (!(bound_tolerance >= 0.0)) return fail("bound_tolerance must be >= 0");
  if (!(initial_trust_region_radius > 0.0) || !std::isfinite(initial_trust_region_radius)) {
    return fail("initial_trust_region_radius must be finite and > 0");
  }
  return true;
}

std::string FitSummary::BriefReport() const {
  const char* status = "failure";
  switch (termination) {
    case FitTermination::kConverged:
      status = "converged";
      break;
    case FitTermination::kNoConvergence:
      status = "no convergence";
      break;
    case FitTermination::kFailure:
      status = "failure";
      break;
    case FitTermination::kTooFewPoints:
      status = "too few points";
      break;
  }
  std::string text =
      fmt::format("{}: {} ({} starts, {} iterations, covariance {})", status, message, starts_tried,
                  iterations, covariance_available ? "available" : "unavailable");
  for (const std::string& flag : flags) text += "\n  flag: " + flag;
  return text;
}

std::vector<char> ErrorsInVariablesMask(const std::vector<Observation>& observations,
                                        const FitOptions& options) {
  std::vector<char> mask(observations.size(), 0);
  for (std::size_t i = 0; i < observations.size(); ++i) {
    mask[i] = options.errors_in_variables && observations[i].sigma_x0 > 0.0 ? 1 : 0;
  }
  return mask;
}

FitResult FitModel(const Model& model, const std::vector<Observation>& observations,
                   const ModelContext& context, const FitOptions& options) {
  try {
    return FitModelUnguarded(model, observations, context, options);
  } catch (...) {  // a numerical failure becomes a failed fit; a bug propagates
    FitResult result;
    result.model_name = model.name();
    result.summary.termination = FitTermination::kFailure;
    result.summary.message = "numerical failure in the fit: " + NumericalFailureMessage();
    result.summary.flags.push_back(result.summary.message);
    return result;
  }
}

}  // namespace sorbtrace::fitters
