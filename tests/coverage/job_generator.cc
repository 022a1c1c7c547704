#include "tests/coverage/job_generator.h"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <string>

#include "pipeline/physics/physics.h"

namespace sorbtrace::coverage {
namespace {

constexpr double kDay_s = 86400.0;
constexpr double kMinute_s = 60.0;
const double kTestTemperature_K = physics::CelsiusToKelvin(23.0);

// ---- Desiccator ------------------------------------------------------------------------
constexpr double kBalanceSd_g = 0.12e-3;     // balance standard deviation
constexpr double kBalanceStep_g = 0.1e-3;    // display resolution
constexpr double kConstantMassLimit = 1e-3;  // ISO 12571: 0.1 % (from memory)
constexpr int kMaxDaysPerStep = 80;
const char* const kSalts[] = {"LiCl", "MgCl2", "Mg(NO3)2", "NaCl", "KCl", "K2SO4"};
// Two more saturated salts between them (Greenspan 1977), for designs with 7 or 8 steps.
const char* const kMoreSalts[] = {"K2CO3", "NaBr"};
constexpr const char* kDesiccatorDataSet = "desiccator-23C";

double Weigh(double true_mass_g, Random& random) {
  const double reading = true_mass_g + kBalanceSd_g * random.Normal();
  return std::round(reading / kBalanceStep_g) * kBalanceStep_g;
}

// One specimen through one desiccator step: daily weighings until three consecutive ones lie
// within the constant-mass limit of the last. x_start, x_eq: moisture content at the transfer
// and at equilibrium. Returns the moisture content at the last weighing; advances time_s.
double RunDesiccatorStep(double dry_mass_g, double x_start, double x_eq, double tau_s,
                         double& time_s, int& line, ingest::DesiccatorStep& step, Random& random) {
  const double start_s = time_s;
  auto moisture_at = [&](double t) {
    return x_eq + (x_start - x_eq) * std::exp(-(t - start_s) / tau_s);
  };
  std::vector<double> masses;
  double x_last = x_start;
  for (int day = 0; day <= kMaxDaysPerStep; ++day) {
    const double jitter_s = day == 0 ? 0.0 : 180.0 * random.Normal();  // a few minutes
    const double t = start_s + day * kDay_s + jitter_s;
    x_last = moisture_at(t);
    ingest::Weighing w;
    w.time_s = t;
    w.mass_g = Weigh(dry_mass_g * (1.0 + x_last), random);
    w.line = line++;
    w.temperature_K = step.temperature_K;
    step.weighings.push_back(w);
    masses.push_back(w.mass_g);
    time_s = t;
    const std::size_t n = masses.size();
    if (n >= 3) {
      const double hi = std::max({masses[n - 1], masses[n - 2], masses[n - 3]});
      const double lo = std::min({masses[n - 1], masses[n - 2], masses[n - 3]});
      if ((hi - lo) / masses[n - 1] < kConstantMassLimit) break;
    }
  }
  step.first_line = step.weighings.front().line;
  step.last_line = step.weighings.back().line;
  return x_last;
}

// A desiccator job without its weighings: oven-dried specimens weighed on the balance above, one
// data set at 23 degC, and per salt in `salts` (in order) the true RH of its desiccator (the
// Greenspan table value plus its standard uncertainty times a normal deviate drawn from
// `random`) and the true moisture content of `truth` there.
GeneratedJob StartDesiccatorJob(const Gab& truth, const char* job_file,
                                const std::vector<const char*>& salts, Random& random) {
  GeneratedJob job;
  job.truth = truth;
  ingest::JobSpec& spec = job.ingested.job;
  spec.job_file = job_file;
  spec.dry_mass_method = ingest::DryMassMethod::kOvenDrying;
  spec.balance_resolution_g = kBalanceStep_g;
  spec.balance_standard_uncertainty_g = kBalanceSd_g;
  spec.temperature_standard_uncertainty_K = 0.2;
  ingest::DataSetSpec dataset;
  dataset.id = kDesiccatorDataSet;
  dataset.temperature_K = kTestTemperature_K;
  spec.datasets.push_back(dataset);
  for (const char* salt : salts) {
    const physics::SaltHumidity table = physics::SaltSolutionHumidity(salt, kTestTemperature_K);
    const double rh = table.rh_fraction + table.standard_uncertainty_fraction * random.Normal();
    job.true_rh_fraction.push_back(rh);
    job.true_moisture_kg_per_kg.push_back(job.truth(rh));
  }
  return job;
}

// ---- Vapour log ------------------------------------------------------------------------
// BalanceErrors::kReadingNoiseAndStepOffset
constexpr double kBlock_s = 10.0;
constexpr int kRowsPerBlock = 10;
constexpr double kReadingSd_g = 0.3e-6;        // balance, one reading
constexpr double kBalanceOffsetSd_g = 0.2e-6;  // per step, = stated balance uncertainty
// BalanceErrors::kReadingNoiseOnly: one reading per minute, its sd = stated balance uncertainty.
constexpr double kSlowBlock_s = 60.0;
constexpr double kRepeatabilitySd_g = 1e-6;
constexpr double kRateLimitPerMin = 2e-5;  // 0.002 %/min of the dry mass
constexpr double kRateWindow_s = 600.0;
constexpr double kSensorSd = 0.008;       // per-step sensor error, = stated sensor uncertainty
constexpr double kChamberSd = 0.003;      // control offset of the chamber
constexpr double kSensorNoiseSd = 0.002;  // reading noise of the sensor
constexpr double kMaxStep_s = 12 * 3600.0;
constexpr double kTemperatureSd_K = 0.1;  // specimen vs sensor, = stated temperature uncertainty

double Slope(const std::vector<ingest::LogBlock>& blocks, std::size_t first) {
  double mt = 0.0, mm = 0.0;
  const double n = static_cast<double>(blocks.size() - first);
  for (std::size_t i = first; i < blocks.size(); ++i) {
    mt += blocks[i].time_s;
    mm += blocks[i].mass_g;
  }
  mt /= n;
  mm /= n;
  double sxx = 0.0, sxy = 0.0;
  for (std::size_t i = first; i < blocks.size(); ++i) {
    sxx += (blocks[i].time_s - mt) * (blocks[i].time_s - mt);
    sxy += (blocks[i].time_s - mt) * (blocks[i].mass_g - mm);
  }
  return sxy / sxx;
}

}  // namespace

double Gab::operator()(double a) const {
  const double ka = k * a;
  return xm_kg_per_kg * c * ka / ((1.0 - ka) * (1.0 - ka + c * ka));
}

double Random::Uniform() {
  constexpr double kTwoPow53 = 9007199254740992.0;
  return (static_cast<double>(engine_() >> 11) + 0.5) / kTwoPow53;
}

double Random::Normal() {
  const double u1 = Uniform();
  const double u2 = Uniform();
  return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
}

GeneratedJob MakeDesiccatorJob(std::uint64_t seed, double specimen_factor_sd) {
  return MakeDesiccatorJob(seed, specimen_factor_sd, 3, 6);
}

GeneratedJob MakeDesiccatorJob(std::uint64_t seed, double specimen_factor_sd, int num_specimens,
                               int num_salts) {
  std::vector<const char*> salts(std::begin(kSalts), std::end(kSalts));
  for (int extra = 0; extra < num_salts - 6 && extra < 2; ++extra) {
    salts.push_back(kMoreSalts[extra]);
  }
  std::sort(salts.begin(), salts.end(), [](const char* a, const char* b) {
    return physics::SaltSolutionHumidity(a, kTestTemperature_K).rh_fraction <
           physics::SaltSolutionHumidity(b, kTestTemperature_K).rh_fraction;
  });
  Random random(seed);
  GeneratedJob job = StartDesiccatorJob(Gab{0.045, 9.0, 0.75},  // a wood-like material (invented)
                                        "generated-desiccator.toml", salts, random);
  ingest::JobSpec& spec = job.ingested.job;
  ingest::DesiccatorSeries series;
  series.dataset_id = kDesiccatorDataSet;
  series.file = "generated-weighings.csv";
  int line = 2;
  for (int s = 0; s < num_specimens; ++s) {
    const std::string id = "S" + std::to_string(s + 1);
    spec.specimens.push_back(ingest::SpecimenSpec{id, std::nullopt, std::nullopt, {}});
    const double dry_mass_g = random.Uniform(18.0, 22.0);
    const double factor = 1.0 + specimen_factor_sd * random.Normal();
    double x = factor * job.truth(0.5);  // conditioned in the laboratory before drying
    double time_s = 0.0;
    auto new_step = [&](int index, std::string atmosphere, ingest::Branch branch) {
      ingest::DesiccatorStep step;
      step.specimen_id = id;
      step.step_index = index;
      step.step_number = index + 1;
      step.atmosphere = std::move(atmosphere);
      step.branch = branch;
      step.temperature_K = kTestTemperature_K;
      return step;
    };
    ingest::DesiccatorStep oven = new_step(0, "oven", ingest::Branch::kDrying);
    oven.temperature_K = physics::CelsiusToKelvin(105.0);
    x = RunDesiccatorStep(dry_mass_g, x, 0.0, random.Uniform(0.3, 0.6) * kDay_s, time_s, line, oven,
                          random);
    series.steps.push_back(oven);
    for (std::size_t k = 0; k < salts.size(); ++k) {
      time_s += 3600.0;  // transfer to the next desiccator
      ingest::DesiccatorStep step =
          new_step(static_cast<int>(k) + 1, salts[k], ingest::Branch::kAdsorption);
      step.salt = salts[k];
      const double x_eq = factor * job.truth(job.true_rh_fraction[k]);
      x = RunDesiccatorStep(dry_mass_g, x, x_eq, random.Uniform(1.0, 4.0) * kDay_s, time_s, line,
                            step, random);
      series.steps.push_back(step);
    }
  }
  job.ingested.desiccator_series.push_back(series);
  return job;
}

GeneratedJob MakeShortStepDesiccatorJob(std::uint64_t seed, bool own_time_constants) {
  Random random(seed);
  GeneratedJob job = StartDesiccatorJob(Gab{0.005, 12.0, 0.7},  // a mineral plaster (invented)
                                        "generated-desiccator-plaster.toml",
                                        {std::begin(kSalts), std::end(kSalts)}, random);
  ingest::JobSpec& spec = job.ingested.job;
  // One time constant per step, shared by the specimens (oven first).
  std::vector<double> tau_s = {random.Uniform(0.3, 0.6) * kDay_s};
  for (std::size_t k = 0; k < std::size(kSalts); ++k) {
    tau_s.push_back(random.Uniform(1.0, 4.0) * kDay_s);
  }
  ingest::DesiccatorSeries series;
  series.dataset_id = kDesiccatorDataSet;
  series.file = "generated-weighings.csv";
  int line = 2;
  // The specimens go through each desiccator together: each step starts for all of them at the
  // end of the slowest one's previous step.
  constexpr int kSpecimens = 3;
  std::vector<double> dry_mass_g, x;
  for (int s = 0; s < kSpecimens; ++s) {
    const std::string id = "P" + std::to_string(s + 1);
    spec.specimens.push_back(ingest::SpecimenSpec{id, std::nullopt, std::nullopt, {}});
    dry_mass_g.push_back(random.Uniform(18.0, 22.0));
    x.push_back(job.truth(0.5));  // conditioned in the laboratory before drying
  }
  std::vector<std::vector<ingest::DesiccatorStep>> steps(kSpecimens);
  double step_start_s = 0.0;
  for (std::size_t k = 0; k <= std::size(kSalts); ++k) {
    double next_start_s = step_start_s;
    for (std::size_t s = 0; s < kSpecimens; ++s) {
      ingest::DesiccatorStep step;
      step.specimen_id = "P" + std::to_string(s + 1);
      step.step_index = static_cast<int>(k);
      step.step_number = static_cast<int>(k) + 1;
      const bool oven = k == 0;
      step.atmosphere = oven ? "oven" : kSalts[k - 1];
      if (!oven) step.salt = kSalts[k - 1];
      step.branch = oven ? ingest::Branch::kDrying : ingest::Branch::kAdsorption;
      step.temperature_K = oven ? physics::CelsiusToKelvin(105.0) : kTestTemperature_K;
      const double x_eq = oven ? 0.0 : job.truth(job.true_rh_fraction[k - 1]);
      const double tau = !own_time_constants ? tau_s[k]
                         : oven              ? random.Uniform(0.3, 0.6) * kDay_s
                                             : random.Uniform(1.0, 4.0) * kDay_s;
      double time_s = step_start_s;
      x[s] = RunDesiccatorStep(dry_mass_g[s], x[s], x_eq, tau, time_s, line, step, random);
      next_start_s = std::max(next_start_s, time_s);
      steps[s].push_back(std::move(step));
    }
    step_start_s = next_start_s + 3600.0;  // transfer to the next desiccator
  }
  // Grouped by specimen, then step order (ingest::DesiccatorSeries).
  for (auto& specimen_steps : steps) {
    for (auto& step : specimen_steps) series.steps.push_back(std::move(step));
  }
  job.ingested.desiccator_series.push_back(series);
  return job;
}

double UnaccomplishedFraction(Kinetics kinetics, double elapsed_over_tau) {
  switch (kinetics) {
    case Kinetics::kFirstOrder:
      return std::exp(-elapsed_over_tau);
    case Kinetics::kTwoExponential:
      return 0.6 * std::exp(-5.0 * elapsed_over_tau) + 0.4 * std::exp(-elapsed_over_tau);
    case Kinetics::kFickianSlab: {
      // 200 odd terms: the first omitted one is below 1e-9 of the sum for t / tau >= 1e-4,
      // and F(0) = 1 within 1e-3 (sum of 8 / (j^2 pi^2) over odd j = 1).
      constexpr double kPi = 3.14159265358979323846;
      double sum = 0.0;
      for (int k = 0; k < 200; ++k) {
        const double j = 2.0 * k + 1.0;
        sum += 8.0 / (j * j * kPi * kPi) * std::exp(-j * j * elapsed_over_tau);
      }
      return sum;
    }
  }
  return 0.0;
}

GeneratedJob MakeVaporLogJob(std::uint64_t seed) {
  return MakeVaporLogJob(seed, Kinetics::kFirstOrder);
}

GeneratedJob MakeVaporLogJob(std::uint64_t seed, Kinetics kinetics, double cut_after_tau) {
  return MakeVaporLogJob(
      seed, VaporLogOptions{kinetics, cut_after_tau, BalanceErrors::kReadingNoiseAndStepOffset});
}

GeneratedJob MakeVaporLogJob(std::uint64_t seed, const VaporLogOptions& options) {
  const Kinetics kinetics = options.kinetics;
  const double cut_after_tau = options.cut_after_tau;
  const bool step_offset = options.balance == BalanceErrors::kReadingNoiseAndStepOffset;
  const double block_s = step_offset ? kBlock_s : kSlowBlock_s;
  const int rows_per_block = step_offset ? kRowsPerBlock : 1;
  const double reading_sd_g = step_offset ? kReadingSd_g : kRepeatabilitySd_g;
  const double stated_balance_u_g = step_offset ? kBalanceOffsetSd_g : kRepeatabilitySd_g;
  Random random(seed);
  GeneratedJob job;
  job.truth = Gab{0.058, 7.5, 0.78};  // a wood-fibre-like material (invented)
  ingest::JobSpec& spec = job.ingested.job;
  spec.job_file = "generated-vapour.toml";
  spec.dry_mass_method = ingest::DryMassMethod::kDesiccantStep;
  spec.balance_resolution_g = 0.1e-6;
  spec.balance_standard_uncertainty_g = stated_balance_u_g;
  spec.rh_sensor_standard_uncertainty_fraction = kSensorSd;
  spec.temperature_standard_uncertainty_K = kTemperatureSd_K;
  spec.specimens.push_back(ingest::SpecimenSpec{"V1", std::nullopt, std::nullopt, {}});
  ingest::DataSetSpec dataset;
  dataset.id = "vapour-23C";
  dataset.method = ingest::Method::kVaporLog;
  dataset.temperature_K = kTestTemperature_K;
  dataset.specimen_id = "V1";
  spec.datasets.push_back(dataset);

  ingest::VaporLog log;
  log.dataset_id = dataset.id;
  log.file = "generated-log.csv";
  log.specimen_id = "V1";
  const double dry_mass_g = random.Uniform(11.0, 13.0) * 1e-3;
  const std::vector<double> set_points = {0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9};
  double x = job.truth(0.4);
  double time_s = 0.0;
  std::int64_t line = 2;
  const double block_sd_g = reading_sd_g / std::sqrt(static_cast<double>(rows_per_block));
  const double sensor_block_sd = kSensorNoiseSd / std::sqrt(static_cast<double>(rows_per_block));
  for (std::size_t k = 0; k < set_points.size(); ++k) {
    const double set = set_points[k];
    const bool drying = set == 0.0;
    const double chamber = drying ? 0.0 : set + kChamberSd * random.Normal();
    const double sensor_error = drying ? 0.0 : kSensorSd * random.Normal();
    // The specimen sits kTemperatureSd off the air temperature the sensor sees: it is at
    // equilibrium with p_v / p_s(T + dT) (IAPWS saturation pressure), not with the air's RH.
    const double offset_K = kTemperatureSd_K * random.Normal();
    const double specimen_rh =
        chamber * physics::SaturationPressureOverWater_Pa(kTestTemperature_K) /
        physics::SaturationPressureOverWater_Pa(kTestTemperature_K + offset_K);
    const double x_eq = drying ? 0.0 : job.truth(specimen_rh);
    const double tau_s = random.Uniform(20.0, 90.0) * kMinute_s;
    const bool cut_early = set == 0.8 || set == 0.9;
    ingest::VaporLogStep step;
    step.step_index = static_cast<int>(k);
    step.set_rh_fraction = set;
    step.branch = drying ? ingest::Branch::kDrying : ingest::Branch::kAdsorption;
    step.start_time_s = time_s;
    step.first_line = line;
    const double x_start = x;
    // Drawn in both cases (the draws of the kinetics stay those of MakeVaporLogJob(seed)).
    const double offset_deviate = random.Normal();
    const double balance_offset_g = step_offset ? kBalanceOffsetSd_g * offset_deviate : 0.0;
    for (double t = time_s + 0.5 * block_s;; t += block_s) {
      const double elapsed = t - step.start_time_s;
      x = x_eq + (x_start - x_eq) * UnaccomplishedFraction(kinetics, elapsed / tau_s);
      ingest::LogBlock block;
      block.time_s = t;
      block.mass_g = dry_mass_g * (1.0 + x) + balance_offset_g + block_sd_g * random.Normal();
      block.rh_measured_fraction =
          std::max(0.0, chamber + sensor_error + sensor_block_sd * random.Normal());
      block.temperature_K = kTestTemperature_K;
      block.num_rows = rows_per_block;
      step.blocks.push_back(block);
      line += rows_per_block;
      if (cut_early) {
        if (elapsed >= cut_after_tau * tau_s) break;
      } else if (elapsed >= kRateWindow_s) {
        std::size_t first = step.blocks.size();
        while (first > 0 && t - step.blocks[first - 1].time_s <= kRateWindow_s) --first;
        const double rate = std::abs(Slope(step.blocks, first)) * kMinute_s / dry_mass_g;
        if (rate < kRateLimitPerMin) break;
      }
      if (elapsed > kMaxStep_s) break;
    }
    step.end_time_s = step.blocks.back().time_s + 0.5 * block_s;
    time_s = step.end_time_s;
    step.last_line = line - 1;
    step.num_rows = static_cast<std::int64_t>(step.blocks.size()) * rows_per_block;
    double rh_sum = 0.0;
    for (const auto& b : step.blocks) rh_sum += b.rh_measured_fraction;
    step.rh_measured_mean_fraction = rh_sum / static_cast<double>(step.blocks.size());
    step.temperature_mean_K = kTestTemperature_K;
    if (!drying) {
      job.true_rh_fraction.push_back(specimen_rh);
      job.true_moisture_kg_per_kg.push_back(x_eq);
    }
    log.num_rows += step.num_rows;
    log.steps.push_back(std::move(step));
  }
  job.ingested.vapor_logs.push_back(std::move(log));
  return job;
}

}  // namespace sorbtrace::coverage
