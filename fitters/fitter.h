// The fitting engine: weighted (optionally robust, optionally errors-in-variables) nonlinear
// least squares on Ceres Solver with bounds and deterministic multi-starts; covariance,
// confidence intervals, fit statistics, delta-method bands, and resampling (bootstrap and
// JCGM 101 Monte Carlo). Options in, result + summary out.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <string>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters {

// How the observation sigmas are interpreted when the covariance is formed.
enum class WeightConvention {
  // sigma_y are relative weights: covariance = s^2 (J'J)^-1 with s^2 = SSR / (n - p).
  kRelative,
  // sigma_y are absolute standard uncertainties: covariance = (J'J)^-1, and the chi-square
  // statistic SSR against n - p degrees of freedom is reported as a consistency check.
  kAbsolute,
};

enum class LossKind { kSquared, kHuber, kSoftLOne, kCauchy };

// How the dense solver computes each Levenberg-Marquardt step (the names of Ceres'
// LinearSolverType): Householder QR of the damped Jacobian (DENSE_QR, the default: accurate
// however ill-conditioned the Jacobian), or Cholesky of its normal equations
// (DENSE_NORMAL_CHOLESKY: about half the work for the few columns here, squares the condition
// number; Resample uses it for refits that start near their optimum).
enum class StepSolver { kDenseQr, kDenseNormalCholesky };

struct FitOptions {
  int max_iterations = 500;
  double function_tolerance = 1e-15;
  double gradient_tolerance = 1e-15;
  double parameter_tolerance = 1e-15;
  LossKind loss = LossKind::kSquared;
  double loss_scale = 1.0;           // in units of the weighted residual
  bool errors_in_variables = false;  // fit the true x[0] of each point (needs sigma_x0 > 0)
  WeightConvention weights = WeightConvention::kRelative;
  // Deterministic extra starts derived from each model starting point (0 = only the given).
  int num_multistarts = 4;
  // Replaces the model's StartingPoints() when not empty (e.g. NIST certified starts).
  std::vector<std::vector<double>> starting_points;
  bool use_bounds = true;
  double confidence_level = 0.95;  // for Student-t parameter intervals and bands
  // Ceres' non-monotonic trust-region steps (helps on long narrow valleys, e.g. NIST MGH10).
  bool use_nonmonotonic_steps = false;
  // Ceres' initial Levenberg-Marquardt trust-region radius (its default, 1e4). Smaller values
  // keep the first steps near the start (NIST BoxBOD from start 1 needs that).
  double initial_trust_region_radius = 1e4;
  // Rank test of the covariance: the Jacobian, columns scaled to unit norm, is treated as
  // rank deficient when sigma_min / sigma_max < sqrt(this) (Ceres' convention, its default).
  double covariance_min_reciprocal_condition_number = 1e-14;
  // Statistical stopping rule for refits of resampled data (Resample sets both from
  // ResampleOptions::refit_tolerance_se and the full-data standard errors): after each accepted
  // step the dense solver also forms the undamped Gauss-Newton step to the optimum of the local
  // linear model, and stops (converged) once that step moves no parameter j by more than
  // scaled_step_tolerance * parameter_scale[j]. 0 = off. The dense solver (squared loss) only.
  double scaled_step_tolerance = 0.0;
  StepSolver step_solver = StepSolver::kDenseQr;
  std::vector<double> parameter_scale;  // > 0, one per parameter, in the parameters' units
  // A parameter is flagged at_bound when |value - bound| <= bound_tolerance * max(1, |bound|).
  double bound_tolerance = 1e-8;

  // Returns false and explains in *error when a setting is out of range.
  bool IsValid(std::string* error) const;
};

enum class FitTermination { kConverged, kNoConvergence, kFailure, kTooFewPoints };

// One start of the multi-start search.
struct StartReport {
  std::vector<double> start;
  std::vector<double> solution;
  double cost = 0.0;  // 0.5 * weighted SSR, as Ceres reports it
  int iterations = 0;
  bool converged = false;
  std::string termination;  // Ceres' termination message
};

