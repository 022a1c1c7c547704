// van Genuchten water-retention curves written as moisture isotherms.
//
// The retention curve is a function of the capillary pressure (suction) p_c of the pore water;
// a point measured at relative humidity a_w (x[0] = rh_fraction) is converted by the Kelvin
// equation
//   p_c = -(rho_w R T / M_w) ln(a_w)                                             [Pa]
// with rho_w = physics::LiquidWaterDensity_kg_per_m3(T) (Kell 1975) at ModelContext::temperature_K,
// R and M_w from pipeline/physics/physics.h; the factor rho_w R T / M_w is a double, p_c is a
// differentiable function of a_w, so errors-in-variables fits work. Retention points measured as
// capillary pressure are converted to a_w by the fit stage (physics::RhFromCapillaryPressure).
//
// Precision near saturation: a_w is stored in double (spacing 1.1e-16 near 1), so p_c carries an
// absolute error of about 1.4e8 Pa * 1.1e-16 = 1.5e-8 Pa at 23 degC: 1e-8 relative at
// p_c = 1 Pa. Below p_c of about 1e-3 Pa (a_w within 1e-11 of 1) the conversion is unreliable;
// a_w >= 1 is treated as p_c = 0 (u = u_sat) and a_w <= 0 as p_c = infinity (u = 0).
//
// "vangenuchten" (M. Th. van Genuchten, Soil Sci. Soc. Am. J. 44 (1980) 892, Mualem constraint):
//   u = u_sat [1 + (alpha p_c)^n]^(-m),  m = 1 - 1/n
// Parameters:
//   0  u_sat        kg/kg        [0, 10]    moisture content at p_c = 0 (capillary saturation)
//   1  log10_alpha  log10(1/Pa)  [-12, 0]   alpha = 10^log10_alpha, inverse air-entry pressure
//   2  n            1            [1, 20]    pore-size distribution index
// "vangenuchten_free_m": the same with m free:
//   2  n            1            [0.05, 20]
//   3  m            1            [0.001, 20]
// alpha is fitted as log10(alpha): in hygroscopic data alpha is around 1e-8..1e-6 1/Pa, so the
// raw alpha would be ten or more orders of magnitude smaller than n and u_sat (bad scaling of the
// Jacobian, bounds at 0 that are approached exponentially); in log form the curve shifts along
// log p_c by a change of the parameter, the problem is well scaled and the Student-t interval is
// closer to symmetric. The interval of alpha itself follows by 10^(interval of log10_alpha).
//
// Evaluation: (alpha p_c)^n = exp(z), z = n (ln 10 log10_alpha + ln p_c), and
// [1 + exp(z)]^(-m) = exp(-m softplus(z)) with an overflow-free softplus: no overflow for any z.
//
// Starting values: u_sat from a few multiples of the largest u; for each n of a short grid,
// alpha from the median of the linearised form alpha = (S_e^(-1/m) - 1)^(1/n) / p_c over the
// points; candidates ranked by their weighted sum of squares, best first.
#pragma once

#include <ceres/jet.h>

#include <cmath>
#include <string>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters::models {

inline constexpr double kLn10 = 2.302585092994045684;  // ln(10)

// rho_w R T / M_w [Pa], so that p_c = -factor * ln(a_w). Throws physics::RangeError outside the
// density correlation's range (0..150 degC). The value of the last temperature asked for is
// remembered (per thread): a fit evaluates the model at one temperature many thousands of times.
double KelvinPressureFactor_Pa(double temperature_K);

// std::log(kelvin_factor_Pa), the last value remembered (per thread) like the factor itself.
double LogKelvinPressureFactor(double kelvin_factor_Pa);

// ln(p_c / 1 Pa) = ln(factor) + ln(-ln a_w) for 0 < a_w < 1, remembered per thread in a small
// table keyed by (a_w, factor): refits of resampled data and percentile bands evaluate the
// model at the same few a_w thousands of times. The value is exactly the computed one.
// The logarithm ln(a_w) used on the way is returned in *ln_rh when that is not nullptr.
double LogCapillaryPressureValue(double rh_fraction, double kelvin_factor_Pa,
                                 double* ln_rh = nullptr);

// ln(p_c / 1 Pa) for 0 < a_w < 1.
template <typename T>
T LogCapillaryPressure(const T& rh_fraction, double kelvin_factor_Pa) {
  using std::log;
  return LogKelvinPressureFactor(kelvin_factor_Pa) + log(-log(rh_fraction));
}

inline double LogCapillaryPressure(const double& rh_fraction, double kelvin_factor_Pa) {
  return LogCapillaryPressureValue(rh_fraction, kelvin_factor_Pa);
}

