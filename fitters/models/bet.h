// Brunauer-Emmett-Teller (BET) isotherms and the Rouquerol consistency criteria.
//
// BET (infinite layers), x[0] = a_w = p/p0 (rh_fraction), u = moisture content kg/kg dry basis:
//   u(a_w) = X_m C a_w / ((1 - a_w) (1 - a_w + C a_w))
// Parameters:
//   0  X_m  kg/kg  [0, 10]    monolayer moisture content
//   1  C    1      [0, 1e6]   BET constant (exp of the net first-layer sorption energy / RT)
// Default validity range 0.05 <= a_w <= 0.35 (ModelInfo x_min, x_max): the classical BET range
// 0.05..0.30 (Sing et al., Pure Appl. Chem. 57 (1985) 603, from memory) widened to 0.35 for
// water vapour (common practice). The fit stage selects the points; the equation itself is
// defined on 0 <= a_w < 1.
// Source: S. Brunauer, P. H. Emmett, E. Teller, J. Am. Chem. Soc. 60 (1938) 309.
// Starting values: the BET linear plot a_w / (u (1 - a_w)) = 1/(X_m C) + (C - 1)/(X_m C) a_w,
// weighted straight line; X_m = 1/(slope + intercept), C = 1 + slope/intercept.
//
// n-layer BET ("bet_n", adsorption limited to n layers, same paper, Eq. A):
//   u(a_w) = X_m C a_w [1 - (n + 1) a_w^n + n a_w^(n+1)]
//            / ((1 - a_w) [1 + (C - 1) a_w - C a_w^(n+1)])
// Parameters X_m, C as above and
//   2  n    1      [1, 50]    number of layers, treated as a continuous parameter
// n = 1 gives the Langmuir isotherm X_m C a_w / (1 + C a_w); n -> infinity gives BET.
// At a_w -> 1 the quotient is 0/0; the limit X_m C n (n + 1) / (2 (1 + C n)) is used for
// a_w >= 1 (derived by l'Hopital's rule). Below 1 the brackets are evaluated through expm1 of
// n ln(a_w) (see Evaluate), which keeps the relative error near 1e-16 / (n (1 - a_w)) instead of
// the 1e-16 / (1 - a_w)^2 of the direct form: 1e-11 at a_w = 0.99999.
#pragma once

#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters::models {

struct BetEquation {
  static constexpr int kNumParameters = 2;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info();
  template <typename T>
  static T Evaluate(const T* params, const T* x, const ModelContext& /*context*/) {
    const T& x_m = params[0];
    const T& c = params[1];
    const T& a = x[0];
    return x_m * c * a / ((1.0 - a) * (1.0 - a + c * a));
  }
  static std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context);
  static std::vector<std::string> PhysicalFlags(const double* params);
};

struct BetNLayerEquation {
  static constexpr int kNumParameters = 3;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info();
  template <typename T>
  static T Evaluate(const T* params, const T* x, const ModelContext& /*context*/) {
    using std::expm1;
    using std::log;
    const T& x_m = params[0];
    const T& c = params[1];
    const T& n = params[2];
    const T& a = x[0];
    if (a <= T(0.0)) return T(0.0);
    if (a >= T(1.0)) return x_m * c * n * (n + 1.0) / (2.0 * (1.0 + c * n));
    // With L = ln a, E1 = expm1(n L), E2 = expm1((n + 1) L) the numerator bracket is
    // n E2 - (n + 1) E1 and the denominator bracket -(C - 1)(1 - a) - C E2 (exact rewrites of
    // 1 - (n+1) a^n + n a^(n+1) and 1 + (C-1) a - C a^(n+1)); both avoid the cancellation of
    // the direct form near a = 1.
    const T ln_a = log(a);
    const T e1 = expm1(n * ln_a);
    const T e2 = expm1((n + 1.0) * ln_a);
    const T one_minus_a = 1.0 - a;
    const T numerator = x_m * c * a * (n * e2 - (n + 1.0) * e1);
    const T denominator = one_minus_a * (-(c - 1.0) * one_minus_a - c * e2);
    return numerator / denominator;
  }
  static std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context);
  static std::vector<std::string> PhysicalFlags(const double* params);
};

// The BET linear-plot estimate (weighted straight line through a_w / (u (1 - a_w)) vs a_w on the
// points with 0 < a_w < 1); false when it gives no X_m > 0 or C > 0.
bool BetLinearEstimate(const std::vector<Observation>& observations, double* x_m, double* c);

// Options of CheckRouquerolCriteria.
struct RouquerolOptions {
  // Allowed relative difference between 1/(sqrt(C) + 1) and the measured a_w at u = X_m
  // (criterion 4, "within about 10 %": Rouquerol, Llewellyn & Rouquerol 2007, from memory).
  double relative_tolerance = 0.10;
};

// The four consistency criteria of J. Rouquerol, P. Llewellyn, F. Rouquerol, "Is the BET
// equation applicable to microporous adsorbents?", Stud. Surf. Sci. Catal. 160 (2007) 49
// (wording from memory), evaluated for a fitted BET (X_m, C) on the points it was fitted to:
//  1. C > 0;
//  2. u (1 - a_w) increases monotonically with a_w over the points;
//  3. the a_w at which the measured u equals X_m (linear interpolation between neighbouring
//     points, sorted by a_w) lies inside the a_w range of the points;
//  4. 1/(sqrt(C) + 1), the a_w at which the BET curve reaches X_m, agrees with that a_w within
//     RouquerolOptions::relative_tolerance.
struct RouquerolCriteria {
  bool c_positive = false;                     // criterion 1
  bool monotonic = false;                      // criterion 2
  bool monolayer_in_range = false;             // criterion 3
  bool monolayer_position_consistent = false;  // criterion 4
  // a_w at u = X_m interpolated from the points; NaN when X_m is outside their u range.
  double measured_rh_at_monolayer = std::numeric_limits<double>::quiet_NaN();
  // 1/(sqrt(C) + 1); NaN when C <= 0.
  double bet_rh_at_monolayer = std::numeric_limits<double>::quiet_NaN();
  // |bet - measured| / measured; NaN when either is undefined.
  double relative_difference = std::numeric_limits<double>::quiet_NaN();
  std::vector<std::string> messages;  // one line per failed criterion
  bool AllMet() const {
    return c_positive && monotonic && monolayer_in_range && monolayer_position_consistent;
  }
};

RouquerolCriteria CheckRouquerolCriteria(double monolayer_kg_per_kg, double c,
                                         const std::vector<Observation>& points,
                                         const RouquerolOptions& options = {});

// The registered models "bet" and "bet_n".
const Model& BetModel();
const Model& BetNLayerModel();

}  // namespace sorbtrace::fitters::models
