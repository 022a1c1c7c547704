// Durner multimodal retention curves (superposed van Genuchten pore systems) as isotherms.
//
//   u = u_sat sum_i w_i [1 + (alpha_i p_c)^n_i]^(-m_i),  m_i = 1 - 1/n_i,  sum_i w_i = 1,
// p_c from a_w (x[0] = rh_fraction) by the Kelvin equation, exactly as in van_genuchten.h
// (same precision limits near saturation).
// Source: W. Durner, Water Resour. Res. 30 (1994) 211.
//
// Parametrisation (chosen so that the solver's box bounds enforce every constraint):
//  * Weights: "durner2" has w1 in [0, 1] and w2 = 1 - w1. "durner3" uses stick breaking:
//    w1 in [0, 1], v2 in [0, 1], w2 = (1 - w1) v2, w3 = (1 - w1)(1 - v2); any (w1, v2) in the box
//    gives weights >= 0 summing to 1, and every such weight triple has one (w1, v2).
//  * Ordering (against label switching, i.e. the same curve with pore systems renumbered):
//    system 1 is the one with the largest alpha (coarsest pores, drains first, i.e. at the
//    highest a_w); the others are given as non-negative decade offsets
//      log10_alpha2 = log10_alpha1 - dlog10_alpha2,  log10_alpha3 = log10_alpha2 - dlog10_alpha3,
//    dlog10_alpha_i in [0, 12]. So alpha1 >= alpha2 >= alpha3 always, and a fit cannot swap
//    labels. (Equal alphas, offset 0, leave the weights undetermined: the fit is then flagged.)
// Parameters "durner2" (6):
//   0 u_sat kg/kg [0, 10]; 1 w1 1 [0, 1]; 2 log10_alpha1 log10(1/Pa) [-12, 0]; 3 n1 1 [1, 20];
//   4 dlog10_alpha2 decades [0, 12]; 5 n2 1 [1, 20]
// Parameters "durner3" (9):
//   0 u_sat; 1 w1; 2 v2 1 [0, 1]; 3 log10_alpha1; 4 n1; 5 dlog10_alpha2; 6 n2;
//   7 dlog10_alpha3 decades [0, 12]; 8 n3
// Starting values: the best van Genuchten starts (van_genuchten.h) split into pore systems
// spread by 1..3 decades around its alpha, ranked by weighted sum of squares.
#pragma once

#include <ceres/jet.h>

#include <cmath>
#include <string>
#include <type_traits>
#include <vector>

#include "fitters/model.h"
#include "fitters/models/van_genuchten.h"

