// Equilibrate stage: decides where each specimen reached equilibrium at each humidity step
// and finds the dry reference masses.
//  - Desiccator series: the constant-mass criterion of ISO 12571 (configurable).
//  - Vapour-sorption logs: rate of mass change below a threshold over a window; a step that
//    ended early is extrapolated to its asymptote by an exponential fit of its tail and
//    flagged, with the extra uncertainty the extrapolation carries.
// A step that never met its criterion is reported as not equilibrated, never silently used.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::equilibrate {

// Set from the job file table [equilibrium] by the run stage (pipeline/run/settings.cc;
// job-file keys in brackets).
struct EquilibrateOptions {
  // Desiccator, ISO 12571 constant mass, from memory (edition not confirmed): "the change in
  // mass between three consecutive weighings, each at least 24 h apart, is less than 0.1 % of
  // the total mass". Implemented as: the weighings c0 (last), c1, c2, ... each taken as the
  // latest weighing at least min_weighing_interval_s before the previous one; the range
  // (max - min) of their masses divided by the mass of c0 is below mass_change_limit_fraction.
  // The range is the strict reading (it bounds every pairwise change as well).
  double mass_change_limit_fraction = 0.001;  // [mass_change_limit_percent] 0.1 %
  double min_weighing_interval_s = 86400.0;   // [min_weighing_interval_h] 24 h
  // A weighing counts as min_weighing_interval_s after another when it is at least
  // (interval - tolerance) later, so that daily weighings at about the same clock time (a few
  // minutes earlier on the next day) count as 24 h apart. Project choice, not from the
  // standard; 0 gives the literal reading.
  double weighing_interval_tolerance_s = 3600.0;
  int min_weighings = 3;  // [min_weighings] weighings that must agree
  // Desiccator: the weighing that ends a specimen's step is also the start of its next step
  // (weighed, then moved into the next atmosphere; ISO 12571 moves the specimen on once its
  // mass is constant, from memory). When the next step's first weighing is at least half of
  // min_weighing_interval_s later, the step's trace for the approach to equilibrium starts at
  // that weighing (approach.h): the large early change it adds fixes the time constant of a
  // step that met its criterion after three weighings. A first weighing sooner than that is
  // taken as the weighing at the transfer itself (the laboratory weighed on moving the
  // specimen). false: each step's own weighings alone (specimens stored or reconditioned
  // between steps). Project choice.
  bool previous_weighing_starts_step = true;  // [previous_weighing_starts_step]
  // Vapour-sorption log: |dm/dt| from a least-squares line over the last rate_window_s of
  // block means, relative to the reference dry mass (stated dry mass, else the lowest block
  // mass of the log), below rate_limit_fraction_per_min. Common practice: 0.002 %/min over a
  // 10 min window; Glass et al. (2018) Wood Sci. Technol. 52 show it can under-read the
  // equilibrium moisture content of wood by up to 1.2 % MC.
  double rate_limit_fraction_per_min = 2e-5;  // [rate_limit_percent_per_min] 0.002 %/min
  double rate_window_s = 600.0;               // [rate_window_min] 10 min
  bool extrapolate_unfinished_steps = true;   // [extrapolate_unfinished_steps]
  // Kinetic models averaged for an asymptote (exponential_tail.h): 1 = one exponential and the
  // Fickian sheet, 2 = also two exponentials.
  int exponential_terms = 2;  // [exponential_terms]
  // Last part of a step fitted. 0.8: the first fifth (the humidity change itself) is left out,
  // and the tail still shows a fast process early enough for the two-exponential model to
  // resolve it (measured on generated two-exponential logs: criterion-terminated points
  // covered in 87-93 % with 0.6, 92-98 % with 0.8; tests/coverage/kinetics_coverage_test.cc).
  // Project choice.
  double tail_fraction = 0.8;  // [tail_fraction]
  // An extrapolation is accepted only if the fitted (slowest) time constant is at most this
  // many times the duration of the fitted tail; beyond it the asymptote is a guess (the
  // step stays "not equilibrated"). Choice of this project, not from a standard.
  double max_tau_to_tail_ratio = 3.0;  // [max_tau_to_tail_ratio]
  int min_tail_points = 10;            // [min_tail_points] fewer block means: none

  bool IsValid(std::string* error) const;
};

// Where the RH of a step comes from.
enum class RhSource {
  kSaltTable,  // saturated salt solution, Greenspan (1977) via physics::SaltSolutionHumidity
  kSensor,     // measured by the humidity sensor (vapour logs)
  kStated,     // stated in the data file ("rh:50%"), sensor uncertainty of the job
  kDry,        // oven / desiccant: the dry reference, RH 0
};

