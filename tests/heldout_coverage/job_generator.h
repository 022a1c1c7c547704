// Held-out jobs with a known truth for the coverage test of heldout_coverage_e2e_test.cc,
// written from the user documentation only (README.md, docs/input-formats.md): the data a
// laboratory would record, the way it would record them, with the isotherm behind them known.
//
// Three classes of job (JobClass):
//  - kDesiccatorIdentical: three specimens (20-50 g) oven dried, then over 6-8 saturated salts at
//    25 degC, weighed once a day; every step follows a first-order approach to equilibrium with
//    a time constant of 1-4 days; the laboratory moves the specimens on when the last three
//    weighings of every specimen, 24 h apart, lie within 0.1 % of its mass (ISO 12571:2021,
//    constant-mass criterion, read as max - min of the three); balance noise 0.1 mg, readings
//    rounded to 0.1 mg. All specimens follow the same GAB isotherm. The humidity over each salt
//    is Greenspan's value plus a deviation drawn with his uncertainty (the truth of the step).
//  - kDesiccatorFactors: the same, each specimen's moisture content = factor * GAB truth, the
//    factor drawn with sd 3 %; the truth of the job is the mean curve (factor 1).
//  - kVapourLog: one 10-20 mg specimen in a vapour-sorption balance at 23 degC, readings every
//    60 s, set points 0 (drying; dry mass = its end), 10, 20, ..., 90 % RH, time constants
//    20-90 min; a step ends when the least-squares slope of the last 10 min of readings is below
//    0.002 %/min of the dry mass (common practice), except two steps at 60-90 % that the
//    instrument cuts at about 1.5 time constants (to be extrapolated); balance noise 1 ug. The
//    chamber holds the set point; the humidity sensor reads it with an error per step drawn
//    with the standard uncertainty the job states (0.8 %RH) plus 0.2 %RH noise per reading.
//
// Deterministic: one std::mt19937_64 per job seeded from the class and the replicate, uniform
// deviates from the top 53 bits, normal deviates from our own Box-Muller transform, numbers
// written with fixed decimals, so the files are byte-identical wherever they are generated.
// Laboratory, material and specimen names are invented.
#pragma once

#include <array>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <random>
#include <string>
#include <vector>

namespace sorbtrace::heldout_coverage {

enum class JobClass { kDesiccatorIdentical, kDesiccatorFactors, kVapourLog };

// GAB isotherm, X(a) = X_m C K a / ((1 - K a)(1 - K a + C K a)), X in kg/kg, a = RH fraction
// (Guggenheim 1966; Anderson 1946; de Boer 1953).
struct Gab {
  double x_m_kg_per_kg = 0;
  double c = 0;
  double k = 0;
  double operator()(double rh_fraction) const {
    const double ka = k * rh_fraction;
    return x_m_kg_per_kg * c * ka / ((1.0 - ka) * (1.0 - ka + c * ka));
  }
};

// The isotherms behind the jobs (invented materials).
// A mineral render for the desiccator classes: X(50 %) = 0.00992, X(80 %) = 0.02016 kg/kg.
inline constexpr Gab kRenderTruth{0.0062, 11.0, 0.88};
// A spray-dried powder for the vapour-log class: X(50 %) = 0.0544, X(80 %) = 0.1018 kg/kg.
inline constexpr Gab kPowderTruth{0.041, 6.2, 0.79};

// Deterministic random numbers: uniform from the top 53 bits of std::mt19937_64 (whose output
// sequence the C++ standard fixes), normal by the Box-Muller transform (Box & Muller 1958).
class Random {
 public:
  explicit Random(std::uint64_t seed) : engine_(seed) {}
  double Uniform() { return static_cast<double>(engine_() >> 11) * 0x1.0p-53; }  // [0, 1)
  double Uniform(double low, double high) { return low + (high - low) * Uniform(); }
  double Normal() {
    if (has_spare_) {
      has_spare_ = false;
      return spare_;
    }
    const double u1 = 1.0 - Uniform();  // (0, 1]
    const double u2 = Uniform();
    const double radius = std::sqrt(-2.0 * std::log(u1));
    const double angle = 2.0 * 3.14159265358979323846 * u2;
    spare_ = radius * std::sin(angle);
    has_spare_ = true;
    return radius * std::cos(angle);
  }

