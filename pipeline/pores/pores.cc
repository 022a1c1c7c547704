// Pores stage: options, and the orchestration of distributions and datasheet quantities over
// the fitted groups.

#include "pipeline/pores/pores.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <exception>
#include <stdexcept>

#include "fitters/registry.h"
#include "pipeline/pores/distribution.h"
#include "pipeline/pores/kelvin_film.h"
#include "pipeline/pores/quantities.h"

namespace sorbtrace::pores {
namespace {

constexpr double kNm = 1e-9;
constexpr double kNm2 = 1e-18;
constexpr double kHalfPi = 1.57079632679489661923;
// Validity of the Kelvin radius and water properties used here (physics.h): 0..100 degC.
constexpr double kLowestTemperature_K = 273.15;
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

// Measured RH range of a group (points with 0 < RH < 1).
void RhRange(const fit::FitGroup& group, double* low, double* high) {
  *low = 1.0;
  *high = 0.0;
  for (const fitters::Observation& o : group.observations) {
    if (!(o.x[0] > 0.0 && o.x[0] < 1.0)) continue;
    *low = std::min(*low, o.x[0]);
    *high = std::max(*high, o.x[0]);
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
  if (f.result.summary.covariance_available) c.covariance = f.result.covariance;
  c.context.temperature_K = group.temperature_K;
  c.branch = group.branch;
  c.temperature_K = group.temperature_K;
  RhRange(group, &c.rh_min_fraction, &c.rh_max_fraction);
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
  std::vector<internal::FittedCurve> best_adsorption;
  std::vector<internal::FittedCurve> best_desorption;
  std::vector<internal::FittedCurve> monolayer_fits;

  for (std::size_t g = 0; g < fits.groups.size(); ++g) {
    const fit::FitGroup& group = fits.groups[g];
    const internal::FittedCurve best = CurveOf(fits, BestFitOf(fits, g));
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
    const int source_index = options.source_model == "best"
                                 ? BestFitOf(fits, g)
                                 : NamedFitOf(fits, g, options.source_model);
    const internal::FittedCurve source = CurveOf(fits, source_index);

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
      if (source.model == nullptr) {
        Warn(&out, fmt::format("pores: no converged {} fit for the {}: no model-based "
                               "distribution",
                               options.source_model, GroupWords(group)));
      } else {
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
        const fit::ModelFit& source_fit = fits.fits[static_cast<std::size_t>(source_index)];
        if (!source_fit.monte_carlo.parameter_draws.empty()) {
          curve.resampled_draws = source_fit.monte_carlo.parameter_draws;
          curve.resampled_source = "Monte Carlo draws (JCGM 101)";
        } else {
          curve.resampled_draws = source_fit.bootstrap.parameter_draws;
          curve.resampled_source = "bootstrap draws";
        }
        double rh_top = source.rh_max_fraction;
        const fitters::ModelInfo& info = source.model->info();
        if (info.x_max < rh_top) rh_top = info.x_max;
        if (rh_top > 0.0 && rh_top < 1.0) {
          PoreDistribution d =
              internal::ModelPoreDistribution(curve, group.branch, rh_top, map, options);
          if (rh_top < source.rh_max_fraction) {
            d.assumptions.push_back(
                fmt::format("limited to RH {:g}, the upper end of the {} model's validity range",
                            rh_top, source.name));
          }
          out.distributions.push_back(std::move(d));
        }
      }
      if (options.stepwise) {
        std::vector<internal::MeasuredPoint> points;
        for (std::size_t i = 0; i < group.observations.size(); ++i) {
          const fitters::Observation& o = group.observations[i];
          internal::MeasuredPoint p;
          p.rh_fraction = o.x[0];
          p.moisture_kg_per_kg = o.y;
          p.u_moisture_kg_per_kg = o.sigma_y;
          const int index = i < group.point_indices.size() ? group.point_indices[i] : -1;
          if (index >= 0 && index < static_cast<int>(reduced.points.size())) {
            p.u_moisture_kg_per_kg =
                reduced.points[static_cast<std::size_t>(index)].u_moisture_kg_per_kg;
          }
          points.push_back(p);
        }
        out.distributions.push_back(
            internal::StepwisePoreDistribution(points, group.branch, map, options));
      }
    } catch (const InputError&) {
      throw;
    } catch (const std::exception& e) {
      Warn(&out, fmt::format("pores: no distribution for the {}: {}", GroupWords(group), e.what()));
    }
  }

  try {
    out.surface_areas = internal::SurfaceAreas(monolayer_fits, options);
    for (const ReferenceCondition& c : options.reference_conditions) {
      out.reference_moisture.push_back(internal::ReferenceMoistureFor(c, best_adsorption, options));
    }
    out.hygroscopicity =
        internal::HygroscopicityFrom(best_adsorption, fits.coverage_factor, options);
    for (const internal::FittedCurve& a : best_adsorption) {
      for (const internal::FittedCurve& d : best_desorption) {
        if (std::abs(a.temperature_K - d.temperature_K) <= options.temperature_tolerance_K) {
          out.hysteresis.push_back(internal::HysteresisFrom(a, d, fits.coverage_factor, options));
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
  } catch (const std::exception& e) {
    Warn(&out, fmt::format("pores: datasheet quantities incomplete: {}", e.what()));
  }
  return out;
}

}  // namespace sorbtrace::pores
