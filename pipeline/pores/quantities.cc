// Surface area, reference moisture contents, hygroscopicity class, hysteresis and isosteric
// heat from the fitted isotherms.

#include "pipeline/pores/quantities.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>

#include "fitters/fitter.h"
#include "pipeline/conform/conform.h"
#include "pipeline/physics/physics.h"
#include "pipeline/reduce/reduce.h"

namespace sorbtrace::pores::internal {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kGramsPerKilogram = 1000.0;
// Ph. Eur. 5.11: 25 degC, 80 % RH, 24 h; temperature tolerance +-1 degC (from memory).
constexpr double kPharmacopoeiaTemperature_K = 298.15;
constexpr double kPharmacopoeiaTemperatureTolerance_K = 1.0;
constexpr double kPharmacopoeiaRhFraction = 0.80;
// Ph. Eur. 5.11 humidity tolerance 80 +- 2 % RH (from memory): a highest step this close to 80 %
// RH still supports the class (the model is read at exactly 80 %).
constexpr double kPharmacopoeiaRhToleranceFraction = 0.02;
// A reference RH within half a percent RH of the measured range is not called an extrapolation:
// that is below the standard uncertainty of salt-solution and sensor humidities (common
// practice), and a reference RH of 80 % is often also the highest step (measured as 79.97 %).
constexpr double kRhRangeToleranceFraction = 0.005;
// Bisection steps for a_w(u): 100 halvings of [0, 1] are far below double precision.
constexpr int kInversionSteps = 100;
// Step in 1/T [1/K] of the central difference of ln p_s: 1e-7 1/K is about 0.01 K at room
// temperature, the truncation error (~1e-10 relative) and rounding (~1e-8) are negligible.
constexpr double kInverseTemperatureStep_per_K = 1e-7;

double Celsius(double temperature_K) { return physics::KelvinToCelsius(temperature_K); }

}  // namespace

double SurfaceArea_m2_per_g(double monolayer_kg_per_kg, double molecular_area_m2) {
  return monolayer_kg_per_kg / physics::kMolarMassWater_kg_per_mol * physics::kAvogadro_per_mol *
         molecular_area_m2 / kGramsPerKilogram;
}

// The class limits live in one table (conform::HygroscopicityClasses, with their sources).
std::string HygroscopicityClassName(double mass_increase_percent) {
  return std::string(conform::HygroscopicityClassOf(mass_increase_percent));
}

double FittedCurve::Value(double rh_fraction) const {
  const double x[fitters::kMaxInputs] = {rh_fraction, 0.0};
  return model->Evaluate(parameters.data(), x, context);
}

double FittedCurve::StandardUncertainty(double rh_fraction) const {
  const int p = model->num_parameters();
  if (covariance.rows() != p || covariance.cols() != p) return 0.0;
  const double x[fitters::kMaxInputs] = {rh_fraction, 0.0};
  Eigen::VectorXd g(p);
  model->Gradient(parameters.data(), x, context, g.data());
  const double variance = g.dot(covariance * g);
  return variance > 0.0 ? std::sqrt(variance) : 0.0;
}

double FittedCurve::Slope(double rh_fraction) const {
  const double x[fitters::kMaxInputs] = {rh_fraction, 0.0};
  return model->SlopeInX0(parameters.data(), x, context);
}