// The prefix of a flag from Model::PhysicalFlags: the parameters lie outside the range in
// which the model's physical interpretation holds (the curve may still describe the data).
inline constexpr const char* kPhysicsFlagPrefix = "physics: ";

struct FitSummary {
  FitTermination termination = FitTermination::kFailure;
  std::string message;  // one line: why it ended
  int iterations = 0;   // of the best start
  int starts_tried = 0;
  std::vector<StartReport> starts;
  std::string covariance_convention;  // which scaling was applied, in words
  bool covariance_available = false;
  std::vector<std::string> flags;  // guard rails: n <= p, singular Jacobian, at bound, physics
  std::string BriefReport() const;
};

// One parameter estimate with its Student-t interval at FitOptions::confidence_level.
struct ParameterEstimate {
  std::string name;
  std::string unit;
  double value = 0.0;
  double standard_error = 0.0;  // NaN without a covariance
  double interval_low = 0.0;    // value -+ coverage_factor * standard_error
  double interval_high = 0.0;
  bool at_bound = false;
};

// Goodness of fit. n = observations, k = p = fitted parameters (the residual variance is not
// counted in k), w_i = 1 / sigma_y_i^2. Errors in variables: the x terms
// ((x0_obs - x0_true) / sigma_x0)^2 are part of weighted_ssr (it is the minimised objective,
// chi-square with n - p degrees of freedom); ssr, rmse, r_squared, the relative deviation and
// the runs test use y_i - f(x_i) at the OBSERVED x, the usual descriptive measures.
struct FitStatistics {
  int num_observations = 0;
  int num_parameters = 0;
  int degrees_of_freedom = 0;
  double weighted_ssr = 0.0;  // sum ((y - f) / sigma)^2
  double ssr = 0.0;           // sum (y - f)^2, in units of y^2
  double rmse = 0.0;          // sqrt(ssr / n)
  double residual_std = 0.0;  // sqrt(weighted_ssr / dof)
  double r_squared = 0.0;     // 1 - sum w (y - f)^2 / sum w (y - ybar_w)^2, weighted mean ybar_w
  double adjusted_r_squared = 0.0;               // 1 - (1 - R^2) (n - 1) / (n - p)
  double mean_relative_deviation_percent = 0.0;  // (100/n) sum |y - f| / |y| over y != 0
  double aic = 0.0;   // n ln(weighted_ssr / n) + 2k (least-squares form, constants dropped)
  double aicc = 0.0;  // aic + 2k(k + 1) / (n - k - 1); NaN when n - k - 1 <= 0
  double bic = 0.0;   // n ln(weighted_ssr / n) + k ln n
  double chi_square_p_value = 0.0;  // P(chi2_dof >= weighted_ssr); meaningful for kAbsolute
  int runs = 0;                     // sign runs of the residuals ordered by x (Wald-Wolfowitz)
  double runs_test_p_value = 1.0;   // two-sided, normal approximation; 1 if all one sign
};

// Akaike weights of candidate models fitted to the same data (K. P. Burnham, D. R. Anderson,
// Model Selection and Multimodel Inference, 2nd ed., Springer 2002, sec. 2.9, eq. 2.14):
// Delta_i = AICc_i - min_j AICc_j, w_i = exp(-Delta_i / 2) / sum_j exp(-Delta_j / 2), in the
// order given. A NaN or +infinite AICc (undefined: n - k - 1 <= 0) takes no part (weight 0).
// -infinite AICc (an exact fit, weighted SSR 0) is the limit of the definition: those models
// share the weight equally. All weights 0 when no AICc takes part.
std::vector<double> AkaikeWeights(const std::vector<double>& aicc);

