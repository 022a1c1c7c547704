// Reduce stage: equilibrium masses -> moisture content on a dry basis, u = (m - m_dry)/m_dry
// [kg/kg], with a GUM (JCGM 100:2008) uncertainty budget per point: balance, dry mass, RH of
// the step (salt table or sensor), temperature effect on RH, extrapolation. Several specimens
// are combined per step: mean, between-specimen standard deviation, combined uncertainty.
#pragma once

#include <string>
#include <vector>

#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::reduce {

struct ReduceOptions {
  double coverage_factor = 2.0;          // k for expanded uncertainties (about 95 %)
  bool include_not_equilibrated = false; // if true, such points are kept but flagged

  bool IsValid(std::string* error) const;
};

// One line of an uncertainty budget: u(x_i), sensitivity c_i, contribution |c_i| u(x_i).
struct BudgetLine {
  std::string quantity;          // e.g. "balance (wet mass)", "dry mass", "RH (salt table)"
  double standard_uncertainty = 0.0;  // in the unit of the input quantity
  std::string unit;
  double sensitivity = 0.0;      // d(output)/d(input)
  double contribution = 0.0;     // |c_i| u(x_i), in the unit of the output
};

// Moisture content of one specimen at one equilibrium.
struct SpecimenPoint {
  std::string dataset_id;
  std::string specimen_id;
  int step_index = 0;
  std::string step_label;
  ingest::Branch branch = ingest::Branch::kAdsorption;
  int cycle = 0;
  double temperature_K = 0.0;
  double rh_fraction = 0.0;
  double u_rh_fraction = 0.0;           // standard, incl. temperature effect
  double moisture_kg_per_kg = 0.0;
  double u_moisture_kg_per_kg = 0.0;    // standard, combined
  std::vector<BudgetLine> moisture_budget;
  std::vector<BudgetLine> rh_budget;
  double time_to_equilibrium_s = 0.0;
  bool equilibrated = false;
  bool extrapolated = false;
  std::vector<std::string> flags;
};

// The material's isotherm point at one step: specimens combined.
struct IsothermPoint {
  std::string dataset_id;
  int step_index = 0;
  std::string step_label;
  ingest::Branch branch = ingest::Branch::kAdsorption;
  int cycle = 0;
  double temperature_K = 0.0;
  double rh_fraction = 0.0;
  double u_rh_fraction = 0.0;            // standard
  double expanded_u_rh_fraction = 0.0;   // k * u
  double moisture_kg_per_kg = 0.0;       // mean over specimens
  double u_moisture_kg_per_kg = 0.0;     // combined standard (measurement + spread of mean)
  double expanded_u_moisture_kg_per_kg = 0.0;
  double between_specimen_sd_kg_per_kg = 0.0;
  int num_specimens = 0;
  bool has_volumetric = false;
  double volumetric_m3_per_m3 = 0.0;     // u * rho_dry / rho_water, when a density is given
  double u_volumetric_m3_per_m3 = 0.0;
  double time_to_equilibrium_s = 0.0;    // longest among specimens
  bool equilibrated = false;             // all specimens equilibrated
  bool extrapolated = false;             // any specimen extrapolated
  std::vector<std::string> flags;
};

// A retention point passed through with its equivalent RH (Kelvin), for joint fits.
struct RetentionIsothermPoint {
  std::string specimen_id;
  double capillary_pressure_Pa = 0.0;
  double equivalent_rh_fraction = 0.0;
  double temperature_K = 0.0;
  double moisture_kg_per_kg = 0.0;
  double u_moisture_kg_per_kg = 0.0;
  ingest::Branch branch = ingest::Branch::kDesorption;
};

struct ReduceSummary {
  std::vector<Diagnostic> warnings;
  int num_points = 0;
  int num_excluded = 0;  // not equilibrated and not included
};

struct ReducedIsotherms {
  double coverage_factor = 2.0;
  std::vector<SpecimenPoint> specimen_points;
  std::vector<IsothermPoint> points;  // sorted by dataset, cycle, branch, step
  std::vector<RetentionIsothermPoint> retention;
  ReduceSummary summary;
};

ReducedIsotherms Reduce(const ingest::IngestResult& ingested,
                        const equilibrate::EquilibriumSet& equilibria,
                        const ReduceOptions& options);

// The equilibrium table as CSV (one row per specimen point, then the combined points),
// columns documented in README "Outputs".
std::string EquilibriumTableCsv(const ReducedIsotherms& reduced);

}  // namespace sorbtrace::reduce
