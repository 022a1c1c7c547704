// Film curves and the RH <-> pore radius map of the pores stage.

#include "pipeline/pores/kelvin_film.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <utility>

#include "pipeline/common/diagnostics.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::pores::internal {
namespace {

constexpr double kNm = physics::kMetresPerNanometre;
// Badmann, Stockhausen & Setzer (1981), t/nm = a - b ln(-ln RH) (from memory).
constexpr double kBadmannA_nm = 0.385;
constexpr double kBadmannB_nm = 0.189;
// Search interval of s = ln(1/RH) for the inversion: s = 1e-12 is RH within 1e-12 of 1
// (r_K of about a kilometre), s = 60 is RH = 9e-27 (r_K of 0.02 nm): wider than any pore.
constexpr double kMinLogInverseRh = 1e-12;
constexpr double kMaxLogInverseRh = 60.0;
// 80 halvings of the span ln 60 - ln 1e-12 = 31.7 of ln s leave 3e-23: below double precision.
constexpr int kBisectionSteps = 80;

}  // namespace

double BadmannFilmThickness_m(double rh_fraction) {
  const double t_nm = kBadmannA_nm - kBadmannB_nm * std::log(-std::log(rh_fraction));
  return std::max(0.0, t_nm) * kNm;
}

double TableFilmThickness_m(const std::vector<std::pair<double, double>>& table,
                            double rh_fraction) {
  if (table.empty()) return 0.0;
  if (rh_fraction <= table.front().first) return table.front().second;
  if (rh_fraction >= table.back().first) return table.back().second;
  const auto upper = std::upper_bound(
      table.begin(), table.end(), rh_fraction,
      [](double rh, const std::pair<double, double>& row) { return rh < row.first; });
  const auto lower = upper - 1;
  const double weight = (rh_fraction - lower->first) / (upper->first - lower->first);
  return lower->second + weight * (upper->second - lower->second);
}

FilmCurve MakeFilmCurve(const PoreOptions& options, const FittedLayersSource* layers) {
  FilmCurve film;
  switch (options.film) {
    case FilmModel::kNone:
      film.thickness_m = [](double) { return 0.0; };
      film.description = "no adsorbed film (r_p = r_K)";
      film.setting = "pores.film = none";
      film.is_constant = true;
      film.constant_m = 0.0;
      break;
    case FilmModel::kConstant: {
      const double t = options.constant_film_thickness_m;
      film.thickness_m = [t](double) { return t; };
      film.description = fmt::format("constant adsorbed film t = {:g} nm", t / kNm);
      film.setting = fmt::format("pores.film_thickness_nm = {:g}", t / kNm);
      film.is_constant = true;
      film.constant_m = t;
      break;
    }
    case FilmModel::kFittedLayers: {
      if (layers == nullptr || layers->model == nullptr || layers->parameters.empty() ||
          !(layers->parameters[0] > 0.0)) {
        throw std::invalid_argument(
            "pores.film = fitted_layers needs a converged GAB or BET fit with X_m > 0");
      }
      const FittedLayersSource source = *layers;
      const double layer_m = options.monolayer_thickness_m;
      film.thickness_m = [source, layer_m](double rh) {
        const double x[fitters::kMaxInputs] = {rh, 0.0};
        const double u = source.model->Evaluate(source.parameters.data(), x, source.context);
        return std::max(0.0, u / source.parameters[0]) * layer_m;
      };
      film.description = fmt::format(
          "film of u/X_m molecular layers of {:g} nm from the fitted {} (X_m = {:g} kg/kg)",
          layer_m / kNm, source.model->name(), source.parameters[0]);
      film.setting = fmt::format("pores.film = fitted_layers (pores.monolayer_thickness_nm = {:g})",
                                 layer_m / kNm);
      break;
    }
    case FilmModel::kBadmann:
      film.thickness_m = [](double rh) { return BadmannFilmThickness_m(rh); };
      film.description =
          "water t-curve t/nm = 0.385 - 0.189 ln(-ln RH) (Badmann, Stockhausen & Setzer 1981)";
      film.setting = "pores.film = badmann";
      break;
    case FilmModel::kUserTable: {
      const std::vector<std::pair<double, double>> table = options.film_table;
      film.thickness_m = [table](double rh) { return TableFilmThickness_m(table, rh); };
      film.description =
          fmt::format("film thickness interpolated in a table of {} rows", table.size());
      film.setting = fmt::format("pores.film_table (t = {:g} nm at RH {:g})",
                                 table.empty() ? 0.0 : table.front().second / kNm,
                                 table.empty() ? 0.0 : table.front().first);
      break;
    }
  }
  return film;
}

physics::Meniscus MeniscusFor(PoreGeometry geometry, ingest::Branch branch) {
  if (geometry == PoreGeometry::kClosedCylinder) return physics::Meniscus::kHemispherical;
  return branch == ingest::Branch::kAdsorption ? physics::Meniscus::kCylindrical
                                               : physics::Meniscus::kHemispherical;
}

PoreRadiusMap::PoreRadiusMap(double temperature_K, physics::Meniscus meniscus,
                             double contact_angle_rad, FilmCurve film)
    : temperature_K_(temperature_K),
      meniscus_(meniscus),
      // r_K = L / ln(1/RH): at RH = 1/e the Kelvin radius is L itself.
      kelvin_length_m_(
          physics::KelvinRadius_m(std::exp(-1.0), temperature_K, meniscus, contact_angle_rad)),
      film_(std::move(film)) {}

double PoreRadiusMap::KelvinRadius_m(double rh_fraction) const {
  return kelvin_length_m_ / -std::log(rh_fraction);
}

double PoreRadiusMap::PoreRadius_m(double rh_fraction) const {
  return KelvinRadius_m(rh_fraction) + FilmThickness_m(rh_fraction);
}

double PoreRadiusMap::RhForPoreRadius(double radius_m) const {
  auto too_thick = [&]() {
    return InputError(SourceLocation{},
                      fmt::format("{} is thicker than the smallest pore radius {:g} nm",
                                  film_.setting, radius_m / kNm),
                      "a film thinner than pores.min_radius_nm (or a larger pores.min_radius_nm)");
  };
  if (film_.is_constant) {
    if (!(radius_m > film_.constant_m)) throw too_thick();
    return std::exp(-kelvin_length_m_ / (radius_m - film_.constant_m));
  }
  // f(s) = L/s + t(exp(-s)) - r decreases with s = ln(1/RH).
  auto excess = [&](double s) {
    return kelvin_length_m_ / s + film_.thickness_m(std::exp(-s)) - radius_m;
  };
  double low = std::log(kMinLogInverseRh);   // f > 0 there
  double high = std::log(kMaxLogInverseRh);  // f must be < 0 there
  if (excess(kMaxLogInverseRh) >= 0.0) throw too_thick();
  for (int i = 0; i < kBisectionSteps; ++i) {
    const double mid = 0.5 * (low + high);
    if (excess(std::exp(mid)) > 0.0) {
      low = mid;
    } else {
      high = mid;
    }
  }
  return std::exp(-std::exp(0.5 * (low + high)));
}

}  // namespace sorbtrace::pores::internal
