// AnalysePores end to end on fit-stage results built by hand: which distributions are made,
// with which meniscus and film, and how missing fits and unsupported branches are reported.

#include <gtest/gtest.h>

#include <algorithm>
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
      EXPECT_EQ(d.steps.size(), d.branch == ingest::Branch::kAdsorption ? 5u : 6u);
      // One point per bar; steps not significant are merged into bars.
      EXPECT_GE(d.points.size(), 1u);
      EXPECT_LE(d.points.size(), d.steps.size());
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
            "pores: no model-based pore-size distribution for the adsorption group at 23.00 degC: "
            "no converged peleg fit");
  ASSERT_EQ(a.unavailable.size(), 2u);  // the model-based ones, with the reason
  EXPECT_EQ(a.unavailable[0].method, "model");
  EXPECT_EQ(a.unavailable[0].reason, "no converged peleg fit");
  EXPECT_EQ(a.summary.warnings[2].message,
            "pores: the drying group at 23.00 degC is not analysed (adsorption and desorption "
            "only)");
  EXPECT_EQ(a.summary.warnings[2].severity, Severity::kWarning);
}

// Issue: `model = "best"` chose a Henderson fit with chi-square p = 1e-187 and printed a pore
// volume 1500 times the truth. A fit that fails its goodness-of-fit check must not drive the
// distribution; with "best" the next-ranked fit that passes does, and when none passes the
// distribution is not available with the reason.
TEST(AnalysePores, ModelThatFailsItsChecksDoesNotDriveTheDistribution) {
  fit::IsothermFits fits = TwoBranches();
  for (fit::ModelFit& f : fits.fits) {
    f.result.weight_convention = fitters::WeightConvention::kAbsolute;
    f.result.statistics.chi_square_p_value = 1e-187;
  }
  PoreOptions options;
  options.band_draws = 0;
  options.stepwise = false;
  PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, options);
  EXPECT_TRUE(a.distributions.empty());
  ASSERT_EQ(a.unavailable.size(), 2u);
  EXPECT_NE(a.unavailable[0].reason.find("goodness-of-fit"), std::string::npos)
      << a.unavailable[0].reason;
  // A second, passing fit of the adsorption group ranked below the failing one is used.
  Eigen::MatrixXd cov = Eigen::MatrixXd::Zero(3, 3);
  cov(0, 0) = 1e-6;
  cov(1, 1) = 0.25;
  cov(2, 2) = 1e-6;
  fit::ModelFit second = MakeFit("gab", 0, kAds, cov);
  second.rank = 2;
  second.result.weight_convention = fitters::WeightConvention::kAbsolute;
  second.result.statistics.chi_square_p_value = 0.4;
  fits.fits.push_back(second);
  a = AnalysePores(reduce::ReducedIsotherms{}, fits, options);
  ASSERT_EQ(a.distributions.size(), 1u);
  EXPECT_EQ(a.distributions[0].branch, ingest::Branch::kAdsorption);
  bool named = false;
  for (const std::string& s : a.distributions[0].assumptions) {
    named = named || s.find("better-ranked model not used") != std::string::npos;
  }
  EXPECT_TRUE(named);
}

TEST(AnalysePores, NotIdentifiableOrExtrapolatedModelsAreNotUsed) {
  PoreOptions options;
  options.band_draws = 0;
  options.stepwise = false;
  {  // relative standard uncertainty above 100 %
    fit::IsothermFits fits = TwoBranches();
    fits.fits[0].result.covariance(1, 1) = 4.0 * 10.0 * 10.0;  // u(C) = 20 for C = 10
    const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, options);
    ASSERT_EQ(a.unavailable.size(), 1u);
    EXPECT_NE(a.unavailable[0].reason.find("not identifiable"), std::string::npos);
  }
  {  // a parameter at a bound
    fit::IsothermFits fits = TwoBranches();
    fits.fits[1].result.estimates.resize(3);
    fits.fits[1].result.estimates[2].at_bound = true;
    const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, options);
    ASSERT_EQ(a.unavailable.size(), 1u);
    EXPECT_EQ(a.unavailable[0].branch, ingest::Branch::kDesorption);
    EXPECT_NE(a.unavailable[0].reason.find("at a bound"), std::string::npos);
  }
  {  // fitted only from 75 % RH up: 1 nm would need the model far below its data
    fit::IsothermFits fits = TwoBranches();
    fits.fits[0].used_observations = {3, 4, 5, 6};
    const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, options);
    ASSERT_EQ(a.unavailable.size(), 1u);
    EXPECT_NE(a.unavailable[0].reason.find("below its fitted range"), std::string::npos)
        << a.unavailable[0].reason;
  }
  {  // a point the model was not fitted to (a retention point at RH 0.9999) does not widen
     // its range: the distribution stops at the highest fitted RH, 0.97
    fit::IsothermFits fits = TwoBranches();
    fitters::Observation retention;
    retention.x[0] = 0.9999;
    retention.y = 0.5;
    retention.sigma_y = 1e-3;
    fits.groups[1].observations.push_back(retention);
    fits.groups[1].point_indices.push_back(-1);
    fits.fits[1].used_observations = {0, 1, 2, 3, 4, 5, 6};
    const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, options);
    ASSERT_EQ(a.distributions.size(), 2u);
    EXPECT_NEAR(a.distributions[1].points.back().rh_fraction, 0.97, 1e-9);
  }
}