struct FitResult {
  std::string model_name;
  std::vector<double> parameters;
  std::vector<ParameterEstimate> estimates;
  // p x p, after the convention in summary; 0 x 0 when summary.covariance_available is
  // false (standard errors and intervals are then NaN).
  Eigen::MatrixXd covariance;
  Eigen::MatrixXd correlation;  // p x p
  FitStatistics statistics;
  std::vector<double> fitted;     // f(x_i) at the solution
  std::vector<double> residuals;  // y_i - f(x_i) at the fitted x_i (errors in variables: the
                                  // fitted true x[0]; these enter the objective)
  // y_i - f(x_obs,i) at the OBSERVED x: what a reader re-derives from a point and the curve,
  // the residuals of rmse, the runs test and the residual plot (= residuals without errors in
  // variables; under them the fitted x absorbs most of the misfit, so `residuals` are tiny).
  std::vector<double> residuals_at_observed_x;
  std::vector<double> fitted_x0;  // errors-in-variables: the fitted true x[0]; else = observed
  // Per point: 1 where its true x[0] was a fitted variable (ErrorsInVariablesMask of the data
  // and options of this fit); what later steps (resampling) read instead of deciding again.
  std::vector<char> x0_is_fitted;
  FitSummary summary;
  WeightConvention weight_convention = WeightConvention::kRelative;
  // Quantile used for the parameter intervals and bands: Student-t with n - p degrees of
  // freedom under kRelative (variance estimated), standard normal under kAbsolute (known).
  double coverage_factor = 0.0;
  double mean_sigma_y_squared = 1.0;  // mean of sigma_y^2 over the data (prediction bands)
  bool ok() const { return summary.termination == FitTermination::kConverged; }
};

FitResult FitModel(const Model& model, const std::vector<Observation>& observations,
                   const ModelContext& context, const FitOptions& options);

// The errors-in-variables rule, the one place it is decided: point i's true x[0] is a fitted
// variable exactly when options.errors_in_variables is set and its sigma_x0 > 0 (an x[0] with
// no stated uncertainty is exact). One entry (0 or 1) per observation.
std::vector<char> ErrorsInVariablesMask(const std::vector<Observation>& observations,
                                        const FitOptions& options);

// Fitted curve with confidence (of the mean curve) and prediction (of a new observation)
// bands on an x grid (x[1] = 0 for two-input models), delta method:
//   var f(x) = g' C g, g = df/dp at the solution, C = FitResult::covariance;
//   confidence = f -+ k sqrt(var f), prediction = f -+ k sqrt(var f + var_new), where
//   var_new = s^2 * mean(sigma_y^2) under kRelative (s^2 = weighted_ssr / (n - p)) and
//   mean(sigma_y^2) under kAbsolute, and k is the quantile at confidence_level (Student-t
//   with n - p degrees of freedom under kRelative, normal under kAbsolute).
// Without a covariance (fit.summary.covariance_available false) the band limits are NaN.
struct BandPoint {
  double x = 0.0;
  double y = 0.0;
  double confidence_low = 0.0;
  double confidence_high = 0.0;
  double prediction_low = 0.0;
  double prediction_high = 0.0;
};

std::vector<BandPoint> DeltaMethodBand(const Model& model, const FitResult& fit,
                                       const ModelContext& context,
                                       const std::vector<double>& x_grid, double confidence_level);

enum class ResampleKind {
  kResidualBootstrap,  // y* = f(x; p_hat) + resampled weighted residual * sigma (and x*
                       // along the curve's normal under errors in variables)
  kCaseBootstrap,      // resample points with replacement
  kMonteCarloInputs,   // JCGM 101: draw y (and x) from their stated uncertainties
};

