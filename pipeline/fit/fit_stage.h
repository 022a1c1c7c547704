// Fit stage: fits the isotherm models of the registry (fitters/) to the reduced equilibrium
// points, per branch and temperature, with covariance-based intervals, delta-method bands,
// bootstrap and JCGM 101 Monte Carlo intervals, statistics and a model ranking.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <string>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/model.h"
#include "fitters/models/bet.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/reduce/reduce.h"

namespace sorbtrace::fit {

struct FitStageOptions {
  // Registry keys of the models to fit (fitters/registry.h).
  std::vector<std::string> models = {"gab",   "bet",    "vangenuchten", "durner2",
                                     "oswin", "halsey", "henderson",    "peleg"};
  // BET fitting range; by default the model's own validity range (fitters/models/bet.h,
  // ModelInfo x_min..x_max: 5..35 % RH), so the range has one source.
  double bet_rh_min_fraction = fitters::models::BetEquation::Info().x_min;
  double bet_rh_max_fraction = fitters::models::BetEquation::Info().x_max;
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
  // Threads that run the bootstrap and Monte Carlo refits: 0 = automatic (ThreadsToUse), else
  // that many. The results are the same, bit for bit, for every value: each draw has its own
  // random stream (fitters::ResampleOptions::num_threads).
  int threads = 0;
  int band_grid_points = 200;
  double band_rh_min_fraction = 0.0;
  double band_rh_max_fraction = 0.98;
  double confidence_level = 0.95;
  bool include_retention_points = true;  // joint fits of retention models (van Genuchten, Durner)
  // A converged fit is identifiable from its data only if every parameter's standard uncertainty
  // is at most this fraction of its value (CheckIdentifiability): a parameter not known to within
  // its own value is not determined by the data (common practice; the engine's "poorly
  // determined" flag uses the same limit).
  double max_relative_parameter_uncertainty = 1.0;

