// Internal to the equilibrate stage: the asymptote of a humidity step's mass curve from a fit
// of its tail, averaged over candidate kinetic models.
//
// Candidate models (t0 the first time of the tail, t_s the start of the step):
//   one exponential:   m(t) = m_inf - A exp(-(t - t0)/tau)                       (first order)
//   two exponentials:  m(t) = m_inf - A1 exp(-(t - t0)/tau1) - A2 exp(-(t - t0)/tau2)
//                      (parallel exponential kinetics of natural fibres, Hill, Norton & Newman,
//                      J. Appl. Polym. Sci. 112 (2009) 1524, from memory)
//   Fickian sheet:     m(t) = m_inf - A F((t - t_s)/tau), F(x) = sum over odd j of
//                      8/(j^2 pi^2) exp(-j^2 x): diffusion into a plane sheet from both faces
//                      after a step change of the surface concentration at t_s (J. Crank, The
//                      Mathematics of Diffusion, 2nd ed., Oxford 1975, eq. 4.18, with
//                      tau = 4 l^2/(pi^2 D) for a sheet of thickness 2l); for x < 0.2 its
//                      short-time form F = 1 - 4 sqrt(x/pi^3) (eq. 4.20 without the ierfc terms,
//                      which are below 1e-7 there). Needs the step start; A is free, so
//                      the mass at t_s is not imposed.
// The first-order and Fickian curves coincide late in a step (F -> 8/pi^2 exp(-x)) and part
// early (the sheet's sqrt(t) start); two exponentials describe a fast and a slow process.
//
// Fits: every fit runs on scaled variables, time (t - t0) / T with T the tail duration and mass
// (m - mean) / S with S the largest |m - mean| of the tail, and the results are scaled back: the
// same step logged in g, mg or ug (or in s or h) gives the same asymptote up to rounding. One
// exponential and the Fickian sheet: variable projection (for each tau the model is linear in
// m_inf and A, solved exactly; tau by a log-spaced grid, golden-section refinement and a few
// Gauss-Newton steps). Two exponentials: Ceres (Levenberg-Marquardt, automatic derivatives)
// started from the one-exponential solution, on at most 200 means of consecutive points. The
// standard uncertainty of each model's m_inf is sqrt of the (m_inf, m_inf) element of
// s^2 (J^T J)^-1 at its optimum, s^2 = SSR / (n - p) (a Type A evaluation, JCGM 100:2008, 4.2).
//
// Candidates: a model takes part when its fit converged and is identifiable and its slowest
// time constant is at most max_tau_to_span times the span its data constrain it over: the tail
// for the exponentials (their time origin is free), the step from t_s for the Fickian sheet
// (its origin is fixed at the step start). With none left the fit is refused.
//
// Model averaging (K. P. Burnham, D. R. Anderson, Model Selection and Multimodel Inference,
// 2nd ed., Springer 2002, 4.2-4.3; from memory): Akaike weights
// w_i = exp(-Delta_i / 2) / sum_k exp(-Delta_k / 2) from the small-sample criterion
// AICc = n ln(SSR/n) + 2p + 2p(p + 1)/(n - p - 1) (Hurvich & Tsai 1989) of every candidate on the
// same group means; the asymptote is the weighted mean m = sum w_i m_i, and its variance that of
// the mixture of the candidates' distributions (law of total variance; the "unconditional
// variance" of Burnham & Anderson in its mixture form, from memory):
//   u_fit^2   = sum w_i u_i^2            (within the models: the fit covariance, Type A)
//   u_model^2 = sum w_i (m_i - m)^2      (between the models: the kinetic-model term)
// When one model describes the tail far better than the others (as with hundreds of block means
// of a clean first-order, two-exponential or Fickian step) its weight is close to 1 and the
// result is that model's fit; when the data cannot tell the models apart, their spread is the
// model term. Kinetics that none of the candidates describes (e.g. a sheet swelling as it
// sorbs) are not covered by this term.
#pragma once

#include <optional>
#include <span>
#include <string>
#include <vector>