// A relative factor (1 + z) that several observations share, drawn once per resample and
// applied to every observation it acts on: y_i -> y_i (1 + w_i z) (a correlated
// input, JCGM 100:2008 F.1.2.3; JCGM 101:2008, clause 7, draws one value of every input quantity
// per trial, so a quantity shared by several points is drawn once; clause numbers from memory).
// The residuals do not show it (it moves every point alike, and
// the fit absorbs it), so the bootstraps draw it too, as a parametric component. Used by the
// fit stage for the specimen term (pipeline/reduce/reduce.h); none = no extra draws.
// The distribution of z: where u comes from a Type A evaluation with nu degrees of freedom
// (the specimen term: nu_d <= S - 1), the scaled and shifted t, z = u t_nu (JCGM 101:2008,
// 6.4.9.7: scale u itself, not u sqrt((nu - 2) / nu)); z ~ N(0, u^2) for infinite nu (a Type B
// or well-known u). For nu <= 2 the draws of z, and so the parameter draws, have no finite
// variance: ResampleResult states intervals and u from percentiles (DrawStatisticsOf,
// pipeline/common/draw_statistics.h), never from the draws' standard deviation.
// Fewer than one degree of freedom: a Welch-Satterthwaite nu of a term estimated as the
// difference of two nearly equal variances (the specimen term of identical specimens: measured
// nu_d = 0.03-0.07 with u = 1e-5 relative on generated desiccator jobs) is drawn with nu = 1.
// JCGM 101:2008, 6.4.9.7 draws a Type A input from n >= 2 indications, nu = n - 1 >= 1, and the
// covariance path takes its k at max(1, floor(nu_eff)) as well (pipeline/fit/fit_stage.cc,
// SetCoverage). Drawn as given, t_0.03 puts the central 68 % of z beyond 10^10 u: a term of
// 1e-5 moved every point by orders of magnitude, the refits ran off (GAB C to 10^6, bootstrap
// and Monte Carlo u up to 10^6 times the covariance u), and the quantile overflowed (boost
// "Overflow Error": no interval at all). With t_1 such a term stays as small as its u says
// (tests/models/gab_small_eiv_coverage_test.cc, NegligibleCommonFactorWithFewDof).
inline constexpr double kMinFactorDof = 1.0;

struct CommonFactor {
  double relative_standard_uncertainty = 0.0;  // u of z
  std::vector<double> weights;                 // w_i, one per observation (0: not affected)
  double degrees_of_freedom = kInfinity;       // nu of u (infinity: z drawn normal)
};

struct ResampleOptions {
  ResampleKind kind = ResampleKind::kResidualBootstrap;
  // Drawn at the start of each resample, in this order, before its per-point draws; applied to
  // f(t_i) in the residual bootstrap, to y of the drawn case in the case bootstrap and to y_i in
  // the Monte Carlo draw. Empty: the draws are those without common factors, number for number.
  std::vector<CommonFactor> common_factors;
  int num_resamples = 1000;
  std::uint64_t seed = 20261201;  // results are a pure function of the inputs and this value
  double confidence_level = 0.95;
  // Each refit stops once its estimated distance to its own optimum (the undamped Gauss-Newton
  // step) is below this many full-data standard errors in every parameter (see
  // FitOptions::scaled_step_tolerance); 0 = only the FitOptions tolerances. The default, 0.01,
  // is an eighth of the Monte Carlo error of a 2.5 % percentile from 1000 resamples (about
  // 0.085 standard errors for a normal spread: sqrt(0.025 * 0.975 / 1000) / phi(1.96)).
  double refit_tolerance_se = 0.01;
  // Threads that run the refits (the calling one included; at most num_resamples). Each draw
  // has its own random stream (see Resample), so the result is the same, bit for bit, for every
  // value.
  int num_threads = 1;
};