// The dry mass is the same at every step of a specimen: its error shifts every moisture content
// by -(1 + u) e (e its relative error) and the stepwise volume, a difference of moisture
// contents, only by -(u_top - u_bottom) e: relative u(V) / V = u(e) = 1 %. Drawn independently
// per point it would be about sqrt(2) (1 + u) u(e) / (u_top - u_bottom), many times larger.
TEST(AnalysePores, StepwiseDrawsTheDryMassOncePerDrawForAllSteps) {
  fit::IsothermFits fits = TwoBranches();
  fits.groups.resize(1);
  fits.fits.resize(1);
  fits.best_fit_per_group.resize(1);
  constexpr double kRelativeDryMassU = 0.01;
  reduce::ReducedIsotherms reduced;
  fit::FitGroup& group = fits.groups[0];
  for (std::size_t i = 0; i < group.observations.size(); ++i) {
    fitters::Observation& o = group.observations[i];
    o.sigma_x0 = 0.0;
    reduce::IsothermPoint point;
    point.dataset_id = "d";
    point.step_index = static_cast<int>(i);
    point.branch = group.branch;
    point.rh_fraction = o.x[0];
    point.moisture_kg_per_kg = o.y;
    point.u_moisture_kg_per_kg = (1.0 + o.y) * kRelativeDryMassU;
    point.specimen_point_indices = {static_cast<int>(reduced.specimen_points.size())};
    reduced.points.push_back(point);
    group.point_indices[i] = static_cast<int>(i);
    reduce::SpecimenPoint specimen;
    specimen.dataset_id = "d";
    specimen.specimen_id = "s1";
    specimen.step_index = point.step_index;
    specimen.branch = point.branch;
    reduce::BudgetLine line;  // c = -m / m_d^2 with m_d = 1 g, u(m_d) = 0.01 g
    line.quantity = "dry-mass method";
    line.standard_uncertainty = kRelativeDryMassU;
    line.sensitivity = -(1.0 + o.y);
    line.contribution = std::abs(line.sensitivity) * line.standard_uncertainty;
    specimen.moisture_budget.push_back(line);
    reduced.specimen_points.push_back(specimen);
  }
  PoreOptions options;
  options.band_draws = 2000;
  options.material_class = MaterialClass::kRigid;
  const PoreAnalysis a = AnalysePores(reduced, fits, options);
  const PoreDistribution* stepwise = nullptr;
  for (const PoreDistribution& d : a.distributions) {
    if (d.method == "stepwise") stepwise = &d;
  }
  ASSERT_NE(stepwise, nullptr);
  ASSERT_GT(stepwise->total_resolved_volume_m3_per_kg, 0.0);
  const double relative =
      stepwise->u_total_resolved_volume_m3_per_kg / stepwise->total_resolved_volume_m3_per_kg;
  // 2000 draws: the standard deviation is known to about 1.6 % of itself.
  EXPECT_NEAR(relative, kRelativeDryMassU, 0.1 * kRelativeDryMassU);
}

// Material class (pores.h, MaterialClass): swelling materials get no distribution, with the
// reason; an unstated class gets the caution on every distribution; rigid ones neither.
TEST(AnalysePores, MaterialClassDecidesThePoreSection) {
  PoreOptions options;
  options.band_draws = 0;
  options.material_class = MaterialClass::kSwelling;
  PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, TwoBranches(), options);
  EXPECT_EQ(a.applicability.section, PoreSection::kOmitted);
  EXPECT_TRUE(a.distributions.empty());
  EXPECT_EQ(a.unavailable.size(), 4u);
  ASSERT_FALSE(a.summary.warnings.empty());
  EXPECT_EQ(a.summary.warnings[0].message, a.applicability.reason);
  EXPECT_FALSE(a.surface_areas.empty());  // the other quantities stay
  const auto has_caution = [](const PoreAnalysis& x) {
    bool all = !x.distributions.empty();
    for (const PoreDistribution& d : x.distributions) {
      all = all && std::find(d.assumptions.begin(), d.assumptions.end(), x.applicability.reason) !=
                       d.assumptions.end();
    }
    return all;
  };
  options.material_class = MaterialClass::kNotStated;
  a = AnalysePores(reduce::ReducedIsotherms{}, TwoBranches(), options);
  EXPECT_EQ(a.applicability.section, PoreSection::kReportedWithCaution);
  EXPECT_EQ(a.distributions.size(), 4u);
  EXPECT_TRUE(has_caution(a));
  options.material_class = MaterialClass::kRigid;
  a = AnalysePores(reduce::ReducedIsotherms{}, TwoBranches(), options);
  EXPECT_EQ(a.applicability.section, PoreSection::kReported);
  EXPECT_TRUE(a.applicability.reason.empty());
  EXPECT_EQ(a.distributions.size(), 4u);
}

