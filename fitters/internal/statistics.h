// Fit statistics, quantiles and the runs test. Internal to fitters/.
#pragma once

#include <vector>

#include "fitters/fitter.h"

namespace sorbtrace::fitters::internal {

// Wald-Wolfowitz runs test on the signs of a sequence (zeros skipped), normal approximation
// (A. Wald, J. Wolfowitz, Ann. Math. Statist. 11 (1940) 147-162; formulas as in the
// NIST/SEMATECH e-Handbook of Statistical Methods, sec. 1.3.5.13):
//   mu = 2 n1 n2 / N + 1, var = 2 n1 n2 (2 n1 n2 - N) / (N^2 (N - 1)), z = (R - mu) / sqrt(var).
struct RunsTestResult {
  int runs = 0;
  int num_positive = 0;
  int num_negative = 0;
  double z = 0.0;
  double p_value = 1.0;  // two-sided; 1 when undefined (fewer than one of either sign)
  bool defined = false;  // both signs present and var > 0
};
RunsTestResult WaldWolfowitzRunsTest(const std::vector<double>& sequence);

// Two-sided coverage factor at `confidence_level`: Student-t quantile with `dof` degrees of
// freedom under kRelative, standard normal under kAbsolute. NaN if dof < 1 (kRelative).
double CoverageFactor(WeightConvention convention, int degrees_of_freedom, double confidence_level);

// Upper tail P(chi2_dof >= value). NaN if dof < 1.
double ChiSquareUpperTail(double value, int degrees_of_freedom);

// Quantile q in [0, 1] of the values, linear interpolation between order statistics
// (Hyndman & Fan 1996, type 7). `values` is reordered in place (partially sorted). NaN if
// empty.
double Percentile(std::vector<double>* values, double q);

// Percentile(values, q_low) and Percentile(values, q_high) in one partial ordering.
void PercentilePair(std::vector<double>* values, double q_low, double q_high, double* low,
                    double* high);

// Statistics of a fit: residuals_y = y - f, x_terms = sum of ((x0_obs - x0_true)/sigma_x0)^2.
// Descriptive statistics (SSR, RMSE, R², MRD, runs test) use residuals_at_observed_x,
// y_i - f(x_i observed), the measures a reader compares across fits; the objective-based
// ones (weighted SSR, chi-square, AIC/AICc/BIC) use residuals_y at the fitted x plus the
// errors-in-variables x terms. Without errors in variables both residual sets coincide.
FitStatistics ComputeStatistics(const std::vector<Observation>& observations,
                                const std::vector<double>& residuals_y, double x_terms,
                                int num_parameters,
                                const std::vector<double>& residuals_at_observed_x);

}  // namespace sorbtrace::fitters::internal
