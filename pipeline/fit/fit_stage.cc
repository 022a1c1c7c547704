// The fit stage: every requested model on every group (branch x temperature), then the AICc
// ranking. Grouping and point selection are in grouping.cc.
#include "pipeline/fit/fit_stage.h"

#include <fmt/format.h>
#include <fmt/ranges.h>

#include <Eigen/Cholesky>
#include <Eigen/Core>
#include <algorithm>
#include <array>
#include <cmath>
#include <exception>
#include <set>
#include <string_view>
#include <thread>
#include <utility>

#include "fitters/models/bet.h"
#include "fitters/numerical_failure.h"
#include "fitters/registry.h"
#include "pipeline/common/number_text.h"
#include "pipeline/fit/grouping.h"

namespace sorbtrace::fit {
namespace {

// Purposes of the random streams of one (group, model): independent draws for the bootstrap
// and for the Monte Carlo propagation.
constexpr int kBootstrapStream = 1;
constexpr int kMonteCarloStream = 2;

void AddFlag(std::vector<std::string>* flags, std::string flag) {
  if (std::find(flags->begin(), flags->end(), flag) == flags->end()) {
    flags->push_back(std::move(flag));
  }
}

Diagnostic Warning(std::string message) {
  Diagnostic diagnostic;
  diagnostic.severity = Severity::kWarning;
  diagnostic.message = std::move(message);
  return diagnostic;
}

std::string GroupName(const FitGroup& group) {
  return fmt::format("{} at {:.2f} K", ingest::BranchName(group.branch), group.temperature_K);
}

// band_points values evenly spaced over [low, high] (low alone for one point).
std::vector<double> Grid(double low, double high, int band_points) {
  std::vector<double> grid;
  if (band_points <= 0 || !(high >= low)) return grid;
  grid.reserve(static_cast<std::size_t>(band_points));
  if (band_points == 1) {
    grid.push_back(low);
    return grid;
  }
  const double step = (high - low) / (band_points - 1);
  for (int i = 0; i < band_points; ++i)
    grid.push_back(i + 1 == band_points ? high : low + i * step);
  return grid;
}

fitters::FitOptions EngineOptions(const FitStageOptions& options) {
  fitters::FitOptions fit_options;
  fit_options.loss = options.loss;
  fit_options.loss_scale = options.loss_scale;
  fit_options.errors_in_variables = options.errors_in_variables;
  fit_options.weights = options.weights;
  fit_options.confidence_level = options.confidence_level;
  fit_options.num_multistarts = options.num_multistarts;
  return fit_options;
}

// The Rouquerol criteria of a BET fit as consistency checks.
std::vector<ConsistencyCheck> BetConsistency(const fitters::FitResult& result,
                                             const std::vector<fitters::Observation>& points) {
  const double x_m = result.parameters[0];
  const double c = result.parameters[1];
  const fitters::models::RouquerolCriteria criteria =
      fitters::models::CheckRouquerolCriteria(x_m, c, points);
  std::vector<ConsistencyCheck> checks(4);
  checks[0].criterion = "BET constant C > 0 (Rouquerol criterion 1)";
  checks[0].passed = criteria.c_positive;
  checks[0].detail = "C = " + common::FormatSignificant(c, common::kDiagnosticDigits);
  checks[1].criterion =
      "u (1 - RH) increases monotonically with RH over the fitted points (Rouquerol criterion 2)";
  checks[1].passed = criteria.monotonic;
  double rh_low = fitters::kInfinity, rh_high = -fitters::kInfinity;
  for (const fitters::Observation& point : points) {
    rh_low = std::min(rh_low, point.x[0]);
    rh_high = std::max(rh_high, point.x[0]);
  }
  checks[1].detail =
      fmt::format("{} points from RH {:.4f} to {:.4f}", points.size(), rh_low, rh_high);
  checks[2].criterion =
      "the RH at which u = X_m lies inside the fitted RH range (Rouquerol criterion 3)";
  checks[2].passed = criteria.monolayer_in_range;
  checks[2].detail = std::isnan(criteria.measured_rh_at_monolayer)
                         ? fmt::format("X_m = {} kg/kg is outside the measured moisture range",
                                       common::FormatSignificant(x_m, common::kDiagnosticDigits))
                         : fmt::format("u = X_m = {} kg/kg at RH {:.4f}",
                                       common::FormatSignificant(x_m, common::kDiagnosticDigits),
                                       criteria.measured_rh_at_monolayer);
  checks[3].criterion =
      "1 / (sqrt(C) + 1) agrees with the RH at u = X_m within 10 % (Rouquerol criterion 4)";
  checks[3].passed = criteria.monolayer_position_consistent;
  checks[3].detail =
      std::isnan(criteria.relative_difference)
          ? fmt::format("1 / (sqrt(C) + 1) = {:.4f}; no measured RH at u = X_m",
                        criteria.bet_rh_at_monolayer)
          : fmt::format("1 / (sqrt(C) + 1) = {:.4f}, measured {:.4f}, difference {:.1f} %",
                        criteria.bet_rh_at_monolayer, criteria.measured_rh_at_monolayer,
                        100.0 * criteria.relative_difference);
  return checks;
}

// The group's specimen factors restricted to a model's observations (weights re-indexed);
// factors that act on none of them are left out.
std::vector<SpecimenFactor> FactorsOf(const FitGroup& group, const std::vector<int>& used) {
  std::vector<SpecimenFactor> factors;
  for (const SpecimenFactor& factor : group.specimen_factors) {
    SpecimenFactor restricted = factor;
    restricted.weights.clear();
    bool acts = false;
    for (const int i : used) {
      const double w = factor.weights[static_cast<std::size_t>(i)];
      restricted.weights.push_back(w);
      acts = acts || w != 0.0;
    }
    if (acts && factor.relative_standard_uncertainty > 0.0)
      factors.push_back(std::move(restricted));
  }
  return factors;
}

// Welch-Satterthwaite (JCGM 100:2008, G.2b) over the independent variance, of which
// type_a_variance has nu_ind degrees of freedom and the rest infinitely many, and the specimen
// factors' contributions c_k (nu_k): u^4 / sum (c^4 / nu).
double EffectiveDof(double independent_variance, double type_a_variance, double independent_dof,
                    const std::vector<double>& contributions,
                    const std::vector<SpecimenSensitivity>& sensitivities) {
  double total = std::max(0.0, independent_variance);
  double denominator = 0.0;
  if (std::isfinite(independent_dof) && independent_dof > 0.0) {
    denominator += type_a_variance * type_a_variance / independent_dof;
  }
  for (std::size_t k = 0; k < contributions.size(); ++k) {
    const double c2 = contributions[k] * contributions[k];
    total += c2;
    const double nu = sensitivities[k].degrees_of_freedom;
    if (std::isfinite(nu) && nu > 0.0) denominator += c2 * c2 / nu;
  }
  if (!(denominator > 0.0) || !(total > 0.0)) return fitters::kInfinity;
  return total * total / denominator;
}

// The part of the parameter covariance that comes from the pooled Type A line of the points
// (fit_stage.h, effective degrees of freedom): C_A = sum_i a_i A_i A_i', A_i = C_lin J_i w_i,
// linearised at the solution with effective-variance weights. 0 x 0 when every a_i is 0 or the
// linearisation is singular.
Eigen::MatrixXd PooledScatterCovariance(const fitters::Model& model,
                                        const std::vector<fitters::Observation>& observations,
                                        const fitters::ModelContext& context,
                                        const fitters::FitResult& result,
                                        const std::vector<double>& pooled_variance) {
  const std::size_t n = observations.size();
  const Eigen::Index p = static_cast<Eigen::Index>(result.parameters.size());
  bool any = false;
  for (const double a : pooled_variance) any = any || a > 0.0;
  if (!any || pooled_variance.size() != n || result.fitted_x0.size() != n) return {};
  Eigen::MatrixXd jacobian(static_cast<Eigen::Index>(n), p);
  Eigen::VectorXd weight(static_cast<Eigen::Index>(n));
  std::vector<double> gradient(static_cast<std::size_t>(p));
  for (std::size_t i = 0; i < n; ++i) {
    const Eigen::Index ii = static_cast<Eigen::Index>(i);
    std::array<double, fitters::kMaxInputs> x = observations[i].x;
    x[0] = result.fitted_x0[i];
    model.Gradient(result.parameters.data(), x.data(), context, gradient.data());
    for (Eigen::Index j = 0; j < p; ++j) jacobian(ii, j) = gradient[static_cast<std::size_t>(j)];
    double variance = observations[i].sigma_y * observations[i].sigma_y;
    if (i < result.x0_is_fitted.size() && result.x0_is_fitted[i] != 0) {
      const double slope = model.SlopeInX0(result.parameters.data(), x.data(), context);
      variance += slope * slope * observations[i].sigma_x0 * observations[i].sigma_x0;
    }
    weight(ii) = 1.0 / variance;
  }
  const Eigen::MatrixXd information = jacobian.transpose() * weight.asDiagonal() * jacobian;
  const Eigen::LDLT<Eigen::MatrixXd> ldlt(information);
  if (ldlt.info() != Eigen::Success || !ldlt.isPositive()) return {};
  // Rows of response: A' = W J C_lin (n x p).
  const Eigen::MatrixXd response =
      weight.asDiagonal() * ldlt.solve(jacobian.transpose()).transpose();
  Eigen::MatrixXd pooled = Eigen::MatrixXd::Zero(p, p);
  for (std::size_t i = 0; i < n; ++i) {
    if (!(pooled_variance[i] > 0.0)) continue;
    const Eigen::VectorXd a = response.row(static_cast<Eigen::Index>(i)).transpose();
    pooled += pooled_variance[i] * a * a.transpose();
  }
  if (!pooled.allFinite()) return {};
  return pooled;
}

// Sensitivity of the parameters to each specimen factor, by refits of the data with the factor
// at +u and -u (fit_stage.h); adds u^2 s s' to the covariance and sets standard errors and
// intervals. False (with the covariance left as the fit gave it) when a refit fails.
bool ApplySpecimenTerm(const fitters::Model& model,
                       const std::vector<fitters::Observation>& observations,
                       const fitters::ModelContext& context, const fitters::FitOptions& fit_options,
                       const std::vector<SpecimenFactor>& factors, ModelFit* fit) {
  fitters::FitResult& result = fit->result;
  const std::size_t p = result.parameters.size();
  fitters::FitOptions refit = fit_options;
  refit.starting_points = {result.parameters};
  refit.num_multistarts = 0;
  std::vector<SpecimenSensitivity> sensitivities;
  for (const SpecimenFactor& factor : factors) {
    const double h = factor.relative_standard_uncertainty;
    std::vector<double> ends[2];
    for (int side = 0; side < 2; ++side) {
      std::vector<fitters::Observation> shifted = observations;
      const double z = side == 0 ? h : -h;
      for (std::size_t i = 0; i < shifted.size(); ++i) shifted[i].y *= 1.0 + factor.weights[i] * z;
      // FitModel turns a numerical failure into a failed fit; a bug propagates.
      const fitters::FitResult moved = fitters::FitModel(model, shifted, context, refit);
      if (!moved.ok() || moved.parameters.size() != p) return false;
      ends[side] = moved.parameters;
    }
    SpecimenSensitivity sensitivity;
    sensitivity.relative_standard_uncertainty = h;
    sensitivity.degrees_of_freedom = factor.degrees_of_freedom;
    for (std::size_t j = 0; j < p; ++j) {
      sensitivity.parameter_sensitivity.push_back((ends[0][j] - ends[1][j]) / (2.0 * h));
    }
    sensitivities.push_back(std::move(sensitivity));
  }
  fit->covariance_independent = result.covariance;
  fit->specimen_sensitivities = sensitivities;
  for (const SpecimenSensitivity& s : sensitivities) {
    const Eigen::Map<const Eigen::VectorXd> column(s.parameter_sensitivity.data(),
                                                   static_cast<Eigen::Index>(p));
    result.covariance += s.relative_standard_uncertainty * s.relative_standard_uncertainty *
                         column * column.transpose();
  }
  for (std::size_t j = 0; j < p; ++j) {
    const Eigen::Index jj = static_cast<Eigen::Index>(j);
    result.estimates[j].standard_error = std::sqrt(std::max(0.0, result.covariance(jj, jj)));
  }
  for (Eigen::Index a = 0; a < result.correlation.rows(); ++a) {
    for (Eigen::Index b = 0; b < result.correlation.cols(); ++b) {
      const double d = std::sqrt(result.covariance(a, a) * result.covariance(b, b));
      result.correlation(a, b) = d > 0.0 ? result.covariance(a, b) / d : 0.0;
    }
  }
  return true;
}

// Per parameter: nu_eff, and the expanded uncertainty and Student-t interval from it.
void SetCoverage(const FitStageOptions& options, double coverage_factor, ModelFit* fit) {
  fitters::FitResult& result = fit->result;
  const std::size_t p = result.estimates.size();
  fit->expanded_uncertainty.clear();
  fit->effective_dof.clear();
  for (std::size_t j = 0; j < p; ++j) {
    std::vector<double> gradient(p, 0.0);
    gradient[j] = 1.0;
    const DerivedUncertainty derived = PropagateToDerived(*fit, gradient, coverage_factor);
    fitters::ParameterEstimate& estimate = result.estimates[j];
    fit->effective_dof.push_back(derived.effective_dof);
    fit->expanded_uncertainty.push_back(derived.coverage_factor * estimate.standard_error);
    if (std::isfinite(derived.effective_dof) && std::isfinite(estimate.standard_error)) {
      const double k = reduce::StudentTCoverageFactor(
          std::max(1.0, std::floor(derived.effective_dof)), options.confidence_level);
      estimate.interval_low = estimate.value - k * estimate.standard_error;
      estimate.interval_high = estimate.value + k * estimate.standard_error;
    }
  }
}

// The design check of a model with p parameters on n points in its RH range [x_min, x_max].
ModelDesign DesignOf(int n, int p, double x_min, double x_max) {
  ModelDesign design;
  design.points = n;
  design.num_parameters = p;
  design.points_needed = MinimumPoints(p);
  design.rh_min_fraction = std::max(0.0, x_min);
  design.rh_max_fraction = std::min(1.0, x_max);
  design.restricted_range = x_min > 0.0 || x_max < 1.0;
  design.supported = n >= design.points_needed;
  if (!design.supported) {
    design.reason = fmt::format(
        "not evaluated: n = {} points in RH {:g}..{:g} for p = {} parameters; at least {} needed",
        n, design.rh_min_fraction, design.rh_max_fraction, p, design.points_needed);
  }
  return design;
}

// Fits one model to one group; never throws for a failed fit (flags say what went wrong).
ModelFit FitOneModel(const fitters::Model& model, const FitGroup& group, int group_index,
                     const FitStageOptions& options, double coverage_factor,
                     FitStageSummary* summary) {
  ModelFit fit;
  fit.model_name = model.name();
  fit.info = model.info();
  fit.group_index = group_index;
  fit.result.model_name = model.name();
  fit.max_relative_parameter_uncertainty = options.max_relative_parameter_uncertainty;

  const bool is_bet = model.name() == "bet";
  const double x_min = is_bet ? options.bet_rh_min_fraction : fit.info.x_min;
  const double x_max = is_bet ? options.bet_rh_max_fraction : fit.info.x_max;
  fit.used_observations =
      internal::SelectObservations(group, internal::IsRetentionModel(model.name()), x_min, x_max);
  std::vector<fitters::Observation> observations;
  observations.reserve(fit.used_observations.size());
  for (const int i : fit.used_observations) observations.push_back(group.observations[i]);

  fit.design =
      DesignOf(static_cast<int>(observations.size()), model.num_parameters(), x_min, x_max);
  if (!fit.design.supported) {
    // Not evaluated: not a failed fit, so no flag (ModelDesign).
    fit.result.summary.termination = fitters::FitTermination::kTooFewPoints;
    fit.result.summary.message = fit.design.reason;
    ++summary->models_not_evaluated;
    return fit;
  }

  fitters::ModelContext context;
  context.temperature_K = group.temperature_K;
  const fitters::FitOptions fit_options = EngineOptions(options);

  ++summary->fits_attempted;
  fit.result = fitters::FitModel(model, observations, context, fit_options);
  for (const std::string& flag : fit.result.summary.flags) AddFlag(&fit.flags, flag);
  if (!fit.result.ok()) {
    if (fit.flags.empty()) {
      AddFlag(&fit.flags, fmt::format("not converged: {}", fit.result.summary.message));
    }
    return fit;
  }
  ++summary->fits_converged;

  // The engine's flags already cover parameters at a bound, physically doubtful values
  // ("physics: ..."), a missing covariance and poorly determined parameters.
  fit.independent_dof =
      options.weights == fitters::WeightConvention::kRelative
          ? static_cast<double>(std::max(1, fit.result.statistics.degrees_of_freedom))
          : fitters::kInfinity;
  const std::vector<SpecimenFactor> factors = FactorsOf(group, fit.used_observations);
  // The resampling starts from the fit as weighted (standard errors of the independent parts):
  // its studentised pivots and refit tolerances are in those units, and it draws the specimen
  // factors itself (fitters::CommonFactor).
  const fitters::FitResult resample_base = fit.result;
  if (options.weights == fitters::WeightConvention::kAbsolute) {
    for (const SpecimenFactor& factor : factors) {
      fit.independent_dof = std::min(fit.independent_dof, factor.independent_degrees_of_freedom);
    }
    // Only the pooled Type A part of the independent covariance has those degrees of freedom.
    if (std::isfinite(fit.independent_dof) && fit.result.summary.covariance_available &&
        group.pooled_scatter_variance.size() == group.observations.size()) {
      std::vector<double> pooled;
      for (const int i : fit.used_observations) {
        pooled.push_back(group.pooled_scatter_variance[static_cast<std::size_t>(i)]);
      }
      fit.covariance_pooled_scatter =
          PooledScatterCovariance(model, observations, context, fit.result, pooled);
    }
  }
  if (!factors.empty() && fit.result.summary.covariance_available &&
      !ApplySpecimenTerm(model, observations, context, fit_options, factors, &fit)) {
    AddFlag(&fit.flags,
            "specimen term: a refit with the specimen factor moved failed; the parameter "
            "uncertainties leave out the specimen-to-specimen part");
  }
  SetCoverage(options, coverage_factor, &fit);

  const std::vector<double> grid =
      Grid(std::max(options.band_rh_min_fraction, x_min),
           std::min(options.band_rh_max_fraction, x_max), options.band_grid_points);
  try {
    if (fit.result.summary.covariance_available && !grid.empty()) {
      fit.band =
          fitters::DeltaMethodBand(model, fit.result, context, grid, options.confidence_level);
    }
  } catch (...) {
    AddFlag(&fit.flags, fmt::format("band failed: {}", fitters::NumericalFailureMessage()));
  }

  // A fit that fails its own goodness-of-fit check is never ranked and never drives a result
  // (IsUsable): resampled intervals of it would state nothing, and its refits are the costly ones
  // (data far from the curve; measured on the wood-fibre 23/40 degC demo: up to 24 of 1000
  // bootstrap refits of such fits ran to the iteration limit). Not resampled.
  if (is_bet) fit.consistency = BetConsistency(fit.result, observations);
  fit.goodness = GoodnessOfFitOf(fit);
  if (!fit.goodness.passed) {
    const std::string why = "not formed: the fit " + fit.goodness.reason + " and states no result";
    fit.bootstrap.not_formed = why;
    fit.monte_carlo.not_formed = why;
    return fit;
  }

  fitters::FitOptions refit_options = fit_options;
  refit_options.function_tolerance = options.resample_tolerance;
  refit_options.parameter_tolerance = options.resample_tolerance;
  fitters::ResampleOptions resample;
  resample.confidence_level = options.confidence_level;
  for (const SpecimenFactor& factor : factors) {
    resample.common_factors.push_back(
        {factor.relative_standard_uncertainty, factor.weights, factor.degrees_of_freedom});
  }
  resample.refit_tolerance_se = options.refit_tolerance_se;
  resample.num_threads = ThreadsToUse(options.threads);
  if (options.bootstrap_resamples > 0) {
    resample.kind = options.bootstrap_kind;
    resample.num_resamples = options.bootstrap_resamples;
    resample.seed =
        internal::StreamState(options.seed, group_index, model.name(), kBootstrapStream);
    try {
      fit.bootstrap =
          fitters::Resample(model, observations, context, resample_base, refit_options, resample);
    } catch (...) {
      AddFlag(&fit.flags, fmt::format("bootstrap failed: {}", fitters::NumericalFailureMessage()));
    }
  }
  if (options.monte_carlo_draws > 0) {
    resample.kind = fitters::ResampleKind::kMonteCarloInputs;
    resample.num_resamples = options.monte_carlo_draws;
    resample.seed =
        internal::StreamState(options.seed, group_index, model.name(), kMonteCarloStream);
    try {
      fit.monte_carlo =
          fitters::Resample(model, observations, context, resample_base, refit_options, resample);
    } catch (...) {
      AddFlag(&fit.flags,
              fmt::format("Monte Carlo failed: {}", fitters::NumericalFailureMessage()));
    }
  }
  return fit;
}

// FitGroup::pooled_scatter_variance from the points behind the group's observations.
void SetPooledScatterVariance(const reduce::ReducedIsotherms& reduced, FitGroup* group) {
  group->pooled_scatter_variance.assign(group->observations.size(), 0.0);
  for (std::size_t i = 0; i < group->observations.size() && i < group->point_indices.size(); ++i) {
    const int index = group->point_indices[i];
    if (index < 0) continue;
    const reduce::IsothermPoint& point = reduced.points[static_cast<std::size_t>(index)];
    if (point.specimen_term < 0) continue;  // sigma_y is then the whole u (grouping.cc)
    group->pooled_scatter_variance[i] =
        point.u_pooled_scatter_kg_per_kg * point.u_pooled_scatter_kg_per_kg;
  }
}

// Why no fit of group g is ranked: "title: reason" for each model fitted to the group, from its
// "not converged" or "not ranked" flag (Rank), "; "-separated; models not evaluated are left out.
std::string WhyNoBestFit(const IsothermFits& fits, int g) {
  std::string out;
  for (const ModelFit& fit : fits.fits) {
    if (fit.group_index != g || !fit.design.supported) continue;
    std::string why;
    for (const std::string& flag : fit.flags) {
      for (const std::string_view prefix : {"not ranked: ", "not converged: "}) {
        if (why.empty() && flag.rfind(prefix, 0) == 0) {
          why = prefix == "not converged: " ? flag : flag.substr(prefix.size());
        }
      }
    }
    if (why.empty()) why = "not ranked";
    out += (out.empty() ? "" : "; ") + fit.info.title + ": " + why;
  }
  return out;
}

// Ranks the usable fits (IsUsable) of each group by AICc (rank 1 best). AICc values are
// comparable only between fits to the same points, so the ranking is among the fits that used
// every isotherm point of the group (BET on its restricted range and retention models fitted
// jointly with retention points are left unranked, rank 0), and AICc must be defined
// (n - p - 1 > 0). Ties keep the order of FitStageOptions::models.
void Rank(IsothermFits* fits) {
  fits->best_fit_per_group.assign(fits->groups.size(), -1);
  fits->no_best_fit_reason.assign(fits->groups.size(), std::string());
  for (std::size_t g = 0; g < fits->groups.size(); ++g) {
    const FitGroup& group = fits->groups[g];
    std::vector<int> all_isotherm_points;
    for (std::size_t i = 0; i < group.point_indices.size(); ++i) {
      if (group.point_indices[i] >= 0) all_isotherm_points.push_back(static_cast<int>(i));
    }
    std::vector<int> candidates;
    for (std::size_t f = 0; f < fits->fits.size(); ++f) {
      ModelFit& fit = fits->fits[f];
      if (fit.group_index != static_cast<int>(g) || !fit.result.ok()) continue;
      if (!IsIdentified(fit)) {
        AddFlag(&fit.flags, "not ranked: not identifiable from these data (" +
                                IdentifiabilityOf(fit).reason + ")");
        continue;
      }
      if (fit.used_observations != all_isotherm_points) {
        AddFlag(&fit.flags,
                "not ranked: fitted to a different set of points than the group (AICc not "
                "comparable)");
        continue;
      }
      if (std::isnan(fit.result.statistics.aicc)) {
        AddFlag(&fit.flags, "not ranked: AICc undefined (it needs n >= p + 2 points)");
        continue;
      }
      if (!fit.goodness.passed) {  // evaluated by FitOneModel
        AddFlag(&fit.flags, "not ranked: " + fit.goodness.reason);
        continue;
      }
      candidates.push_back(static_cast<int>(f));
    }
    std::stable_sort(candidates.begin(), candidates.end(), [&](int a, int b) {
      return fits->fits[a].result.statistics.aicc < fits->fits[b].result.statistics.aicc;
    });
    for (std::size_t r = 0; r < candidates.size(); ++r) {
      fits->fits[candidates[r]].rank = static_cast<int>(r) + 1;
    }
    if (!candidates.empty()) {
      fits->best_fit_per_group[g] = candidates.front();
    } else {
      fits->no_best_fit_reason[g] = WhyNoBestFit(*fits, static_cast<int>(g));
    }
  }
}

}  // namespace

bool FitStageOptions::IsValid(std::string* error) const {
  auto fail = [error](std::string message) {
    if (error != nullptr) *error = std::move(message);
    return false;
  };
  if (models.empty()) return fail("models: at least one model is needed");
  std::set<std::string> seen;
  for (const std::string& name : models) {
    if (fitters::FindModel(name) == nullptr) {
      return fail(fmt::format("models: unknown model '{}' (known: {})", name,
                              fmt::join(fitters::ModelNames(), ", ")));
    }
    if (!seen.insert(name).second) return fail(fmt::format("models: '{}' is listed twice", name));
  }
  if (!(bet_rh_min_fraction >= 0.0 && bet_rh_min_fraction < bet_rh_max_fraction &&
        bet_rh_max_fraction <= 1.0)) {
    return fail(fmt::format(
        "bet_rh_min_fraction = {} and bet_rh_max_fraction = {} must satisfy 0 <= min < max <= 1",
        bet_rh_min_fraction, bet_rh_max_fraction));
  }
  if (!(loss_scale > 0.0 && std::isfinite(loss_scale))) {
    return fail(fmt::format("loss_scale = {} must be > 0", loss_scale));
  }
  if (num_multistarts < 0) {
    return fail(fmt::format("num_multistarts = {} must be >= 0", num_multistarts));
  }
  if (!(refit_tolerance_se >= 0.0 && refit_tolerance_se <= 1.0)) {
    return fail(fmt::format("refit_tolerance_se = {} must be in [0, 1]", refit_tolerance_se));
  }
  if (!(resample_tolerance > 0.0 && resample_tolerance < 1.0)) {
    return fail(fmt::format("resample_tolerance = {} must be in (0, 1)", resample_tolerance));
  }
  if (threads < 0) return fail(fmt::format("threads = {} must be >= 0", threads));
  if (bootstrap_resamples < 0) {
    return fail(fmt::format("bootstrap_resamples = {} must be >= 0", bootstrap_resamples));
  }
  if (bootstrap_kind == fitters::ResampleKind::kMonteCarloInputs) {
    return fail(
        "bootstrap_kind: must be a bootstrap (residual or case); Monte Carlo is set by "
        "monte_carlo_draws");
  }
  if (monte_carlo_draws < 0) {
    return fail(fmt::format("monte_carlo_draws = {} must be >= 0", monte_carlo_draws));
  }
  if (band_grid_points < 0) {
    return fail(fmt::format("band_grid_points = {} must be >= 0", band_grid_points));
  }
  if (!(band_rh_min_fraction >= 0.0 && band_rh_min_fraction < band_rh_max_fraction &&
        band_rh_max_fraction <= 1.0)) {
    return fail(fmt::format(
        "band_rh_min_fraction = {} and band_rh_max_fraction = {} must satisfy 0 <= min < max <= 1",
        band_rh_min_fraction, band_rh_max_fraction));
  }
  if (!(max_relative_parameter_uncertainty > 0.0) ||
      !std::isfinite(max_relative_parameter_uncertainty)) {
    return fail(fmt::format("max_relative_parameter_uncertainty = {} must be > 0",
                            max_relative_parameter_uncertainty));
  }
  if (!(confidence_level > 0.0 && confidence_level < 1.0)) {
    return fail(fmt::format("confidence_level = {} must be in (0, 1)", confidence_level));
  }
  return true;
}

int ThreadsToUse(int requested) {
  if (requested > 0) return requested;
  const unsigned hardware = std::thread::hardware_concurrency();  // 0 when not known
  return std::clamp(static_cast<int>(hardware), 1, kMaxAutomaticThreads);
}

int MinimumPoints(int num_parameters) {
  // One residual degree of freedom (ModelDesign).
  constexpr int kMinResidualDegreesOfFreedom = 1;
  return num_parameters + kMinResidualDegreesOfFreedom;
}

Identifiability CheckIdentifiability(const fitters::FitResult& result,
                                     double max_relative_parameter_uncertainty) {
  Identifiability out;
  if (!result.ok()) {
    out.reason = "the fit did not converge";
    return out;
  }
  const Eigen::Index p = static_cast<Eigen::Index>(result.parameters.size());
  if (!result.summary.covariance_available || result.covariance.rows() != p ||
      result.covariance.cols() != p) {
    out.reason = "the parameter covariance could not be computed";
    return out;
  }
  for (Eigen::Index j = 0; j < p; ++j) {
    const std::size_t jj = static_cast<std::size_t>(j);
    const std::string name =
        jj < result.estimates.size() ? result.estimates[jj].name : std::to_string(jj + 1);
    if (jj < result.estimates.size() && result.estimates[jj].at_bound) {
      out.reason =
          fmt::format("parameter {} = {} sits at a bound of its allowed range", name,
                      common::FormatSignificant(result.parameters[jj], common::kDiagnosticDigits));
      return out;
    }
    const double u = std::sqrt(std::max(0.0, result.covariance(j, j)));
    const double relative = u / std::abs(result.parameters[jj]);
    if (!(relative <= max_relative_parameter_uncertainty)) {
      out.reason = fmt::format(
          "parameter {} has a standard uncertainty of {:.0f} % of its value (more than {:g} %)",
          name, 100.0 * relative, 100.0 * max_relative_parameter_uncertainty);
      return out;
    }
  }
  out.identifiable = true;
  return out;
}

Identifiability IdentifiabilityOf(const ModelFit& fit) {
  if (!fit.design.supported) return {false, fit.design.reason};
  return CheckIdentifiability(fit.result, fit.max_relative_parameter_uncertainty);
}

bool IsIdentified(const ModelFit& fit) { return IdentifiabilityOf(fit).identifiable; }

GoodnessOfFit GoodnessOfFitOf(const ModelFit& fit) {
  GoodnessOfFit out;
  const fitters::FitStatistics& s = fit.result.statistics;
  const bool absolute = fit.result.weight_convention == fitters::WeightConvention::kAbsolute;
  out.test = absolute ? "chi-square" : "runs test";
  out.p_value = absolute ? s.chi_square_p_value : s.runs_test_p_value;
  out.passed = out.p_value >= kMinGoodnessOfFitPValue;  // NaN fails
  if (!out.passed) {
    out.reason = fmt::format("fails its {} check (p = {}, below {:g})", out.test,
                             common::FormatProbability(out.p_value, common::kProbabilityDigits),
                             kMinGoodnessOfFitPValue);
  }
  return out;
}

bool IsUsable(const ModelFit& fit) { return IsIdentified(fit) && GoodnessOfFitOf(fit).passed; }

DerivedUncertainty PropagateToDerived(const ModelFit& fit, const std::vector<double>& gradient,
                                      double nominal_k) {
  DerivedUncertainty out;
  out.coverage_factor = nominal_k;
  const Eigen::Index p = static_cast<Eigen::Index>(gradient.size());
  const Eigen::MatrixXd& total = fit.result.covariance;
  if (total.rows() != p || total.cols() != p) return out;
  const Eigen::Map<const Eigen::VectorXd> g(gradient.data(), p);
  out.standard_uncertainty = std::sqrt(std::max(0.0, g.dot(total * g)));
  const bool split =
      fit.covariance_independent.rows() == p && fit.covariance_independent.cols() == p;
  const double independent = split ? g.dot(fit.covariance_independent * g) : g.dot(total * g);
  // The Type A part of the independent variance (fit_stage.h); all of it where not formed.
  const bool pooled_formed = split && fit.covariance_pooled_scatter.rows() == p &&
                             fit.covariance_pooled_scatter.cols() == p;
  const double type_a = pooled_formed ? std::clamp(g.dot(fit.covariance_pooled_scatter * g), 0.0,
                                                   std::max(0.0, independent))
                                      : independent;
  std::vector<double> contributions;
  if (split) {
    for (const SpecimenSensitivity& s : fit.specimen_sensitivities) {
      const Eigen::Map<const Eigen::VectorXd> column(s.parameter_sensitivity.data(), p);
      contributions.push_back(g.dot(column) * s.relative_standard_uncertainty);
    }
  }
  out.effective_dof =
      EffectiveDof(independent, type_a, fit.independent_dof, contributions,
                   split ? fit.specimen_sensitivities : std::vector<SpecimenSensitivity>{});
  out.coverage_factor = reduce::CoverageFactor(out.effective_dof, nominal_k);
  return out;
}

DerivedUncertainty CurveUncertainty(const IsothermFits& fits, const ModelFit& fit,
                                    double rh_fraction) {
  DerivedUncertainty out;
  out.coverage_factor = fits.coverage_factor;
  const fitters::Model* model = fitters::FindModel(fit.model_name);
  if (model == nullptr || !fit.result.ok() || fit.group_index < 0 ||
      fit.group_index >= static_cast<int>(fits.groups.size())) {
    return out;
  }
  fitters::ModelContext context;
  context.temperature_K = fits.groups[static_cast<std::size_t>(fit.group_index)].temperature_K;
  const double x[fitters::kMaxInputs] = {rh_fraction, 0.0};
  std::vector<double> gradient(static_cast<std::size_t>(model->num_parameters()), 0.0);
  model->Gradient(fit.result.parameters.data(), x, context, gradient.data());
  return PropagateToDerived(fit, gradient, fits.coverage_factor);
}

IsothermFits FitIsotherms(const reduce::ReducedIsotherms& reduced, const FitStageOptions& options) {
  std::string error;
  if (!options.IsValid(&error)) {
    throw InputError(SourceLocation{}, "fit settings: " + error);
  }
  std::vector<const fitters::Model*> models;
  for (const std::string& name : options.models) models.push_back(fitters::FindModel(name));

  IsothermFits fits;
  fits.coverage_factor = reduced.coverage_factor;
  fits.groups = internal::BuildGroups(reduced, options, &fits.summary.warnings);
  if (fits.groups.empty()) {
    throw ComputationError(
        "no isotherm could be fitted: no adsorption or desorption point with finite values");
  }
  for (FitGroup& group : fits.groups) SetPooledScatterVariance(reduced, &group);

  for (std::size_t g = 0; g < fits.groups.size(); ++g) {
    for (const fitters::Model* model : models) {
      fits.fits.push_back(FitOneModel(*model, fits.groups[g], static_cast<int>(g), options,
                                      fits.coverage_factor, &fits.summary));
      const ModelFit& fit = fits.fits.back();
      if (fit.design.supported && !fit.result.ok()) {
        fits.summary.warnings.push_back(Warning(
            fmt::format("{}, {}: {}", GroupName(fits.groups[g]), fit.model_name,
                        fit.flags.empty() ? fit.result.summary.message : fit.flags.back())));
      }
    }
  }
  Rank(&fits);

  if (fits.summary.fits_converged == 0) {
    std::string reasons;
    for (const ModelFit& fit : fits.fits) {
      reasons += fmt::format("; {}, {}: {}", GroupName(fits.groups[fit.group_index]),
                             fit.model_name, fit.result.summary.message);
    }
    throw ComputationError("no isotherm model converged in any group" + reasons);
  }
  return fits;
}

}  // namespace sorbtrace::fit