// The specimen term of the fit stage (specimens that differ do so at every step) is one shared
// part of the stepwise draws, not an independent error per point: with a 3 % relative specimen
// factor acting on every point and almost nothing else, every draw scales the whole isotherm, so
// the resolved pore volume carries about 3 % relative u (an independent draw per point would
// leave it the 1e-6 kg/kg of the points). 3 %: a choice of this test.
TEST(AnalysePores, StepwiseDrawsTheSpecimenTermOncePerDraw) {
  constexpr double kRelativeSpecimenU = 0.03;
  fit::IsothermFits fits = TwoBranches();
  for (fit::FitGroup& group : fits.groups) {
    for (fitters::Observation& o : group.observations) o.sigma_y = 1e-6;
    fit::SpecimenFactor factor;
    factor.dataset_id = "d1";
    factor.specimen_ids = {"S1", "S2", "S3"};
    factor.relative_standard_uncertainty = kRelativeSpecimenU;
    factor.weights.assign(group.observations.size(), 1.0);
    group.specimen_factors.push_back(factor);
  }
  PoreOptions options;
  options.band_draws = 400;
  const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, options);
  int stepwise = 0;
  for (const PoreDistribution& d : a.distributions) {
    if (d.method != "stepwise") continue;
    ++stepwise;
    ASSERT_GT(d.total_resolved_volume_m3_per_kg, 0.0);
    const double relative = d.u_total_resolved_volume_m3_per_kg / d.total_resolved_volume_m3_per_kg;
    // 400 draws: the standard deviation is known to about 1 / sqrt(2 * 400) = 3.5 % of itself.
    EXPECT_NEAR(relative, kRelativeSpecimenU, 0.15 * kRelativeSpecimenU);
    EXPECT_TRUE(std::any_of(d.assumptions.begin(), d.assumptions.end(), [](const std::string& s) {
      return s.find("1 shared part(s) drawn once per draw") != std::string::npos;
    }));
  }
  EXPECT_EQ(stepwise, 2);
}

// Reference-condition moisture contents carry the coverage factor of the fit they are read from
// (fit::CurveUncertainty: Welch-Satterthwaite nu_eff over the independent part and the specimen
// factors, Student-t k), not the nominal 2. Here a specimen factor with 2 degrees of freedom
// (three specimens) moves X_m and dominates the covariance: nu_eff just above 2, so k =
// t_p(2) at the p = 95.45 % of the nominal k = 2, 4.53 (JCGM 100:2008, Table G.2).
TEST(AnalysePores, ReferenceMoistureTakesTheFitsCoverageFactor) {
  fit::IsothermFits fits = TwoBranches();
  fits.coverage_factor = 2.0;
  for (fit::ModelFit& f : fits.fits) {
    fit::SpecimenSensitivity s;
    s.relative_standard_uncertainty = 0.05;
    s.degrees_of_freedom = 2.0;
    s.parameter_sensitivity = {f.result.parameters[0], 0.0, 0.0};  // X_m scales with the factor
    f.covariance_independent = 1e-4 * f.result.covariance;
    f.independent_dof = fitters::kInfinity;
    f.specimen_sensitivities = {s};
    const Eigen::Map<const Eigen::VectorXd> c(s.parameter_sensitivity.data(), 3);
    f.result.covariance = f.covariance_independent + 0.05 * 0.05 * c * c.transpose();
  }
  PoreOptions options;
  options.band_draws = 50;
  const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, options);
  ASSERT_EQ(a.reference_moisture.size(), options.reference_conditions.size());
  for (const ReferenceMoisture& r : a.reference_moisture) {
    const fit::DerivedUncertainty expected =
        fit::CurveUncertainty(fits, fits.fits[0], r.condition.rh_fraction);
    EXPECT_DOUBLE_EQ(r.coverage_factor, expected.coverage_factor);
    EXPECT_DOUBLE_EQ(r.effective_dof, expected.effective_dof);
    EXPECT_NEAR(r.effective_dof, 2.0, 0.05);
    EXPECT_NEAR(r.coverage_factor, 4.53, 0.005);
  }
}