bool NetIsostericHeat(const std::vector<double>& temperatures_K, const std::vector<double>& ln_aw,
                      const std::vector<double>& u_ln_aw, double* heat_J_per_mol,
                      double* u_heat_J_per_mol) {
  const std::size_t n = temperatures_K.size();
  if (n < 2 || ln_aw.size() != n || u_ln_aw.size() != n) return false;
  bool weighted = true;
  for (double u : u_ln_aw) weighted = weighted && u > 0.0 && std::isfinite(u);
  std::vector<double> x(n), w(n);
  for (std::size_t i = 0; i < n; ++i) {
    x[i] = 1.0 / temperatures_K[i];
    w[i] = weighted ? 1.0 / (u_ln_aw[i] * u_ln_aw[i]) : 1.0;
  }
  const double sw = std::accumulate(w.begin(), w.end(), 0.0);
  double x_bar = 0.0;
  double y_bar = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    x_bar += w[i] * x[i];
    y_bar += w[i] * ln_aw[i];
  }
  x_bar /= sw;
  y_bar /= sw;
  double sxx = 0.0;
  double sxy = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    sxx += w[i] * (x[i] - x_bar) * (x[i] - x_bar);
    sxy += w[i] * (x[i] - x_bar) * (ln_aw[i] - y_bar);
  }
  if (!(sxx > 0.0)) return false;
  const double slope = sxy / sxx;
  double chi2 = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double r = ln_aw[i] - (y_bar + slope * (x[i] - x_bar));
    chi2 += w[i] * r * r;
  }
  const double dof = static_cast<double>(n) - 2.0;
  double slope_variance = 0.0;
  if (weighted) {
    slope_variance = 1.0 / sxx;
    // Birge ratio: scatter larger than the propagated uncertainties widens the interval.
    if (dof > 0.0 && chi2 / dof > 1.0) slope_variance *= chi2 / dof;
  } else if (dof > 0.0) {
    slope_variance = chi2 / dof / sxx;
  }
  *heat_J_per_mol = -physics::kMolarGasConstant_J_per_mol_K * slope;
  *u_heat_J_per_mol = physics::kMolarGasConstant_J_per_mol_K * std::sqrt(slope_variance);
  return true;
}

double ClausiusClapeyronEnthalpy_J_per_mol(double temperature_K) {
  const double x = 1.0 / temperature_K;
  const double h = kInverseTemperatureStep_per_K;
  const double ln_p_plus = std::log(physics::SaturationPressureOverWater_Pa(1.0 / (x + h)));
  const double ln_p_minus = std::log(physics::SaturationPressureOverWater_Pa(1.0 / (x - h)));
  return -physics::kMolarGasConstant_J_per_mol_K * (ln_p_plus - ln_p_minus) / (2.0 * h);
}

double InvertForRh(const FittedCurve& curve, double moisture_kg_per_kg, double rh_low,
                   double rh_high) {
  double f_low = curve.Value(rh_low);
  double f_high = curve.Value(rh_high);
  if (!(std::isfinite(f_low) && std::isfinite(f_high)) || f_high <= f_low) return kNaN;
  const double tolerance = 1e-12 * std::max(std::abs(f_low), std::abs(f_high));
  if (moisture_kg_per_kg < f_low - tolerance || moisture_kg_per_kg > f_high + tolerance) {
    return kNaN;
  }
  double lo = rh_low;
  double hi = rh_high;
  for (int i = 0; i < kInversionSteps; ++i) {
    const double mid = 0.5 * (lo + hi);
    if (curve.Value(mid) < moisture_kg_per_kg) {
      lo = mid;
    } else {
      hi = mid;
    }
  }
  return 0.5 * (lo + hi);
}

std::vector<SurfaceArea> SurfaceAreas(const std::vector<FittedCurve>& gab_bet_fits,
                                      const PoreOptions& options) {
  std::vector<SurfaceArea> areas;
  for (const FittedCurve& c : gab_bet_fits) {
    if (c.parameters.empty()) continue;
    SurfaceArea a;
    a.model_name = c.name;
    a.branch = c.branch;
    a.temperature_K = c.temperature_K;
    a.monolayer_kg_per_kg = c.parameters[0];
    a.u_monolayer_kg_per_kg =
        (c.covariance.rows() > 0 && c.covariance(0, 0) > 0.0) ? std::sqrt(c.covariance(0, 0)) : 0.0;
    a.molecular_area_m2 = options.molecular_area_m2;
    a.area_m2_per_g = SurfaceArea_m2_per_g(a.monolayer_kg_per_kg, options.molecular_area_m2);
    a.u_area_m2_per_g = SurfaceArea_m2_per_g(a.u_monolayer_kg_per_kg, options.molecular_area_m2);
    if (c.fit != nullptr && !c.fit->expanded_uncertainty.empty() &&
        !c.fit->result.estimates.empty() && c.fit->result.estimates[0].standard_error > 0.0) {
      a.coverage_factor =
          c.fit->expanded_uncertainty[0] / c.fit->result.estimates[0].standard_error;
    }
    areas.push_back(a);
  }
  return areas;
}