// The same for ceres::Jet: value as above, derivative d ln(p_c) / d a_w = 1 / (a_w ln a_w)
// applied once to the derivative part (zero unless a_w itself is fitted).
template <int N>
ceres::Jet<double, N> LogCapillaryPressure(const ceres::Jet<double, N>& rh_fraction,
                                           double kelvin_factor_Pa) {
  ceres::Jet<double, N> out;
  double ln_rh = 0.0;
  out.a = LogCapillaryPressureValue(rh_fraction.a, kelvin_factor_Pa, &ln_rh);
  if ((rh_fraction.v.array() == 0.0).all()) {
    out.v.setZero();
  } else {
    out.v = (1.0 / (rh_fraction.a * ln_rh)) * rh_fraction.v;
  }
  return out;
}

// ln(1 + exp(z)) without overflow.
template <typename T>
T Softplus(const T& z) {
  using std::exp;
  using std::log1p;
  if (z > T(0.0)) return z + log1p(exp(-z));
  return log1p(exp(z));
}

// van Genuchten effective saturation S_e = [1 + (alpha h)^n]^(-m) given ln(alpha h), for any
// consistent units of alpha and the suction h.
template <typename T>
T VanGenuchtenSaturationFromLog(const T& ln_alpha_h, const T& n, const T& m) {
  using std::exp;
  return exp(-m * Softplus(T(n * ln_alpha_h)));
}

// S_e of one pore system given ln(p_c / 1 Pa) (from LogCapillaryPressure).
template <typename T>
T VanGenuchtenSaturationAtLogPc(const T& ln_pc, const T& log10_alpha, const T& n, const T& m) {
  const T ln_alpha_pc = kLn10 * log10_alpha + ln_pc;
  return VanGenuchtenSaturationFromLog(ln_alpha_pc, n, m);
}

// The same for ceres::Jet (what the solver differentiates): the value is computed in double by
// exactly the operations above (identical to the double evaluation), the derivatives by hand,
// applied once to the derivative parts instead of through every intermediate Jet:
//   y = ln(alpha p_c), z = n y, sp = softplus(z), S = exp(-m sp), sigma = logistic(z),
//   dS = -S [m sigma (n dy + y dn) + sp dm],  dy = ln(10) dlog10_alpha + d ln(p_c).
template <int N>
ceres::Jet<double, N> VanGenuchtenSaturationAtLogPc(const ceres::Jet<double, N>& ln_pc,
                                                    const ceres::Jet<double, N>& log10_alpha,
                                                    const ceres::Jet<double, N>& n,
                                                    const ceres::Jet<double, N>& m) {
  const double y = kLn10 * log10_alpha.a + ln_pc.a;
  const double z = n.a * y;
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
  const double s = std::exp(-m.a * softplus);
  const double ds_dz = -m.a * logistic * s;
  ceres::Jet<double, N> out;
  out.a = s;
  out.v =
      (ds_dz * n.a) * (kLn10 * log10_alpha.v + ln_pc.v) + (ds_dz * y) * n.v - (softplus * s) * m.v;
  return out;
}

// S_e of one pore system at a_w (handles a_w >= 1 and a_w <= 0).
template <typename T>
T VanGenuchtenSaturationAtRh(const T& rh_fraction, const T& log10_alpha, const T& n, const T& m,
                             double kelvin_factor_Pa) {
  if (rh_fraction >= T(1.0)) return T(1.0);
  if (rh_fraction <= T(0.0)) return T(0.0);
  return VanGenuchtenSaturationAtLogPc(LogCapillaryPressure(rh_fraction, kelvin_factor_Pa),
                                       log10_alpha, n, m);
}

struct VanGenuchtenEquation {
  static constexpr int kNumParameters = 3;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info();
  template <typename T>
  static T Evaluate(const T* params, const T* x, const ModelContext& context) {
    const double factor = KelvinPressureFactor_Pa(context.temperature_K);
    const T m = 1.0 - 1.0 / params[2];
    return params[0] * VanGenuchtenSaturationAtRh(x[0], params[1], params[2], m, factor);
  }
  static std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context);
  static std::vector<std::string> PhysicalFlags(const double* params);
};

struct VanGenuchtenFreeMEquation {
  static constexpr int kNumParameters = 4;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info();
  template <typename T>
  static T Evaluate(const T* params, const T* x, const ModelContext& context) {
    const double factor = KelvinPressureFactor_Pa(context.temperature_K);
    return params[0] * VanGenuchtenSaturationAtRh(x[0], params[1], params[2], params[3], factor);
  }
  static std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context);
  static std::vector<std::string> PhysicalFlags(const double* params);
};

// The best few (u_sat, log10_alpha, n) starting triples of the Mualem-constrained curve, best
// first (shared with the Durner models).
std::vector<std::vector<double>> VanGenuchtenCandidates(
    const std::vector<Observation>& observations, const ModelContext& context,
    std::size_t max_candidates);

// The registered models "vangenuchten" and "vangenuchten_free_m".
const Model& VanGenuchtenModel();
const Model& VanGenuchtenFreeMModel();

}  // namespace sorbtrace::fitters::models
