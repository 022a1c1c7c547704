// Peleg four-parameter sorption isotherm.
//
//   u(a_w) = k1 a_w^n1 + k2 a_w^n2,  n1 < 1 < n2
// x[0] = a_w (rh_fraction, 0 <= a_w <= 1), u = moisture content kg/kg dry basis.
// Parameters:
//   0  k1  kg/kg  [0, 10]  coefficient of the concave (low a_w) term
//   1  n1  1      [0, 1]   exponent < 1
//   2  k2  kg/kg  [0, 10]  coefficient of the convex (high a_w) term
//   3  n2  1      [1, 50]  exponent > 1
// The bounds n1 <= 1 <= n2 impose the published ordering and so prevent label switching of the
// two terms. Source: M. Peleg, J. Food Process Eng. 16 (1993) 21.
// Starting values: for a grid of (n1, n2) the model is linear in k1, k2: weighted linear least
// squares for them, candidates ranked by weighted sum of squares, best first.
#pragma once

#include <cmath>
#include <string>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters::models {

struct PelegEquation {
  static constexpr int kNumParameters = 4;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info();
  template <typename T>
  static T Evaluate(const T* params, const T* x, const ModelContext& /*context*/) {
    using std::exp;
    using std::log;
    const T& a = x[0];
    if (a <= T(0.0)) return T(0.0);
    const T ln_a = log(a);
    return params[0] * exp(params[1] * ln_a) + params[2] * exp(params[3] * ln_a);
  }
  static std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context);
  static std::vector<std::string> PhysicalFlags(const double* params);
};

// The registered model "peleg".
const Model& PelegModel();

}  // namespace sorbtrace::fitters::models
