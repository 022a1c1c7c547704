// AnalysePores end to end on fit-stage results built by hand: which distributions are made,
// with which meniscus and film, and how missing fits and unsupported branches are reported.

#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <vector>

#include "pipeline/physics/physics.h"
#include "pipeline/pores/kelvin_film.h"
#include "pipeline/pores/pores.h"
#include "pores_test_util.h"

namespace sorbtrace::pores {
namespace {

using testing::Gab;
using testing::MakeFit;
using testing::MakeGroup;

constexpr double kNm = 1e-9;
const double kTemperature_K = physics::CelsiusToKelvin(23.0);
const std::vector<double> kAds = {0.05, 10.0, 0.80};
const std::vector<double> kDes = {0.06, 10.0, 0.80};

fit::IsothermFits TwoBranches() {
  fit::IsothermFits fits;
  int g = 0;
  for (const auto& [branch, p] : {std::pair{ingest::Branch::kAdsorption, kAds},
                                  std::pair{ingest::Branch::kDesorption, kDes}}) {
    std::vector<double> rh = {0.11, 0.33, 0.53, 0.75, 0.85, 0.93, 0.97};
    std::vector<double> u;
    for (double a : rh) u.push_back(Gab(p[0], p[1], p[2], a));
    fits.groups.push_back(MakeGroup(branch, kTemperature_K, rh, u, 2e-4));
    Eigen::MatrixXd cov = Eigen::MatrixXd::Zero(3, 3);
    cov(0, 0) = 1e-6;
    cov(1, 1) = 0.25;
    cov(2, 2) = 1e-6;
    fits.fits.push_back(MakeFit("gab", g, p, cov));
    fits.best_fit_per_group.push_back(g);
    ++g;
  }
  return fits;
}

TEST(AnalysePores, BothMethodsPerBranchWithTheBranchMeniscus) {
  PoreOptions options;
  options.band_draws = 200;
  const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, TwoBranches(), options);
  ASSERT_EQ(a.distributions.size(), 4u);
  EXPECT_TRUE(a.summary.warnings.empty());
  for (const PoreDistribution& d : a.distributions) {
    // Open cylinders (Cohan 1938): cylindrical meniscus on adsorption, hemispherical on
    // desorption.
    EXPECT_EQ(d.meniscus, d.branch == ingest::Branch::kAdsorption
                              ? physics::Meniscus::kCylindrical
                              : physics::Meniscus::kHemispherical);
    EXPECT_FALSE(d.points.empty());
    EXPECT_FALSE(d.assumptions.empty());
    EXPECT_NEAR(d.resolved_radius_min_m, 1 * kNm, 1e-15);
    if (d.method == "model") {
      EXPECT_EQ(d.model_name, "gab");
      EXPECT_EQ(d.band_source, "parameter covariance");
      EXPECT_EQ(d.band_draws_used, 200);
      EXPECT_EQ(d.points.size(), 400u);
      // The largest radius is the one resolved at the highest measured RH (0.97).
      const internal::PoreRadiusMap map(kTemperature_K, d.meniscus, 0.0,
                                        internal::MakeFilmCurve(options, nullptr));
      EXPECT_NEAR(d.resolved_radius_max_m / map.PoreRadius_m(0.97), 1.0, 1e-12);
      EXPECT_NEAR(d.points.back().rh_fraction, 0.97, 1e-9);
      // Volume bookkeeping: resolved + adsorbed (below 1 nm) + film left in resolved pores
      // cannot exceed the water held at the top of the grid.
      EXPECT_LE(d.total_resolved_volume_m3_per_kg + d.adsorbed_volume_m3_per_kg,
                Gab(d.branch == ingest::Branch::kAdsorption ? kAds[0] : kDes[0], 10.0, 0.8, 0.97) /
                    physics::LiquidWaterDensity_kg_per_m3(kTemperature_K) * (1 + 1e-9));
      for (const PoreDistributionPoint& p : d.points) {
        EXPECT_LE(p.cumulative_low_m3_per_kg, p.cumulative_volume_m3_per_kg * (1 + 1e-6) + 1e-15);
        EXPECT_GE(p.cumulative_high_m3_per_kg, p.cumulative_volume_m3_per_kg * (1 - 1e-6) - 1e-15);
      }
    } else {
      EXPECT_EQ(d.method, "stepwise");
      // Steps from 1 nm (interpolated) to RH 0.97: 1 nm lies between 33 and 53 % RH on
      // adsorption (cylindrical meniscus) and between 11 and 33 % RH on desorption.
      EXPECT_EQ(d.points.size(), d.branch == ingest::Branch::kAdsorption ? 5u : 6u);
    }
  }
  // The decade fractions add up to one.
  double sum = 0.0;
  for (const DecadeFraction& f : a.distributions[0].decades) sum += f.volume_fraction;
  EXPECT_NEAR(sum, 1.0, 1e-12);
}

TEST(AnalysePores, ClosedPoresUseTheHemisphericalMeniscusOnBothBranches) {
  PoreOptions options;
  options.geometry = PoreGeometry::kClosedCylinder;
  options.band_draws = 0;
  const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, TwoBranches(), options);
  ASSERT_EQ(a.distributions.size(), 4u);
  for (const PoreDistribution& d : a.distributions) {
    EXPECT_EQ(d.meniscus, physics::Meniscus::kHemispherical);
  }
}

TEST(AnalysePores, FittedLayersFilmFollowsTheGabFit) {
  PoreOptions options;
  options.film = FilmModel::kFittedLayers;
  options.band_draws = 0;
  options.stepwise = false;
  const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, TwoBranches(), options);
  ASSERT_EQ(a.distributions.size(), 2u);
  const PoreDistribution& d = a.distributions[0];
  EXPECT_NE(d.film_description.find("gab"), std::string::npos) << d.film_description;
  for (std::size_t i = 0; i < d.points.size(); i += 50) {
    const PoreDistributionPoint& p = d.points[i];
    // t = (u / X_m) * 0.311 nm, the monolayer thickness (V_m / N_A)^(1/3) (derived).
    EXPECT_NEAR(p.film_thickness_m,
                Gab(kAds[0], kAds[1], kAds[2], p.rh_fraction) / kAds[0] * 0.311 * kNm, 1e-15);
    EXPECT_NEAR(p.kelvin_radius_m + p.film_thickness_m, p.radius_m, 1e-9 * p.radius_m);
  }
}

TEST(AnalysePores, MissingSourceModelAndDryingGroupAreWarningsNotErrors) {
  fit::IsothermFits fits = TwoBranches();
  fits.groups.push_back(
      MakeGroup(ingest::Branch::kDrying, kTemperature_K, {0.5, 0.9}, {0.01, 0.02}, 1e-4));
  fits.best_fit_per_group.push_back(-1);
  PoreOptions options;
  options.source_model = "peleg";  // not fitted here
  options.band_draws = 0;
  const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, options);
  EXPECT_EQ(a.distributions.size(), 2u);  // the stepwise ones
  ASSERT_EQ(a.summary.warnings.size(), 3u);
  EXPECT_EQ(a.summary.warnings[0].message,
            "pores: no converged peleg fit for the adsorption group at 23.00 degC: no model-based "
            "distribution");
  EXPECT_EQ(a.summary.warnings[2].message,
            "pores: the drying group at 23.00 degC is not analysed (adsorption and desorption "
            "only)");
  EXPECT_EQ(a.summary.warnings[2].severity, Severity::kWarning);
}

}  // namespace
}  // namespace sorbtrace::pores