namespace {

// The ranked curves of best's group (with their fits), best included.
std::vector<const FittedCurve*> GroupOf(const FittedCurve& best,
                                        const std::vector<FittedCurve>& ranked) {
  std::vector<const FittedCurve*> group;
  if (best.fit == nullptr) return group;
  for (const FittedCurve& c : ranked) {
    if (c.fit != nullptr && c.model != nullptr && c.fit->group_index == best.fit->group_index) {
      group.push_back(&c);
    }
  }
  return group;
}

// The reading of one curve alone (no model average).
CurveReading ReadOneCurve(const FittedCurve& curve, const fit::IsothermFits& fits,
                          double rh_fraction) {
  CurveReading r;
  r.value = curve.Value(rh_fraction);
  r.standard_uncertainty = curve.StandardUncertainty(rh_fraction);
  r.coverage_factor = fits.coverage_factor;
  if (curve.fit != nullptr) {
    const fit::DerivedUncertainty d = fit::CurveUncertainty(fits, *curve.fit, rh_fraction);
    r.effective_dof = d.effective_dof;
    r.coverage_factor = d.coverage_factor;
  }
  return r;
}

}  // namespace

CurveReading ReadCurves(const FittedCurve& best, const std::vector<FittedCurve>& ranked,
                        const fit::IsothermFits& fits, double rh_fraction) {
  const std::vector<const FittedCurve*> group = GroupOf(best, ranked);
  std::vector<double> aicc, values;
  std::vector<fit::DerivedUncertainty> own;
  for (const FittedCurve* c : group) {
    values.push_back(c->Value(rh_fraction));
    own.push_back(fit::CurveUncertainty(fits, *c->fit, rh_fraction));
    // A curve without a finite value here takes no part.
    aicc.push_back(std::isfinite(values.back()) ? c->fit->result.statistics.aicc : kNaN);
  }
  const std::vector<double> w = fitters::AkaikeWeights(aicc);
  CurveReading r;
  r.models_averaged =
      static_cast<int>(std::count_if(w.begin(), w.end(), [](double x) { return x > 0.0; }));
  if (r.models_averaged < 2) return ReadOneCurve(best, fits, rh_fraction);
  r.value = 0.0;
  for (std::size_t i = 0; i < group.size(); ++i) {
    if (w[i] > 0.0) r.value += w[i] * values[i];
  }
  double within = 0.0;
  double between = 0.0;
  double welch_denominator = 0.0;  // sum_i (w_i u_i^2)^2 / nu_i
  for (std::size_t i = 0; i < group.size(); ++i) {
    if (!(w[i] > 0.0)) continue;
    const double part = w[i] * own[i].standard_uncertainty * own[i].standard_uncertainty;
    within += part;
    between += w[i] * (values[i] - r.value) * (values[i] - r.value);
    if (std::isfinite(own[i].effective_dof))
      welch_denominator += part * part / own[i].effective_dof;
  }
  const double total = within + between;
  r.standard_uncertainty = std::sqrt(total);
  r.u_model_choice = std::sqrt(between);
  // Welch-Satterthwaite (JCGM 100:2008, G.4.1) on variances: nu = (sum c_i)^2 / sum c_i^2 / nu_i.
  r.effective_dof = welch_denominator > 0.0 ? total * total / welch_denominator
                                            : std::numeric_limits<double>::infinity();
  r.coverage_factor = reduce::CoverageFactor(r.effective_dof, fits.coverage_factor);
  return r;
}

std::string ReadingSource(const CurveReading& reading, const std::string& best_name) {
  if (reading.models_averaged < 2) return fmt::format("the fitted {} isotherm", best_name);
  return fmt::format("the model average over {} fitted isotherm models (best: {})",
                     reading.models_averaged, best_name);
}