namespace sorbtrace::fitters::models {

// S_e = [1 + (alpha p_c)^n]^(-m), m = 1 - 1/n, of one pore system and its partial derivatives,
// in double: the value by exactly the operations of VanGenuchtenSaturationAtLogPc (so it equals
// the double evaluation), the derivatives by hand (y = ln(alpha p_c), z = n y, sp =
// softplus(z), S = exp(-m sp), dS/dz = -m logistic(z) S, dm/dn = 1/n^2).
struct MualemSaturation {
  double value = 0.0;
  double d_log10_alpha = 0.0;
  double d_n = 0.0;      // through z and through m
  double d_ln_pc = 0.0;  // d S / d ln(p_c)
};
inline MualemSaturation MualemSaturationAtLogPc(double ln_pc, double log10_alpha, double n) {
  const double m = 1.0 - 1.0 / n;
  const double y = kLn10 * log10_alpha + ln_pc;
  const double z = n * y;
  double softplus = 0.0;
  double logistic = 0.0;
  if (z > 0.0) {
    const double e = std::exp(-z);
    softplus = z + std::log1p(e);
    logistic = 1.0 / (1.0 + e);
  } else {
    const double e = std::exp(z);
    softplus = std::log1p(e);
    logistic = e / (1.0 + e);
  }
  MualemSaturation out;
  out.value = std::exp(-m * softplus);
  const double ds_dz = -m * logistic * out.value;
  out.d_log10_alpha = ds_dz * n * kLn10;
  out.d_n = ds_dz * y - softplus * out.value / (n * n);
  out.d_ln_pc = ds_dz * n;
  return out;
}

template <typename T>
struct IsCeresJet : std::false_type {};
template <int N>
struct IsCeresJet<ceres::Jet<double, N>> : std::true_type {};

struct Durner2Equation {
  static constexpr int kNumParameters = 6;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info();
  template <typename T>
  static T Evaluate(const T* p, const T* x, const ModelContext& context) {
    if constexpr (IsCeresJet<T>::value) {
      return EvaluateJet(p, x, context);
    } else {
      return EvaluateGeneric(p, x, context);
    }
  }
  // The same curve for ceres::Jet with the chain rule done once in double (what the solver
  // differentiates; its value equals the double evaluation).
  template <int N>
  static ceres::Jet<double, N> EvaluateJet(const ceres::Jet<double, N>* p,
                                           const ceres::Jet<double, N>* x,
                                           const ModelContext& context) {
    const double factor = KelvinPressureFactor_Pa(context.temperature_K);
    const double u_sat = p[0].a;
    const double w1 = p[1].a;
    MualemSaturation s1;
    MualemSaturation s2;
    s1.value = 1.0;
    s2.value = 1.0;
    double d_ln_pc_d_rh = 0.0;
    if (x[0].a >= 1.0) {
      // saturated: s1 = s2 = 1
    } else if (x[0].a <= 0.0) {
      s1.value = 0.0;
      s2.value = 0.0;
    } else {
      double ln_rh = 0.0;
      const double ln_pc = LogCapillaryPressureValue(x[0].a, factor, &ln_rh);
      s1 = MualemSaturationAtLogPc(ln_pc, p[2].a, p[3].a);
      s2 = MualemSaturationAtLogPc(ln_pc, p[2].a - p[4].a, p[5].a);
      d_ln_pc_d_rh = 1.0 / (x[0].a * ln_rh);
    }
    const double w2 = 1.0 - w1;
    ceres::Jet<double, N> out;
    out.a = u_sat * (w1 * s1.value + (1.0 - w1) * s2.value);
    out.v = (w1 * s1.value + w2 * s2.value) * p[0].v + (u_sat * (s1.value - s2.value)) * p[1].v +
            (u_sat * (w1 * s1.d_log10_alpha + w2 * s2.d_log10_alpha)) * p[2].v +
            (u_sat * w1 * s1.d_n) * p[3].v - (u_sat * w2 * s2.d_log10_alpha) * p[4].v +
            (u_sat * w2 * s2.d_n) * p[5].v +
            (u_sat * (w1 * s1.d_ln_pc + w2 * s2.d_ln_pc) * d_ln_pc_d_rh) * x[0].v;
    return out;
  }
  template <typename T>
  static T EvaluateGeneric(const T* p, const T* x, const ModelContext& context) {
    const double factor = KelvinPressureFactor_Pa(context.temperature_K);
    const T& w1 = p[1];
    const T log10_alpha2 = p[2] - p[4];
    // As VanGenuchtenSaturationAtRh per system, with ln(p_c) computed once for both.
    T s1(1.0);
    T s2(1.0);
    if (x[0] >= T(1.0)) {
      // saturated: s1 = s2 = 1
    } else if (x[0] <= T(0.0)) {
      s1 = T(0.0);
      s2 = T(0.0);
    } else {
      const T ln_pc = LogCapillaryPressure(x[0], factor);
      s1 = VanGenuchtenSaturationAtLogPc(ln_pc, p[2], p[3], T(1.0 - 1.0 / p[3]));
      s2 = VanGenuchtenSaturationAtLogPc(ln_pc, log10_alpha2, p[5], T(1.0 - 1.0 / p[5]));
    }
    return p[0] * (w1 * s1 + (1.0 - w1) * s2);
  }
  static std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context);
  static std::vector<std::string> PhysicalFlags(const double* params);
};

struct Durner3Equation {
  static constexpr int kNumParameters = 9;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info();
  template <typename T>
  static T Evaluate(const T* p, const T* x, const ModelContext& context) {
    const double factor = KelvinPressureFactor_Pa(context.temperature_K);
    const T& w1 = p[1];
    const T w2 = (1.0 - w1) * p[2];
    const T w3 = (1.0 - w1) * (1.0 - p[2]);
    const T log10_alpha2 = p[3] - p[5];
    const T log10_alpha3 = log10_alpha2 - p[7];
    T s1(1.0);
    T s2(1.0);
    T s3(1.0);
    if (x[0] >= T(1.0)) {
      // saturated: s1 = s2 = s3 = 1
    } else if (x[0] <= T(0.0)) {
      s1 = T(0.0);
      s2 = T(0.0);
      s3 = T(0.0);
    } else {
      const T ln_pc = LogCapillaryPressure(x[0], factor);
      s1 = VanGenuchtenSaturationAtLogPc(ln_pc, p[3], p[4], T(1.0 - 1.0 / p[4]));
      s2 = VanGenuchtenSaturationAtLogPc(ln_pc, log10_alpha2, p[6], T(1.0 - 1.0 / p[6]));
      s3 = VanGenuchtenSaturationAtLogPc(ln_pc, log10_alpha3, p[8], T(1.0 - 1.0 / p[8]));
    }
    return p[0] * (w1 * s1 + w2 * s2 + w3 * s3);
  }
  static std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context);
  static std::vector<std::string> PhysicalFlags(const double* params);
};

// Weights (w1, w2, w3) of durner3 from its parameters (for reports).
std::vector<double> Durner3Weights(const double* params);

// The registered models "durner2" and "durner3".
const Model& Durner2Model();
const Model& Durner3Model();

}  // namespace sorbtrace::fitters::models
