// Held-out jobs: a small generator of sorption tests with a known truth, written apart from the
// project's own example generator (scripts/generate_examples.cc) so that the end-to-end tests
// run the binary on data it was not tuned on. Invented data; fictional laboratory.
//
// Truth: GAB, X(a) = X_m C K a / ((1 - K a)(1 - K a + C K a)) [kg/kg] (Guggenheim 1966,
// Anderson 1946, de Boer 1953). Kinetics: first order inside a step, X(t) = X_eq +
// (X_start - X_eq) exp(-t / tau), from where the previous step left the specimen. Noise: normal
// deviates from this file's own Box-Muller transform on a seeded std::mt19937_64 (the standard
// library's distributions differ between implementations), so the files are byte-identical on
// every machine.
#pragma once

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <random>
#include <string>
#include <vector>

namespace sorbtrace::heldout {

struct Gab {
  double x_m = 0.0;  // kg/kg
  double c = 0.0;
  double k = 0.0;
  double At(double rh_fraction) const {
    const double ka = k * rh_fraction;
    return x_m * c * ka / ((1.0 - ka) * (1.0 - ka + c * ka));
  }
};

// Saturated-salt humidities in %RH at 20, 25 and 30 degC: L. Greenspan, "Humidity fixed points
// of binary saturated aqueous solutions", J. Res. NBS 81A (1977) 89-96, Table 2 (from memory;
// the pipeline's own salt table is not used for the truth).
struct SaltRh {
  const char* formula;
  double rh_percent_20C;
  double rh_percent_25C;
  double rh_percent_30C;
};
inline constexpr SaltRh kGreenspan[] = {
    {"LiCl", 11.31, 11.30, 11.28},  {"MgCl2", 33.07, 32.78, 32.44},
    {"K2CO3", 43.16, 43.16, 43.17}, {"Mg(NO3)2", 54.38, 52.89, 51.40},
    {"NaBr", 59.14, 57.57, 56.03},  {"NaCl", 75.47, 75.29, 75.09},
    {"KCl", 85.11, 84.34, 83.62},   {"K2SO4", 97.59, 97.30, 97.00},
};

// Linear interpolation of the table between 20 and 30 degC, as a fraction.
inline double SaltRhFraction(const std::string& formula, double temperature_C) {
  for (const SaltRh& s : kGreenspan) {
    if (formula != s.formula) continue;
    const double percent = temperature_C <= 25.0
                               ? s.rh_percent_20C + (s.rh_percent_25C - s.rh_percent_20C) *
                                                        (temperature_C - 20.0) / 5.0
                               : s.rh_percent_25C + (s.rh_percent_30C - s.rh_percent_25C) *
                                                        (temperature_C - 25.0) / 5.0;
    return percent / 100.0;
  }
  return std::nan("");
}

// Normal deviates from a seeded generator (Box-Muller, G. E. P. Box and M. E. Muller, Ann.
// Math. Stat. 29 (1958) 610).
class Noise {
 public:
  explicit Noise(std::uint64_t seed) : engine_(seed) {}
  double Normal(double sd) {
    constexpr double kTwoPi = 6.283185307179586;
    const double u1 = (static_cast<double>(engine_() >> 11) + 0.5) * 0x1.0p-53;
    const double u2 = static_cast<double>(engine_() >> 11) * 0x1.0p-53;
    return sd * std::sqrt(-2.0 * std::log(u1)) * std::cos(kTwoPi * u2);
  }

 private:
  std::mt19937_64 engine_;
};

inline std::string Fixed(double value, int decimals) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", decimals, value);
  return buffer;
}

// ---- Desiccator series --------------------------------------------------------------------

struct DesiccatorStep {
  std::string atmosphere;  // salt formula, "oven" or "rh:NN%"
  std::string branch;      // adsorption, desorption, drying
  double x_eq = 0.0;       // true equilibrium moisture, kg/kg
};

struct Weighing {
  std::string specimen;
  int step = 0;
  std::string atmosphere;
  std::string branch;
  double temperature_C = 0.0;
  long minute = 0;  // minutes since the start of the test
  double mass_g = 0.0;
};

