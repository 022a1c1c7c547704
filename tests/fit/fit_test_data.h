// Synthetic reduced isotherms for the fit stage tests and the fit benchmark: points on a known
// GAB curve, optionally with Gaussian noise from std::mt19937_64 and our own Box-Muller
// transform (so the data do not depend on the standard library's distributions).
#pragma once

#include <cmath>
#include <cstdint>
#include <numbers>
#include <random>
#include <string>
#include <vector>

#include "pipeline/reduce/reduce.h"

namespace sorbtrace::fit::testing {

// GAB parameters of a synthetic material.
struct GabTruth {
  double monolayer_kg_per_kg = 0.05;
  double c = 10.0;
  double k = 0.8;
};

// u(a_w) = X_m C K a_w / ((1 - K a_w)(1 - K a_w + C K a_w)) (GAB; R. B. Anderson,
// J. Am. Chem. Soc. 68 (1946) 686, citation from memory).
inline double GabMoisture(const GabTruth& truth, double rh_fraction) {
  const double ka = truth.k * rh_fraction;
  return truth.monolayer_kg_per_kg * truth.c * ka / ((1.0 - ka) * (1.0 - ka + truth.c * ka));
}

// Standard normal draws: Box-Muller (G. E. P. Box, M. E. Muller, Ann. Math. Statist. 29
// (1958) 610) on the 53 top bits of std::mt19937_64, whose output the C++ standard fixes.
class NormalStream {
 public:
  explicit NormalStream(std::uint64_t state) : engine_(state) {}
  double Next() {
    constexpr double kTwoToMinus53 = 1.0 / 9007199254740992.0;                     // 2^-53
    const double u1 = 1.0 - static_cast<double>(engine_() >> 11) * kTwoToMinus53;  // (0, 1]
    const double u2 = static_cast<double>(engine_() >> 11) * kTwoToMinus53;
    return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
  }

 private:
  std::mt19937_64 engine_;
};

// How one synthetic branch is made.
struct BranchSpec {
  std::string dataset_id = "synthetic-23C";
  ingest::Branch branch = ingest::Branch::kAdsorption;
  double temperature_K = 296.15;  // 23 degC (ISO 12571 test temperature)
  int num_points = 20;
  double rh_min_fraction = 0.05;
  double rh_max_fraction = 0.95;
  GabTruth truth;
  // sigma_y = absolute + relative * u: a balance floor plus a dry-mass share (illustrative).
  double u_absolute_kg_per_kg = 5e-4;
  double u_relative = 0.02;
  double u_rh_fraction = 0.005;
  bool noisy = true;
};

// Appends the points of one branch to `reduced` (evenly spaced RH, steps numbered from 0).
inline void AppendBranch(const BranchSpec& spec, NormalStream* noise,
                         reduce::ReducedIsotherms* reduced) {
  for (int i = 0; i < spec.num_points; ++i) {
    reduce::IsothermPoint point;
    point.dataset_id = spec.dataset_id;
    point.step_index = i;
    point.step_label = "step " + std::to_string(i);
    point.branch = spec.branch;
    point.temperature_K = spec.temperature_K;
    const double fraction =
        spec.num_points == 1 ? 0.0 : static_cast<double>(i) / (spec.num_points - 1);
    point.rh_fraction =
        spec.rh_min_fraction + fraction * (spec.rh_max_fraction - spec.rh_min_fraction);
    point.u_rh_fraction = spec.u_rh_fraction;
    point.expanded_u_rh_fraction = 2.0 * spec.u_rh_fraction;
    const double u_true = GabMoisture(spec.truth, point.rh_fraction);
    point.u_moisture_kg_per_kg = spec.u_absolute_kg_per_kg + spec.u_relative * u_true;
    point.expanded_u_moisture_kg_per_kg = 2.0 * point.u_moisture_kg_per_kg;
    point.moisture_kg_per_kg =
        u_true + (spec.noisy ? point.u_moisture_kg_per_kg * noise->Next() : 0.0);
    point.num_specimens = 3;
    point.equilibrated = true;
    reduced->points.push_back(point);
  }
}

}  // namespace sorbtrace::fit::testing
