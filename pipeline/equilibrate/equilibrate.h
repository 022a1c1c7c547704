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

struct EquilibrateOptions {
  // Desiccator, ISO 12571 constant mass (wording implemented documented in equilibrate.cc).
  double mass_change_limit_fraction = 0.001;  // 0.1 % of the specimen mass
  double min_weighing_interval_s = 86400.0;   // 24 h between the weighings compared
  int min_weighings = 3;                      // consecutive weighings that must agree
  // Vapour-sorption log (common practice: 0.002 %/min of dry mass over 10 min).
  double rate_limit_fraction_per_min = 2e-5;  // dm/dt relative to the dry mass
  double rate_window_s = 600.0;
  bool extrapolate_unfinished_steps = true;
  int exponential_terms = 1;                  // 1 or 2 in the tail model
  double tail_fraction = 0.6;                 // last fraction of a step used for the fit

  bool IsValid(std::string* error) const;
};

// One equilibrium (or the last state of a step that did not reach one).
struct EquilibriumPoint {
  std::string dataset_id;
  std::string specimen_id;
  int step_index = 0;
  std::string step_label;          // "NaCl", "set 50 %", ...
  ingest::Branch branch = ingest::Branch::kAdsorption;
  int cycle = 0;
  double temperature_K = 0.0;
  double rh_fraction = 0.0;                 // salt table value, set point or mean measured RH
  double u_rh_fraction = 0.0;               // standard uncertainty of the RH source
  std::string rh_source;                    // e.g. "NaCl, Greenspan (1977)", "sensor"
  double drh_dT_per_K = 0.0;                // temperature coefficient of the RH source
  double mass_g = 0.0;                      // equilibrium (or extrapolated) mass
  double u_mass_extrapolation_g = 0.0;      // extra standard uncertainty of extrapolation
  double time_to_equilibrium_s = 0.0;       // from the start of the step
  bool equilibrated = false;                // criterion met (or asymptote extrapolated)
  bool extrapolated = false;
  std::vector<std::string> flags;           // e.g. "not equilibrated: last change 0.3 %"
  SourceLocation where;                     // first line of the step in its file
};

// The dry reference mass of one specimen.
struct DryMass {
  std::string specimen_id;
  double mass_g = 0.0;
  double u_mass_g = 0.0;       // standard uncertainty beyond the balance (e.g. drift)
  std::string method;          // e.g. "oven drying at 105 degC (ISO 12570)"
  bool equilibrated = true;
};

// A time series for the datasheet plots (decimated; at most a few thousand points).
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

struct EquilibrateSummary {
  std::vector<Diagnostic> warnings;
  int num_steps = 0;
  int num_equilibrated = 0;
  int num_extrapolated = 0;
  int num_not_equilibrated = 0;
};

struct EquilibriumSet {
  std::vector<EquilibriumPoint> points;
  std::vector<DryMass> dry_masses;
  std::vector<Trace> traces;
  EquilibrateSummary summary;
};

EquilibriumSet Equilibrate(const ingest::IngestResult& ingested, const EquilibrateOptions& options);

}  // namespace sorbtrace::equilibrate
