// Internal to the equilibrate stage: extrapolation of an unfinished humidity step to its
// asymptote by an exponential fit of the tail of the mass curve.
//
//   one term:  m(t) = m_inf - A exp(-(t - t0)/tau)
//   two terms: m(t) = m_inf - A1 exp(-(t - t0)/tau1) - A2 exp(-(t - t0)/tau2)
//
// t0 is the first time of the tail. One term: variable projection (for each tau the model is
// linear in m_inf and A: solved exactly; tau found by a log-spaced grid and golden-section
// refinement, robust without a starting value). Two terms: Ceres (Levenberg-Marquardt,
// automatic derivatives) started from the one-term solution. The standard uncertainty of
// m_inf is sqrt of the (m_inf, m_inf) element of s^2 (J^T J)^-1 at the optimum, with
// s^2 = SSR / (n - p) (JCGM 100:2008 treats it as a Type A evaluation). It assumes
// independent residuals; correlated noise makes it optimistic.
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
  double u_m_inf_g = 0.0;     // standard uncertainty of the asymptote
  double amplitude_g = 0.0;   // A (one term) or A1
  double tau_s = 0.0;         // tau (one term) or tau1
  double amplitude2_g = 0.0;  // A2 (two terms)
  double tau2_s = 0.0;        // tau2 (two terms)
  double slowest_tau_s = 0.0;
  double rms_residual_g = 0.0;
  int num_points = 0;
  // Model value and slope at time t.
  double Mass_g(double time_s) const;
  double Slope_g_per_s(double time_s) const;
};

// Fits the tail given as parallel arrays (times increasing). terms is 1 or 2; a two-term fit
// that does not converge or is not identifiable falls back to the one-term result (message
// says so).
TailFit FitExponentialTail(std::span<const double> time_s, std::span<const double> mass_g,
                           int terms);

}  // namespace sorbtrace::equilibrate::internal
