// Internal to the pores stage: datasheet quantities derived from fitted isotherms.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

#include "fitters/model.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/pores/pores.h"

namespace sorbtrace::pores::internal {

// S = X_m / M_w * N_A * a_m [m2/kg], returned in m2/g.
double SurfaceArea_m2_per_g(double monolayer_kg_per_kg, double molecular_area_m2);

// Ph. Eur. 5.11 class of a mass increase [%] (limits and sources: conform::HygroscopicityClasses):
// >= 15 very hygroscopic, >= 2 hygroscopic, >= 0.2 slightly hygroscopic, else non-hygroscopic.
// "deliquescent" cannot be told from an isotherm fit and is never returned.
std::string HygroscopicityClassName(double mass_increase_percent);

// A fitted isotherm of one group, ready to evaluate.
struct FittedCurve {
  const fitters::Model* model = nullptr;
  std::string name;
  std::vector<double> parameters;
  Eigen::MatrixXd covariance;  // empty: no uncertainty
  fitters::ModelContext context;
  ingest::Branch branch = ingest::Branch::kAdsorption;
  double temperature_K = 0.0;
  double rh_min_fraction = 0.0;  // measured range of the group
  double rh_max_fraction = 1.0;
  const fit::ModelFit* fit = nullptr;  // the fit it was made from (for fit::CurveUncertainty)

  double Value(double rh_fraction) const;
  // Delta method: sqrt(g' C g), g = df/dp at rh; 0 without covariance.
  double StandardUncertainty(double rh_fraction) const;
  double Slope(double rh_fraction) const;  // df/dRH
};

// Net isosteric heat from a_w(u, T) at several temperatures:
// q_st,net = -R d ln a_w / d(1/T) by weighted regression of ln a_w on 1/T (weights 1/u^2 of
// ln a_w; for more than two temperatures the variance of the slope is scaled by the Birge ratio
// chi2/dof when that exceeds 1). Returns false with fewer than two finite points.
bool NetIsostericHeat(const std::vector<double>& temperatures_K, const std::vector<double>& ln_aw,
                      const std::vector<double>& u_ln_aw, double* heat_J_per_mol,
                      double* u_heat_J_per_mol);

// Molar enthalpy of vaporisation of water from the Clausius-Clapeyron slope of the IAPWS
// saturation pressure: dH = -R d ln p_s / d(1/T) (ideal vapour, liquid volume neglected;
// derived, not tabulated).
double ClausiusClapeyronEnthalpy_J_per_mol(double temperature_K);

// The RH at which the curve reaches moisture u, inside [rh_low, rh_high] (bisection; the
// curve is taken as increasing). NaN when u is outside the curve's values at the ends.
double InvertForRh(const FittedCurve& curve, double moisture_kg_per_kg, double rh_low,
                   double rh_high);

// Builders used by AnalysePores.
std::vector<SurfaceArea> SurfaceAreas(const std::vector<FittedCurve>& gab_bet_fits,
                                      const PoreOptions& options);
// The moisture content at a reference condition from the best adsorption curve nearest in
// temperature; its coverage factor from fit::CurveUncertainty (fits: where the curves come from).
// Model choice: the best model is one of the ranked models of its group, chosen by AICc from the
// same points, and another choice would read another value. With q_i the value of ranked model
// i of the group, w_i = exp(-d_i / 2) / sum_j exp(-d_j / 2) its Akaike weight (d_i = AICc_i -
// the group's least AICc), the term u_model^2 = sum_i w_i (q_i - q_best)^2 (the between-model
// part of the unconditional variance of K. P. Burnham and D. R. Anderson, Model Selection and
// Multimodel Inference, 2nd ed., Springer 2002, sec. 4.3.2, taken about the selected model's
// value, which is the one printed; from memory) is added in quadrature to the curve's u, with
// infinite degrees of freedom in the Welch-Satterthwaite nu_eff. ranked_adsorption: the curves
// of every ranked adsorption fit (fit::ModelFit::rank > 0). Measured on held-out vapour logs
// (tests/heldout_coverage): a headline read from Henderson, Peleg or Oswin where GAB was the
// truth covered 61-69 % without the term.
ReferenceMoisture ReferenceMoistureFor(const ReferenceCondition& condition,
                                       const std::vector<FittedCurve>& best_adsorption,
                                       const std::vector<FittedCurve>& ranked_adsorption,
                                       const fit::IsothermFits& fits, const PoreOptions& options);
// coverage_factor: k of the expanded uncertainty, to say when a class boundary lies within it.
Hygroscopicity HygroscopicityFrom(const std::vector<FittedCurve>& best_adsorption,
                                  double coverage_factor, const PoreOptions& options);
Hysteresis HysteresisFrom(const FittedCurve& adsorption, const FittedCurve& desorption,
                          double coverage_factor, const PoreOptions& options);
IsostericHeat IsostericHeatFrom(const std::vector<FittedCurve>& best_of_branch,
                                ingest::Branch branch, const PoreOptions& options);

}  // namespace sorbtrace::pores::internal
