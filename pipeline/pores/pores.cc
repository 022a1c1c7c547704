// Pores stage: options, and the orchestration of distributions and datasheet quantities over
// the fitted groups.

#include "pipeline/pores/pores.h"

#include <fmt/format.h>
#include <fmt/ranges.h>

#include <algorithm>
#include <cmath>
#include <exception>
#include <limits>
#include <stdexcept>

#include "fitters/numerical_failure.h"
#include "fitters/registry.h"
#include "pipeline/common/number_text.h"
#include "pipeline/physics/physics.h"
#include "pipeline/pores/distribution.h"
#include "pipeline/pores/kelvin_film.h"
#include "pipeline/pores/quantities.h"

namespace sorbtrace::pores {
namespace {

constexpr double kNm = physics::kMetresPerNanometre;
constexpr double kNm2 = physics::kSquareMetresPerSquareNanometre;
constexpr double kHalfPi = physics::kPi / 2.0;
// Validity of the Kelvin radius and water properties used here (physics.h): 0..100 degC.
constexpr double kLowestTemperature_K = physics::kZeroCelsius_K;
constexpr double kHighestTemperature_K = 373.15;
// Sanity limits of the grid sizes: below 10 points a derivative is meaningless, above 100000
// nothing is gained and memory for the band grows (grid x draws doubles).
constexpr int kMinGridPoints = 10;
constexpr int kMaxGridPoints = 100000;
constexpr int kMaxDraws = 1000000;

bool Fail(std::string* error, std::string message) {
  if (error != nullptr) *error = std::move(message);
  return false;
}

void Warn(PoreAnalysis* out, std::string message) {
  Diagnostic d;
  d.severity = Severity::kWarning;
  d.message = std::move(message);
  out->summary.warnings.push_back(std::move(d));
}

std::string GroupWords(const fit::FitGroup& group) {
  return fmt::format("{} group at {:.2f} degC", ingest::BranchName(group.branch),
                     physics::KelvinToCelsius(group.temperature_K));
}

// RH range (0 < RH < 1) of the points a model was fitted to: ModelFit::used_observations, or
// every point of the group when those are not recorded.
void FittedRhRange(const fit::FitGroup& group, const fit::ModelFit& f, double* low, double* high) {
  *low = 1.0;
  *high = 0.0;
  auto take = [&](const fitters::Observation& o) {
    if (!(o.x[0] > 0.0 && o.x[0] < 1.0)) return;
    *low = std::min(*low, o.x[0]);
    *high = std::max(*high, o.x[0]);
  };
  if (f.used_observations.empty()) {
    for (const fitters::Observation& o : group.observations) take(o);
    return;
  }
  for (int i : f.used_observations) {
    if (i >= 0 && i < static_cast<int>(group.observations.size())) {
      take(group.observations[static_cast<std::size_t>(i)]);
    }
  }
}

// The fitted curve of fits.fits[index] for its group; model == nullptr if unusable.
internal::FittedCurve CurveOf(const fit::IsothermFits& fits, int index) {
  internal::FittedCurve c;
  if (index < 0 || index >= static_cast<int>(fits.fits.size())) return c;
  const fit::ModelFit& f = fits.fits[static_cast<std::size_t>(index)];
  if (!f.result.ok() || f.group_index < 0 ||
      f.group_index >= static_cast<int>(fits.groups.size())) {
    return c;
  }
  const fitters::Model* model = fitters::FindModel(f.model_name);
  if (model == nullptr || static_cast<int>(f.result.parameters.size()) != model->num_parameters()) {
    return c;
  }
  const fit::FitGroup& group = fits.groups[static_cast<std::size_t>(f.group_index)];
  c.model = model;
  c.name = f.model_name;
  c.parameters = f.result.parameters;
  c.fit = &f;
  if (f.result.summary.covariance_available) c.covariance = f.result.covariance;
  c.context.temperature_K = group.temperature_K;
  c.branch = group.branch;
  c.temperature_K = group.temperature_K;
  FittedRhRange(group, f, &c.rh_min_fraction, &c.rh_max_fraction);
  return c;
}

int BestFitOf(const fit::IsothermFits& fits, std::size_t group) {
  if (group >= fits.best_fit_per_group.size()) return -1;
  return fits.best_fit_per_group[group];
}

// The converged fit named `name` in the group, -1 if none.
int NamedFitOf(const fit::IsothermFits& fits, std::size_t group, const std::string& name) {
  for (std::size_t i = 0; i < fits.fits.size(); ++i) {
    const fit::ModelFit& f = fits.fits[i];
    if (f.group_index == static_cast<int>(group) && f.model_name == name && f.result.ok()) {
      return static_cast<int>(i);
    }
  }
  return -1;
}

// The decision on the pore-size section for a material class (pores.h, MaterialClass).
PoreApplicability ApplicabilityFor(MaterialClass material_class) {
  PoreApplicability a;
  a.material_class = material_class;
  switch (material_class) {
    case MaterialClass::kRigid:
      a.section = PoreSection::kReported;
      break;
    case MaterialClass::kNotStated:
      a.section = PoreSection::kReportedWithCaution;
      a.reason =
          "The pore sizes assume a rigid pore space that water fills and empties. The job does "
          "not state whether the material swells or takes up water into its structure (wood, "
          "natural fibres, polymers, many excipients); for such materials these figures are no "
          "pore-size measurement.";
      break;
    case MaterialClass::kSwelling:
      a.section = PoreSection::kOmitted;
      a.reason =
          "No pore-size distribution is given: the material swells or takes up water into its "
          "structure, so the Kelvin equation does not measure pore sizes in it.";
      break;
  }
  return a;
}

// Why fits.fits[index] may not drive a model-based distribution read down to rh_low_needed;
// empty when it passes every check (AnalysePores in pores.h).
std::string ModelCheckFailure(const fit::IsothermFits& fits, int index, double rh_low_needed,
                              const PoreOptions& options) {
  const fit::ModelFit& f = fits.fits[static_cast<std::size_t>(index)];
  const fitters::FitResult& r = f.result;
  // The fit stage's one identifiability predicate (fit_stage.h).
  const fit::Identifiability identifiability = fit::IdentifiabilityOf(f);
  if (!identifiability.identifiable) {
    return "not identifiable from these data: " + identifiability.reason;
  }
  const bool absolute = r.weight_convention == fitters::WeightConvention::kAbsolute;
  const double p_value =
      absolute ? r.statistics.chi_square_p_value : r.statistics.runs_test_p_value;
  if (!(p_value >= options.model_min_fit_p_value)) {
    return fmt::format("the fit fails its goodness-of-fit check ({} p = {}, below {:g})",
                       absolute ? "chi-square" : "runs test",
                       common::FormatProbability(p_value, common::kProbabilityDigits),
                       options.model_min_fit_p_value);
  }
  const fit::FitGroup& group = fits.groups[static_cast<std::size_t>(f.group_index)];
  double low = 1.0;
  double high = 0.0;
  FittedRhRange(group, f, &low, &high);
  if (!(high > low)) return "no fitted RH range";
  if (rh_low_needed < low - options.model_rh_margin_fraction) {
    return fmt::format(
        "the distribution would read it down to {:.1f} % RH (the smallest pore radius), below "
        "its fitted range {:.1f}..{:.1f} % RH by more than {:g} % RH",
        100.0 * rh_low_needed, 100.0 * low, 100.0 * high, 100.0 * options.model_rh_margin_fraction);
  }
  return std::string();
}

// Candidate fits of a group for the model-based distribution: the named one, or with "best"
// the converged ranked fits in rank order.
std::vector<int> SourceCandidates(const fit::IsothermFits& fits, std::size_t group,
                                  const PoreOptions& options) {
  if (options.source_model != "best") {
    const int named = NamedFitOf(fits, group, options.source_model);
    return named >= 0 ? std::vector<int>{named} : std::vector<int>{};
  }
  std::vector<int> ranked;
  for (std::size_t i = 0; i < fits.fits.size(); ++i) {
    const fit::ModelFit& f = fits.fits[i];
    if (f.group_index == static_cast<int>(group) && f.result.ok() && f.rank >= 1) {
      ranked.push_back(static_cast<int>(i));
    }
  }
  std::stable_sort(ranked.begin(), ranked.end(), [&](int a, int b) {
    return fits.fits[static_cast<std::size_t>(a)].rank <
           fits.fits[static_cast<std::size_t>(b)].rank;
  });
  const int best = BestFitOf(fits, group);  // the fit stage's choice first
  if (best >= 0) {
    ranked.erase(std::remove(ranked.begin(), ranked.end(), best), ranked.end());
    ranked.insert(ranked.begin(), best);
  }
  return ranked;
}

void AddUnavailable(PoreAnalysis* out, const fit::FitGroup& group, const std::string& method,
                    std::string reason) {
  Warn(out, fmt::format("pores: no {} pore-size distribution for the {}: {}",
                        method == "model" ? "model-based" : method, GroupWords(group), reason));
  out->unavailable.push_back({method, group.branch, group.temperature_K, std::move(reason)});
}

// The model-based distribution of group g from the first candidate that passes its checks, or
// an UnavailableDistribution with the reasons.
void AddModelDistribution(const fit::IsothermFits& fits, std::size_t g,
                          const internal::PoreRadiusMap& map, const PoreOptions& options,
                          PoreAnalysis* out) {
  const fit::FitGroup& group = fits.groups[g];
  const std::vector<int> candidates = SourceCandidates(fits, g, options);
  if (candidates.empty()) {
    AddUnavailable(out, group, "model", fmt::format("no converged {} fit", options.source_model));
    return;
  }
  const double rh_low_needed = map.RhForPoreRadius(options.min_radius_m);
  std::vector<std::string> passed_over;
  for (int index : candidates) {
    const internal::FittedCurve source = CurveOf(fits, index);
    if (source.model == nullptr) continue;
    const std::string failure = ModelCheckFailure(fits, index, rh_low_needed, options);
    if (!failure.empty()) {
      passed_over.push_back(fmt::format("{}: {}", source.name, failure));
      continue;
    }
    internal::ModelCurve curve;
    curve.model = source.model;
    curve.name = source.name;
    curve.parameters = source.parameters;
    curve.covariance = source.covariance;
    curve.context = source.context;
    // The pore quantities propagate the stated input uncertainties (JCGM 101:2008):
    // the Monte Carlo refits; the bootstrap's only when no Monte Carlo was run. Measured
    // on a two-family pore system (tests/pores/two_family_coverage_test.cc): u / scatter
    // 0.91-1.04 from the Monte Carlo draws, 0.85-0.99 from the bootstrap's.
    const fit::ModelFit& source_fit = fits.fits[static_cast<std::size_t>(index)];
    if (!source_fit.monte_carlo.parameter_draws.empty()) {
      curve.resampled_draws = source_fit.monte_carlo.parameter_draws;
      curve.resampled_source = "Monte Carlo draws (JCGM 101)";
    } else {
      curve.resampled_draws = source_fit.bootstrap.parameter_draws;
      curve.resampled_source = "bootstrap draws";
    }
    // Never beyond the data: the top is the highest fitted RH (or the model's validity limit,
    // or the RH of max_radius_m when that is lower).
    double rh_top = std::min(source.rh_max_fraction, source.model->info().x_max);
    PoreOptions model_options = options;
    if (options.max_radius_m > 0.0) {
      rh_top = std::min(rh_top, map.RhForPoreRadius(options.max_radius_m));
      model_options.max_radius_m = 0.0;
    }
    if (!(rh_top > 0.0 && rh_top < 1.0)) continue;
    PoreDistribution d =
        internal::ModelPoreDistribution(curve, group.branch, rh_top, map, model_options);
    if (rh_top < source.rh_max_fraction) {
      d.assumptions.push_back(fmt::format(
          "limited to RH {:g} (the {} model's validity range or the largest radius set), below "
          "the highest fitted RH {:g}",
          rh_top, source.name, source.rh_max_fraction));
    }
    if (options.max_radius_m > 0.0 &&
        map.RhForPoreRadius(options.max_radius_m) > source.rh_max_fraction) {
      d.assumptions.push_back(fmt::format(
          "radii above {:.3g} nm (the largest resolved by the fitted points) are not shown: the "
          "model is not extrapolated",
          map.PoreRadius_m(rh_top) / kNm));
    }
    for (const std::string& why : passed_over) {
      d.assumptions.push_back("better-ranked model not used: " + why);
    }
    d.assumptions.push_back(fmt::format(
        "the {} fit passes its checks: converged, identifiable from these data (covariance "
        "available, no parameter at a bound, every parameter known to better than its own "
        "value), goodness of fit p >= {:g}, read within its fitted RH range",
        source.model->info().title, options.model_min_fit_p_value));
    out->distributions.push_back(std::move(d));
    return;
  }
  std::string reason = "no fitted model passes its checks";
  for (const std::string& why : passed_over) reason += "; " + why;
  AddUnavailable(out, group, "model", reason);
}

// Budget lines of the reduce stage that are the same at every step of a specimen (its dry
// mass) and of a data set (its temperature error acting on the RH): reduce.cc names them.
bool IsDryMassLine(const reduce::BudgetLine& line) {
  return line.quantity == "balance (dry mass)" || line.quantity == "dry-mass method";
}
bool IsTemperatureLine(const reduce::BudgetLine& line) {
  return line.quantity == "temperature effect on RH";
}

int SourceIndex(std::vector<std::string>* sources, const std::string& name) {
  const auto it = std::find(sources->begin(), sources->end(), name);
  if (it != sources->end()) return static_cast<int>(it - sources->begin());
  sources->push_back(name);
  return static_cast<int>(sources->size() - 1);
}

// The measured points of a group for the stepwise method, with their shared parts (pores.h).
void StepwisePoints(const fit::FitGroup& group, const reduce::ReducedIsotherms& reduced,
                    std::vector<internal::MeasuredPoint>* points,
                    std::vector<std::string>* sources) {
  for (std::size_t i = 0; i < group.observations.size(); ++i) {
    const fitters::Observation& o = group.observations[i];
    internal::MeasuredPoint p;
    p.rh_fraction = o.x[0];
    p.moisture_kg_per_kg = o.y;
    p.u_moisture_kg_per_kg = o.sigma_y;
    p.u_rh_fraction = o.sigma_x0;
    const int index = i < group.point_indices.size() ? group.point_indices[i] : -1;
    if (index >= 0 && index < static_cast<int>(reduced.points.size())) {
      const reduce::IsothermPoint& point = reduced.points[static_cast<std::size_t>(index)];
      p.u_moisture_kg_per_kg = point.u_moisture_kg_per_kg;
      std::vector<const reduce::SpecimenPoint*> members;
      for (const int member : point.specimen_point_indices) {
        members.push_back(&reduced.specimen_points[static_cast<std::size_t>(member)]);
      }
      const double n = static_cast<double>(members.size());
      for (const reduce::SpecimenPoint* s : members) {
        for (const reduce::BudgetLine& line : s->moisture_budget) {
          if (!IsDryMassLine(line)) continue;
          internal::CommonPart part;
          part.source = SourceIndex(
              sources, fmt::format("{} {}: {}", s->dataset_id, s->specimen_id, line.quantity));
          part.moisture_kg_per_kg = line.sensitivity * line.standard_uncertainty / n;
          p.common.push_back(part);
        }
        for (const reduce::BudgetLine& line : s->rh_budget) {
          if (!IsTemperatureLine(line)) continue;
          internal::CommonPart part;
          part.source = SourceIndex(sources, fmt::format("{}: {}", s->dataset_id, line.quantity));
          part.rh_fraction = line.sensitivity * line.standard_uncertainty / n;
          p.common.push_back(part);
        }
      }
    }
    // The specimen term (fit::SpecimenFactor: specimens that differ from each other do so at
    // every step): one shared part per factor, y_i w_i u_k, drawn once per draw for every point
    // it acts on, as the fit stage draws it; u_moisture_kg_per_kg above includes it.
    for (const fit::SpecimenFactor& factor : group.specimen_factors) {
      const double w = i < factor.weights.size() ? factor.weights[i] : 0.0;
      if (w == 0.0 || !(factor.relative_standard_uncertainty > 0.0)) continue;
      internal::CommonPart part;
      part.source = SourceIndex(sources, fmt::format("{}: specimen term ({})", factor.dataset_id,
                                                     fmt::join(factor.specimen_ids, ", ")));
      part.moisture_kg_per_kg = o.y * w * factor.relative_standard_uncertainty;
      p.common.push_back(part);
    }
    points->push_back(std::move(p));
  }
}
}  // namespace

bool PoreOptions::IsValid(std::string* error) const {
  if (!(min_radius_m > 0.0) || !std::isfinite(min_radius_m)) {
    return Fail(error, fmt::format("pores.min_radius_nm = {:g} must be > 0", min_radius_m / kNm));
  }
  if (!(max_radius_m == 0.0 || (std::isfinite(max_radius_m) && max_radius_m > min_radius_m))) {
    return Fail(error, fmt::format("pores.max_radius_nm = {:g} is not above pores.min_radius_nm "
                                   "= {:g} (0 = up to the highest measured RH)",
                                   max_radius_m / kNm, min_radius_m / kNm));
  }
  if (film == FilmModel::kConstant) {
    if (!(constant_film_thickness_m >= 0.0) || !std::isfinite(constant_film_thickness_m)) {
      return Fail(error, fmt::format("pores.film_thickness_nm = {:g} must be >= 0",
                                     constant_film_thickness_m / kNm));
    }
    if (constant_film_thickness_m >= min_radius_m) {
      return Fail(error, fmt::format("pores.film_thickness_nm = {:g} is thicker than the "
                                     "smallest pore radius {:g} nm",
                                     constant_film_thickness_m / kNm, min_radius_m / kNm));
    }
  }
  if (film == FilmModel::kFittedLayers &&
      (!(monolayer_thickness_m > 0.0) || !std::isfinite(monolayer_thickness_m))) {
    return Fail(error, fmt::format("pores.monolayer_thickness_nm = {:g} must be > 0",
                                   monolayer_thickness_m / kNm));
  }
  if (film == FilmModel::kUserTable) {
    if (film_table.size() < 2) {
      return Fail(error, fmt::format("pores.film_table has {} rows; at least 2 (rh_fraction, "
                                     "thickness) rows are needed",
                                     film_table.size()));
    }
    for (std::size_t i = 0; i < film_table.size(); ++i) {
      const auto& [rh, t] = film_table[i];
      if (!(rh > 0.0 && rh < 1.0) || !(t >= 0.0) || !std::isfinite(t)) {
        return Fail(error, fmt::format("pores.film_table row {}: RH {:g}, thickness {:g} nm; "
                                       "expected 0 < RH < 1 and thickness >= 0",
                                       i + 1, rh, t / kNm));
      }
      if (i > 0 && (rh <= film_table[i - 1].first || t < film_table[i - 1].second)) {
        return Fail(error, fmt::format("pores.film_table row {}: RH must increase and the "
                                       "thickness must not decrease from row to row",
                                       i + 1));
      }
    }
    if (film_table.front().second >= min_radius_m) {
      return Fail(error, fmt::format("pores.film_table (t = {:g} nm at RH {:g}) is thicker than "
                                     "the smallest pore radius {:g} nm",
                                     film_table.front().second / kNm, film_table.front().first,
                                     min_radius_m / kNm));
    }
  }
  if (!(contact_angle_rad >= 0.0 && contact_angle_rad < kHalfPi)) {
    return Fail(error, fmt::format("pores.contact_angle_deg = {:g} must be in [0, 90)",
                                   contact_angle_rad * 90.0 / kHalfPi));
  }
  if (grid_points < kMinGridPoints || grid_points > kMaxGridPoints) {
    return Fail(error, fmt::format("pores.grid_points = {} must be in {}..{}", grid_points,
                                   kMinGridPoints, kMaxGridPoints));
  }
  if (band_draws < 0 || band_draws > kMaxDraws) {
    return Fail(error,
                fmt::format("pores.band_draws = {} must be in 0..{}", band_draws, kMaxDraws));
  }
  if (source_model.empty()) {
    return Fail(error, "pores.model is empty; expected \"best\" or a model key");
  }
  if (!(molecular_area_m2 > 0.0) || !std::isfinite(molecular_area_m2)) {
    return Fail(error, fmt::format("pores.molecular_area_nm2 = {:g} must be > 0",
                                   molecular_area_m2 / kNm2));
  }
  for (const ReferenceCondition& c : reference_conditions) {
    if (!(c.temperature_K >= kLowestTemperature_K && c.temperature_K <= kHighestTemperature_K) ||
        !(c.rh_fraction > 0.0 && c.rh_fraction < 1.0)) {
      return Fail(error,
                  fmt::format("pores.reference_conditions: {:g} degC / {:g} % RH; "
                              "expected 0..100 degC and 0 < RH < 100 %",
                              physics::KelvinToCelsius(c.temperature_K), 100.0 * c.rh_fraction));
    }
  }
  if (!(band_confidence_level > 0.0 && band_confidence_level < 1.0)) {
    return Fail(error, fmt::format("pores.band_confidence_level = {:g} must be in (0, 1)",
                                   band_confidence_level));
  }
  if (!(mode_min_relative_height >= 0.0 && mode_min_relative_height < 1.0)) {
    return Fail(error, fmt::format("pores.mode_min_relative_height = {:g} must be in [0, 1)",
                                   mode_min_relative_height));
  }
  if (hysteresis_grid_points < 2 || hysteresis_grid_points > kMaxGridPoints) {
    return Fail(error, fmt::format("pores.hysteresis_grid_points = {} must be in 2..{}",
                                   hysteresis_grid_points, kMaxGridPoints));
  }
  if (heat_grid_points < 2 || heat_grid_points > kMaxGridPoints) {
    return Fail(error, fmt::format("pores.heat_grid_points = {} must be in 2..{}", heat_grid_points,
                                   kMaxGridPoints));
  }
  if (!(model_min_fit_p_value >= 0.0 && model_min_fit_p_value < 1.0)) {
    return Fail(error, fmt::format("pores.model_min_fit_p_value = {:g} must be in [0, 1)",
                                   model_min_fit_p_value));
  }
  if (!(model_rh_margin_fraction >= 0.0 && model_rh_margin_fraction < 1.0)) {
    return Fail(error, fmt::format("pores.model_rh_margin = {:g} must be in [0, 1)",
                                   model_rh_margin_fraction));
  }
  if (!(temperature_tolerance_K >= 0.0) || !std::isfinite(temperature_tolerance_K)) {
    return Fail(error, fmt::format("pores.temperature_tolerance_K = {:g} must be >= 0",
                                   temperature_tolerance_K));
  }
  return true;
}

PoreAnalysis AnalysePores(const reduce::ReducedIsotherms& reduced, const fit::IsothermFits& fits,
                          const PoreOptions& options) {
  std::string error;
  if (!options.IsValid(&error)) {
    throw InputError(SourceLocation{}, error, "a valid [pores] setting");
  }
  PoreAnalysis out;
  out.applicability = ApplicabilityFor(options.material_class);
  if (out.applicability.section == PoreSection::kOmitted) Warn(&out, out.applicability.reason);
  std::vector<internal::FittedCurve> best_adsorption;
  std::vector<internal::FittedCurve> ranked;  // every ranked fit (model choice: ReadCurves)
  std::vector<internal::FittedCurve> best_desorption;
  std::vector<internal::FittedCurve> monolayer_fits;

  for (std::size_t g = 0; g < fits.groups.size(); ++g) {
    const fit::FitGroup& group = fits.groups[g];
    const internal::FittedCurve best = CurveOf(fits, BestFitOf(fits, g));
    for (std::size_t i = 0; i < fits.fits.size(); ++i) {
      const fit::ModelFit& f = fits.fits[i];
      if (f.rank <= 0 || f.group_index != static_cast<int>(g)) continue;
      const internal::FittedCurve c = CurveOf(fits, static_cast<int>(i));
      if (c.model == nullptr) continue;
      ranked.push_back(c);
    }
    if (best.model != nullptr) {
      if (group.branch == ingest::Branch::kAdsorption) best_adsorption.push_back(best);
      if (group.branch == ingest::Branch::kDesorption) best_desorption.push_back(best);
    }
    internal::FittedCurve layers_curve;
    for (const char* name : {"gab", "bet"}) {
      const internal::FittedCurve c = CurveOf(fits, NamedFitOf(fits, g, name));
      if (c.model == nullptr) continue;
      if (group.branch == ingest::Branch::kAdsorption) monolayer_fits.push_back(c);
      if (layers_curve.model == nullptr) layers_curve = c;
    }

    if (group.branch == ingest::Branch::kDrying) {
      Warn(&out, fmt::format("pores: the drying group at {:.2f} degC is not analysed (adsorption "
                             "and desorption only)",
                             physics::KelvinToCelsius(group.temperature_K)));
      continue;
    }
    if (out.applicability.section == PoreSection::kOmitted) {
      for (const char* method : {"model", "stepwise"}) {
        if (std::string(method) == "stepwise" && !options.stepwise) continue;
        out.unavailable.push_back(
            {method, group.branch, group.temperature_K, out.applicability.reason});
      }
      continue;
    }

    try {
      internal::FittedLayersSource layers;
      layers.model = layers_curve.model;
      layers.parameters = layers_curve.parameters;
      layers.context = layers_curve.context;
      internal::FilmCurve film =
          internal::MakeFilmCurve(options, layers_curve.model != nullptr ? &layers : nullptr);
      const internal::PoreRadiusMap map(group.temperature_K,
                                        internal::MeniscusFor(options.geometry, group.branch),
                                        options.contact_angle_rad, std::move(film));
      AddModelDistribution(fits, g, map, options, &out);
      if (options.stepwise) {
        std::vector<internal::MeasuredPoint> points;
        std::vector<std::string> sources;
        StepwisePoints(group, reduced, &points, &sources);
        out.distributions.push_back(
            internal::StepwisePoreDistribution(points, group.branch, map, options, sources));
      }
    } catch (const InputError&) {
      throw;
    } catch (const std::invalid_argument& e) {  // MakeFilmCurve: no fit to take the film from
      Warn(&out, fmt::format("pores: no distribution for the {}: {}", GroupWords(group), e.what()));
    } catch (...) {
      Warn(&out, fmt::format("pores: no distribution for the {}: {}", GroupWords(group),
                             fitters::NumericalFailureMessage()));
    }
  }

  try {
    out.surface_areas = internal::SurfaceAreas(monolayer_fits, options);
    for (const ReferenceCondition& c : options.reference_conditions) {
      out.reference_moisture.push_back(
          internal::ReferenceMoistureFor(c, best_adsorption, ranked, fits, options));
    }
    out.hygroscopicity = internal::HygroscopicityFrom(best_adsorption, ranked, fits, options);
    for (const internal::FittedCurve& a : best_adsorption) {
      for (const internal::FittedCurve& d : best_desorption) {
        if (std::abs(a.temperature_K - d.temperature_K) <= options.temperature_tolerance_K) {
          out.hysteresis.push_back(
              internal::HysteresisFrom(a, d, ranked, fits, fits.coverage_factor, options));
          break;
        }
      }
    }
    out.isosteric_heat.push_back(
        internal::IsostericHeatFrom(best_adsorption, ingest::Branch::kAdsorption, options));
    if (best_desorption.size() >= 2) {
      IsostericHeat q =
          internal::IsostericHeatFrom(best_desorption, ingest::Branch::kDesorption, options);
      if (q.available) out.isosteric_heat.push_back(std::move(q));
    }
  } catch (...) {
    Warn(&out, fmt::format("pores: datasheet quantities incomplete: {}",
                           fitters::NumericalFailureMessage()));
  }
  if (out.applicability.section == PoreSection::kReportedWithCaution) {
    for (PoreDistribution& d : out.distributions) {
      d.assumptions.push_back(out.applicability.reason);
    }
  }
  return out;
}

}  // namespace sorbtrace::pores
