// Kelvin inversion with an adsorbed film: meniscus per branch, film curves, RH(r) <-> r(RH),
// and the errors for impossible settings.

#include "pipeline/pores/kelvin_film.h"

#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "pipeline/common/diagnostics.h"
#include "pipeline/physics/physics.h"
#include "pipeline/pores/pores.h"

namespace sorbtrace::pores::internal {
namespace {

constexpr double kNm = 1e-9;
const double kRoomTemperature_K = physics::CelsiusToKelvin(23.0);

PoreRadiusMap MapWith(FilmModel film, physics::Meniscus meniscus, double constant_m = 0.0) {
  PoreOptions options;
  options.film = film;
  options.constant_film_thickness_m = constant_m;
  return PoreRadiusMap(kRoomTemperature_K, meniscus, 0.0, MakeFilmCurve(options, nullptr));
}

TEST(KelvinFacts, TenNanometrePoreFillsNear90And95PercentRh) {
  // Common practice: at room temperature a 10 nm pore condenses near 90 % RH with a
  // hemispherical meniscus and near 95 % RH with a cylindrical one (no film).
  const PoreRadiusMap hemi = MapWith(FilmModel::kNone, physics::Meniscus::kHemispherical);
  const PoreRadiusMap cyl = MapWith(FilmModel::kNone, physics::Meniscus::kCylindrical);
  EXPECT_NEAR(hemi.RhForPoreRadius(10 * kNm), 0.90, 0.005);
  EXPECT_NEAR(cyl.RhForPoreRadius(10 * kNm), 0.95, 0.005);
  // With the Badmann film (0.8 nm near 90 % RH) the same pore fills at a lower Kelvin radius,
  // i.e. a lower RH.
  const PoreRadiusMap hemi_film = MapWith(FilmModel::kBadmann, physics::Meniscus::kHemispherical);
  EXPECT_LT(hemi_film.RhForPoreRadius(10 * kNm), hemi.RhForPoreRadius(10 * kNm));
}

TEST(KelvinFacts, SmallerPoresFillFirst) {
  // Kelvin equation: r_K increases with RH, so pores fill in order of size.
  for (FilmModel film : {FilmModel::kNone, FilmModel::kBadmann}) {
    for (physics::Meniscus m :
         {physics::Meniscus::kHemispherical, physics::Meniscus::kCylindrical}) {
      const PoreRadiusMap map = MapWith(film, m);
      double previous = 0.0;
      for (double r_nm = 1.0; r_nm <= 1000.0; r_nm *= 1.25) {
        const double rh = map.RhForPoreRadius(r_nm * kNm);
        EXPECT_GT(rh, previous) << "r = " << r_nm << " nm";
        previous = rh;
      }
    }
  }
}

TEST(KelvinFacts, HemisphericalMeniscusEmptiesAtLowerRhThanCylindricalFills) {
  // Cohan (1938): an open pore of core radius r_c fills when the cylindrical Kelvin radius
  // reaches r_c and empties when the hemispherical one does; r_K,hemi = 2 r_K,cyl at one RH,
  // so without a film ln RH_des = 2 ln RH_ads (desorption below adsorption: hysteresis).
  const PoreRadiusMap des = MapWith(
      FilmModel::kNone, MeniscusFor(PoreGeometry::kOpenCylinder, ingest::Branch::kDesorption));
  const PoreRadiusMap ads = MapWith(
      FilmModel::kNone, MeniscusFor(PoreGeometry::kOpenCylinder, ingest::Branch::kAdsorption));
  const double rh_ads = ads.RhForPoreRadius(5 * kNm);
  const double rh_des = des.RhForPoreRadius(5 * kNm);
  EXPECT_NEAR(std::log(rh_des), 2.0 * std::log(rh_ads), 1e-12);
  EXPECT_EQ(MeniscusFor(PoreGeometry::kClosedCylinder, ingest::Branch::kAdsorption),
            physics::Meniscus::kHemispherical);
  EXPECT_EQ(MeniscusFor(PoreGeometry::kClosedCylinder, ingest::Branch::kDesorption),
            physics::Meniscus::kHemispherical);
}

TEST(FilmCurves, BadmannEquationValues) {
  // Badmann, Stockhausen & Setzer (1981) J. Colloid Interface Sci. 82, 534, t/nm = 0.385 -
  // 0.189 ln(-ln RH) (equation from memory); values by hand: 0.454 nm at 50 %, 0.810 nm at
  // 90 %.
  EXPECT_NEAR(BadmannFilmThickness_m(0.5) / kNm, 0.454, 0.0005);
  EXPECT_NEAR(BadmannFilmThickness_m(0.9) / kNm, 0.810, 0.0005);
  EXPECT_EQ(BadmannFilmThickness_m(1e-6), 0.0);  // clipped where the equation turns negative
}

TEST(FilmCurves, TableInterpolatesLinearlyAndHoldsEnds) {
  const std::vector<std::pair<double, double>> table = {{0.2, 0.3 * kNm}, {0.6, 0.7 * kNm}};
  EXPECT_NEAR(TableFilmThickness_m(table, 0.4) / kNm, 0.5, 1e-12);
  EXPECT_NEAR(TableFilmThickness_m(table, 0.1) / kNm, 0.3, 1e-12);
  EXPECT_NEAR(TableFilmThickness_m(table, 0.9) / kNm, 0.7, 1e-12);
}

TEST(PoreRadiusMap, RadiusOfRhInvertsRhOfRadius) {
  for (FilmModel film : {FilmModel::kNone, FilmModel::kConstant, FilmModel::kBadmann}) {
    const PoreRadiusMap map = MapWith(film, physics::Meniscus::kHemispherical, 0.4 * kNm);
    for (double r_nm : {1.0, 2.5, 10.0, 100.0, 1000.0}) {
      const double rh = map.RhForPoreRadius(r_nm * kNm);
      EXPECT_NEAR(map.PoreRadius_m(rh) / (r_nm * kNm), 1.0, 1e-10) << r_nm;
    }
  }
}

TEST(PoreRadiusMap, FilmThickerThanPoreIsAnInputError) {
  PoreOptions options;
  options.film = FilmModel::kUserTable;
  options.film_table = {{0.05, 0.8 * kNm}, {0.9, 1.5 * kNm}};
  const PoreRadiusMap map(kRoomTemperature_K, physics::Meniscus::kHemispherical, 0.0,
                          MakeFilmCurve(options, nullptr));
  try {
    map.RhForPoreRadius(0.5 * kNm);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.diagnostic().message,
              "pores.film_table (t = 0.8 nm at RH 0.05) is thicker than the smallest pore radius "
              "0.5 nm");
  }
}

TEST(PoreOptions, DefaultsAreValid) {
  std::string error;
  EXPECT_TRUE(PoreOptions{}.IsValid(&error)) << error;
}

TEST(PoreOptions, BadSettingsNameTheSetting) {
  std::string error;
  PoreOptions thick;
  thick.film = FilmModel::kConstant;
  thick.constant_film_thickness_m = 5 * kNm;
  EXPECT_FALSE(thick.IsValid(&error));
  EXPECT_EQ(error, "pores.film_thickness_nm = 5 is thicker than the smallest pore radius 1 nm");

  PoreOptions inverted;
  inverted.min_radius_m = 2 * kNm;
  inverted.max_radius_m = 0.5 * kNm;
  EXPECT_FALSE(inverted.IsValid(&error));
  EXPECT_EQ(error,
            "pores.max_radius_nm = 0.5 is not above pores.min_radius_nm = 2 (0 = up to the highest "
            "measured RH)");

  PoreOptions table;
  table.film = FilmModel::kUserTable;
  table.film_table = {{0.5, 0.3 * kNm}, {0.4, 0.4 * kNm}};
  EXPECT_FALSE(table.IsValid(&error));
  EXPECT_EQ(error,
            "pores.film_table row 2: RH must increase and the thickness must not decrease from row "
            "to row");

  PoreOptions grid;
  grid.grid_points = 3;
  EXPECT_FALSE(grid.IsValid(&error));
  EXPECT_EQ(error, "pores.grid_points = 3 must be in 10..100000");
}

TEST(PoreOptions, AnalysePoresThrowsInputErrorForBadSettings) {
  PoreOptions thick;
  thick.film = FilmModel::kConstant;
  thick.constant_film_thickness_m = 5 * kNm;
  try {
    AnalysePores(reduce::ReducedIsotherms{}, fit::IsothermFits{}, thick);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.diagnostic().message,
              "pores.film_thickness_nm = 5 is thicker than the smallest pore radius 1 nm");
    EXPECT_EQ(e.diagnostic().where.file, "");
  }
}

}  // namespace
}  // namespace sorbtrace::pores::internal
