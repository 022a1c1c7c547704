// Pores stage: from "how much water" to "what pore structure and what behaviour".
//  - Equivalent pore-size distribution by Kelvin inversion, r = r_K(RH, T, meniscus) + t(RH):
//    (1) from a fitted model, V(r) = u(RH(r)) / rho_w, with a Monte Carlo band;
//    (2) stepwise from the measured points in the manner of BJH (Barrett, Joyner & Halenda
//        1951), correcting each step for the thinning film in already-emptied pores.
//  - Datasheet quantities: specific surface area from the monolayer capacity, moisture
//    content at reference conditions, Ph. Eur. hygroscopicity class, hysteresis, isosteric
//    heat of sorption (Clausius-Clapeyron).
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/fit/fit_stage.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/physics/physics.h"
#include "pipeline/reduce/reduce.h"

namespace sorbtrace::pores {

// Pore geometry, which fixes the meniscus per branch (Cohan 1938):
//  kOpenCylinder:   fills by a cylindrical meniscus (adsorption), empties by a hemispherical one.
//  kClosedCylinder: fills and empties from the closed end by a hemispherical meniscus.
enum class PoreGeometry { kOpenCylinder, kClosedCylinder };

enum class FilmModel {
  kNone,
  kConstant,      // PoreOptions::constant_film_thickness_m
  kFittedLayers,  // t = (u / X_m) * monolayer thickness, from the fitted GAB (or BET)
  kBadmann,       // water t-curve of Badmann, Stockhausen & Setzer (1981)
  kUserTable,     // PoreOptions::film_table (rh_fraction, thickness_m), interpolated
};

// A reference condition at which the moisture content is tabulated.
struct ReferenceCondition {
  double temperature_K = 296.15;
  double rh_fraction = 0.5;
};

struct PoreOptions {
  PoreGeometry geometry = PoreGeometry::kOpenCylinder;
  FilmModel film = FilmModel::kBadmann;
  double constant_film_thickness_m = 0.5e-9;
  // One molecular layer of water, (V_m / N_A)^(1/3) at 25 degC = 0.311 nm (derived from IAPWS
  // density).
  double monolayer_thickness_m = 0.311e-9;
  std::vector<std::pair<double, double>> film_table;  // (rh_fraction, thickness_m)
  double contact_angle_rad = 0.0;
  double min_radius_m = 1e-9;  // below: "adsorbed", Kelvin not applied (micropores)
  double max_radius_m = 0.0;   // 0 = largest radius resolved by the highest measured RH
  int grid_points = 400;
  int band_draws = 1000;
  std::uint64_t seed = 20261201;
  std::string source_model = "best";  // registry key or "best" (best-ranked per group)
  bool stepwise = true;               // also the BJH-type stepwise method
  // Further quantities.
  double molecular_area_m2 = 0.106e-18;  // water cross-section (Emmett & Brunauer 1937)
  std::vector<ReferenceCondition> reference_conditions = {{296.15, 0.5}, {296.15, 0.8}};

  // Added by the pores stage (not job-file keys yet). Error messages of IsValid name the
  // job-file keys of pipeline/run/settings.cc (pores.film_thickness_nm, pores.min_radius_nm, ...).
  // Two-sided level of the percentile bands; set it to FitStageOptions::confidence_level
  // (IsothermFits does not carry the level).
  double band_confidence_level = 0.95;
  // Method "model": subtract the thinning film in already-emptied pores on the radius grid
  // (the same BJH-type correction as the stepwise method). false: V(r) = [u(RH(r)) -
  // u(RH(r_min))] / rho_w, the film counted as pore volume at the radius where it forms.
  bool film_volume_correction = true;
  // A local maximum of dV/dlog r is a mode candidate when its height is at least this
  // fraction of the largest value (a display threshold, not physics); whether it is reported
  // see ModalRadius.
  double mode_min_relative_height = 0.05;
  int hysteresis_grid_points = 41;       // RH grid inside both branches' measured ranges
  int heat_grid_points = 21;             // moisture-content grid of the isosteric heat
  double temperature_tolerance_K = 0.5;  // groups closer than this count as one temperature

