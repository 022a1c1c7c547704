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
#include <limits>
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

// What the material does with water, which decides whether a Kelvin analysis measures pores.
// The Kelvin equation with an adsorbed film assumes a rigid pore space that water fills and
// empties; a material that swells or takes water into its structure (wood and other
// lignocellulosic fibres, many polymers, many pharmaceutical excipients: water dissolved in
// amorphous regions, hydrates) holds most of its water in no pore at all, and its pore space
// changes with the moisture content (Skaar 1988, Wood-Water Relations, ch. 3, from memory), so
// the "distribution" is then no pore-size measurement.
//  kNotStated:  the job does not say. Distributions are computed; PoreAnalysis::applicability
//               says "reported with caution" and every distribution carries the caution.
//  kRigid:      rigid porous (mineral building materials, ceramics, silica, activated carbon).
//               Distributions are computed without that caution.
//  kSwelling:   swells or absorbs into its structure. The distributions are omitted
//               (PoreAnalysis::distributions empty, one UnavailableDistribution per group with
//               the reason, a warning): printing a distribution beside a caution still invites
//               reading it as pore sizes. The other quantities (surface area, reference
//               moisture contents, hysteresis, heat) are computed as for any material.
// Set by the run stage from the job's material class (a job-file key of the ingest stage).
enum class MaterialClass { kNotStated, kRigid, kSwelling };

// The decision on the pore-size section (see MaterialClass).
enum class PoreSection { kReported, kReportedWithCaution, kOmitted };

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
  // Model of the model-based distribution: a registry key, or "best": the best-ranked fit of
  // the group that passes the checks below (AnalysePores).
  std::string source_model = "best";
  bool stepwise = true;  // also the BJH-type stepwise method
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

  // Which materials a Kelvin analysis applies to (see MaterialClass).
  MaterialClass material_class = MaterialClass::kNotStated;

  // Checks a fitted model must pass before it may drive the model-based distribution (see
  // AnalysePores). The chi-square p-value of the fit with absolute weights (the runs-test
  // p-value with relative weights, where chi-square tests nothing) must be at least this: a fit
  // rejected at the 99.9 % level is inconsistent with its data and the stated uncertainties
  // (common practice for a goodness-of-fit gate).
  double model_min_fit_p_value = fit::kMinGoodnessOfFitPValue;
  // The model may be read this far outside the RH range of the points it was fitted to (and no
  // further): half a percent RH, below the standard uncertainty of salt-solution and sensor
  // humidities (common practice; the same tolerance as the reference moisture contents).
  double model_rh_margin_fraction = 0.005;

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

// One measured step of the stepwise method: the film-corrected pore volume of the pores that
// empty (or fill) between two consecutive nodes, and the bar it is shown in after the merge of
// insignificant steps (distribution.h, StepwisePoreDistribution).
struct PoreStep {
  double radius_low_m = 0.0;
  double radius_high_m = 0.0;
  double rh_low_fraction = 0.0;
  double rh_high_fraction = 0.0;
  double volume_m3_per_kg = 0.0;    // may be < 0 (carried, not clamped)
  double u_volume_m3_per_kg = 0.0;  // standard deviation over the draws; 0: no draws
  int bar = 0;                      // index into PoreDistribution::points
  bool bar_significant = false;     // the bar's volume is significant at the band's level
};

// A resolved maximum of dV/dlog r. Reported only where the distribution resolves it: not on
// the two outermost grid nodes, rising above its neighbouring valleys by more than the band
// (the band's lower limit at the maximum above its upper limit at both valleys), and present as
// a maximum inside its window in at least band_confidence_level of the draws (one rule for
// both methods: internal::ResolvedModes, modes.h). Its uncertainty is its spread over the draws
// (the band's parameter draws: the fit stage's Monte Carlo or bootstrap refits, or N(p,
// covariance) without them; for the stepwise method the draws of the measured points' RH and
// moisture content, combined with the resolution of the measured step it lies in, or of the
// bars that could be as high, and the interpolation's model terms: stepwise.cc).
struct ModalRadius {
  double radius_m = 0.0;
  // Standard uncertainty. Method "model": from the draws, the half-width of their central
  // 68.27 % interval (DrawStatisticsOf, pipeline/common/draw_statistics.h; the standard deviation
  // for normal draws, finite also for draws that have none). Method "stepwise": the draws'
  // spread of the smoothed-density mode combined with its smoothing and resolution terms
  // (stepwise.cc, SmoothedModePositions).
  double u_radius_m = 0.0;
  // The draws' own coverage factor U95 / u (DrawStatistics::coverage_factor; 1.96 for normal
  // draws, larger for heavy tails); 0: u is not from draws alone (the sheet's k applies). The
  // sheet states k = max(its k, this) (CoverageFactorOfDraws).
  double coverage_factor = 0.0;
  double dv_dlogr_m3_per_kg = 0.0;
};

