// Test helpers: deterministic normal noise (Box-Muller on std::mt19937_64, so the draws do not
// depend on the standard library's distributions), synthetic data sets from a model and an
// invented GAB-shaped isotherm with RH errors.
#pragma once

#include <cmath>
#include <cstdint>
#include <numbers>
#include <random>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters::testing {

class NormalSource {
 public:
  explicit NormalSource(std::uint64_t state) : engine_(state) {}
  // Uniform on [0, 1) from the top 53 bits of one engine output.
  double Uniform() { return static_cast<double>(engine_() >> 11) * 0x1.0p-53; }
  // Standard normal, G. E. P. Box & M. E. Muller, Ann. Math. Statist. 29 (1958) 610.
  double Normal() {
    if (has_spare_) {
      has_spare_ = false;
      return spare_;
    }
    const double u1 = 1.0 - Uniform();  // (0, 1]: finite logarithm
    const double u2 = Uniform();
    const double radius = std::sqrt(-2.0 * std::log(u1));
    spare_ = radius * std::sin(2.0 * std::numbers::pi * u2);
    has_spare_ = true;
    return radius * std::cos(2.0 * std::numbers::pi * u2);
  }
  std::uint64_t Raw() { return engine_(); }

 private:
  std::mt19937_64 engine_;
  double spare_ = 0.0;
  bool has_spare_ = false;
};

// Equally spaced values from `low` to `high` inclusive.
inline std::vector<double> Grid(double low, double high, int count) {
  std::vector<double> values;
  for (int i = 0; i < count; ++i)
    values.push_back(low + (high - low) * static_cast<double>(i) / static_cast<double>(count - 1));
  return values;
}

// Points y = f(x; truth) (1 + relative_noise * z) + absolute_noise * z', sigma_y = sigma_y_value.
inline std::vector<Observation> Synthesize(const Model& model, const std::vector<double>& truth,
                                           const std::vector<double>& rh,
                                           const ModelContext& context, double relative_noise,
                                           double absolute_noise, double sigma_y_value,
                                           NormalSource* noise) {
  std::vector<Observation> points;
  for (double a : rh) {
    Observation o;
    o.x[0] = a;
    const double f = model.Evaluate(truth.data(), o.x.data(), context);
    o.y = f * (1.0 + relative_noise * noise->Normal()) + absolute_noise * noise->Normal();
    o.sigma_y = sigma_y_value;
    points.push_back(o);
  }
  return points;
}

// An invented isotherm on a GAB curve (X_m 0.05 kg/kg, C 10, K 0.8; GAB form as in
// R. B. Anderson, J. Am. Chem. Soc. 68 (1946) 686, from memory) with errors in variables.
struct GabScatterSpec {
  int num_points = 16;            // equally spaced from 5 % to 95 % RH
  double wiggle_per_point = 1.7;  // y = GAB (1 + 0.02 sin(wiggle_per_point i)), point i
  double rh_uncertainty = 0.008;  // u(RH) of every point, as a fraction
};

// The points of `spec`: a deterministic scatter of about 2 %, sigma_y = 5e-4 + 0.02 u.
inline std::vector<Observation> GabPointsWithRhErrors(const GabScatterSpec& spec) {
  std::vector<Observation> data;
  for (int i = 0; i < spec.num_points; ++i) {
    Observation o;
    o.x = {0.05 + 0.9 * i / static_cast<double>(spec.num_points - 1), 0.0};
    const double ka = 0.8 * o.x[0];
    const double u = 0.05 * 10.0 * ka / ((1.0 - ka) * (1.0 - ka + 10.0 * ka));
    o.y = u * (1.0 + 0.02 * std::sin(spec.wiggle_per_point * i));
    o.sigma_y = 5e-4 + 0.02 * u;
    o.sigma_x0 = spec.rh_uncertainty;
    data.push_back(o);
  }
  return data;
}

}  // namespace sorbtrace::fitters::testing
