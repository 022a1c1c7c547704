// Test helpers: deterministic normal noise (Box-Muller on std::mt19937_64, so the draws do not
// depend on the standard library's distributions) and synthetic data sets from a model.
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

}  // namespace sorbtrace::fitters::testing
