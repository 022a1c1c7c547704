// Henderson sorption isotherm, isothermal form.
//
//   1 - a_w = exp(-k u^n)   <=>   u(a_w) = (-ln(1 - a_w) / k)^(1/n)
// Henderson's original reads 1 - a_w = exp(-k' T u^n); at a fixed test temperature the factor T
// is absorbed in k = k' T. x[0] = a_w (rh_fraction, 0 <= a_w < 1), u = moisture content kg/kg
// dry basis (k therefore has the unit (kg/kg)^-n and differs from tables written with u in %).
// Parameters:
//   0  k  (kg/kg)^-n  [1e-12, 1e6]  constant
//   1  n  1           [0.05, 20]  exponent
// Source: S. M. Henderson, Agric. Eng. 33 (1952) 29 (from memory).
// Starting values: weighted straight line ln u = (1/n) ln(-ln(1 - a_w)) - (1/n) ln k.
#pragma once

#include <cmath>
#include <string>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters::models {

struct HendersonEquation {
  static constexpr int kNumParameters = 2;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info();
  template <typename T>
  static T Evaluate(const T* params, const T* x, const ModelContext& /*context*/) {
    using std::exp;
    using std::log;
    using std::log1p;
    const T& a = x[0];
    if (a <= T(0.0)) return T(0.0);
    if (a >= T(1.0)) return T(kInfinity);  // pole at saturation
    // -ln(1 - a) as -log1p(-a): accurate for small a.
    return exp((log(-log1p(-a)) - log(params[0])) / params[1]);
  }
  static std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context);
  static std::vector<std::string> PhysicalFlags(const double* params);
};

// The registered model "henderson".
const Model& HendersonModel();

}  // namespace sorbtrace::fitters::models