 private:
  std::mt19937_64 engine_;
  bool has_spare_ = false;
  double spare_ = 0;
};

// One humidity step with a known true equilibrium of the mean curve.
struct TruePoint {
  std::string label;              // salt formula or set point "60 %"
  double rh_fraction = 0;         // true humidity of the step
  double moisture_kg_per_kg = 0;  // the truth's equilibrium moisture content
  bool cut_early = false;         // vapour log: the instrument moved on at about 1.5 time constants
};

struct GeneratedJob {
  std::string job_toml;
  std::string data_file_name;
  std::string data_csv;
  Gab truth;
  double temperature_C = 0;
  std::vector<TruePoint> points;  // adsorption steps in order
};

namespace internal {

// Saturated salt humidities at 25 degC and their estimated uncertainties (taken as k = 2),
// Greenspan (1977), J. Res. NBS 81A, 89-96, Table 2 (from memory; each value agrees with
// `sorbtrace calc salt X --temp 25C` within 0.01 %RH, each uncertainty with its U).
struct Salt {
  const char* formula;
  double rh_fraction;
  double expanded_uncertainty_fraction;
};
inline constexpr std::array<Salt, 8> kSalts25C{{{"LiCl", 0.1130, 0.0027},
                                                {"MgCl2", 0.3278, 0.0016},
                                                {"K2CO3", 0.4316, 0.0039},
                                                {"Mg(NO3)2", 0.5289, 0.0022},
                                                {"NaBr", 0.5757, 0.0040},
                                                {"NaCl", 0.7529, 0.0012},
                                                {"KCl", 0.8434, 0.0026},
                                                {"K2SO4", 0.9730, 0.0045}}};

inline std::string Fixed(double value, int decimals) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", decimals, value);
  return buffer;
}

// Civil date of a day count from 1970-01-01 (H. Hinnant, "chrono-compatible low-level date
// algorithms", days_from_civil inverse), as YYYY-MM-DD.
inline std::string CivilDate(long days) {
  days += 719468;
  const long era = (days >= 0 ? days : days - 146096) / 146097;
  const long doe = days - era * 146097;
  const long yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
  const long doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
  const long mp = (5 * doy + 2) / 153;
  const long day = doy - (153 * mp + 2) / 5 + 1;
  const long month = mp < 10 ? mp + 3 : mp - 9;
  const long year = yoe + era * 400 + (month <= 2 ? 1 : 0);
  char buffer[80];
  std::snprintf(buffer, sizeof buffer, "%04ld-%02ld-%02ld", year, month, day);
  return buffer;
}

// "YYYY-MM-DDTHH:MM" of a time in minutes since 2026-01-05T00:00 (day 20458 since 1970).
inline std::string Stamp(long minutes) {
  const long day = minutes / 1440;
  const long minute_of_day = minutes % 1440;
  char buffer[48];
  std::snprintf(buffer, sizeof buffer, "T%02ld:%02ld", minute_of_day / 60, minute_of_day % 60);
  return CivilDate(20458 + day) + buffer;
}

// ISO 12571:2021 constant mass as the laboratory applies it: the last three weighings, each
// 24 h after the previous, lie within 0.1 % of the last mass (max - min).
inline bool ConstantMass(const std::vector<double>& masses_g) {
  const std::size_t n = masses_g.size();
  if (n < 3) return false;
  double low = masses_g[n - 1];
  double high = low;
  for (std::size_t i = n - 3; i < n; ++i) {
    low = std::min(low, masses_g[i]);
    high = std::max(high, masses_g[i]);
  }
  return high - low <= 0.001 * masses_g[n - 1];
}

// The salts of a job: six always, NaBr in seven, K2SO4 too in eight; ascending humidity.
inline std::vector<Salt> ChooseSalts(Random& random) {
  const int num_salts = 6 + static_cast<int>(random.Uniform() * 3.0);
  std::vector<Salt> salts;
  for (const auto& salt : kSalts25C) {
    const std::string f = salt.formula;
    if (f == "NaBr" && num_salts < 7) continue;
    if (f == "K2SO4" && num_salts < 8) continue;
    salts.push_back(salt);
  }
  return salts;
}

// The job file of a desiccator job: three specimens, oven dry mass, one data set at 25 degC and
// the reference conditions at 25 degC (the shipped template lists 23 degC ones).
inline std::string DesiccatorToml(int replicate, bool specimen_factors,
                                  const std::array<const char*, 3>& ids) {
  const std::string id =
      std::string(specimen_factors ? "QMT-F-" : "QMT-I-") + std::to_string(1000 + replicate);
  std::string toml = "# Held-out coverage job (invented laboratory and material)\n[job]\nid = \"" +
                     id +
                     "\"\nissue_date = \"2026-11-30\"\nmaterial_class = \"porous_mineral\"\n"
                     "method = \"iso_12571_desiccator\"\n\n[material]\nname = \"Clay-lime render "
                     "CLR-5 (invented)\"\n\n[measurement]\ndry_mass_method = \"oven\"\n"
                     "drying_temperature_C = 105\nbalance_resolution_g = 0.0001\n"
                     "balance_standard_uncertainty_g = 0.0001\n"
                     "temperature_standard_uncertainty_K = 0.2\n";
  for (const char* specimen : ids) {
    toml += "\n[[specimen]]\nid = \"" + std::string(specimen) + "\"\n";
  }
  toml +=
      "\n[[dataset]]\nid = \"desiccator-25C\"\nmethod = \"desiccator\"\nfile = \"weighings.csv\"\n"
      "temperature_C = 25.0\n\n[pores]\nreference_conditions = [{ temperature_C = 25, "
      "rh_percent = 50 }, { temperature_C = 25, rh_percent = 80 }]\n";
  return toml;
}

inline GeneratedJob Desiccator(int replicate, bool specimen_factors) {
  Random random(0x5EEDC0FFEEull * 7919u + static_cast<std::uint64_t>(replicate) * 2u +
                (specimen_factors ? 1u : 0u));
  GeneratedJob job;
  job.truth = kRenderTruth;
  job.temperature_C = 25.0;
  job.data_file_name = "weighings.csv";

  constexpr int kSpecimens = 3;
  const std::array<const char*, kSpecimens> ids{"R1", "R2", "R3"};
  std::array<double, kSpecimens> dry_g{};
  std::array<double, kSpecimens> factor{};
  std::array<double, kSpecimens> moisture{};
  for (int s = 0; s < kSpecimens; ++s) {
    dry_g[s] = random.Uniform(20.0, 50.0);
    factor[s] = specimen_factors ? 1.0 + 0.03 * random.Normal() : 1.0;
    moisture[s] = factor[s] * job.truth(0.45);  // as conditioned in the laboratory's air
  }

  const std::vector<Salt> salts = ChooseSalts(random);

  std::string csv =
      "# Quillfeather Materials Test House (invented) - desiccator weighings, 25 degC\n"
      "specimen,step,atmosphere,branch,temperature_C,weighed_at,mass_g\n";
  long day = 0;
  // Step 0: oven at 105 degC (time constant 0.3 d), then the salts.
  const int num_steps = 1 + static_cast<int>(salts.size());
  for (int step = 0; step < num_steps; ++step) {
    const bool oven = step == 0;
    // A real saturated solution sits within Greenspan's uncertainty of his value: the humidity
    // of this desiccator is drawn with u = U / 2, the uncertainty the job relies on.
    const double rh =
        oven ? 0.0
             : salts[step - 1].rh_fraction +
                   0.5 * salts[step - 1].expanded_uncertainty_fraction * random.Normal();
    const double tau_step_d = oven ? 0.3 : random.Uniform(1.0, 4.0);
    std::array<double, kSpecimens> tau_d{};
    std::array<double, kSpecimens> start{};
    std::array<double, kSpecimens> target{};
    std::array<std::vector<double>, kSpecimens> masses;
    for (int s = 0; s < kSpecimens; ++s) {
      tau_d[s] = tau_step_d * random.Uniform(0.9, 1.1);
      start[s] = moisture[s];
      target[s] = oven ? 0.0 : factor[s] * job.truth(rh);
    }
    for (int d = 1; d <= 60; ++d) {
      bool all_constant = true;
      for (int s = 0; s < kSpecimens; ++s) {
        const double w = target[s] + (start[s] - target[s]) * std::exp(-d / tau_d[s]);
        moisture[s] = w;
        const double noisy_g = dry_g[s] * (1.0 + w) + 1e-4 * random.Normal();
        const double mass_g = std::round(noisy_g * 1e4) / 1e4;  // 0.1 mg display
        masses[s].push_back(mass_g);
        const long minute = (day + d) * 1440 + 9 * 60 + 5 * s +
                            static_cast<long>(std::floor(random.Uniform(-8.0, 8.0)));
        const double temperature_C =
            oven ? 105.0 + 0.3 * random.Normal() : 25.0 + 0.1 * random.Normal();
        csv += std::string(ids[s]) + "," + std::to_string(step + 1) + "," +
               (oven ? std::string("oven") : std::string(salts[step - 1].formula)) + "," +
               (oven ? "drying" : "adsorption") + "," + Fixed(temperature_C, 1) + "," +
               Stamp(minute) + "," + Fixed(mass_g, 4) + "\n";
        all_constant = all_constant && ConstantMass(masses[s]);
      }
      if (all_constant) {
        day += d;
        break;
      }
    }
    if (!oven) {
      job.points.push_back({salts[step - 1].formula, rh, job.truth(rh), false});
    }
  }
  job.data_csv = csv;

  job.job_toml = DesiccatorToml(replicate, specimen_factors, ids);
  return job;
}

// Least-squares slope of (t, m) (per minute when t is in minutes).
inline double Slope(const std::vector<double>& t, const std::vector<double>& m, std::size_t from) {
  double st = 0, sm = 0;
  const double n = static_cast<double>(t.size() - from);
  for (std::size_t i = from; i < t.size(); ++i) {
    st += t[i];
    sm += m[i];
  }
  const double tm = st / n, mm = sm / n;
  double stt = 0, stm = 0;
  for (std::size_t i = from; i < t.size(); ++i) {
    stt += (t[i] - tm) * (t[i] - tm);
    stm += (t[i] - tm) * (m[i] - mm);
  }
  return stm / stt;
}

inline GeneratedJob VapourLog(int replicate) {
  Random random(0xD15EA5Eull * 104729u + static_cast<std::uint64_t>(replicate));
  GeneratedJob job;
  job.truth = kPowderTruth;
  job.temperature_C = 23.0;
  job.data_file_name = "balance_log.csv";

  const double dry_mg = random.Uniform(10.0, 20.0);
  double moisture = job.truth(0.40);  // as received
  // Two of the steps at 60, 70, 80, 90 % are cut at about 1.5 time constants.
  const int first_cut = 6 + static_cast<int>(random.Uniform() * 4.0);
  int second_cut = 6 + static_cast<int>(random.Uniform() * 3.0);
  if (second_cut >= first_cut) ++second_cut;

  std::string csv =
      "# Quillfeather Materials Test House (invented) - sorption balance log, 23 degC\n"
      "elapsed_s,set_rh_percent,measured_rh_percent,temperature_C,mass_mg\n";
  long elapsed_s = 0;
  constexpr double kRateLimitPerMin = 0.002 / 100.0;  // of the dry mass (common practice)
  constexpr int kWindowReadings = 11;                 // 10 min of 60 s readings
  constexpr double kSensorUncertaintyPercent = 0.8;   // as the job file states
  double reference_mg = dry_mg * (1.0 + moisture);    // before drying: the current mass
  for (int step = 0; step <= 9; ++step) {
    const double set = 0.1 * step;
    const double tau_min = random.Uniform(20.0, 90.0);
    const bool cut = step == first_cut || step == second_cut;
    const double cut_min = 1.5 * tau_min * random.Uniform(0.9, 1.1);
    const double start = moisture;
    const double target = job.truth(set);
    const double sensor_error_percent = kSensorUncertaintyPercent * random.Normal();
    std::vector<double> t_min, m_mg;
    for (int minute = 0;; ++minute) {
      const double w = target + (start - target) * std::exp(-minute / tau_min);
      moisture = w;
      const double mass_mg = dry_mg * (1.0 + w) + 1e-3 * random.Normal();
      const double measured =
          std::max(0.0, 100.0 * set + sensor_error_percent + 0.2 * random.Normal());
      csv += std::to_string(elapsed_s) + "," + Fixed(100.0 * set, 1) + "," + Fixed(measured, 2) +
             "," + Fixed(23.0 + 0.03 * random.Normal(), 2) + "," + Fixed(mass_mg, 4) + "\n";
      elapsed_s += 60;
      t_min.push_back(minute);
      m_mg.push_back(std::round(mass_mg * 1e4) / 1e4);
      if (cut && minute >= cut_min) break;
      if (static_cast<int>(t_min.size()) >= kWindowReadings &&
          std::fabs(Slope(t_min, m_mg, t_min.size() - kWindowReadings)) <
              kRateLimitPerMin * reference_mg) {
        break;
      }
      if (minute > 24 * 60) break;  // never reached with these time constants
    }
    if (step == 0) reference_mg = m_mg.back();  // the dry mass as the instrument knows it
    if (step > 0) {
      job.points.push_back({Fixed(100.0 * set, 0) + " %", set, target, cut});
    }
  }
  job.data_csv = csv;

  const std::string id = "QMT-V-" + std::to_string(1000 + replicate);
  job.job_toml =
      "# Held-out coverage job (invented laboratory and material)\n[job]\nid = \"" + id +
      "\"\nissue_date = \"2026-11-30\"\nmaterial_class = \"pharmaceutical_powder\"\n"
      "method = \"ph_eur_2_9_39\"\n\n[material]\nname = \"Spray-dried carrier powder SDC-9 "
      "(invented)\"\n\n[measurement]\ndry_mass_method = \"desiccant_step\"\n"
      "balance_resolution_g = 0.0000001\nbalance_standard_uncertainty_g = 0.000001\n"
      "rh_sensor_standard_uncertainty_percent = 0.8\ntemperature_standard_uncertainty_K = 0.1\n"
      "\n[[specimen]]\nid = \"M1\"\n\n[[dataset]]\nid = \"balance-23C\"\nmethod = \"vapor_log\"\n"
      "file = \"balance_log.csv\"\ntemperature_C = 23.0\nspecimen = \"M1\"\n";
  return job;
}

}  // namespace internal

// The job of class `job_class`, replicate `replicate` (0-based).
inline GeneratedJob Generate(JobClass job_class, int replicate) {
  switch (job_class) {
    case JobClass::kDesiccatorIdentical:
      return internal::Desiccator(replicate, false);
    case JobClass::kDesiccatorFactors:
      return internal::Desiccator(replicate, true);
    case JobClass::kVapourLog:
      break;
  }
  return internal::VapourLog(replicate);
}

}  // namespace sorbtrace::heldout_coverage
