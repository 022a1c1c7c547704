// Internal to the equilibrate stage: extrapolation of an unfinished humidity step to its
// asymptote by an exponential fit of the tail of the mass curve.
//
//   one term:  m(t) = m_inf - A exp(-(t - t0)/tau)
//   two terms: m(t) = m_inf - A1 exp(-(t - t0)/tau1) - A2 exp(-(t - t0)/tau2)
//
// t0 is the first time of the tail. The fit runs on scaled variables, time (t - t0) / T with T
// the tail duration and mass (m - mean) / S with S the largest |m - mean| of the tail, and
// the results are scaled back: the same step logged in g, mg or ug (or in s or h) gives the
// same asymptote up to rounding (a well-conditioned Jacobian whatever the unit; without the
// scaling a 12 mg specimen in grams made J^T J look singular). One term: variable projection (for
// each tau the model is linear in m_inf and A: solved exactly; tau found by a log-spaced grid and
// golden-section refinement, robust without a starting value). Two terms: Ceres
// (Levenberg-Marquardt, automatic derivatives) started from the one-term solution. The standard
// uncertainty of m_inf is sqrt of the (m_inf, m_inf) element of s^2 (J^T J)^-1 at the optimum, with
// s^2 = SSR / (n - p) (JCGM 100:2008 treats it as a Type A evaluation). It assumes
// independent residuals; correlated noise makes it optimistic.
//
// Model term: the asymptote depends on the kinetic model assumed. The other model (two terms
// when one was asked for, one term when two were) is fitted to the same tail; when the tail
// supports two exponentials (AICc of the two-term fit lower, Burnham & Anderson 2002), the
// other fit is identifiable and its slowest time constant is at most
// max_alternative_tau_to_span times the tail duration, the difference of the two asymptotes d
// is taken as the half-width of a
// rectangular distribution, u_model = |d| / sqrt(3) (JCGM 100:2008, 4.3.7). It is 0 when the
// other model cannot be fitted (a clean single exponential usually makes the two-term fit
// singular: then the models agree).
#pragma once

#include <span>
#include <string>

namespace sorbtrace::equilibrate::internal {

struct TailFit {
  bool ok = false;
  std::string message;  // why the fit was rejected (when !ok)
  int terms = 1;
  double t0_s = 0.0;
  double m_inf_g = 0.0;
  double u_m_inf_g = 0.0;            // standard uncertainty of the asymptote from the covariance
  double u_model_g = 0.0;            // model term (one vs two exponentials), see above
  double alternative_m_inf_g = 0.0;  // asymptote of the other model (when it was fitted)
  bool has_alternative = false;
  int degrees_of_freedom = 0;  // n - number of parameters (of the s^2 in u_m_inf_g)
  double amplitude_g = 0.0;    // A (one term) or A1
  double tau_s = 0.0;          // tau (one term) or tau1
  double amplitude2_g = 0.0;   // A2 (two terms)
  double tau2_s = 0.0;         // tau2 (two terms)
  double slowest_tau_s = 0.0;
  double rms_residual_g = 0.0;
  int num_points = 0;
  // sqrt(u_m_inf^2 + u_model^2).
  double TotalUncertainty_g() const;
  // Model value and slope at time t.
  double Mass_g(double time_s) const;
  double Slope_g_per_s(double time_s) const;
};

// Fits the tail given as parallel arrays (times increasing). terms is 1 or 2; a two-term fit
// that does not converge or is not identifiable falls back to the one-term result (message
// says so).
// Not a magic number: the default of EquilibrateOptions::max_tau_to_tail_ratio (project choice).
inline constexpr double kDefaultMaxAlternativeTauToSpan = 3.0;
TailFit FitExponentialTail(std::span<const double> time_s, std::span<const double> mass_g,
                           int terms,
                           double max_alternative_tau_to_span = kDefaultMaxAlternativeTauToSpan);

}  // namespace sorbtrace::equilibrate::internal