ReferenceMoisture ReferenceMoistureFor(const ReferenceCondition& condition,
                                       const std::vector<FittedCurve>& best_adsorption,
                                       const std::vector<FittedCurve>& ranked,
                                       const fit::IsothermFits& fits, const PoreOptions& options) {
  ReferenceMoisture r;
  r.coverage_factor = fits.coverage_factor;
  r.condition = condition;
  r.branch = ingest::Branch::kAdsorption;
  if (best_adsorption.empty()) {
    r.temperature_matches = false;
    r.flags.emplace_back("no fitted adsorption isotherm: not available");
    return r;
  }
  const FittedCurve* best = &best_adsorption.front();
  for (const FittedCurve& c : best_adsorption) {
    if (std::abs(c.temperature_K - condition.temperature_K) <
        std::abs(best->temperature_K - condition.temperature_K)) {
      best = &c;
    }
  }
  r.model_name = best->name;
  const CurveReading reading = ReadCurves(*best, ranked, fits, condition.rh_fraction);
  r.moisture_kg_per_kg = reading.value;
  r.u_moisture_kg_per_kg = reading.standard_uncertainty;
  r.u_model_choice_kg_per_kg = reading.u_model_choice;
  r.models_weighed = reading.models_averaged;
  r.effective_dof = reading.effective_dof;
  r.coverage_factor = reading.coverage_factor;
  r.temperature_matches =
      std::abs(best->temperature_K - condition.temperature_K) <= options.temperature_tolerance_K;
  if (!r.temperature_matches) {
    r.flags.push_back(fmt::format(
        "fitted at {:.2f} degC, reference {:.2f} degC: not converted to the reference temperature",
        Celsius(best->temperature_K), Celsius(condition.temperature_K)));
  }
  if (condition.rh_fraction < best->rh_min_fraction - kRhRangeToleranceFraction ||
      condition.rh_fraction > best->rh_max_fraction + kRhRangeToleranceFraction) {
    r.flags.push_back(
        fmt::format("extrapolated: {:g} % RH is outside the measured range {:.1f}..{:.1f} % RH",
                    100.0 * condition.rh_fraction, 100.0 * best->rh_min_fraction,
                    100.0 * best->rh_max_fraction));
  }
  const fitters::ModelInfo& info = best->model->info();
  if (condition.rh_fraction < info.x_min || condition.rh_fraction > info.x_max) {
    r.flags.push_back(fmt::format("outside the validity range {:g}..{:g} of the {} model",
                                  info.x_min, info.x_max, best->name));
  }
  return r;
}

Hygroscopicity HygroscopicityFrom(const std::vector<FittedCurve>& best_adsorption,
                                  const std::vector<FittedCurve>& ranked,
                                  const fit::IsothermFits& fits, const PoreOptions& /*options*/) {
  Hygroscopicity h;
  const FittedCurve* best = nullptr;
  for (const FittedCurve& c : best_adsorption) {
    if (best == nullptr || std::abs(c.temperature_K - kPharmacopoeiaTemperature_K) <
                               std::abs(best->temperature_K - kPharmacopoeiaTemperature_K)) {
      best = &c;
    }
  }
  if (best == nullptr) {
    h.reason = "not applicable: no fitted adsorption isotherm";
    return h;
  }
  if (std::abs(best->temperature_K - kPharmacopoeiaTemperature_K) >
      kPharmacopoeiaTemperatureTolerance_K) {
    h.reason = fmt::format(
        "not applicable: Ph. Eur. 5.11 classifies at 25 +- 1 degC; the nearest adsorption "
        "isotherm was measured at {:.2f} degC",
        Celsius(best->temperature_K));
    return h;
  }
  if (kPharmacopoeiaRhFraction < best->rh_min_fraction - kPharmacopoeiaRhToleranceFraction ||
      kPharmacopoeiaRhFraction > best->rh_max_fraction + kPharmacopoeiaRhToleranceFraction) {
    h.reason = fmt::format(
        "not applicable: 80 % RH is outside the measured range {:.1f}..{:.1f} % RH of the "
        "adsorption isotherm at {:.2f} degC, beyond the 80 +- 2 % RH tolerance (no "
        "extrapolation)",
        100.0 * best->rh_min_fraction, 100.0 * best->rh_max_fraction, Celsius(best->temperature_K));
    return h;
  }
  h.applicable = true;
  const CurveReading reading = ReadCurves(*best, ranked, fits, kPharmacopoeiaRhFraction);
  h.mass_increase_percent = 100.0 * reading.value;
  h.u_mass_increase_percent = 100.0 * reading.standard_uncertainty;
  h.class_name = HygroscopicityClassName(h.mass_increase_percent);
  h.reason = fmt::format(
      "equilibrium mass increase relative to the dry mass from {} at 80 % RH "
      "and {:.2f} degC; Ph. Eur. 5.11 takes the increase after 24 h relative to the sample as "
      "received, so a sample that already holds water, or equilibrates slowly, gains less in the "
      "pharmacopoeial test; 'deliquescent' cannot be told from an isotherm",
      ReadingSource(reading, best->name), Celsius(best->temperature_K));
  if (kPharmacopoeiaRhFraction > best->rh_max_fraction) {
    h.reason += fmt::format(
        "; the highest measured step is {:.2f} % RH, within the 80 +- 2 % RH tolerance of the "
        "test",
        100.0 * best->rh_max_fraction);
  }
  const double expanded = reading.coverage_factor * h.u_mass_increase_percent;
  for (const conform::HygroscopicityClass& c : conform::HygroscopicityClasses()) {
    const double boundary = c.lower_percent;
    if (boundary <= 0.0) continue;  // the lowest class has no lower boundary
    if (std::abs(h.mass_increase_percent - boundary) <= expanded) {
      h.reason +=
          fmt::format("; the class boundary {:g} % lies within the expanded uncertainty", boundary);
    }
  }
  return h;
}

