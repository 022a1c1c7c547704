// Internal helpers of the isotherm models: weighted linear least squares for the starting
// values from linearised forms, and small utilities shared by the StartingPoints() of several
// models. Not part of the public fitters interface.
#pragma once

#include <functional>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters::models {

// Result of a weighted linear least-squares fit y = sum_j coefficients[j] * basis_j(x).
struct LinearFit {
  bool ok = false;  // false: fewer points than coefficients or singular design
  std::vector<double> coefficients;
  double weighted_ssr = 0.0;  // sum w_i (y_i - fit_i)^2
};

// Solves min sum_i w_i (y_i - sum_j c_j design[i][j])^2 by a column-pivoted QR decomposition.
// design is n x k (row per point); weights w_i >= 0 (points with w_i = 0 are ignored).
LinearFit WeightedLinearLeastSquares(const std::vector<std::vector<double>>& design,
                                     const std::vector<double>& y,
                                     const std::vector<double>& weights);

// Weighted straight line y = c0 + c1 x.
LinearFit WeightedStraightLine(const std::vector<double>& x, const std::vector<double>& y,
                               const std::vector<double>& weights);

// Points with finite x[0] strictly inside (x_low, x_high) and finite y > 0: the ones a
// linearised form (logarithms, reciprocals) can use.
std::vector<Observation> PositivePointsInside(const std::vector<Observation>& observations,
                                              double x_low, double x_high);

// Largest y of the observations (0 if none).
double MaxResponse(const std::vector<Observation>& observations);

// Weighted sum of squared residuals sum ((y - f(x)) / sigma_y)^2 of a candidate parameter
// vector, using the model equation `evaluate` (non-finite values count as +infinity).
double CandidateCost(const std::vector<Observation>& observations,
                     const std::function<double(const double* x)>& evaluate);

// True when every value is finite.
bool AllFinite(const std::vector<double>& values);

// Moves each value into [lower_bound, upper_bound] of the matching parameter of `info`.
std::vector<double> ClampToBounds(std::vector<double> point, const ModelInfo& info);

// Keeps the candidates that are finite and have the right size, clamps them into the bounds,
// and drops exact duplicates (order preserved).
std::vector<std::vector<double>> CleanStartingPoints(
    const std::vector<std::vector<double>>& candidates, const ModelInfo& info);

}  // namespace sorbtrace::fitters::models