  bool IsValid(std::string* error) const;
};

// FitStageOptions::threads = 0 uses the hardware's concurrency up to this many threads: the
// reference machine has 2 cores, and `sorbtrace batch -j N` already runs jobs side by side
// (more can be asked for explicitly).
inline constexpr int kMaxAutomaticThreads = 2;

// The number of threads `requested` (FitStageOptions::threads) stands for: itself when > 0,
// else std::thread::hardware_concurrency() capped at kMaxAutomaticThreads (1 when unknown).
int ThreadsToUse(int requested);

// The specimen term in the fit (see pipeline/reduce/reduce.h for its estimate).
//
// The combined points of a data set are means over the same specimens at every step, so the
// specimen-to-specimen part of their errors is shared from step to step. A fit that weights each
// point with its whole u treats that part as independent: it averages down over the points like
// noise (too small an uncertainty of the level of the curve, hence of scale parameters and of
// moisture contents read off the curve), and it also widens the weights of the shape parameters,
// which that common factor does not move (too large an uncertainty of GAB C and K). Instead:
//  - weights: each point's independent part, u_independent (IsothermPoint), only;
//  - one correlated input per specimen, its factor (1 + delta_s), u(delta_s) = sigma_d, acting
//    on point i as y_i -> y_i (1 + delta_s / n_i) where s is one of the point's n_i specimens
//    (the mean over its specimens). Specimens that take part in the same points are merged into
//    one SpecimenFactor (their sum: u = sigma_d sqrt(count)); with every specimen at every step
//    all S merge into one factor, u = sigma_d sqrt(S), weight 1/S at every point: in effect
//    y_i -> y_i (1 + mean_s delta_s) with u(mean delta) = sigma_d / sqrt(S);
//  - covariance path (JCGM 100:2008, 5.2 and F.1.2.3: a correlated input enters once with its
//    sensitivity): C = C_ind + sum_k u_k^2 s_k s_k', where C_ind is the fit's covariance from the
//    independent parts and s_k = dp/dz_k is evaluated numerically by refitting the data with the
//    factor at +u_k and -u_k (JCGM 100:2008, 5.1.3 note 2; central difference). For a model with
//    a scale parameter (GAB, BET, Oswin, Peleg's amplitudes, ...) that is the scale parameter
//    times the factor, and the shape parameters (GAB C, K) do not move; the refit needs no model
//    knowledge. A generalised least squares with the full point covariance was not chosen: for
//    a model with a scale parameter the common direction (y_i, proportional to df/dX_m) lies in
//    the span of the Jacobian, and GLS then gives the weighted fit's estimates (Kruskal's
//    theorem on OLS = GLS, from memory) with this covariance to first order, while it would
//    need a non-diagonal weight matrix in the engine;
//  - Monte Carlo and bootstraps: one draw z_k = u_k t_nu_k per factor and resample, the scaled
//    and shifted t of a Type A input with nu_k = nu_d degrees of freedom (JCGM 101:2008,
//    6.4.9.7), applied to every point it acts on (fitters::CommonFactor). For nu_d <= 2 these
//    draws have no variance: every interval and u taken from them is percentile-based
//    (DrawStatisticsOf, pipeline/common/draw_statistics.h). Drawn normal instead, the Monte
//    Carlo X_m interval covered 85 % and the curve at 50 % RH 79 % with three specimens that
//    differ by 3 %; with the t draw 94 % and 93.5 % (tests/coverage/resampled_coverage_test.cc);
//  - effective degrees of freedom (JCGM 100:2008, G.4, Eq. G.2b) per parameter and for any
//    derived quantity with gradient g: u^2 = g' C_ind g + sum_k (g's_k u_k)^2. Each input
//    enters Welch-Satterthwaite with its own degrees of freedom (G.4.1: the sum runs over the
//    components, each with the nu of its own evaluation), so C_ind is split by where its
//    variance comes from. Linearised at the solution (effective-variance weights
//    w_i = 1 / (sigma_y,i^2 + (df/dx_i sigma_x,i)^2), J_i = df/dp at the fitted x_i,
//    C_lin = (J' W J)^-1), the parameters respond to y_i as A_i = C_lin J_i w_i, and
//      C_A = sum_i a_i A_i A_i'   (a_i: FitGroup::pooled_scatter_variance)
//    is the part of C_ind that comes from the pooled Type A line of the points (one estimate
//    phi shared by every point, so one component with nu_ind); the rest, g' C_ind g - g' C_A g
//    (the RH of salt tables and sensors through errors in variables, the evaluated independent
//    parts and the systematic lines), is Type B with infinite nu. Then
//      nu_eff = u^4 / (sum_k (g's_k u_k)^4 / nu_k + (g' C_A g)^2 / nu_ind),
//    nu_ind the smallest nu of the factors' data sets' independent lines where they are a Type A
//    estimate (reduce.h: SpecimenTerm::independent_degrees_of_freedom, phi pooled with the
//    evaluated parts or phi alone). Counting all of C_ind with nu_e overstates the
//    weight of that estimate: on generated desiccator jobs (3 specimens, factor sd 3 %, 6-8
//    salts, 200 replicates) GAB C and K got k = 2.00-2.28 (2.28 for nu_e = 10) although most
//    of their variance is Type B; with the split k = 2.00-2.10, and their covariance
//    intervals cover 93-93.5 % with u / RMS(error) 0.97-0.98. Under relative weights all of
//    C_ind is scaled by the residual variance and has n - p degrees of freedom. The expanded
//    uncertainty uses k = reduce::CoverageFactor(nu_eff, coverage factor) and the Student-t
//    interval at confidence_level t(nu_eff). With S = 3 specimens and the specimen term
//    dominant (X_m, the curve), nu_eff ~ 2 and k ~ 4.5: honest for a mean over three specimens
//    (the mean factor over its estimated sd is t with nu_d degrees of freedom); a shape
//    parameter the common factor does not move (GAB C, K) keeps k ~ 2.
// One such factor of a fit group.
struct SpecimenFactor {
  std::string dataset_id;
  std::vector<std::string> specimen_ids;           // the merged specimens
  double relative_standard_uncertainty = 0.0;      // u_k of z_k
  double degrees_of_freedom = fitters::kInfinity;  // nu_d of the data set's term
  // The degrees of freedom of the data set's independent lines (reduce.h:
  // SpecimenTerm::independent_degrees_of_freedom; infinity where the evaluated parts are kept):
  // the weights of the points it acts on are that estimate.
  double independent_degrees_of_freedom = fitters::kInfinity;
  std::vector<double> weights;  // per observation of the group: 1 / n_i, 0 where not acting
  // A cycle factor (grouping.h, CycleFactors: specimen_ids holds "cycle N", weights 1 on that
  // cycle's points), not a specimen factor.
  bool is_cycle = false;
};

// One group of points fitted together: one branch at one temperature.
struct FitGroup {
  ingest::Branch branch = ingest::Branch::kAdsorption;
  double temperature_K = 0.0;
  std::vector<fitters::Observation> observations;  // what was fitted (x[0] = rh_fraction)
  std::vector<int> point_indices;                  // into ReducedIsotherms::points (-1: retention)
  std::vector<SpecimenFactor> specimen_factors;    // empty: no specimen term
  // Per observation: the variance of the pooled Type A line within sigma_y^2
  // (reduce::IsothermPoint::u_pooled_scatter_kg_per_kg squared; 0 for retention points and where
  // there is none). Its degrees of freedom are the factors' independent_degrees_of_freedom.
  std::vector<double> pooled_scatter_variance;
};

// Sensitivity of a fit's parameters to one specimen factor (see SpecimenFactor).
struct SpecimenSensitivity {
  double relative_standard_uncertainty = 0.0;
  double degrees_of_freedom = fitters::kInfinity;
  std::vector<double> parameter_sensitivity;  // dp_j / dz
};

// A consistency criterion (e.g. Rouquerol's for BET) and whether it holds.
struct ConsistencyCheck {
  std::string criterion;
  bool passed = false;
  std::string detail;
};

// Whether the points of a group can support a model at all, decided before fitting from the
// design alone (how many points lie in the model's RH range against its parameter count).
//
// Rule (MinimumPoints): n >= p + 1 points, i.e. at least one residual degree of freedom. With
// n = p a model interpolates its points: nothing tests it (no chi-square check, no residual
// variance for relative weights) and its parameter uncertainties are not estimable (common
// practice). For BET (p = 2, fitted to the points between FitStageOptions::bet_rh_min_fraction
// and bet_rh_max_fraction, 5..35 % RH by default) that is three points, the minimum of a
// multipoint BET determination (ISO 9277:2010, 7.2; from memory). The AICc ranking needs one
// point more, n >= p + 2 (AICc's correction 2p(p + 1) / (n - p - 1), Hurvich & Tsai,
// Biometrika 76 (1989) 297): a fit with n = p + 1 is evaluated but not ranked (Rank).
// A model the design cannot support is not fitted, not ranked and not flagged as a failure:
// ModelFit::design says why ("not evaluated").
struct ModelDesign {
  bool supported = true;  // (a ModelFit built by hand is taken as supported)
  int points = 0;         // observations in the model's RH range (isotherm + retention points)
  int points_needed = 0;  // MinimumPoints(num_parameters)
  int num_parameters = 0;
  double rh_min_fraction = 0.0;  // the model's RH range (BET: the options' BET range)
  double rh_max_fraction = 1.0;
  bool restricted_range = false;  // the range is narrower than 0..100 % RH (BET)
  std::string reason;             // machine-readable, empty when supported
};

// Points a model with num_parameters parameters needs (ModelDesign): num_parameters + 1.
int MinimumPoints(int num_parameters);

// Whether a converged fit's parameters are determined by its data. Not identifiable when the
// covariance is unavailable, a parameter sits at a bound (its interval is then not a
// confidence interval), or a parameter's standard uncertainty exceeds
// max_relative_parameter_uncertainty times its value. Such a fit shows no uncertainties or
// correlations on the sheet, is never ranked, and never drives a headline value or a pore-size
// distribution: IsIdentified is the one predicate the fit ranking, the datasheet's headline
// selection and the pores stage use.
struct Identifiability {
  bool identifiable = false;
  std::string reason;  // in plain words, empty when identifiable
};
Identifiability CheckIdentifiability(const fitters::FitResult& result,
                                     double max_relative_parameter_uncertainty);

// The goodness-of-fit check of a fit (GoodnessOfFitOf, below).
struct GoodnessOfFit {
  bool passed = false;
  std::string test;      // "chi-square" (absolute weights) or "runs test" (relative weights)
  double p_value = 0.0;  // NaN when the test has no degrees of freedom (fails)
  std::string reason;    // in plain words, empty when passed
};

// One model fitted to one group.
struct ModelFit {
  std::string model_name;
  fitters::ModelInfo info;
  int group_index = 0;
  fitters::FitResult result;
  // Per parameter: k * standard error, k = reduce::CoverageFactor(effective_dof, the reduce
  // stage's coverage factor) (= IsothermFits::coverage_factor for infinite nu_eff).
  std::vector<double> expanded_uncertainty;
  std::vector<double> effective_dof;  // per parameter (infinity: no Type A part with few dof)
  // The specimen term (see SpecimenFactor): result.covariance includes it; the covariance from
  // the independent parts alone, its degrees of freedom and the sensitivities.
  Eigen::MatrixXd covariance_independent;
  // The part of covariance_independent that comes from the pooled Type A line of the points
  // (FitGroup::pooled_scatter_variance), the only part with independent_dof degrees of freedom
  // under absolute weights (see SpecimenFactor, effective degrees of freedom); 0 x 0 when not
  // formed (relative weights: all of covariance_independent has independent_dof = n - p).
  Eigen::MatrixXd covariance_pooled_scatter;
  double independent_dof = fitters::kInfinity;
  std::vector<SpecimenSensitivity> specimen_sensitivities;
  // Indices into groups[group_index].observations of the points this model was fitted to
  // (BET: only its RH range; retention points only for retention models).
  std::vector<int> used_observations;
  std::vector<fitters::BandPoint> band;  // delta method, on the band grid
  fitters::ResampleResult bootstrap;
  fitters::ResampleResult monte_carlo;
  std::vector<ConsistencyCheck> consistency;  // BET: Rouquerol criteria
  // GoodnessOfFitOf(*this), evaluated once by the fit stage for every converged fit (the gate of
  // the resampling and of the ranking read it); default (not passed) otherwise.
  GoodnessOfFit goodness;
  std::vector<std::string> flags;  // every guard rail tripped
  int rank = 0;        // 1 = best AICc in its group among identified fits (IsIdentified)
  ModelDesign design;  // decided before fitting; !supported: not evaluated
  // FitStageOptions::max_relative_parameter_uncertainty the fit was judged with.
  double max_relative_parameter_uncertainty = 1.0;
};

// The identifiability of a fit as it stands (result.covariance includes the specimen term):
// CheckIdentifiability with the fit's own limit; "not evaluated" for a design that cannot
// support the model.
Identifiability IdentifiabilityOf(const ModelFit& fit);
// The fit may be used for results: evaluated, converged and identifiable from its data
// (IdentifiabilityOf). The one predicate of the ranking, the headline and the pores stage.
bool IsIdentified(const ModelFit& fit);

// Goodness of fit a fit must pass to be ranked, hence to be a group's best model, to drive
// headline values and the model-based pore distribution (IsUsable). Under absolute weights the
// stated uncertainties are known, and the chi-square test of the weighted SSR on n - p degrees
// of freedom asks whether the model describes the points within them; under relative weights
// the variance is estimated from the residuals, chi-square tests nothing, and the runs test of
// the residual signs (systematic misfit) is read instead.
//
// Threshold: p >= kMinGoodnessOfFitPValue. The p-values of adequate fits are uniform, so a gate
// at p rejects an adequate model with probability p; a rejected fit withholds a result, so the
// gate is set where a rejection is strong evidence: 0.1 % (common practice for a goodness-of-fit
// gate; the pores stage's PoreOptions::model_min_fit_p_value takes its default from here). The
// engine's 5 % chi-square flag (fitters/fit_engine.cc) stays a caution on a usable fit.
inline constexpr double kMinGoodnessOfFitPValue = 1e-3;

GoodnessOfFit GoodnessOfFitOf(const ModelFit& fit);

// The fit may be used for results: identified from its data (IsIdentified) and consistent with
// them within their uncertainties (GoodnessOfFitOf). The predicate of the ranking: only such
// fits are ranked, so only such a fit is a group's best model, gives headline values or drives
// a pore-size distribution chosen as "best".
bool IsUsable(const ModelFit& fit);

struct FitStageSummary {
  std::vector<Diagnostic> warnings;
  int fits_attempted = 0;  // fitters::FitModel calls (group x model pairs the design supports)
  int fits_converged = 0;
  int models_not_evaluated = 0;  // group x model pairs the design cannot support (ModelDesign)
};

struct IsothermFits {
  std::vector<FitGroup> groups;
  std::vector<ModelFit> fits;
  std::vector<int> best_fit_per_group;  // index into fits, -1 if no fit of the group is ranked
  // Per group: why it has no best model (each evaluated model and why it is not ranked, e.g.
  // "Oswin: fails its chi-square check (p = 7.1e-49, below 0.001)"), "" when it has one.
  std::vector<std::string> no_best_fit_reason;
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
// (other models the ModelInfo x range) and gets the four Rouquerol checks; a model the design
// cannot support (ModelDesign, n < p + 1) is not fitted: termination kTooFewPoints, message
// ModelDesign::reason, no flag and no warning (not a failure); bands on band_grid_points RH values
// over [band_rh_min, band_rh_max] clipped to that range; bootstrap and Monte Carlo draws come from
// random streams that are a pure function of options.seed, the group index and the model name
// (so adding a model to the list does not change the draws of the others).
//
// Ranking: AICc among the usable fits (IsUsable: identified, goodness of fit passed) of a group
// that used all of its isotherm points (AICc is only comparable on identical data) and whose
// AICc is defined (n >= p + 2); BET on its restricted range, retention models fitted with
// retention points, fits with undefined AICc, fits not identifiable from their data and fits
// that fail their goodness-of-fit check keep rank 0 with a "not ranked" flag. A group without a
// ranked fit has no best model (best_fit_per_group -1, no_best_fit_reason says why).
//
// Never throws for a failed fit (see ModelFit::flags). Throws InputError for invalid options,
// ComputationError when there is no point to fit or no model converged in any group.
IsothermFits FitIsotherms(const reduce::ReducedIsotherms& reduced, const FitStageOptions& options);

// Standard uncertainty, effective degrees of freedom and coverage factor of a quantity derived
// from a fit's parameters with gradient g = dq/dp (see SpecimenFactor): u^2 = g' C g,
// nu_eff by Welch-Satterthwaite over the independent part and each specimen factor, k =
// reduce::CoverageFactor(nu_eff, nominal_k). Without a specimen term nu_eff is that of the
// covariance (infinite under absolute weights) and k = nominal_k.
struct DerivedUncertainty {
  double standard_uncertainty = 0.0;
  double effective_dof = fitters::kInfinity;
  double coverage_factor = 2.0;
};
DerivedUncertainty PropagateToDerived(const ModelFit& fit, const std::vector<double>& gradient,
                                      double nominal_k);
// The same for the fitted curve's value at rh_fraction (g = df/dp there; ModelContext at the
// group's temperature). Standard uncertainty 0 without a covariance.
DerivedUncertainty CurveUncertainty(const IsothermFits& fits, const ModelFit& fit,
                                    double rh_fraction);

}  // namespace sorbtrace::fit