// One equilibrium (or the last state of a step that did not reach one).
struct EquilibriumPoint {
  std::string dataset_id;
  std::string specimen_id;
  int step_index = 0;      // 0-based: order of the step for the specimen / in the log
  std::string step_label;  // "NaCl", "set 50 %", ...
  ingest::Method method = ingest::Method::kDesiccator;
  ingest::Branch branch = ingest::Branch::kAdsorption;
  int cycle = 0;
  double temperature_K = 0.0;
  double rh_fraction = 0.0;    // salt table value, set point or mean measured RH
  double u_rh_fraction = 0.0;  // standard uncertainty of the RH source
  std::string rh_source;       // e.g. "NaCl, Greenspan (1977)", "sensor"
  RhSource rh_source_kind = RhSource::kSaltTable;
  double drh_dT_per_K = 0.0;  // temperature coefficient of the RH source
  // Equilibrium mass: the extrapolated asymptote, or the reported mass of the step (last
  // weighing; log: final-window mean) plus approach_correction_g.
  double mass_g = 0.0;
  // Extrapolated steps: standard uncertainty of the asymptote from the tail-fit covariance
  // (Type A, extrapolation_degrees_of_freedom) and the model term (one vs two exponentials,
  // see exponential_tail.h).
  double u_mass_extrapolation_g = 0.0;
  double u_mass_extrapolation_model_g = 0.0;
  int extrapolation_degrees_of_freedom = 0;  // 0 = infinite
  // Residual approach to equilibrium of a step that met its criterion (see approach.h): the
  // correction applied (signed, already in mass_g), its standard uncertainty (fit covariance or
  // propagated balance uncertainty) with its degrees of freedom (0 = infinite), the model term
  // and the resolved time constant.
  double approach_correction_g = 0.0;
  double u_mass_approach_g = 0.0;
  double u_mass_approach_model_g = 0.0;
  int approach_degrees_of_freedom = 0;
  double approach_time_constant_s = 0.0;
  // How the approach was estimated (trace, kinetic models and their weights); the flag names
  // only the correction, its u and the time constant (a short line in the equilibrium table).
  std::string approach_method;
  // True when mass_g is the asymptote of a fit through the step's independent weighings
  // (desiccator): its Type A uncertainty (u_mass_approach_g) holds the balance scatter, so the
  // reduce stage does not count the balance standard uncertainty of that mass again.
  bool mass_includes_weighing_scatter = false;
  // Vapour-log steps (mass_g from the step's own readings): the balance's standard uncertainty of
  // mass_g, in place of one weighing's BalanceStandardUncertainty_g (reduce.h). The stated u_bal of
  // one reading covers its repeatability and whatever does not average out over a step (drift,
  // buoyancy, an offset between steps). The repeatability is seen in the readings: s, the standard
  // deviation of one block mean from the third differences of the tail's block means,
  // s^2 = sum (m_{i+3} - 3 m_{i+2} + 3 m_{i+1} - m_i)^2 / (20 (n - 3)) (variate-difference method,
  // G. Tintner, The Variate Difference Method, 1940, from memory: differencing removes a smooth
  // trend, the coefficients' squares sum to 20), and the Type A lines of mass_g already hold it
  // (the tail fit's covariance; for a window mean, s / sqrt(n_window)). The rest of u_bal,
  // u_persist = sqrt(u_bal^2 - s^2), acts on every reading of the step alike and is
  // counted once (JCGM 100:2008, 4.3.10: a component evaluated from the data is not counted again
  // as Type B); it is taken as 0 unless u_bal^2 - s^2 exceeds twice the standard uncertainty of s^2
  // (sqrt(4.62 / m) s^2 over m third differences of white noise; project choice: within it the
  // stated u_bal is the readings' own repeatability). When a tail fit gave mass_g: u_persist;
  // window mean (no time constant resolved): sqrt(u_persist^2 + s^2 / n_window). Unset (desiccator,
  // stated masses): one weighing's u_bal.
  std::optional<double> u_mass_balance_g;
  // When no time constant is resolved (and for steps that did not meet their criterion): the
  // mass change over the last criterion interval (desiccator: last two chain weighings; log:
  // slope x rate window) taken as the half-width of a rectangular distribution,
  // u = |change| / sqrt(3) (JCGM 100:2008, 4.3.7); no correction.
  double u_mass_drift_g = 0.0;
  double last_change_fraction = 0.0;         // desiccator: criterion value at the last weighing
  double final_rate_fraction_per_min = 0.0;  // log: |dm/dt| / reference mass at the step end
  int num_readings = 0;                      // weighings (desiccator) or block means (log)
  double time_to_equilibrium_s = 0.0;        // from the start of the step
  bool equilibrated = false;                 // criterion met (or asymptote extrapolated)
  bool extrapolated = false;
  std::vector<std::string> flags;  // e.g. "not equilibrated: last change 0.3 %"
  SourceLocation where;            // first line of the step in its file
};