// Fraction of the resolved pore volume in one decade of radius (clipped to the resolved range).
struct DecadeFraction {
  double radius_low_m = 0.0;
  double radius_high_m = 0.0;
  double volume_fraction = 0.0;
  double u_volume_fraction = 0.0;  // DrawStatisticsOf over the same draws as the band; 0: none
  double coverage_factor = 0.0;    // the draws' U95 / u (as ModalRadius::coverage_factor)
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
  // The draws' U95 / u of the total (as ModalRadius::coverage_factor); 0: the sheet's k.
  double k_total_resolved_volume = 0.0;
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
  // Method "stepwise": steps whose pore volume came out < 0 and were carried as they are (the
  // stepwise method never clamps); and every measured step with its uncertainty. `points`
  // then holds one point per bar (a step, or steps merged as not significant), at the bar's
  // middle in log r.
  int negative_steps_carried = 0;
  std::vector<PoreStep> steps;
};

// A distribution that was not computed, with the reason (for the sheet).
struct UnavailableDistribution {
  std::string method;  // "model" or "stepwise"
  ingest::Branch branch = ingest::Branch::kAdsorption;
  double temperature_K = 0.0;
  std::string reason;  // a sentence, e.g. "the fitted henderson model does not pass ..."
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
  // k of the expanded uncertainty: the monolayer parameter's (fit::ModelFit::
  // expanded_uncertainty / standard error; the area is X_m times a constant, so it has X_m's
  // effective degrees of freedom, JCGM 100:2008 G.4); 0 where the fit states none (the
  // sheet's k applies).
  double coverage_factor = 0.0;
};

struct ReferenceMoisture {
  ReferenceCondition condition;
  std::string model_name;
  ingest::Branch branch = ingest::Branch::kAdsorption;
  double moisture_kg_per_kg = 0.0;
  double u_moisture_kg_per_kg = 0.0;  // standard (includes u_model_choice_kg_per_kg)
  // moisture_kg_per_kg is the Akaike-weighted average over the group's ranked models
  // (internal::ReadCurves, quantities.h); model_name is the best of them. u_model_choice: the
  // between-model part of u, sqrt(sum_i w_i (q_i - q)^2); 0 with one ranked model.
  double u_model_choice_kg_per_kg = 0.0;
  int models_weighed = 0;  // ranked models in the average (1: the best model's value alone)
  // Of the expanded uncertainty: fit::CurveUncertainty of the fit read (Welch-Satterthwaite
  // nu_eff over the independent part and the specimen factors, Student-t k for 95 %; the
  // nominal k where nu_eff is infinite).
  double effective_dof = std::numeric_limits<double>::infinity();
  double coverage_factor = 2.0;
  bool temperature_matches = true;  // false: fitted at another temperature (flagged)
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

// Whether the pore-size section applies to the material (see MaterialClass).
struct PoreApplicability {
  MaterialClass material_class = MaterialClass::kNotStated;
  PoreSection section = PoreSection::kReportedWithCaution;
  std::string reason;  // a sentence for the sheet (the caution, or why the section is omitted)
};

struct PoreAnalysis {
  std::vector<PoreDistribution> distributions;
  // Distributions not computed, each with its reason: the model-based one when no fitted model
  // passes its checks, every one when the material class omits the section.
  std::vector<UnavailableDistribution> unavailable;
  PoreApplicability applicability;
  std::vector<SurfaceArea> surface_areas;
  std::vector<ReferenceMoisture> reference_moisture;
  Hygroscopicity hygroscopicity;
  std::vector<Hysteresis> hysteresis;  // one per temperature with both branches
  std::vector<IsostericHeat> isosteric_heat;
  PoreSummary summary;
};

// Per fitted group (adsorption, desorption; drying is skipped):
//  - model-based distribution from the model of options.source_model, only if that fit passes
//    every check over the RH range the distribution reads it on, [RH(min_radius_m), top]:
//    identifiable from its data (fit::IsIdentified: converged, covariance available, no
//    parameter at a bound, relative standard uncertainties within the fit stage's limit);
//    goodness of fit p >=
//    model_min_fit_p_value (chi-square with absolute weights, runs test with relative ones);
//    RH(min_radius_m) not below the lowest RH the model was fitted to by more than
//    model_rh_margin_fraction (the top is the highest fitted RH, or RH(max_radius_m) when
//    smaller: never beyond the data). Fitted RH range: the points the model was fitted to
//    (ModelFit::used_observations), not every point of the group (retention points join a
//    group for the retention models only). With "best" the converged fits are tried in rank
//    order and the first that passes is used (the assumptions name any better-ranked one
//    passed over and why); when none passes, an UnavailableDistribution with the reason.
//  - stepwise distribution from the measured points (options.stepwise), with draws of each
//    point's RH and moisture content: the independent parts per point; shared once per draw,
//    the dry mass of each specimen (reduce budget lines "balance (dry mass)" and "dry-mass
//    method", the same dry mass at every step of the specimen; of a combined point, each
//    specimen's line divided by the number of specimens) and the temperature error of each data
//    set acting on the RH (line "temperature effect on RH"); the rest of a point's budget
//    (wet-mass weighings, RH source of the step, spread of the specimens, approach and
//    extrapolation terms) independently per point.
//  - options.material_class decides the section (MaterialClass): omitted for kSwelling.
PoreAnalysis AnalysePores(const reduce::ReducedIsotherms& reduced, const fit::IsothermFits& fits,
                          const PoreOptions& options);

}  // namespace sorbtrace::pores
