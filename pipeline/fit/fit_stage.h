// Fit stage: fits the isotherm models of the registry (fitters/) to the reduced equilibrium
// points, per branch and temperature, with covariance-based intervals, delta-method bands,
// bootstrap and JCGM 101 Monte Carlo intervals, statistics and a model ranking.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/model.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/reduce/reduce.h"

namespace sorbtrace::fit {

struct FitStageOptions {
  // Registry keys of the models to fit (fitters/registry.h).
  std::vector<std::string> models = {"gab",   "bet",    "vangenuchten", "durner2",
                                     "oswin", "halsey", "henderson",    "peleg"};
  double bet_rh_min_fraction = 0.05;  // BET validity range (common practice for water)
  double bet_rh_max_fraction = 0.35;
  fitters::LossKind loss = fitters::LossKind::kSquared;
  double loss_scale = 1.0;
  // The reduce stage gives GUM standard uncertainties of both moisture content and RH, so
  // by default both enter the fit: the true RH of each point is fitted within its
  // uncertainty (errors in variables), and the sigmas are absolute (covariance unscaled,
  // chi-square consistency check reported). With y-only weights the RH uncertainty of salt
  // tables and sensors would be left out of the parameter uncertainties, which makes them
  // too small on the steep part of an isotherm.
  bool errors_in_variables = true;
  fitters::WeightConvention weights = fitters::WeightConvention::kAbsolute;
  // Deterministic perturbed starts per model starting point (fitters::FitOptions).
  int num_multistarts = 4;
  // Relative function and parameter tolerance of the bootstrap and Monte Carlo refits (the
  // full fit keeps the engine's 1e-15). A refit stops when the weighted SSR changes by less
  // than this fraction: the parameters are then within about sqrt(2 * 1e-10 * SSR / 2) ~ 1e-4
  // of a standard error of the optimum (for SSR ~ n = 20), far below the Monte Carlo
  // scatter of a 1,000-draw percentile (about 0.05 standard errors; common practice).
  double resample_tolerance = 1e-10;
  // Statistical stopping rule of the same refits (fitters::ResampleOptions::refit_tolerance_se):
  // a refit also stops once its Gauss-Newton distance to its optimum is below this many
  // full-data standard errors in every parameter (0 = off: only resample_tolerance).
  double refit_tolerance_se = 0.01;
  int bootstrap_resamples = 1000;
  fitters::ResampleKind bootstrap_kind = fitters::ResampleKind::kResidualBootstrap;
  int monte_carlo_draws = 1000;  // JCGM 101 propagation of input uncertainties (0 = off)
  std::uint64_t seed = 20261201;
  int band_grid_points = 200;
  double band_rh_min_fraction = 0.0;
  double band_rh_max_fraction = 0.98;
  double confidence_level = 0.95;
  bool include_retention_points = true;  // joint fits of retention models (van Genuchten, Durner)

  bool IsValid(std::string* error) const;
};

// One group of points fitted together: one branch at one temperature.
struct FitGroup {
  ingest::Branch branch = ingest::Branch::kAdsorption;
  double temperature_K = 0.0;
  std::vector<fitters::Observation> observations;  // what was fitted (x[0] = rh_fraction)
  std::vector<int> point_indices;                  // into ReducedIsotherms::points (-1: retention)
};

// A consistency criterion (e.g. Rouquerol's for BET) and whether it holds.
struct ConsistencyCheck {
  std::string criterion;
  bool passed = false;
  std::string detail;
};

// One model fitted to one group.
struct ModelFit {
  std::string model_name;
  fitters::ModelInfo info;
  int group_index = 0;
  fitters::FitResult result;
  // Per parameter: k * standard error, k = IsothermFits::coverage_factor (the reduce stage's).
  std::vector<double> expanded_uncertainty;
  // Indices into groups[group_index].observations of the points this model was fitted to
  // (BET: only its RH range; retention points only for retention models).
  std::vector<int> used_observations;
  std::vector<fitters::BandPoint> band;  // delta method, on the band grid
  fitters::ResampleResult bootstrap;
  fitters::ResampleResult monte_carlo;
  std::vector<ConsistencyCheck> consistency;  // BET: Rouquerol criteria
  std::vector<std::string> flags;             // every guard rail tripped
  int rank = 0;                               // 1 = best AICc in its group among converged fits
};

struct FitStageSummary {
  std::vector<Diagnostic> warnings;
  int fits_attempted = 0;  // fitters::FitModel calls (group x model pairs with n > p)
  int fits_converged = 0;
};

struct IsothermFits {
  std::vector<FitGroup> groups;
  std::vector<ModelFit> fits;
  std::vector<int> best_fit_per_group;  // index into fits, -1 if none converged
  double coverage_factor = 2.0;
  FitStageSummary summary;
};

// Fits every model of options.models to every group.
//
// Groups: the adsorption and desorption points of ReducedIsotherms::points (drying steps are
// not isotherm points; every other point is fitted, the reduce stage having left out or
// flagged those not at equilibrium), all cycles of a branch together. Data sets whose mean
// temperatures lie within 0.5 K of the coldest data set of a cluster form one temperature
// (fitted at the mean temperature of the cluster's points, the same for both branches).
// Groups are ordered by temperature, adsorption before desorption. Observations: x[0] =
// rh_fraction, y = moisture_kg_per_kg, sigma_y = u_moisture_kg_per_kg, sigma_x0 =
// u_rh_fraction. With include_retention_points the retention points (equivalent RH, sigma_x0 =
// 0) join the group of their branch and temperature, for the retention models only
// (vangenuchten*, durner*).
//
// Per model: "bet" uses only the points with bet_rh_min_fraction <= RH <= bet_rh_max_fraction
// (other models the ModelInfo x range) and gets the four Rouquerol checks; n <= p is skipped
// with the flag "too few points: n = N for p = P"; bands on band_grid_points RH values over
// [band_rh_min, band_rh_max] clipped to that range; bootstrap and Monte Carlo draws come from
// random streams that are a pure function of options.seed, the group index and the model name
// (so adding a model to the list does not change the draws of the others).
//
// Ranking: AICc among the converged fits of a group that used all of its isotherm points (AICc
// is only comparable on identical data); BET on its restricted range and retention models
// fitted with retention points keep rank 0 with a "not ranked" flag.
//
// Never throws for a failed fit (see ModelFit::flags). Throws InputError for invalid options,
// ComputationError when there is no point to fit or no model converged in any group.
IsothermFits FitIsotherms(const reduce::ReducedIsotherms& reduced, const FitStageOptions& options);

}  // namespace sorbtrace::fit