  bool IsValid(std::string* error) const;
};

// One radius of a distribution. Volumes per kg of dry material.
struct PoreDistributionPoint {
  double radius_m = 0.0;
  double kelvin_radius_m = 0.0;
  double film_thickness_m = 0.0;
  double rh_fraction = 0.0;
  double cumulative_volume_m3_per_kg = 0.0;
  double cumulative_low_m3_per_kg = 0.0;
  double cumulative_high_m3_per_kg = 0.0;
  double dv_dlogr_m3_per_kg = 0.0;      // d V / d log10 r
  double dv_dlogr_low_m3_per_kg = 0.0;  // band (confidence level of the fit stage)
  double dv_dlogr_high_m3_per_kg = 0.0;
};

// A resolved maximum of dV/dlog r. Reported only where the distribution resolves it: not on
// the two outermost grid nodes, rising above its neighbouring valleys by more than the band
// (the band's lower limit at the maximum above its upper limit at both valleys), and present as
// a maximum inside its window in at least band_confidence_level of the draws. Its
// uncertainty is its spread over the draws (the band's parameter draws: the fit stage's
// bootstrap refits, or N(p, covariance) without them; for the stepwise method the draws of the
// measured moisture contents).
struct ModalRadius {
  double radius_m = 0.0;
  double u_radius_m = 0.0;  // standard uncertainty: standard deviation over the draws
  double dv_dlogr_m3_per_kg = 0.0;
};

// Fraction of the resolved pore volume in one decade of radius (clipped to the resolved range).
struct DecadeFraction {
  double radius_low_m = 0.0;
  double radius_high_m = 0.0;
  double volume_fraction = 0.0;
  double u_volume_fraction = 0.0;  // standard deviation over the same draws as the band; 0: none
};

struct PoreDistribution {
  std::string method;      // "model" or "stepwise"
  std::string model_name;  // model used (method "model")
  ingest::Branch branch = ingest::Branch::kDesorption;
  double temperature_K = 0.0;
  physics::Meniscus meniscus = physics::Meniscus::kHemispherical;
  std::string film_description;
  std::vector<PoreDistributionPoint> points;
  std::vector<ModalRadius> modes;
  double total_resolved_volume_m3_per_kg = 0.0;
  double u_total_resolved_volume_m3_per_kg = 0.0;
  double adsorbed_volume_m3_per_kg = 0.0;      // below min_radius_m: not Kelvin-resolved
  double not_resolved_volume_m3_per_kg = 0.0;  // above the largest resolved radius (if known)
  double resolved_radius_min_m = 0.0;
  double resolved_radius_max_m = 0.0;
  std::vector<DecadeFraction> decades;
  std::vector<std::string> assumptions;  // printed beside the plot
  // Added by the pores stage: where the band comes from ("parameter covariance", "bootstrap
  // draws", "measurement uncertainty", "none") and how many draws were used.
  std::string band_source;
  int band_draws_used = 0;
  int negative_steps_clamped = 0;  // steps whose pore volume came out < 0 and was set to 0
};

struct SurfaceArea {
  std::string model_name;  // "gab" or "bet"
  ingest::Branch branch = ingest::Branch::kAdsorption;
  double temperature_K = 0.0;
  double monolayer_kg_per_kg = 0.0;
  double u_monolayer_kg_per_kg = 0.0;
  double molecular_area_m2 = 0.0;
  double area_m2_per_g = 0.0;
  double u_area_m2_per_g = 0.0;  // standard
};

struct ReferenceMoisture {
  ReferenceCondition condition;
  std::string model_name;
  ingest::Branch branch = ingest::Branch::kAdsorption;
  double moisture_kg_per_kg = 0.0;
  double u_moisture_kg_per_kg = 0.0;  // standard
  bool temperature_matches = true;    // false: fitted at another temperature (flagged)
  std::vector<std::string> flags;
};

// European Pharmacopoeia 5.11 hygroscopicity (mass increase at 25 degC / 80 % RH).
struct Hygroscopicity {
  bool applicable = false;
  std::string reason;  // why not applicable, or how derived
  double mass_increase_percent = 0.0;
  double u_mass_increase_percent = 0.0;
  std::string class_name;  // "non-hygroscopic", "slightly hygroscopic", ...
};

struct HysteresisPoint {
  double rh_fraction = 0.0;
  double adsorption_kg_per_kg = 0.0;
  double desorption_kg_per_kg = 0.0;
  double difference_kg_per_kg = 0.0;
  double u_difference_kg_per_kg = 0.0;
  bool significant = false;  // |difference| > k * u
};
struct Hysteresis {
  bool available = false;
  std::string reason;
  double temperature_K = 0.0;
  std::vector<HysteresisPoint> points;
  double max_difference_kg_per_kg = 0.0;
  double rh_at_max_fraction = 0.0;
  double significant_rh_low_fraction = 0.0;
  double significant_rh_high_fraction = 0.0;
};

struct IsostericHeatPoint {
  double moisture_kg_per_kg = 0.0;
  double net_heat_J_per_mol = 0.0;  // q_st,net = -R d ln(a_w) / d(1/T) at constant u
  double u_net_heat_J_per_mol = 0.0;
  double total_heat_J_per_mol = 0.0;  // + enthalpy of vaporisation at the mean temperature
};
struct IsostericHeat {
  bool available = false;
  std::string reason;
  ingest::Branch branch = ingest::Branch::kAdsorption;
  std::vector<double> temperatures_K;
  std::vector<IsostericHeatPoint> points;
};

struct PoreSummary {
  std::vector<Diagnostic> warnings;
};

struct PoreAnalysis {
  std::vector<PoreDistribution> distributions;
  std::vector<SurfaceArea> surface_areas;
  std::vector<ReferenceMoisture> reference_moisture;
  Hygroscopicity hygroscopicity;
  std::vector<Hysteresis> hysteresis;  // one per temperature with both branches
  std::vector<IsostericHeat> isosteric_heat;
  PoreSummary summary;
};

PoreAnalysis AnalysePores(const reduce::ReducedIsotherms& reduced, const fit::IsothermFits& fits,
                          const PoreOptions& options);

}  // namespace sorbtrace::pores
