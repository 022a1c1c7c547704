// Guggenheim-Anderson-de Boer (GAB) sorption isotherm.
//
//   u(a_w) = X_m C K a_w / ((1 - K a_w) (1 - K a_w + C K a_w))
//
// x[0] = a_w, water activity (rh_fraction, 0..1); u = moisture content, kg/kg dry basis.
// Parameters (index, symbol, unit, bounds enforced by the solver):
//   0  X_m  kg/kg  [0, 10]    monolayer moisture content
//   1  C    1      [0, 1e6]   Guggenheim constant (monolayer vs multilayer sorption energy)
//   2  K    1      [0, 1.5]   multilayer factor; K = 1 gives BET, K < 1 keeps u finite at a_w = 1
// The upper bounds are sanity limits (no material holds ten times its dry mass in a monolayer;
// K = 1.5 puts the pole at a_w = 0.67), not physics; a fit that ends on one is flagged.
// Source: E. A. Guggenheim, Applications of Statistical Mechanics (Clarendon, Oxford, 1966);
// R. B. Anderson, J. Am. Chem. Soc. 68 (1946) 686; J. H. de Boer, The Dynamical Character
// of Adsorption (Clarendon, Oxford, 1953) (citations from memory).
//
// Starting values: the GAB quadratic a_w / u = alpha a_w^2 + beta a_w + gamma with
//   alpha = (K / X_m)(1/C - 1), beta = (1 / X_m)(1 - 2/C), gamma = 1 / (X_m C K)
// is fitted by weighted linear least squares (weights propagated from sigma_y), and
//   X_m = 1 / sqrt(beta^2 - 4 alpha gamma), K = (1/X_m - beta) / (2 gamma), C = 1 / (X_m K gamma).
// (Derived by expanding the GAB equation; exact on noise-free data.)
#pragma once

#include <string>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters::models {

struct GabEquation {
  static constexpr int kNumParameters = 3;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info();
  template <typename T>
  static T Evaluate(const T* params, const T* x, const ModelContext& /*context*/) {
    const T& x_m = params[0];
    const T& c = params[1];
    const T& k = params[2];
    const T ka = k * x[0];
    return x_m * c * ka / ((1.0 - ka) * (1.0 - ka + c * ka));
  }
  static std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context);
  static std::vector<std::string> PhysicalFlags(const double* params);
};

// The linearised (quadratic) GAB estimate alone; false when the quadratic gives no
// admissible X_m, C, K > 0. Exposed for tests and for the fit stage's diagnostics.
bool GabLinearisedEstimate(const std::vector<Observation>& observations, double* x_m, double* c,
                           double* k);

// The registered GAB model ("gab").
const Model& GabModel();

}  // namespace sorbtrace::fitters::models
