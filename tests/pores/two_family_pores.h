// The known pore system of the pores stage's coverage tests (two_family_coverage_test.cc for
// the model-based distribution, stepwise_coverage_test.cc for the stepwise one), in one place:
// two pore families, the forward Kelvin model that turns them into a desorption isotherm, the
// true quantities the distributions estimate, and the comparison of stated uncertainties with
// the scatter of the errors over the replicates.
//
// Cumulative pore volume (pores of radius <= r, per kg of dry material)
//   V(r) = V_tot sum_i w_i [1 + (a_i / r)^n_i]^(-m_i),  m_i = 1 - 1/n_i,
// a van Genuchten (1980) pore family per i (the form of Durner 1994 read in radius through the
// Young-Laplace equation, p_c = 2 gamma / r for the hemispherical meniscus of desorption);
// families a = 2.1 nm and 8.4 nm, n = 5, weights 0.4 / 0.6, V_tot = 1e-4 m3/kg: modes of
// dV/dlog r near 2 nm and 8 nm (a single family peaks at r = a m^(1/n), from d/ds of
// s (1 + s)^(-m - 1), s = (a / r)^n). Forward Kelvin model, no adsorbed film: at RH the pores
// with r <= r_K(RH) (hemispherical meniscus, physics::KelvinRadius_m) are full,
// u(RH) = rho_w V(r_K(RH)).
// Both distributions report dV/dlog10 r, its modes and the volume between their resolved radii;
// the truths here are the same quantities of V(r) (the mode of dV/dlog10 r, not of dV/dr).
// A second system (kWideTwoFamily, stepwise_coverage_test.cc) puts the modes near 3 nm and
// 15 nm: a = 3.14 nm and 15.7 nm (a = r_mode / m^(1/n), m^(1/5) = 0.956), weights 0.5 / 0.5,
// so the larger mode lies where a laboratory's RH steps of 0.025 are 0.17 wide in log10 r.
#pragma once

#include <cmath>
#include <vector>

#include "pipeline/physics/physics.h"

namespace sorbtrace::pores::testing {

constexpr double kTwoFamilyTemperature_K = 296.15;  // 23 degC

struct PoreFamily {
  double weight;
  double a_m;
  double n;
};
struct PoreSystem {
  PoreFamily families[2];
  double total_volume_m3_per_kg;
};
constexpr PoreSystem kTwoFamily = {{{0.4, 2.1e-9, 5.0}, {0.6, 8.4e-9, 5.0}}, 1e-4};
constexpr PoreSystem kWideTwoFamily = {{{0.5, 3.14e-9, 5.0}, {0.5, 15.7e-9, 5.0}}, 1e-4};

// V(r) [m3/kg].
inline double TrueCumulativeVolume(double radius_m, const PoreSystem& system = kTwoFamily) {
  double v = 0.0;
  for (const PoreFamily& f : system.families) {
    const double m = 1.0 - 1.0 / f.n;
    v += f.weight * std::pow(1.0 + std::pow(f.a_m / radius_m, f.n), -m);
  }
  return system.total_volume_m3_per_kg * v;
}

// dV/dlog10 r, analytic: per family V_tot w m n s (1 + s)^(-m - 1) ln 10, s = (a / r)^n.
inline double TrueDensity(double radius_m, const PoreSystem& system = kTwoFamily) {
  double d = 0.0;
  for (const PoreFamily& f : system.families) {
    const double m = 1.0 - 1.0 / f.n;
    const double s = std::pow(f.a_m / radius_m, f.n);
    d += f.weight * m * f.n * s * std::pow(1.0 + s, -m - 1.0);
  }
  return system.total_volume_m3_per_kg * std::log(10.0) * d;
}

// The moisture content [kg/kg] of the pore system at RH on desorption (forward Kelvin model).
inline double TrueMoisture_kg_per_kg(double rh_fraction, const PoreSystem& system = kTwoFamily) {
  const double r_k = physics::KelvinRadius_m(rh_fraction, kTwoFamilyTemperature_K,
                                             physics::Meniscus::kHemispherical);
  return physics::LiquidWaterDensity_kg_per_m3(kTwoFamilyTemperature_K) *
         TrueCumulativeVolume(r_k, system);
}

// Local maxima of the true density on [r_min, r_max] (fine log grid, parabola vertex).
inline std::vector<double> TrueModes(double r_min, double r_max,
                                     const PoreSystem& system = kTwoFamily) {
  constexpr int kFine = 20001;
  std::vector<double> x(kFine), y(kFine);
  for (int i = 0; i < kFine; ++i) {
    x[i] = std::log10(r_min) + (std::log10(r_max) - std::log10(r_min)) * i / (kFine - 1.0);
    y[i] = TrueDensity(std::pow(10.0, x[i]), system);
  }
  std::vector<double> modes;
  for (int i = 1; i + 1 < kFine; ++i) {
    if (y[i] > y[i - 1] && y[i] >= y[i + 1]) {
      const double h = x[i + 1] - x[i];
      const double shift = 0.5 * h * (y[i - 1] - y[i + 1]) / (y[i - 1] - 2.0 * y[i] + y[i + 1]);
      modes.push_back(std::pow(10.0, x[i] + shift));
    }
  }
  return modes;
}

// Errors (estimate - truth) over the replicates with their stated standard uncertainties.
struct ErrorSpread {
  std::vector<double> errors;
  double sum_u = 0.0;
  void Add(double error, double u) {
    errors.push_back(error);
    sum_u += u;
  }
  // Mean of the errors (the bias).
  double Mean() const {
    double mean = 0.0;
    for (double e : errors) mean += e / static_cast<double>(errors.size());
    return mean;
  }
  // Standard deviation of the errors around their mean.
  double Sd() const {
    const double n = static_cast<double>(errors.size());
    const double mean = Mean();
    double sum = 0.0;
    for (double e : errors) sum += (e - mean) * (e - mean);
    return std::sqrt(sum / (n - 1.0));
  }
  // Mean stated u over the standard deviation of the errors (around their mean).
  double Ratio() const { return sum_u / static_cast<double>(errors.size()) / Sd(); }
  // Mean stated u over the root mean square error (bias included).
  double RmsRatio() const {
    double sum = 0.0;
    for (double e : errors) sum += e * e;
    return sum_u / std::sqrt(sum * static_cast<double>(errors.size()));
  }
};

}  // namespace sorbtrace::pores::testing