// Percentile intervals of the parameters from resampled refits
// (warm-started from the full-data solution, no multi-starts). Draw b (b = 0, 1, ...) comes from
// a std::mt19937_64 stream of its own whose initial state is
// internal::DrawStreamState(ResampleOptions::seed, b) (SplitMix64 of seed and index,
// fitters/internal/random.h), with our own uniform/Box-Muller transforms; the draws are refitted
// on ResampleOptions::num_threads threads and collected in draw order.
//  - residual bootstrap: weighted residuals e_i = (y_i - f_i) / sigma_i, divided by
//    sqrt(1 - h_i) with h_i the leverage of point i in the fit linearised at the solution, and
//    centred: the modified residuals of Davison & Hinkley 1997, Bootstrap Methods and their
//    Application, sec. 6.2.3, eq. 6.9 (scaled by sqrt(n / (n - p)) instead where no leverage is
//    available: robust loss, singular Jacobian); y*_i = f_i + sigma_i e*_j with j drawn
//    uniformly. With errors in variables
//    (a fitted true x t_i per point, FitOptions::errors_in_variables) the residual of point i
//    is a vector in weighted coordinates, (r_xi, r_yi) = ((x0_i - t_i) / sigma_x0_i,
//    (y_i - f(t_i)) / sigma_y_i), and at the optimum it lies along the curve's normal
//    n_i = (-a_i, 1) / sqrt(1 + a_i^2), a_i = f'(t_i) sigma_x0_i / sigma_y_i: the fit moves t_i
//    to absorb the part along the curve. Resampling only r_y (keeping x0_i) therefore draws
//    the small y leg of each residual and gives parameter spreads orders of magnitude too
//    narrow. The pool is instead the signed length e_i = r_xi n_xi + r_yi n_yi (to first
//    order the residual of the effective-variance regression (y_i - f(x0_i)) /
//    sqrt(sigma_y^2 + f'^2 sigma_x0^2), J. Orear 1982, Am. J. Phys. 50, 912, from memory),
//    modified and centred as above with the leverages of that reduced regression, and each draw
//    puts e*_j back along the point's own normal: x0*_i = t_i + sigma_x0_i e*_j n_xi, y*_i = f(t_i)
//    + sigma_y_i e*_j n_yi (the residual bootstrap of Davison & Hinkley sec. 6.2.3 applied to that
//    reduced regression). Without a fitted t_i, n_i = (0, 1) and this is the plain residual
//    bootstrap above;
//    Residual scale, absolute weights (WeightConvention::kAbsolute, the fit stage's default): the
//    sigmas are the standard uncertainties, known as the covariance (J'J)^-1 and the Monte Carlo
//    take them, so the pool is scaled to root mean square 1 (its shape is resampled, its scale is
//    the stated one) and no scale is drawn. Kept at the scale s^2 = chi2 / nu of the residuals,
//    a pool of n - p = 3-6 residual degrees of freedom made each job's interval as wide as its
//    own chance chi2 (s from 0.04 to 1.4 of the stated scale over generated desiccator jobs):
//    intervals 3-25 times narrower than the covariance's missed (held-out desiccator jobs: GAB C
//    85 %, max |z| 10-12; vapour logs max |z| 4.6-6.0), while the drawn scale below made others
//    t_3 wide. Scaled, the bootstrap is as wide as the stated uncertainties and keeps what the
//    residuals show beyond the covariance: their distribution and the model's curvature
//    (tests/models/gab_small_eiv_coverage_test.cc, seven salts, n - p = 4).
//    Relative weights (kRelative: the sigmas are only weights, the scale is estimated): every
//    residual bootstrap draw multiplies its drawn residuals by one factor
//    w* = sqrt(nu / chi2*_nu), nu = n - p (ResidualScaleVariate in resample.cc): the pool's
//    spread is the residual scale s estimated from nu residuals, and a bootstrap that keeps it
//    fixed treats s as the true error scale; its percentile intervals then cut the estimates'
//    spread at normal-like points and under-cover by about P(|t_nu| <= 1.96) (0.934 at nu = 17,
//    0.86 at nu = 3; measured 0.92 and 0.84 in tests/models/gab_eiv_coverage_test.cc and
//    tests/coverage/resampled_coverage_test.cc before the factor). Drawing sigma / s from its
//    distribution given s (nu s^2 / sigma^2 ~ chi2_nu; the posterior under p(sigma) ~ 1 / sigma,
//    Gelman et al., Bayesian Data Analysis, 3rd ed. 2013, sec. 14.2, from memory) makes the
//    draws of a linear model t_nu-wide, as the Student-t interval of the same fit: the scale's
//    own uncertainty, drawn as JCGM 101:2008 6.4.9.7 draws a Type A input's. The studentised
//    pivot divides the factor out (se* carries it too);
//  - case bootstrap: n points drawn with replacement;
//  - Monte Carlo (JCGM 101:2008): y*_i ~ N(y_i, u_y_i), x0*_i ~ N(x0_i, u_x0_i) with u = sigma
//    under kAbsolute and u = s * sigma under kRelative (the sigmas are then only weights).
// Percentiles: linear interpolation between order statistics (Hyndman & Fan 1996, type 7).
// Studentised (bootstrap-t) intervals, for the two bootstrap kinds: each refit b also gives
// se*_bj = s*_b sqrt([(J*'J*)^-1]_jj) (s*_b below), and
// T*_bj = (p*_bj - p_hat_j) / se*_bj; the interval is
// [p_hat_j - T*_j(1 - a/2) se_hat_j, p_hat_j - T*_j(a/2) se_hat_j], se_hat from the full-data
// fit in the same form (B. Efron and R. J. Tibshirani 1993, An Introduction to the Bootstrap,
// sec. 12.5; Davison & Hinkley 1997, sec. 5.2.1). Under kRelative the percentile interval gets
// the t-like tails of the estimated scatter from the residual scale draw (above); the studentised
// one from its pivot, and it also corrects for skewness. The studentisation uses the covariance
// of the weight convention: s*_b^2 = SSR*_b / (n - p) under kRelative, s*_b = 1 under kAbsolute
// (the resampled residuals carry the stated scale, above; se_hat is then the fit's own standard
// error). Not formed where
// common factors are drawn (ResampleOptions::common_factors): a factor moves p*_bj but is not in
// se*_bj (the refit's covariance knows only the residuals), so T* would not be a pivot (measured
// in tests/coverage/resampled_coverage_test.cc, three specimens: 97.5-98.5 % coverage for 95 %
// intervals); ResampleResult::studentized_not_formed then says so.
struct ResampleResult {
  std::vector<std::vector<double>> parameter_draws;  // successful refits, each of size p
  std::vector<double> parameter_low;                 // percentile interval per parameter
  std::vector<double> parameter_high;
  std::vector<double> studentized_low;  // bootstrap-t interval per parameter (NaN: not formed)
  std::vector<double> studentized_high;
  int num_studentized = 0;  // refits that gave a covariance (the T* sample size)
  // Empty where the studentised intervals were formed (or the kind has none: Monte Carlo); else
  // why not (kStudentizedWithCommonFactor).
  std::string studentized_not_formed;
  // Per parameter: u, the half-width of the draws' central 68.27 % interval (DrawStatisticsOf:
  // the draws' standard deviation when they are normal, finite when they are drawn with a t
  // factor of nu <= 2 that has no standard deviation; [parameter_low, parameter_high] is the
  // interval at ResampleOptions::confidence_level). NaN with fewer than two draws.
  std::vector<double> parameter_u;
  int num_failed = 0;  // refits that did not converge
  // Solver iterations summed over all refits (successful and unsuccessful steps, as
  // SolveOutcome::iterations counts them): the cost of the resampling, for diagnostics.
  long long refit_iterations = 0;
  // Empty when the refits were run. Otherwise why none was: a full-data fit without a
  // covariance (FitSummary::covariance_available false: the Jacobian is rank deficient, some
  // parameter or combination has no effect on the fit) is not resampled. Its refits can only
  // drift along the undetermined direction until a tolerance or the iteration limit stops them,
  // so their spread would describe the solver, not the data (measured on the wood-fibre vapour
  // demo, desorption Durner fit with w1 at its bound and dlog10_alpha2 without effect: 52 % and
  // 77 % of the bootstrap and Monte Carlo refits ran into the 500-iteration limit, and the
  // percentile interval of the parameter without effect had zero width). All draws then count
  // as failed (num_failed = num_resamples).
  std::string not_formed;
};

// ResampleResult::studentized_not_formed where common factors are drawn.
inline constexpr const char* kStudentizedWithCommonFactor =
    "not formed: a common factor (specimen or cycle term) moves the refits but not their "
    "standard errors, so the studentised statistic is no pivot";

// ResampleResult::not_formed of a residual bootstrap under kAbsolute whose residuals are all
// zero (an exact fit: no shape to scale to the stated sigmas).
inline constexpr const char* kBootstrapZeroResiduals =
    "not formed: every residual of the fit is zero, so the residual bootstrap has nothing to "
    "resample";

ResampleResult Resample(const Model& model, const std::vector<Observation>& observations,
                        const ModelContext& context, const FitResult& full_fit,
                        const FitOptions& fit_options, const ResampleOptions& options);

}  // namespace sorbtrace::fitters