// The dry reference mass of one specimen.
struct DryMass {
  std::string specimen_id;
  double mass_g = 0.0;
  // Standard uncertainty beyond the balance: from the drying step, the root sum of squares of
  // its extrapolation, approach and drift terms (EquilibriumPoint); 0 for a stated dry mass.
  double u_mass_g = 0.0;
  // Of u_mass_g: the Type A degrees of freedom of the drying step's tail fit (a step is either
  // extrapolated or approach-corrected, so at most one fit contributes); 0 = infinite.
  int degrees_of_freedom = 0;
  // The drying step's mass_includes_weighing_scatter (see EquilibriumPoint).
  bool includes_weighing_scatter = false;
  // The drying step's u_mass_balance_g (see EquilibriumPoint; unset: one weighing's u_bal).
  std::optional<double> u_mass_balance_g;
  std::string method;  // e.g. "oven drying at 105 degC (ISO 12570)"
  bool equilibrated = true;
  bool stated = false;     // given in the job file (no weighing in the data files)
  std::string dataset_id;  // where the drying step was found (empty when stated)
  int step_index = -1;     // that drying step (-1 when stated)
};

// A time series for the datasheet plots: one per vapour log, one per specimen of a
// desiccator series; decimated to at most kMaxTracePoints (means of consecutive block means).
// Times on the file's time base (s since its first row / first weighing).
inline constexpr int kMaxTracePoints = 2000;
struct TracePoint {
  double time_s = 0.0;
  double mass_g = 0.0;
  double rh_fraction = 0.0;
};
struct Trace {
  std::string dataset_id;
  std::string specimen_id;
  std::vector<TracePoint> points;
  std::vector<double> equilibrium_times_s;  // where equilibria were detected
};

// The scatter of one weighing about its step's approach curve that a desiccator data set's
// approach estimates use (pipeline/equilibrate/approach.h): pooled over num_steps steps of
// min_weighings_pooled or more weighings on degrees_of_freedom (JCGM 100:2008, 4.2.4), or, with
// num_steps = 0, the balance's stated standard uncertainty (Type B, degrees_of_freedom 0 =
// infinite).
struct WeighingScatterRecord {
  std::string dataset_id;
  double sd_g = 0.0;
  int degrees_of_freedom = 0;
  int num_steps = 0;
  int min_weighings_pooled = 0;  // a step enters the pool from this many weighings
};

// Counts are disjoint: num_equilibrated (criterion met) + num_extrapolated +
// num_not_equilibrated = num_steps (drying steps included).
struct EquilibrateSummary {
  std::vector<Diagnostic> warnings;  // one per extrapolated / not equilibrated step, dry masses
  int num_steps = 0;
  int num_equilibrated = 0;
  int num_extrapolated = 0;
  int num_not_equilibrated = 0;
  std::vector<WeighingScatterRecord> weighing_scatter;  // one per desiccator data set
};

struct EquilibriumSet {
  std::vector<EquilibriumPoint> points;
  std::vector<DryMass> dry_masses;
  std::vector<Trace> traces;
  EquilibrateSummary summary;
};

// Equilibria of every step of every data set (in job order), the dry mass of every specimen
// per job.dry_mass_method (oven: stated dry_mass_g, else the oven/first drying step;
// desiccant step: the first drying step; final drying step: the last), and plot traces.
// Throws InputError for invalid options, an unknown salt or one outside its temperature
// range, a step too short to judge, or a specimen without a dry mass source.
EquilibriumSet Equilibrate(const ingest::IngestResult& ingested, const EquilibrateOptions& options);

// Standard uncertainty of one weighing: the stated standard uncertainty of the balance combined
// with the rectangular rounding of its display, sqrt(u_balance^2 + (resolution / sqrt(12))^2)
// (JCGM 100:2008, F.2.2.1).
double BalanceStandardUncertainty_g(const ingest::JobSpec& job);

}  // namespace sorbtrace::equilibrate