namespace sorbtrace::equilibrate::internal {

enum class KineticModel { kOneExponential, kTwoExponentials, kFickianSheet };
// "one exponential", "two exponentials", "Fickian sheet".
std::string KineticModelName(KineticModel model);

// One candidate of the average (input units).
struct TailCandidate {
  KineticModel model = KineticModel::kOneExponential;
  double m_inf_g = 0.0;
  double u_m_inf_g = 0.0;  // fit covariance
  double slowest_tau_s = 0.0;
  double weight = 0.0;  // Akaike weight
};

struct TailFit {
  bool ok = false;
  std::string message;  // why the fit was refused (when !ok)
  // Model-averaged asymptote and its two uncertainty parts (see above).
  double m_inf_g = 0.0;
  double u_m_inf_g = 0.0;  // sqrt(sum w_i u_i^2), Type A
  double u_model_g = 0.0;  // sqrt(sum w_i (m_i - m_inf)^2)
  // n - p of the model with the largest weight (TailFitOptions::point_sd_degrees_of_freedom
  // when a point sd is stated).
  int degrees_of_freedom = 0;
  std::vector<TailCandidate> candidates;  // in the order listed above
  // The curve of the model with the largest weight (for the slope at the step end).
  KineticModel model = KineticModel::kOneExponential;
  int terms = 1;  // exponentials of that model (Fickian sheet: 1)
  double t0_s = 0.0;
  double step_start_s = 0.0;   // Fickian sheet: time origin
  double model_m_inf_g = 0.0;  // that model's own asymptote
  double amplitude_g = 0.0;    // A (one exponential, Fickian sheet) or A1
  double tau_s = 0.0;          // tau or tau1
  double amplitude2_g = 0.0;   // A2 (two exponentials)
  double tau2_s = 0.0;         // tau2 (two exponentials)
  double slowest_tau_s = 0.0;
  double rms_residual_g = 0.0;
  // That model's residual sum of squares (g^2) and n - p, whether or not a point sd is stated
  // (a lack-of-fit test against it; a pooled scatter).
  double ssr_g2 = 0.0;
  int residual_degrees_of_freedom = 0;
  int num_points = 0;
  // sqrt(u_m_inf^2 + u_model^2).
  double TotalUncertainty_g() const;
  // Value and slope at time t of the curve of the model with the largest weight.
  double Mass_g(double time_s) const;
  double Slope_g_per_s(double time_s) const;
};

// The candidates and their weights, e.g. "one exponential 0.98, Fickian sheet 0.02".
std::string DescribeCandidates(const TailFit& fit);

// F(x) of the Fickian sheet (see above), x = (t - t_s) / tau >= 0.
double FickianSheetUnaccomplished(double x);

struct TailFitOptions {
  // 1: one exponential and the Fickian sheet; 2: also two exponentials.
  int max_exponential_terms = 2;
  // Credibility of a candidate's time constant (see above). Not a magic number: the default of
  // EquilibrateOptions::max_tau_to_tail_ratio (project choice).
  double max_tau_to_span = 3.0;
  // Start of the step (the Fickian sheet's time origin, <= the first tail time); without it the
  // Fickian sheet is not a candidate.
  std::optional<double> step_start_s;
  // Stated standard deviation of one point about the curve (e.g. the scatter of a data set's
  // weighings pooled over its steps, JCGM 100:2008, 4.2.4) and its degrees of freedom (0:
  // infinite, a Type B value such as the balance's stated uncertainty). When set, each
  // candidate's u(m_inf) is point_sd sqrt([(J'J)^-1]_00) in place of s sqrt(...), the weights use
  // AIC = SSR / sd^2 + 2p (known variance), TailFit::degrees_of_freedom is
  // point_sd_degrees_of_freedom, and four points suffice (five otherwise).
  std::optional<double> point_sd_g;
  int point_sd_degrees_of_freedom = 0;
};

// Fits the tail given as parallel arrays (times increasing).
TailFit FitExponentialTail(std::span<const double> time_s, std::span<const double> mass_g,
                           const TailFitOptions& options);

}  // namespace sorbtrace::equilibrate::internal
