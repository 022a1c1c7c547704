// Internal to the pores stage: the adsorbed-film curve t(RH) and the map between RH and the
// pore radius r_p = r_K(RH, T, meniscus) + t(RH).
#pragma once

#include <functional>
#include <string>
#include <utility>
#include <vector>

#include "fitters/model.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/physics/physics.h"
#include "pipeline/pores/pores.h"

namespace sorbtrace::pores::internal {

// Badmann, Stockhausen & Setzer (1981) J. Colloid Interface Sci. 82, 534 (equation from
// memory): t / nm = 0.385 - 0.189 ln(-ln RH); set to 0 where it turns negative (RH < 4.7e-4).
double BadmannFilmThickness_m(double rh_fraction);

// Film thickness of a user table (rh_fraction, thickness_m), linear in RH between rows and
// constant beyond the first and last row.
double TableFilmThickness_m(const std::vector<std::pair<double, double>>& table,
                            double rh_fraction);

// t(RH) [m], with the words printed beside the distribution.
struct FilmCurve {
  std::function<double(double)> thickness_m;  // of rh_fraction
  std::string description;                    // e.g. "Badmann et al. (1981) t-curve"
  std::string setting;  // the setting as written in the job file, for error messages
  bool is_constant = false;
  double constant_m = 0.0;
};

// The fitted GAB or BET that a kFittedLayers film is built from.
struct FittedLayersSource {
  const fitters::Model* model = nullptr;
  std::vector<double> parameters;  // X_m at index 0 (GAB and BET)
  fitters::ModelContext context;
};

// The film of options.film. kFittedLayers needs `layers` (else std::invalid_argument).
FilmCurve MakeFilmCurve(const PoreOptions& options, const FittedLayersSource* layers);

// Meniscus of a branch in a pore geometry (Cohan 1938): open cylinders fill by a cylindrical
// and empty by a hemispherical meniscus; closed cylinders use the hemispherical one both ways.
physics::Meniscus MeniscusFor(PoreGeometry geometry, ingest::Branch branch);

// RH <-> pore radius at one temperature and meniscus with a film.
class PoreRadiusMap {
 public:
  PoreRadiusMap(double temperature_K, physics::Meniscus meniscus, double contact_angle_rad,
                FilmCurve film);

  double temperature_K() const { return temperature_K_; }
  physics::Meniscus meniscus() const { return meniscus_; }
  const FilmCurve& film() const { return film_; }

  // r_K = L / ln(1/RH), L from physics::KelvinRadius_m; 0 < rh < 1.
  double KelvinRadius_m(double rh_fraction) const;
  double FilmThickness_m(double rh_fraction) const { return film_.thickness_m(rh_fraction); }
  double PoreRadius_m(double rh_fraction) const;
  // The RH at which a pore of radius r fills (or empties): solves r_K(RH) + t(RH) = r by
  // bisection in ln ln(1/RH) (r_K + t increases with RH for any non-decreasing film).
  // Throws sorbtrace::InputError naming the film setting when no RH gives that radius
  // (the film alone is thicker than the pore).
  double RhForPoreRadius(double radius_m) const;

 private:
  double temperature_K_;
  physics::Meniscus meniscus_;
  double kelvin_length_m_;  // r_K at ln(1/RH) = 1
  FilmCurve film_;
};

}  // namespace sorbtrace::pores::internal
