// Halsey sorption isotherm (multilayer adsorption on non-uniform surfaces).
//
//   a_w = exp(-A / u^B)   <=>   u(a_w) = (A / (-ln a_w))^(1/B)
// x[0] = a_w (rh_fraction, 0 < a_w < 1), u = moisture content kg/kg dry basis.
// Parameters:
//   0  A  (kg/kg)^B  [1e-12, 1000]  energy constant (u^B at which -ln a_w = 1)
//   1  B  1          [0.05, 20] exponent (3 for van der Waals multilayers in Halsey's theory)
// Source: G. Halsey, J. Chem. Phys. 16 (1948) 931 (from memory).
// Starting values: weighted straight line ln u = (1/B) ln A - (1/B) ln(-ln a_w).
#pragma once

#include <cmath>
#include <string>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters::models {

struct HalseyEquation {
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
    return exp((log(params[0]) - log(-log(a))) / params[1]);
  }
  static std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context);
  static std::vector<std::string> PhysicalFlags(const double* params);
};

// The registered model "halsey".
const Model& HalseyModel();

}  // namespace sorbtrace::fitters::models