Hysteresis HysteresisFrom(const FittedCurve& adsorption, const FittedCurve& desorption,
                          const std::vector<FittedCurve>& ranked, const fit::IsothermFits& fits,
                          double coverage_factor, const PoreOptions& options) {
  Hysteresis h;
  h.temperature_K = adsorption.temperature_K;
  const double lo = std::max(adsorption.rh_min_fraction, desorption.rh_min_fraction);
  const double hi = std::min(adsorption.rh_max_fraction, desorption.rh_max_fraction);
  if (!(hi > lo)) {
    h.reason = fmt::format(
        "the measured RH ranges of the branches do not overlap (adsorption {:.1f}..{:.1f} %, "
        "desorption {:.1f}..{:.1f} %)",
        100.0 * adsorption.rh_min_fraction, 100.0 * adsorption.rh_max_fraction,
        100.0 * desorption.rh_min_fraction, 100.0 * desorption.rh_max_fraction);
    return h;
  }
  h.available = true;
  const int m = options.hysteresis_grid_points;
  double max_abs = -1.0;
  bool any_significant = false;
  int adsorption_models = 1;
  int desorption_models = 1;
  for (int i = 0; i < m; ++i) {
    HysteresisPoint p;
    p.rh_fraction = lo + (hi - lo) * static_cast<double>(i) / static_cast<double>(m - 1);
    const CurveReading a = ReadCurves(adsorption, ranked, fits, p.rh_fraction);
    const CurveReading d = ReadCurves(desorption, ranked, fits, p.rh_fraction);
    adsorption_models = std::max(adsorption_models, a.models_averaged);
    desorption_models = std::max(desorption_models, d.models_averaged);
    p.adsorption_kg_per_kg = a.value;
    p.desorption_kg_per_kg = d.value;
    p.difference_kg_per_kg = p.desorption_kg_per_kg - p.adsorption_kg_per_kg;
    const double ua = a.standard_uncertainty;
    const double ud = d.standard_uncertainty;
    p.u_difference_kg_per_kg = std::sqrt(ua * ua + ud * ud);
    p.significant = std::abs(p.difference_kg_per_kg) > coverage_factor * p.u_difference_kg_per_kg;
    if (std::abs(p.difference_kg_per_kg) > max_abs) {
      max_abs = std::abs(p.difference_kg_per_kg);
      h.max_difference_kg_per_kg = p.difference_kg_per_kg;
      h.rh_at_max_fraction = p.rh_fraction;
    }
    if (p.significant) {
      if (!any_significant) h.significant_rh_low_fraction = p.rh_fraction;
      h.significant_rh_high_fraction = p.rh_fraction;
      any_significant = true;
    }
    h.points.push_back(p);
  }
  CurveReading models;
  models.models_averaged = desorption_models;
  const std::string desorption_source = ReadingSource(models, desorption.name);
  models.models_averaged = adsorption_models;
  h.reason = fmt::format(
      "desorption minus adsorption, desorption from {}, adsorption from {}, on {:.1f}..{:.1f} % "
      "RH; significant where |difference| > {:g} u (delta method on each fit, model choice "
      "included)",
      desorption_source, ReadingSource(models, adsorption.name), 100.0 * lo, 100.0 * hi,
      coverage_factor);
  if (!any_significant) h.reason += "; nowhere significant";
  return h;
}

