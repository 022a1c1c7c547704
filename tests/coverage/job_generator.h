// Generator of synthetic sorption jobs with a known truth, written for the coverage tests from
// the physics alone (first-order sorption kinetics, a GAB isotherm, saturated-salt humidities
// with their stated uncertainties, balance and sensor noise) and the stopping rules as a
// laboratory applies them; it shares no code with the equilibrate or reduce stages.
//
//  - Desiccator jobs: three specimens, oven-dried to constant mass, then taken through six
//    saturated salts at 23 degC (adsorption). Weighed once a day (a few minutes' jitter); a
//    step ends when three consecutive daily weighings lie within 0.1 % of the last mass
//    (ISO 12571 constant mass, from memory). Time constants 1-4 d per specimen and step (oven:
//    0.3-0.6 d). Each desiccator's true RH is the Greenspan (1977) table value plus a normal
//    deviate with the table's standard uncertainty (one per salt, shared by the specimens);
//    each specimen's moisture content is the GAB value times its own factor (mean 1, sd given:
//    specimen-to-specimen variability of the material, the same for every step). Balance: 0.12 mg
//    standard, readings rounded to 0.1 mg.
//  - Vapour-log jobs: one milligram specimen (12 mg), drying at 0 % then 10..90 % RH
//    (adsorption) in 10 s block means; a step ends when the least-squares slope of the last
//    10 min of block means is below 0.002 %/min of the dry mass (common practice), except two
//    steps (80 and 90 %) cut by the operator at 1.5 time constants. Time constants 20-90 min.
//    True chamber RH = set point + a control offset (sd 0.3 %RH); the sensor reads it with a
//    per-step error (sd 0.8 %RH, the job's stated sensor uncertainty) and block noise; the
//    specimen sits a per-step offset (sd 0.1 K, the stated temperature uncertainty) off the air
//    temperature, so its true RH is the chamber RH times p_s(T) / p_s(T + offset).
//    Balance: noise 0.3 ug per 1 s reading (10 readings per block) and, per step, an offset
//    with the job's stated balance standard uncertainty (0.2 ug: drift and buoyancy of the
//    microbalance between steps, which averaging the readings does not remove).
#pragma once

#include <cstdint>
#include <random>
#include <vector>

#include "pipeline/ingest/ingest.h"

namespace sorbtrace::coverage {

// GAB isotherm X(a) = X_m C K a / ((1 - K a)(1 - K a + C K a)) [kg/kg] (Guggenheim 1966,
// Anderson 1946, de Boer 1953; from memory).
struct Gab {
  double xm_kg_per_kg = 0.0;
  double c = 0.0;
  double k = 0.0;
  double operator()(double rh_fraction) const;
};

// Deterministic normal deviates (Box-Muller on std::mt19937_64: independent of the standard
// library's distributions).
class Random {
 public:
  explicit Random(std::uint64_t seed) : engine_(seed) {}
  double Uniform();  // (0, 1)
  double Normal();
  double Uniform(double lo, double hi) { return lo + (hi - lo) * Uniform(); }