struct DesiccatorOptions {
  double dry_mass_g = 10.0;
  double start_moisture = 0.0;
  double temperature_C = 23.0;
  double tau_h = 10.0;         // time constant of every step
  int weighings_per_step = 5;  // one a day
  double balance_sd_g = 0.00012;
  double resolution_g = 0.0001;
  long offset_min = 0;  // this specimen is weighed a few minutes after the first
};

// The weighings of one specimen through `steps`, one a day, the next step starting the day
// after the last weighing.
inline std::vector<Weighing> WeighSpecimen(const std::string& specimen,
                                           const std::vector<DesiccatorStep>& steps,
                                           const DesiccatorOptions& o, Noise* noise) {
  std::vector<Weighing> rows;
  double x = o.start_moisture;
  long day = 0;
  for (std::size_t s = 0; s < steps.size(); ++s) {
    const double x_start = x;
    for (int w = 1; w <= o.weighings_per_step; ++w) {
      const double t_h = 24.0 * w;
      const double x_t = steps[s].x_eq + (x_start - steps[s].x_eq) * std::exp(-t_h / o.tau_h);
      double mass = o.dry_mass_g * (1.0 + x_t) + noise->Normal(o.balance_sd_g);
      mass = std::round(mass / o.resolution_g) * o.resolution_g;
      const bool oven = steps[s].atmosphere == "oven";
      rows.push_back({specimen, static_cast<int>(s) + 1, steps[s].atmosphere, steps[s].branch,
                      oven ? 105.0 : o.temperature_C + noise->Normal(0.1),
                      (day + w) * 24 * 60 + o.offset_min, mass});
    }
    x = steps[s].x_eq;
    day += o.weighings_per_step + 1;
  }
  return rows;
}

// Minutes since 2026-03-02 00:00 as a calendar date and time (proleptic Gregorian calendar).
struct Stamp {
  int day, month, year, hour, minute;
};
inline Stamp StampOf(long minute) {
  using namespace std::chrono;
  const year_month_day date{sys_days{year{2026} / March / 2} + days{minute / (24 * 60)}};
  return {static_cast<int>(static_cast<unsigned>(date.day())),
          static_cast<int>(static_cast<unsigned>(date.month())), static_cast<int>(date.year()),
          static_cast<int>(minute / 60 % 24), static_cast<int>(minute % 60)};
}

// ---- Vapour-sorption log ------------------------------------------------------------------

struct LogStep {
  double set_rh_fraction = 0.0;
  double x_eq = 0.0;
  double tau_min = 15.0;
  double duration_min = 240.0;
};

struct LogReading {
  double elapsed_s;
  double set_rh_fraction;
  double measured_rh_fraction;
  double temperature_C;
  double mass_g;
};

inline std::vector<LogReading> RunLog(const std::vector<LogStep>& steps, double dry_mass_g,
                                      double start_moisture, double temperature_C,
                                      double balance_sd_g, Noise* noise) {
  constexpr double kReadingInterval_s = 60.0;
  std::vector<LogReading> rows;
  double x = start_moisture;
  double t_s = 0.0;
  for (const LogStep& step : steps) {
    const double x_start = x;
    const int n = static_cast<int>(step.duration_min * 60.0 / kReadingInterval_s);
    for (int i = 1; i <= n; ++i) {
      const double t_min = i * kReadingInterval_s / 60.0;
      const double x_t = step.x_eq + (x_start - step.x_eq) * std::exp(-t_min / step.tau_min);
      const double measured =
          std::min(1.0, std::max(0.0, step.set_rh_fraction + noise->Normal(0.002)));
      rows.push_back({t_s + i * kReadingInterval_s, step.set_rh_fraction, measured,
                      temperature_C + noise->Normal(0.03),
                      dry_mass_g * (1.0 + x_t) + noise->Normal(balance_sd_g)});
    }
    x = step.x_eq + (x_start - step.x_eq) * std::exp(-step.duration_min / step.tau_min);
    t_s += n * kReadingInterval_s;
  }
  return rows;
}

// An invented laboratory profile (docs/input-formats.md, section 1a).
inline const char* kLabProfile =
    "[laboratory]\n"
    "name = \"Quillmoor Test House (fictional)\"\n"
    "address = \"3 Sedge Row, Quillmoor QM1 1AA, Fictland\"\n\n"
    "[[signatory]]\n"
    "name = \"R. Ashdown (fictional)\"\n"
    "role = \"head of testing\"\n";

}  // namespace sorbtrace::heldout