// Model choice (quantities.h, ReadCurves): a second ranked adsorption model whose AICc exceeds
// the best one's by 2 ln 3 has Akaike weight 1/4 against 3/4 (w_i proportional to exp(-d_i / 2);
// Burnham & Anderson 2002, sec. 2.9), so the value read is the model average q = 3/4 q_gab + 1/4
// q_oswin and u^2 = sum_i w_i (u_i^2 + (q_i - q)^2) (their sec. 6.3, revised unconditional
// variance; from memory): between-model part 3/4 (d/4)^2 + 1/4 (3d/4)^2 = 3 d^2 / 16 with d =
// q_oswin - q_gab. Oswin u(a) = A [a / (1 - a)]^B (Oswin 1946), here A = 0.02, B = 0.6, with
// covariance 1e-8 I: u_oswin^2 = 1e-8 (r^(2B) + (A r^B ln r)^2), r = a / (1 - a) (delta method
// written out). With one ranked model the reading is GAB's alone. The hysteresis reads its
// adsorption branch the same way.
TEST(AnalysePores, ReadingsAverageOverTheRankedModels) {
  PoreOptions options;
  options.band_draws = 20;
  fit::IsothermFits fits = TwoBranches();
  fits.fits[0].result.statistics.aicc = 10.0;
  const PoreAnalysis one = AnalysePores(reduce::ReducedIsotherms{}, fits, options);
  fit::ModelFit oswin = MakeFit("oswin", 0, {0.02, 0.6}, 1e-8 * Eigen::MatrixXd::Identity(2, 2));
  oswin.rank = 2;
  oswin.result.statistics.aicc = 10.0 + 2.0 * std::log(3.0);
  fits.fits.push_back(oswin);
  const PoreAnalysis two = AnalysePores(reduce::ReducedIsotherms{}, fits, options);
  ASSERT_EQ(one.reference_moisture.size(), two.reference_moisture.size());
  ASSERT_FALSE(two.reference_moisture.empty());
  const auto oswin_value = [](double rh) { return 0.02 * std::pow(rh / (1.0 - rh), 0.6); };
  const auto oswin_u = [](double rh) {
    const double r = rh / (1.0 - rh);
    return std::sqrt(1e-8 *
                     (std::pow(r, 1.2) + std::pow(0.02 * std::pow(r, 0.6) * std::log(r), 2)));
  };
  for (std::size_t i = 0; i < two.reference_moisture.size(); ++i) {
    const ReferenceMoisture& a = one.reference_moisture[i];
    const ReferenceMoisture& b = two.reference_moisture[i];
    const double rh = b.condition.rh_fraction;
    const double q_gab = Gab(kAds[0], kAds[1], kAds[2], rh);
    const double d = oswin_value(rh) - q_gab;
    EXPECT_EQ(a.u_model_choice_kg_per_kg, 0.0);
    EXPECT_EQ(a.models_weighed, 1);
    EXPECT_NEAR(a.moisture_kg_per_kg, q_gab, 1e-12);
    EXPECT_EQ(b.models_weighed, 2);
    EXPECT_EQ(b.model_name, "gab");
    EXPECT_NEAR(b.moisture_kg_per_kg, q_gab + 0.25 * d, 1e-12);
    EXPECT_NEAR(b.u_model_choice_kg_per_kg, std::sqrt(3.0 / 16.0) * std::abs(d), 1e-12);
    const double within =
        0.75 * a.u_moisture_kg_per_kg * a.u_moisture_kg_per_kg + 0.25 * std::pow(oswin_u(rh), 2);
    EXPECT_NEAR(b.u_moisture_kg_per_kg, std::sqrt(within + 3.0 / 16.0 * d * d), 1e-12);
  }
  ASSERT_EQ(two.hysteresis.size(), 1u);
  ASSERT_FALSE(two.hysteresis[0].points.empty());
  for (const HysteresisPoint& p : two.hysteresis[0].points) {
    const double q_gab = Gab(kAds[0], kAds[1], kAds[2], p.rh_fraction);
    EXPECT_NEAR(p.adsorption_kg_per_kg, 0.75 * q_gab + 0.25 * oswin_value(p.rh_fraction), 1e-12);
    EXPECT_NEAR(p.desorption_kg_per_kg, Gab(kDes[0], kDes[1], kDes[2], p.rh_fraction), 1e-12);
  }
  EXPECT_NE(two.hysteresis[0].reason.find("model average over 2"), std::string::npos)
      << two.hysteresis[0].reason;
}

}  // namespace
}  // namespace sorbtrace::pores
