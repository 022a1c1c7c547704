#include "bench/vapor_log_generator.h"

#include <cmath>
#include <cstdio>
#include <random>
#include <stdexcept>
#include <string>
#include <vector>

namespace sorbtrace::bench {
namespace {

// Uniform in [-1, 1) from the top 53 bits of the generator (own transform so the file does not
// depend on the standard library's distributions).
double UniformSymmetric(std::mt19937_64& rng) {
  constexpr double kTwoToMinus53 = 1.0 / 9007199254740992.0;
  return 2.0 * static_cast<double>(rng() >> 11) * kTwoToMinus53 - 1.0;
}

// Set points [%]: 0, 10, 20 ... 90, 80 ... 10, 0, 10 ... repeated up to num_steps.
std::vector<int> SetPoints(int num_steps) {
  std::vector<int> sequence;
  int value = 0;
  int direction = 1;
  for (int i = 0; i < num_steps; ++i) {
    sequence.push_back(value);
    if (value == 90) direction = -1;
    if (value == 0) direction = 1;
    value += 10 * direction;
  }
  return sequence;
}

// Invented equilibrium moisture [kg/kg] at rh (a smooth type II shape).
double InventedIsotherm(double rh_fraction) {
  return 0.02 * rh_fraction / ((1.0 - 0.8 * rh_fraction) * (1.0 + 4.0 * rh_fraction));
}

}  // namespace

std::uint64_t WriteSyntheticVaporLog(const std::filesystem::path& path,
                                     const SyntheticLogOptions& options) {
  std::FILE* file = std::fopen(path.c_str(), "wb");
  if (file == nullptr) throw std::runtime_error("cannot write " + path.string());
  std::mt19937_64 rng(options.seed);
  const std::vector<int> set_points = SetPoints(options.num_steps);
  const std::int64_t rows_per_step = options.num_rows / options.num_steps;
  std::string out = "elapsed_s,set_rh_percent,measured_rh_percent,temperature_C,mass_mg\n";
  std::uint64_t bytes = 0;
  double mass_mg = options.dry_mass_mg * 1.001;
  char line[128];
  for (std::int64_t row = 0; row < options.num_rows; ++row) {
    const auto step = static_cast<std::size_t>(
        std::min<std::int64_t>(row / rows_per_step, options.num_steps - 1));
    const double set_percent = set_points[step];
    const double target_mg = options.dry_mass_mg * (1.0 + InventedIsotherm(set_percent / 100.0));
    constexpr double kTimeConstant_s = 3600.0;  // invented sorption kinetics
    mass_mg += (target_mg - mass_mg) / kTimeConstant_s;
    const double measured = std::max(0.0, set_percent + 0.15 * UniformSymmetric(rng));
    const double temperature_C = 25.0 + 0.02 * UniformSymmetric(rng);
    const double reading_mg = mass_mg + 0.0004 * UniformSymmetric(rng);
    const int n =
        std::snprintf(line, sizeof line, "%lld,%.1f,%.3f,%.3f,%.5f\n", static_cast<long long>(row),
                      set_percent, measured, temperature_C, reading_mg);
    out.append(line, static_cast<std::size_t>(n));
    if (out.size() > (1u << 20)) {
      bytes += std::fwrite(out.data(), 1, out.size(), file);
      out.clear();
    }
  }
  bytes += std::fwrite(out.data(), 1, out.size(), file);
  if (std::fclose(file) != 0) throw std::runtime_error("cannot write " + path.string());
  return bytes;
}

}  // namespace sorbtrace::bench
