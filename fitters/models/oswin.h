// Oswin sorption isotherm (empirical, series expansion of sigmoid curves).
//
//   u(a_w) = A [a_w / (1 - a_w)]^B
// x[0] = a_w (rh_fraction, 0 <= a_w < 1), u = moisture content kg/kg dry basis.
// Parameters:
//   0  A  kg/kg  [0, 10]   moisture content at a_w = 0.5
//   1  B  1      [0, 10]   shape exponent (sigmoid for 0 < B < 1)
// Source: C. R. Oswin, J. Soc. Chem. Ind. 65 (1946) 419 (from memory).
// Starting values: weighted straight line ln u = ln A + B ln(a_w / (1 - a_w)), exact on
// noise-free data.
#pragma once

#include <cmath>
#include <string>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters::models {

struct OswinEquation {
  static constexpr int kNumParameters = 2;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info();
  template <typename T>
  static T Evaluate(const T* params, const T* x, const ModelContext& /*context*/) {
    using std::exp;
    using std::log;
    const T& a = x[0];
    if (a <= T(0.0)) return T(0.0);
    if (a >= T(1.0)) return T(kInfinity);  // pole at saturation
    return params[0] * exp(params[1] * log(a / (1.0 - a)));
  }
  static std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context);
  static std::vector<std::string> PhysicalFlags(const double* params);
};

// The registered model "oswin".
const Model& OswinModel();

}  // namespace sorbtrace::fitters::models