IsostericHeat IsostericHeatFrom(const std::vector<FittedCurve>& best_of_branch,
                                ingest::Branch branch, const PoreOptions& options) {
  IsostericHeat q;
  q.branch = branch;
  // One curve per temperature, ascending.
  std::vector<const FittedCurve*> curves;
  for (const FittedCurve& c : best_of_branch) {
    bool duplicate = false;
    for (const FittedCurve* k : curves) {
      duplicate = duplicate ||
                  std::abs(k->temperature_K - c.temperature_K) <= options.temperature_tolerance_K;
    }
    if (!duplicate) curves.push_back(&c);
  }
  std::sort(curves.begin(), curves.end(), [](const FittedCurve* a, const FittedCurve* b) {
    return a->temperature_K < b->temperature_K;
  });
  for (const FittedCurve* c : curves) q.temperatures_K.push_back(c->temperature_K);
  if (curves.size() < 2) {
    q.reason = fmt::format(
        "not available: the isosteric heat needs {} isotherms at two or more temperatures; "
        "found {}",
        ingest::BranchName(branch), curves.size());
    return q;
  }
  double u_low = -std::numeric_limits<double>::infinity();
  double u_high = std::numeric_limits<double>::infinity();
  for (const FittedCurve* c : curves) {
    const double a = c->Value(c->rh_min_fraction);
    const double b = c->Value(c->rh_max_fraction);
    if (!(b > a)) {
      q.reason = fmt::format(
          "not available: the fitted {} at {:.2f} degC does not increase over "
          "its measured range",
          c->name, Celsius(c->temperature_K));
      return q;
    }
    u_low = std::max(u_low, a);
    u_high = std::min(u_high, b);
  }
  if (!(u_high > u_low)) {
    q.reason = "not available: the moisture-content ranges of the temperatures do not overlap";
    return q;
  }
  double inverse_mean = 0.0;
  for (const FittedCurve* c : curves) inverse_mean += 1.0 / c->temperature_K;
  const double mean_temperature_K = static_cast<double>(curves.size()) / inverse_mean;
  const double vaporisation_J_per_mol = ClausiusClapeyronEnthalpy_J_per_mol(mean_temperature_K);
  const int m = options.heat_grid_points;
  for (int k = 0; k < m; ++k) {
    const double u = u_low + (u_high - u_low) * static_cast<double>(k) / static_cast<double>(m - 1);
    std::vector<double> temperatures, ln_aw, u_ln_aw;
    for (const FittedCurve* c : curves) {
      const double aw = InvertForRh(*c, u, c->rh_min_fraction, c->rh_max_fraction);
      if (!(aw > 0.0)) continue;
      const double slope = c->Slope(aw);
      if (!(slope > 0.0)) continue;
      // u(a_w) = u(f) / f'(a_w): the curve's uncertainty read horizontally.
      const double u_aw = c->StandardUncertainty(aw) / slope;
      temperatures.push_back(c->temperature_K);
      ln_aw.push_back(std::log(aw));
      u_ln_aw.push_back(u_aw / aw);
    }
    IsostericHeatPoint p;
    p.moisture_kg_per_kg = u;
    if (!NetIsostericHeat(temperatures, ln_aw, u_ln_aw, &p.net_heat_J_per_mol,
                          &p.u_net_heat_J_per_mol)) {
      continue;
    }
    p.total_heat_J_per_mol = p.net_heat_J_per_mol + vaporisation_J_per_mol;
    q.points.push_back(p);
  }
  if (q.points.empty()) {
    q.reason = "not available: a_w(u) could not be found on the common moisture range";
    return q;
  }
  q.available = true;
  q.reason = fmt::format(
      "q_st,net = -R d ln a_w / d(1/T) at constant moisture content, {} temperatures "
      "{:.2f}..{:.2f} degC, a_w from the best fit of each; total heat adds {:.1f} kJ/mol, the "
      "enthalpy of vaporisation at {:.2f} degC from the Clausius-Clapeyron slope of the IAPWS "
      "saturation pressure (derived)",
      curves.size(), Celsius(curves.front()->temperature_K), Celsius(curves.back()->temperature_K),
      vaporisation_J_per_mol / 1000.0, Celsius(mean_temperature_K));
  return q;
}

}  // namespace sorbtrace::pores::internal
