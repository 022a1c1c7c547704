// The fit stage: every requested model on every group (branch x temperature), then the AICc
// ranking. Grouping and point selection are in grouping.cc.
#include "pipeline/fit/fit_stage.h"

#include <fmt/format.h>
#include <fmt/ranges.h>

#include <algorithm>
#include <cmath>
#include <exception>
#include <set>
#include <utility>

#include "fitters/models/bet.h"
#include "fitters/registry.h"
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
  return fmt::format("{} at {:.2f} K", internal::BranchLabel(group.branch), group.temperature_K);
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
  checks[0].detail = fmt::format("C = {:.6g}", c);
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
  checks[2].detail =
      std::isnan(criteria.measured_rh_at_monolayer)
          ? fmt::format("X_m = {:.6g} kg/kg is outside the measured moisture range", x_m)
          : fmt::format("u = X_m = {:.6g} kg/kg at RH {:.4f}", x_m,
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

// Fits one model to one group; never throws for a failed fit (flags say what went wrong).
ModelFit FitOneModel(const fitters::Model& model, const FitGroup& group, int group_index,
                     const FitStageOptions& options, double coverage_factor,
                     FitStageSummary* summary) {
  ModelFit fit;
  fit.model_name = model.name();
  fit.info = model.info();
  fit.group_index = group_index;
  fit.result.model_name = model.name();

  const bool is_bet = model.name() == "bet";
  const double x_min = is_bet ? options.bet_rh_min_fraction : fit.info.x_min;
  const double x_max = is_bet ? options.bet_rh_max_fraction : fit.info.x_max;
  fit.used_observations =
      internal::SelectObservations(group, internal::IsRetentionModel(model.name()), x_min, x_max);
  std::vector<fitters::Observation> observations;
  observations.reserve(fit.used_observations.size());
  for (const int i : fit.used_observations) observations.push_back(group.observations[i]);

  const int n = static_cast<int>(observations.size());
  const int p = model.num_parameters();
  if (n <= p) {
    fit.result.summary.termination = fitters::FitTermination::kTooFewPoints;
    fit.result.summary.message = fmt::format("too few points: n = {} for p = {}", n, p);
    AddFlag(&fit.flags, fit.result.summary.message);
    return fit;
  }

  fitters::ModelContext context;
  context.temperature_K = group.temperature_K;
  const fitters::FitOptions fit_options = EngineOptions(options);

  ++summary->fits_attempted;
  try {
    fit.result = fitters::FitModel(model, observations, context, fit_options);
  } catch (const std::exception& error) {
    fit.result = fitters::FitResult();
    fit.result.model_name = model.name();
    fit.result.summary.termination = fitters::FitTermination::kFailure;
    fit.result.summary.message = fmt::format("fit failed: {}", error.what());
  }
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
  for (const fitters::ParameterEstimate& estimate : fit.result.estimates) {
    fit.expanded_uncertainty.push_back(coverage_factor * estimate.standard_error);
  }

  const std::vector<double> grid =
      Grid(std::max(options.band_rh_min_fraction, x_min),
           std::min(options.band_rh_max_fraction, x_max), options.band_grid_points);
  try {
    if (fit.result.summary.covariance_available && !grid.empty()) {
      fit.band =
          fitters::DeltaMethodBand(model, fit.result, context, grid, options.confidence_level);
    }
  } catch (const std::exception& error) {
    AddFlag(&fit.flags, fmt::format("band failed: {}", error.what()));
  }

  fitters::FitOptions refit_options = fit_options;
  refit_options.function_tolerance = options.resample_tolerance;
  refit_options.parameter_tolerance = options.resample_tolerance;
  fitters::ResampleOptions resample;
  resample.confidence_level = options.confidence_level;
  resample.refit_tolerance_se = options.refit_tolerance_se;
  if (options.bootstrap_resamples > 0) {
    resample.kind = options.bootstrap_kind;
    resample.num_resamples = options.bootstrap_resamples;
    resample.seed =
        internal::StreamState(options.seed, group_index, model.name(), kBootstrapStream);
    try {
      fit.bootstrap =
          fitters::Resample(model, observations, context, fit.result, refit_options, resample);
    } catch (const std::exception& error) {
      AddFlag(&fit.flags, fmt::format("bootstrap failed: {}", error.what()));
    }
  }
  if (options.monte_carlo_draws > 0) {
    resample.kind = fitters::ResampleKind::kMonteCarloInputs;
    resample.num_resamples = options.monte_carlo_draws;
    resample.seed =
        internal::StreamState(options.seed, group_index, model.name(), kMonteCarloStream);
    try {
      fit.monte_carlo =
          fitters::Resample(model, observations, context, fit.result, refit_options, resample);
    } catch (const std::exception& error) {
      AddFlag(&fit.flags, fmt::format("Monte Carlo failed: {}", error.what()));
    }
  }

  if (is_bet) fit.consistency = BetConsistency(fit.result, observations);
  return fit;
}

// Ranks the converged fits of each group by AICc (rank 1 best). AICc values are comparable
// only between fits to the same points, so the ranking is among the converged fits that used
// every isotherm point of the group (BET on its restricted range and retention models fitted
// jointly with retention points are left unranked, rank 0). Fits whose AICc is undefined
// (n - p - 1 <= 0) rank after the others. Ties keep the order of FitStageOptions::models.
void Rank(IsothermFits* fits) {
  fits->best_fit_per_group.assign(fits->groups.size(), -1);
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
      if (fit.used_observations != all_isotherm_points) {
        AddFlag(&fit.flags,
                "not ranked: fitted to a different set of points than the group (AICc not "
                "comparable)");
        continue;
      }
      candidates.push_back(static_cast<int>(f));
    }
    std::stable_sort(candidates.begin(), candidates.end(), [&](int a, int b) {
      const double aicc_a = fits->fits[a].result.statistics.aicc;
      const double aicc_b = fits->fits[b].result.statistics.aicc;
      if (std::isnan(aicc_a) || std::isnan(aicc_b))
        return !std::isnan(aicc_a) && std::isnan(aicc_b);
      return aicc_a < aicc_b;
    });
    for (std::size_t r = 0; r < candidates.size(); ++r) {
      ModelFit& fit = fits->fits[candidates[r]];
      fit.rank = static_cast<int>(r) + 1;
      if (std::isnan(fit.result.statistics.aicc)) {
        AddFlag(&fit.flags, "ranked last: AICc undefined");
      }
    }
    if (!candidates.empty()) fits->best_fit_per_group[g] = candidates.front();
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
  if (!(confidence_level > 0.0 && confidence_level < 1.0)) {
    return fail(fmt::format("confidence_level = {} must be in (0, 1)", confidence_level));
  }
  return true;
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

  for (std::size_t g = 0; g < fits.groups.size(); ++g) {
    for (const fitters::Model* model : models) {
      fits.fits.push_back(FitOneModel(*model, fits.groups[g], static_cast<int>(g), options,
                                      fits.coverage_factor, &fits.summary));
      const ModelFit& fit = fits.fits.back();
      if (!fit.result.ok()) {
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