 private:
  std::mt19937_64 engine_;
};

struct GeneratedJob {
  ingest::IngestResult ingested;
  // Per adsorption step (in order): true RH and the true equilibrium moisture content of the
  // material (the GAB value at the true RH).
  std::vector<double> true_rh_fraction;
  std::vector<double> true_moisture_kg_per_kg;
  Gab truth;
};

// specimen_factor_sd: relative specimen-to-specimen variability of the moisture content (one
// factor per specimen for all steps; 0 = identical specimens).
GeneratedJob MakeDesiccatorJob(std::uint64_t seed, double specimen_factor_sd);
// The same with num_specimens specimens (>= 1) over the first num_salts (6..8) of LiCl, MgCl2,
// Mg(NO3)2, NaCl, KCl, K2SO4, K2CO3, NaBr, taken in order of their humidity; (3, 6) draws as
// MakeDesiccatorJob(seed, specimen_factor_sd).
GeneratedJob MakeDesiccatorJob(std::uint64_t seed, double specimen_factor_sd, int num_specimens,
                               int num_salts);
GeneratedJob MakeVaporLogJob(std::uint64_t seed);

// Desiccator jobs of a weakly sorbing material (a mineral plaster, invented: GAB X_m 0.5 %,
// C 12, K 0.7), so that the moisture change between salts is a few tenths of a percent of the
// mass and the 0.1 % constant-mass rule often stops a step at its first three or four daily
// weighings while up to half of the change is still to come. Three identical specimens
// (specimen factor 1) in one desiccator per salt; the time constant, 1-4 d, is drawn per step
// and shared by the specimens (one thickness, one atmosphere; Crank 1975, eq. 4.18:
// tau = 4 l^2 / (pi^2 D)); oven 0.3-0.6 d. Otherwise as MakeDesiccatorJob: Greenspan RH with
// its uncertainty, daily weighings with jitter, balance 0.12 mg rounded to 0.1 mg.
// own_time_constants: each specimen draws its own time constant per step (1-4 d), as specimens
// whose thickness or density differ; the shared-time-constant model is then not true.
GeneratedJob MakeShortStepDesiccatorJob(std::uint64_t seed, bool own_time_constants);

// Sorption kinetics of the vapour-log steps: the unaccomplished fraction F(t) = (x_eq - x(t)) /
// (x_eq - x_start) at time t after the humidity change, tau the step's drawn time constant.
enum class Kinetics {
  // F = exp(-t / tau).
  kFirstOrder,
  // Two parallel first-order processes, F = 0.6 exp(-5 t / tau) + 0.4 exp(-t / tau): the
  // parallel exponential kinetics model of natural fibres (C. A. S. Hill, A. Norton, G. Newman,
  // J. Appl. Polym. Sci. 112 (2009) 1524, from memory), a fast and a slow component.
  kTwoExponential,
  // Fickian diffusion into a plane sheet from both faces, F = sum over odd j of
  // 8 / (j^2 pi^2) exp(-j^2 t / tau), tau = l^2 / (pi^2 D) for a sheet of thickness 2l
  // (J. Crank, The Mathematics of Diffusion, 2nd ed., Oxford 1975, eq. 4.18): sqrt(t) early,
  // a single exponential late.
  kFickianSlab,
};

// How the balance of a vapour log errs.
enum class BalanceErrors {
  // As described above: 0.3 ug per 1 s reading, 10 readings per 10 s block mean, and per step an
  // offset with the job's stated balance standard uncertainty (0.2 ug) that averaging does not
  // remove.
  kReadingNoiseAndStepOffset,
  // The stated balance standard uncertainty (1 ug) is the repeatability of one reading: every
  // reading (one per 60 s, each its own block) errs independently with that standard deviation,
  // and nothing persists over a step (a microbalance whose drift is tared out between steps).
  kReadingNoiseOnly,
};

struct VaporLogOptions {
  Kinetics kinetics = Kinetics::kFirstOrder;
  // The 80 and 90 % steps are cut by the operator after this many time constants.
  double cut_after_tau = 1.5;
  BalanceErrors balance = BalanceErrors::kReadingNoiseAndStepOffset;
};
GeneratedJob MakeVaporLogJob(std::uint64_t seed, const VaporLogOptions& options);

// As MakeVaporLogJob(seed) (identical draws for kFirstOrder), with the given kinetics; the
// 80 and 90 % steps are cut by the operator at cut_after_tau time constants (1.5 in
// MakeVaporLogJob(seed)).
GeneratedJob MakeVaporLogJob(std::uint64_t seed, Kinetics kinetics, double cut_after_tau = 1.5);

// The unaccomplished fraction F of the given kinetics at elapsed / tau.
double UnaccomplishedFraction(Kinetics kinetics, double elapsed_over_tau);

}  // namespace sorbtrace::coverage
