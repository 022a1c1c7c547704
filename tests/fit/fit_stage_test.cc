// Tests of the fit stage (pipeline/fit/fit_stage.h): grouping, point selection, parameter
// recovery, ranking, guard rails and determinism, on synthetic isotherms from a known GAB curve.
#include "pipeline/fit/fit_stage.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "tests/fit/fit_stage_fixture.h"
#include "tests/fit/fit_test_data.h"

namespace sorbtrace::fit {
namespace {

using testing::AddSpecimenTermToEveryPoint;
using testing::AdsorptionAndDesorption;
using testing::AppendBranch;
using testing::BranchSpec;
using testing::FindFit;
using testing::GabMoisture;
using testing::GabTruth;
using testing::NormalStream;
using testing::OneBranch;
using testing::QuickOptions;

bool HasFlag(const ModelFit& fit, const std::string& text) {
  return std::any_of(fit.flags.begin(), fit.flags.end(),
                     [&](const std::string& flag) { return flag.find(text) != std::string::npos; });
}

TEST(FitStageTest, RecoversGabParametersFromNoisySyntheticIsotherm) {
  // X_m = 0.05 kg/kg, C = 10, K = 0.8: a sigmoid Type II isotherm (0.24 < K <= 1 and
  // C >= 5.67 per T. P. Lewicki, Int. J. Food Sci. Technol. 32 (1997) 553, from memory).
  const GabTruth truth;
  const reduce::ReducedIsotherms reduced = OneBranch(12571);

  FitStageOptions options = QuickOptions({"gab"});
  options.bootstrap_resamples = 200;
  const IsothermFits fits = FitIsotherms(reduced, options);

  ASSERT_EQ(fits.groups.size(), 1u);
  const ModelFit& gab = FindFit(fits, 0, "gab");
  ASSERT_TRUE(gab.result.ok()) << gab.result.summary.message;
  ASSERT_EQ(gab.expanded_uncertainty.size(), 3u);
  const double expected[3] = {truth.monolayer_kg_per_kg, truth.c, truth.k};
  for (int i = 0; i < 3; ++i) {
    // Recovery within 3 expanded (k = 2) uncertainties: common practice for synthetic checks.
    EXPECT_NEAR(gab.result.parameters[i], expected[i], 3.0 * gab.expanded_uncertainty[i])
        << gab.result.estimates[i].name;
    EXPECT_GT(gab.expanded_uncertainty[i], 0.0);
    // U = k u with the reduce stage's coverage factor.
    EXPECT_DOUBLE_EQ(gab.expanded_uncertainty[i],
                     reduced.coverage_factor * gab.result.estimates[i].standard_error);
  }
  EXPECT_EQ(gab.band.size(), 50u);
  EXPECT_EQ(gab.bootstrap.parameter_draws.size() + gab.bootstrap.num_failed, 200u);
  EXPECT_EQ(gab.rank, 1);
  EXPECT_EQ(fits.best_fit_per_group[0], 0);
  EXPECT_EQ(fits.summary.fits_attempted, 1);
  EXPECT_EQ(fits.summary.fits_converged, 1);
}

TEST(FitStageTest, NoiseFreeGabFitReproducesEquationValues) {
  reduce::ReducedIsotherms reduced;
  NormalStream noise(1);
  BranchSpec spec;
  spec.noisy = false;
  AppendBranch(spec, &noise, &reduced);
  const IsothermFits fits = FitIsotherms(reduced, QuickOptions({"gab"}));
  const ModelFit& gab = FindFit(fits, 0, "gab");
  ASSERT_TRUE(gab.result.ok());
  ASSERT_EQ(gab.band.size(), 50u);  // 0, 0.02, ..., 0.98
  // GAB with X_m = 0.05, C = 10, K = 0.8, evaluated by hand from the GAB equation
  // (R. B. Anderson, J. Am. Chem. Soc. 68 (1946) 686, from memory): u(0.1) = 0.025278,
  // u(0.5) = 0.072464, u(0.9) = 0.171887.
  for (const auto& [rh, u] :
       {std::pair{0.1, 0.025278}, std::pair{0.5, 0.072464}, std::pair{0.9, 0.171887}}) {
    const auto at =
        std::find_if(gab.band.begin(), gab.band.end(),
                     [rh](const fitters::BandPoint& b) { return std::abs(b.x - rh) < 1e-9; });
    ASSERT_NE(at, gab.band.end()) << rh;
    EXPECT_NEAR(at->y, u, 5e-7) << rh;
  }
}

TEST(FitStageTest, RanksGabAboveBetOnFullRangeGabData) {
  const reduce::ReducedIsotherms reduced = OneBranch(4);

  // BET over the whole range, so both models see the same points and AICc is comparable.
  FitStageOptions options = QuickOptions({"bet", "gab"});
  options.bet_rh_min_fraction = 0.0;
  options.bet_rh_max_fraction = 1.0;
  const IsothermFits fits = FitIsotherms(reduced, options);
  const ModelFit& bet = FindFit(fits, 0, "bet");
  const ModelFit& gab = FindFit(fits, 0, "gab");
  ASSERT_TRUE(gab.result.ok());
  ASSERT_TRUE(bet.result.ok());
  // BET (K = 1) cannot follow the multilayer part of a K = 0.8 isotherm (Timmermann, Chirife
  // & Iglesias, J. Food Eng. 48 (2001) 19: GAB is the more general form).
  EXPECT_LT(gab.result.statistics.aicc, bet.result.statistics.aicc);
  EXPECT_EQ(gab.rank, 1);
  // Nor within the points' uncertainties: its chi-square check fails, so it is not ranked at
  // all (IsUsable, fit_stage.h).
  EXPECT_FALSE(GoodnessOfFitOf(bet).passed);
  EXPECT_EQ(bet.rank, 0);
  ASSERT_EQ(fits.best_fit_per_group.size(), 1u);
  EXPECT_EQ(fits.fits[fits.best_fit_per_group[0]].model_name, "gab");
}

TEST(FitStageTest, EngineFlagsAreCopiedIntoTheFit) {
  const reduce::ReducedIsotherms reduced = OneBranch(14);
  // BET widened beyond its default validity range 0.05..0.35: the engine flags the points
  // outside the model's range; the stage must pass every engine flag on.
  FitStageOptions options = QuickOptions({"bet"});
  options.bet_rh_max_fraction = 1.0;
  const IsothermFits fits = FitIsotherms(reduced, options);
  const ModelFit& bet = FindFit(fits, 0, "bet");
  ASSERT_FALSE(bet.result.summary.flags.empty());
  for (const std::string& flag : bet.result.summary.flags) {
    EXPECT_TRUE(HasFlag(bet, flag)) << flag;
  }
  EXPECT_TRUE(HasFlag(bet, "outside the model's range"));
}

TEST(FitStageTest, BetRestrictedToItsRangeAndNotRankedAgainstFullRangeFits) {
  reduce::ReducedIsotherms reduced;
  NormalStream noise(5);
  BranchSpec spec;
  spec.truth.k = 1.0;  // GAB with K = 1 is BET: consistent data for the Rouquerol checks
  spec.rh_max_fraction = 0.80;
  AppendBranch(spec, &noise, &reduced);

  FitStageOptions options = QuickOptions({"gab", "bet"});
  options.band_grid_points = 200;
  const IsothermFits fits = FitIsotherms(reduced, options);
  const ModelFit& bet = FindFit(fits, 0, "bet");
  ASSERT_TRUE(bet.result.ok()) << bet.result.summary.message;

  // Default BET range 0.05..0.35 (Sing et al., Pure Appl. Chem. 57 (1985) 603, widened to 0.35
  // for water: common practice).
  int expected_in_range = 0;
  for (const reduce::IsothermPoint& point : reduced.points) {
    if (point.rh_fraction >= 0.05 && point.rh_fraction <= 0.35) ++expected_in_range;
  }
  ASSERT_EQ(static_cast<int>(bet.used_observations.size()), expected_in_range);
  for (const int i : bet.used_observations) {
    const double rh = fits.groups[0].observations[i].x[0];
    EXPECT_GE(rh, 0.05);
    EXPECT_LE(rh, 0.35);
  }
  EXPECT_EQ(bet.result.statistics.num_observations, expected_in_range);
  ASSERT_EQ(bet.band.size(), 200u);
  EXPECT_DOUBLE_EQ(bet.band.front().x, 0.05);
  EXPECT_DOUBLE_EQ(bet.band.back().x, 0.35);

  // Four Rouquerol criteria (Rouquerol, Llewellyn & Rouquerol, Stud. Surf. Sci. Catal. 160
  // (2007) 49); on BET-shaped data with C = 10, 1/(sqrt(C) + 1) = 0.240 lies in the range.
  ASSERT_EQ(bet.consistency.size(), 4u);
  EXPECT_TRUE(bet.consistency[0].passed) << bet.consistency[0].detail;
  EXPECT_TRUE(bet.consistency[2].passed) << bet.consistency[2].detail;
  EXPECT_TRUE(bet.consistency[3].passed) << bet.consistency[3].detail;
  EXPECT_NEAR(bet.result.parameters[0], spec.truth.monolayer_kg_per_kg,
              3.0 * bet.expanded_uncertainty[0]);

  // Its AICc is over other points than GAB's, so it is not ranked against GAB.
  EXPECT_EQ(bet.rank, 0);
  EXPECT_TRUE(HasFlag(bet, "not ranked"));
  EXPECT_EQ(FindFit(fits, 0, "gab").rank, 1);
  EXPECT_TRUE(FindFit(fits, 0, "gab").consistency.empty());
}

// A model the design cannot support (fit_stage.h, ModelDesign: n >= p + 1) is not fitted, not
// ranked and not flagged as a failure; its design says why.
TEST(FitStageTest, TooFewPointsIsNotEvaluatedNotThrown) {
  reduce::ReducedIsotherms reduced;
  NormalStream noise(6);
  BranchSpec spec;
  spec.num_points = 3;
  spec.rh_min_fraction = 0.10;
  spec.rh_max_fraction = 0.30;
  AppendBranch(spec, &noise, &reduced);

  const IsothermFits fits = FitIsotherms(reduced, QuickOptions({"gab", "bet"}));
  const ModelFit& gab = FindFit(fits, 0, "gab");
  EXPECT_EQ(gab.result.summary.termination, fitters::FitTermination::kTooFewPoints);
  EXPECT_FALSE(gab.design.supported);
  EXPECT_EQ(gab.design.points, 3);
  EXPECT_EQ(gab.design.points_needed, 4);
  EXPECT_EQ(gab.result.summary.message,
            "not evaluated: n = 3 points in RH 0..1 for p = 3 parameters; at least 4 needed");
  EXPECT_TRUE(gab.flags.empty());
  EXPECT_EQ(gab.rank, 0);
  EXPECT_TRUE(gab.band.empty());
  EXPECT_FALSE(IsIdentified(gab));
  EXPECT_TRUE(fits.summary.warnings.empty());  // not a failure: no warning
  EXPECT_EQ(fits.summary.models_not_evaluated, 1);
  // BET (p = 2) still fits the three points (ISO 9277's minimum), but its AICc is undefined
  // (n - p - 1 = 0): it is not ranked.
  const ModelFit& bet = FindFit(fits, 0, "bet");
  EXPECT_TRUE(bet.result.ok());
  EXPECT_TRUE(bet.design.supported);
  EXPECT_EQ(bet.rank, 0);
  EXPECT_TRUE(HasFlag(bet, "not ranked: AICc undefined"));
  EXPECT_EQ(fits.summary.fits_attempted, 1);
  EXPECT_EQ(fits.summary.fits_converged, 1);
}

TEST(FitStageTest, NoConvergedModelInAnyGroupThrowsComputationError) {
  reduce::ReducedIsotherms reduced;
  NormalStream noise(7);
  BranchSpec spec;
  spec.num_points = 2;
  AppendBranch(spec, &noise, &reduced);
  EXPECT_THROW(FitIsotherms(reduced, QuickOptions({"gab"})), ComputationError);
  // No point at all.
  EXPECT_THROW(FitIsotherms(reduce::ReducedIsotherms{}, QuickOptions({"gab"})), ComputationError);
}

TEST(FitStageTest, SplitsAdsorptionAndDesorptionAndLeavesOutDrying) {
  reduce::ReducedIsotherms reduced;
  NormalStream noise(8);
  BranchSpec adsorption;
  adsorption.num_points = 12;
  AppendBranch(adsorption, &noise, &reduced);
  BranchSpec drying;
  drying.branch = ingest::Branch::kDrying;
  drying.num_points = 1;
  drying.rh_min_fraction = 0.0;
  AppendBranch(drying, &noise, &reduced);
  BranchSpec desorption;
  desorption.branch = ingest::Branch::kDesorption;
  desorption.num_points = 10;
  desorption.truth.monolayer_kg_per_kg = 0.06;  // hysteresis: more water on desorption
  AppendBranch(desorption, &noise, &reduced);

  const IsothermFits fits = FitIsotherms(reduced, QuickOptions({"gab"}));
  ASSERT_EQ(fits.groups.size(), 2u);
  EXPECT_EQ(fits.groups[0].branch, ingest::Branch::kAdsorption);
  EXPECT_EQ(fits.groups[1].branch, ingest::Branch::kDesorption);
  ASSERT_EQ(fits.groups[0].observations.size(), 12u);
  ASSERT_EQ(fits.groups[1].observations.size(), 10u);
  for (const FitGroup& group : fits.groups) {
    ASSERT_EQ(group.point_indices.size(), group.observations.size());
    for (std::size_t i = 0; i < group.observations.size(); ++i) {
      const reduce::IsothermPoint& point = reduced.points[group.point_indices[i]];
      EXPECT_EQ(point.branch, group.branch);
      EXPECT_EQ(group.observations[i].x[0], point.rh_fraction);
      EXPECT_EQ(group.observations[i].y, point.moisture_kg_per_kg);
      EXPECT_EQ(group.observations[i].sigma_y, point.u_moisture_kg_per_kg);
      EXPECT_EQ(group.observations[i].sigma_x0, point.u_rh_fraction);
    }
  }
  ASSERT_EQ(fits.fits.size(), 2u);
  EXPECT_EQ(fits.best_fit_per_group, (std::vector<int>{0, 1}));
  EXPECT_GT(fits.fits[1].result.parameters[0], fits.fits[0].result.parameters[0]);
}

TEST(FitStageTest, TwoTemperaturesGiveTwoGroupsAndCloseOnesMerge) {
  reduce::ReducedIsotherms reduced;
  NormalStream noise(9);
  BranchSpec cold;
  cold.dataset_id = "desiccator-23C";
  cold.num_points = 8;
  AppendBranch(cold, &noise, &reduced);
  BranchSpec cold_repeat = cold;  // 0.3 K warmer: same nominal temperature, merged
  cold_repeat.dataset_id = "repeat-23C";
  cold_repeat.temperature_K = 296.45;
  AppendBranch(cold_repeat, &noise, &reduced);
  BranchSpec warm = cold;
  warm.dataset_id = "vapour-35C";
  warm.temperature_K = 308.15;
  warm.truth.monolayer_kg_per_kg = 0.045;
  AppendBranch(warm, &noise, &reduced);

  const IsothermFits fits = FitIsotherms(reduced, QuickOptions({"gab"}));
  ASSERT_EQ(fits.groups.size(), 2u);
  EXPECT_EQ(fits.groups[0].observations.size(), 16u);
  EXPECT_EQ(fits.groups[1].observations.size(), 8u);
  EXPECT_NEAR(fits.groups[0].temperature_K, 296.30, 1e-9);  // mean of the merged points
  EXPECT_NEAR(fits.groups[1].temperature_K, 308.15, 1e-9);
  EXPECT_EQ(fits.best_fit_per_group.size(), 2u);
}

TEST(FitStageTest, RepeatedRunsAreIdentical) {
  const reduce::ReducedIsotherms reduced = AdsorptionAndDesorption(10);

  FitStageOptions options = QuickOptions({"gab", "bet"});
  options.bootstrap_resamples = 60;
  options.monte_carlo_draws = 40;
  const IsothermFits first = FitIsotherms(reduced, options);
  const IsothermFits second = FitIsotherms(reduced, options);
  ASSERT_EQ(first.fits.size(), second.fits.size());
  for (std::size_t f = 0; f < first.fits.size(); ++f) {
    const ModelFit& a = first.fits[f];
    const ModelFit& b = second.fits[f];
    EXPECT_EQ(a.result.parameters, b.result.parameters);
    EXPECT_EQ(a.expanded_uncertainty, b.expanded_uncertainty);
    EXPECT_EQ(a.bootstrap.parameter_draws, b.bootstrap.parameter_draws);
    EXPECT_EQ(a.monte_carlo.parameter_draws, b.monte_carlo.parameter_draws);
    ASSERT_EQ(a.band.size(), b.band.size());
    for (std::size_t i = 0; i < a.band.size(); ++i) {
      EXPECT_EQ(a.band[i].confidence_high, b.band[i].confidence_high);
    }
    EXPECT_EQ(a.flags, b.flags);
    EXPECT_EQ(a.rank, b.rank);
  }
  // Each (group, model) has its own random stream: the two GAB bootstraps differ.
  ASSERT_FALSE(first.fits[0].bootstrap.parameter_draws.empty());
  ASSERT_FALSE(first.fits[2].bootstrap.parameter_draws.empty());
  EXPECT_NE(first.fits[0].bootstrap.parameter_draws.front(),
            first.fits[2].bootstrap.parameter_draws.front());
  // Another base value changes the draws but not the fit.
  options.seed += 1;
  const IsothermFits third = FitIsotherms(reduced, options);
  EXPECT_EQ(third.fits[0].result.parameters, first.fits[0].result.parameters);
  EXPECT_NE(third.fits[0].bootstrap.parameter_draws, first.fits[0].bootstrap.parameter_draws);
}

TEST(FitStageTest, RetentionPointsJoinDesorptionForRetentionModelsOnly) {
  reduce::ReducedIsotherms reduced;
  NormalStream noise(11);
  BranchSpec desorption;
  desorption.branch = ingest::Branch::kDesorption;
  AppendBranch(desorption, &noise, &reduced);
  for (const double rh : {0.99, 0.995, 0.999}) {
    reduce::RetentionIsothermPoint point;
    point.specimen_id = "plate-1";
    point.equivalent_rh_fraction = rh;
    point.temperature_K = 296.15;
    point.moisture_kg_per_kg = 0.25;
    point.u_moisture_kg_per_kg = 0.005;
    point.branch = ingest::Branch::kDesorption;
    reduced.retention.push_back(point);
  }

  FitStageOptions options = QuickOptions({"gab", "vangenuchten"});
  const IsothermFits joint = FitIsotherms(reduced, options);
  ASSERT_EQ(joint.groups.size(), 1u);
  const FitGroup& group = joint.groups[0];
  ASSERT_EQ(group.observations.size(), 23u);
  EXPECT_EQ(std::count(group.point_indices.begin(), group.point_indices.end(), -1), 3);
  EXPECT_EQ(FindFit(joint, 0, "gab").used_observations.size(), 20u);
  EXPECT_EQ(FindFit(joint, 0, "vangenuchten").used_observations.size(), 23u);

  options.include_retention_points = false;
  const IsothermFits alone = FitIsotherms(reduced, options);
  EXPECT_EQ(alone.groups[0].observations.size(), 20u);
  EXPECT_EQ(FindFit(alone, 0, "vangenuchten").used_observations.size(), 20u);
}

TEST(FitStageTest, NonPositiveUncertaintyIsReplacedWithWarning) {
  reduce::ReducedIsotherms reduced;
  NormalStream noise(12);
  BranchSpec spec;
  spec.num_points = 10;
  AppendBranch(spec, &noise, &reduced);
  reduced.points[4].u_moisture_kg_per_kg = 0.0;
  double smallest = 1.0;
  for (const reduce::IsothermPoint& point : reduced.points) {
    if (point.u_moisture_kg_per_kg > 0.0) smallest = std::min(smallest, point.u_moisture_kg_per_kg);
  }
  const IsothermFits fits = FitIsotherms(reduced, QuickOptions({"gab"}));
  EXPECT_EQ(fits.groups[0].observations[4].sigma_y, smallest);
  EXPECT_FALSE(fits.summary.warnings.empty());
}

TEST(FitStageOptionsTest, RejectsBadSettingsWithTheFieldName) {
  std::string error;
  EXPECT_TRUE(FitStageOptions{}.IsValid(&error)) << error;

  FitStageOptions options;
  options.models = {"gab", "no_such_model"};
  EXPECT_FALSE(options.IsValid(&error));
  EXPECT_EQ(error.rfind("models: unknown model 'no_such_model' (known: ", 0), 0u) << error;

  options = FitStageOptions{};
  options.models = {"gab", "gab"};
  EXPECT_FALSE(options.IsValid(&error));
  EXPECT_EQ(error, "models: 'gab' is listed twice");

  options = FitStageOptions{};
  options.bet_rh_min_fraction = 0.4;
  EXPECT_FALSE(options.IsValid(&error));
  EXPECT_EQ(error,
            "bet_rh_min_fraction = 0.4 and bet_rh_max_fraction = 0.35 must satisfy "
            "0 <= min < max <= 1");

  options = FitStageOptions{};
  options.bootstrap_resamples = -1;
  EXPECT_FALSE(options.IsValid(&error));
  EXPECT_EQ(error, "bootstrap_resamples = -1 must be >= 0");

  const reduce::ReducedIsotherms reduced = OneBranch(13);
  EXPECT_THROW(FitIsotherms(reduced, options), InputError);
}

// The specimen term (fit_stage.h, SpecimenFactor): three specimens combined at every point,
// sigma_d = 3 % per specimen. The common factor (1 + mean delta), u = 3 % / sqrt(3), scales
// the GAB curve: X_m scales with it and C, K do not (GAB is proportional to X_m; a property
// of the equation, E. A. Guggenheim 1966 / R. B. Anderson 1946, from memory). So the covariance
// gains (X_m u)^2 in X_m alone, to the accuracy of the numerical sensitivity (central
// difference of two refits: second-order terms from the errors-in-variables weights).
TEST(FitStageTest, SpecimenTermScalesTheMonolayerOnly) {
  reduce::ReducedIsotherms reduced;
  BranchSpec spec;
  spec.num_points = 8;
  spec.noisy = false;
  NormalStream noise(1);
  AppendBranch(spec, &noise, &reduced);
  reduce::SpecimenTerm& term = AddSpecimenTermToEveryPoint({"A", "B", "C"}, 0.03, 2.0, &reduced);
  term.num_steps = spec.num_points;
  for (reduce::IsothermPoint& point : reduced.points) {
    point.u_specimen_common_kg_per_kg = point.moisture_kg_per_kg * 0.03 / std::sqrt(3.0);
  }
  const IsothermFits fits = FitIsotherms(reduced, QuickOptions({"gab"}));
  ASSERT_EQ(fits.groups[0].specimen_factors.size(), 1u);  // three specimens, one pattern
  EXPECT_NEAR(fits.groups[0].specimen_factors[0].relative_standard_uncertainty,
              0.03 * std::sqrt(3.0), 1e-12);
  const ModelFit& gab = FindFit(fits, 0, "gab");
  ASSERT_TRUE(gab.result.ok());
  ASSERT_EQ(gab.specimen_sensitivities.size(), 1u);
  const double x_m = gab.result.parameters[0];
  const double u_common = x_m * 0.03 / std::sqrt(3.0);
  const Eigen::MatrixXd added = gab.result.covariance - gab.covariance_independent;
  EXPECT_NEAR(added(0, 0), u_common * u_common, 1e-3 * u_common * u_common);
  for (int j = 1; j < 3; ++j) {
    EXPECT_NEAR(added(j, j), 0.0, 1e-6 * gab.covariance_independent(j, j)) << j;
  }
  // nu_eff of X_m by G.2b with nu = 2 for the specimen part and infinity for the rest.
  const double u2_ind = gab.covariance_independent(0, 0);
  const double u2 = u2_ind + u_common * u_common;
  const double nu = u2 * u2 / (std::pow(u_common, 4) / 2.0);
  EXPECT_NEAR(gab.effective_dof[0], nu, 2e-3 * nu);
  EXPECT_DOUBLE_EQ(gab.expanded_uncertainty[0], reduce::CoverageFactor(gab.effective_dof[0], 2.0) *
                                                    gab.result.estimates[0].standard_error);
  EXPECT_TRUE(std::isinf(gab.effective_dof[1]) || gab.effective_dof[1] > 1e6);
  // The curve: u^2 = g' C g with the same split; at 50 % RH the specimen part dominates here.
  const DerivedUncertainty at50 = CurveUncertainty(fits, gab, 0.5);
  EXPECT_GT(at50.coverage_factor, 2.0);
  EXPECT_GT(at50.standard_uncertainty,
            GabMoisture(GabTruth{}, 0.5) * 0.03 / std::sqrt(3.0) * (1.0 - 1e-3));
}

// The independent covariance is split by the degrees of freedom of its inputs (fit_stage.h,
// effective degrees of freedom). With the RH exact (no errors in variables) and every point's
// sigma_y the pooled Type A line (nu_e = 14), the linearised response C_A = sum_i a_i A_i A_i'
// is the weighted least-squares covariance (J'WJ)^-1 itself (a_i = sigma_y,i^2, A_i =
// C J_i / sigma_y,i^2: sum_i A_i A_i' sigma_i^2 = C J'WJ C = C), and C, which the specimen
// factor does not move, gets nu_eff = nu_e by G.2b. With a quarter of each sigma_y^2 pooled,
// C_A = C / 4 and nu_eff = nu_e / (1/4)^2 = 16 nu_e (JCGM 100:2008, G.4.1, Eq. G.2b; the rest
// Type B, infinite nu).
TEST(FitStageTest, OnlyThePooledTypeAPartOfTheIndependentCovarianceHasItsDegreesOfFreedom) {
  for (const double pooled_share : {1.0, 0.25}) {
    SCOPED_TRACE(pooled_share);
    reduce::ReducedIsotherms reduced;
    BranchSpec spec;
    spec.num_points = 8;
    spec.noisy = false;
    spec.u_rh_fraction = 0.0;
    NormalStream noise(1);
    AppendBranch(spec, &noise, &reduced);
    reduce::SpecimenTerm& term = AddSpecimenTermToEveryPoint({"A", "B", "C"}, 0.03, 2.0, &reduced);
    term.independent_variance_ratio = 2.0;  // phi > 1: the pooled Type A estimate
    term.residual_degrees_of_freedom = 14.0;
    term.independent_estimate = reduce::IndependentEstimate::kObserved;
    term.adopted_variance_ratio = 2.0;
    term.independent_degrees_of_freedom = 14.0;
    for (reduce::IsothermPoint& point : reduced.points) {
      point.u_pooled_scatter_kg_per_kg = std::sqrt(pooled_share) * point.u_independent_kg_per_kg;
    }
    const IsothermFits fits = FitIsotherms(reduced, QuickOptions({"gab"}));
    const ModelFit& gab = FindFit(fits, 0, "gab");
    ASSERT_TRUE(gab.result.ok());
    EXPECT_DOUBLE_EQ(gab.independent_dof, 14.0);
    ASSERT_EQ(gab.covariance_pooled_scatter.rows(), 3);
    for (int a = 0; a < 3; ++a) {
      for (int b = 0; b < 3; ++b) {
        const double expected = pooled_share * gab.covariance_independent(a, b);
        EXPECT_NEAR(
            gab.covariance_pooled_scatter(a, b), expected,
            1e-6 * std::sqrt(gab.covariance_independent(a, a) * gab.covariance_independent(b, b)))
            << a << "," << b;
      }
    }
    const double expected_nu = 14.0 / (pooled_share * pooled_share);
    EXPECT_NEAR(gab.effective_dof[1], expected_nu, 1e-3 * expected_nu);
    EXPECT_DOUBLE_EQ(
        gab.expanded_uncertainty[1],
        reduce::CoverageFactor(gab.effective_dof[1], 2.0) * gab.result.estimates[1].standard_error);
  }
}

// A specimen missing at a step: its factor acts on fewer points, so it is a factor of its own
// (weights 1 / n_i over the points it is one of the n_i specimens of).
TEST(FitStageTest, SpecimenMissingAtAStepGetsItsOwnFactor) {
  reduce::ReducedIsotherms reduced;
  BranchSpec spec;
  spec.num_points = 6;
  spec.noisy = false;
  NormalStream noise(1);
  AppendBranch(spec, &noise, &reduced);
  AddSpecimenTermToEveryPoint({"A", "B"}, 0.02, 1.0, &reduced);
  reduced.points.back().specimen_ids = {"A"};
  const IsothermFits fits = FitIsotherms(reduced, QuickOptions({"gab"}));
  const std::vector<SpecimenFactor>& factors = fits.groups[0].specimen_factors;
  ASSERT_EQ(factors.size(), 2u);
  EXPECT_EQ(factors[0].specimen_ids, std::vector<std::string>{"A"});
  EXPECT_DOUBLE_EQ(factors[0].weights[0], 0.5);
  EXPECT_DOUBLE_EQ(factors[0].weights[5], 1.0);
  EXPECT_EQ(factors[1].specimen_ids, std::vector<std::string>{"B"});
  EXPECT_DOUBLE_EQ(factors[1].weights[5], 0.0);
  EXPECT_DOUBLE_EQ(factors[1].relative_standard_uncertainty, 0.02);
  EXPECT_EQ(FindFit(fits, 0, "gab").specimen_sensitivities.size(), 2u);
}

// A fit group whose eight points are means over the same three specimens, with a specimen
// term of relative sd 5 % and nu_d degrees of freedom, fitted with GAB and 2,000 Monte Carlo
// draws.
ModelFit SpecimenTermMonteCarloFit(double degrees_of_freedom) {
  reduce::ReducedIsotherms reduced;
  BranchSpec spec;
  spec.num_points = 8;
  spec.noisy = false;
  NormalStream noise(1);
  AppendBranch(spec, &noise, &reduced);
  AddSpecimenTermToEveryPoint({"A", "B", "C"}, 0.05, degrees_of_freedom, &reduced);
  FitStageOptions options = QuickOptions({"gab"});
  options.monte_carlo_draws = 2000;
  const IsothermFits fits = FitIsotherms(reduced, options);
  return FindFit(fits, 0, "gab");
}

// The Monte Carlo draws carry the common factor: with a specimen term of infinite degrees of
// freedom (drawn normal) the spread of X_m over the draws matches the covariance with the
// specimen term (JCGM 101:2008, 8: validation of the GUM framework by the Monte Carlo method;
// tolerance: 2,000 draws give u from the percentile half-width to about 2.5 %, 10 % allowed).
TEST(FitStageTest, MonteCarloDrawsTheSpecimenFactor) {
  const ModelFit gab = SpecimenTermMonteCarloFit(fitters::kInfinity);
  ASSERT_TRUE(gab.result.ok());
  EXPECT_NEAR(gab.monte_carlo.parameter_u[0], gab.result.estimates[0].standard_error,
              0.1 * gab.result.estimates[0].standard_error);
  EXPECT_NEAR(gab.monte_carlo.parameter_u[1], gab.result.estimates[1].standard_error,
              0.1 * gab.result.estimates[1].standard_error);
}

// The 97.5 % point of a Z + b T_2 (Z standard normal, T_2 Student's t with two degrees of
// freedom, independent): P(a Z + b T_2 <= x) = integral over v in (0, 1) of
// Phi((x - b t_2(v)) / a), with the closed-form t_2 quantile t_2(v) = (2v - 1) / sqrt(2v(1 - v))
// (from memory; t_0.975(2) = 4.303 as in JCGM 100:2008 Table G.2), by the midpoint rule, then
// bisection. The exact distribution of the linearised X_m (JCGM 101:2008, 5.11: the GUM
// framework's Welch-Satterthwaite k approximates it).
double ConvolutionUpperPoint(double a, double b) {
  constexpr int kNodes = 20000;
  const auto cdf = [&](double x) {
    double sum = 0.0;
    for (int i = 0; i < kNodes; ++i) {
      const double v = (i + 0.5) / kNodes;
      const double t = (2.0 * v - 1.0) / std::sqrt(2.0 * v * (1.0 - v));
      sum += 0.5 * std::erfc(-(x - b * t) / (a * std::sqrt(2.0)));
    }
    return sum / kNodes;
  };
  double low = 0.0;
  double high = 10.0 * (a + b);
  for (int k = 0; k < 60; ++k) {
    const double mid = 0.5 * (low + high);
    (cdf(mid) < 0.975 ? low : high) = mid;
  }
  return 0.5 * (low + high);
}

// With nu_d = 2 the factor is drawn from the scaled and shifted t_2 (JCGM 101:2008, 6.4.9.7):
// the Monte Carlo 95 % interval of X_m matches the exact distribution of its linearisation,
// a Z + b T_2 with a the independent part (covariance_independent) and b = s u of the specimen
// factor (JCGM 101:2008, 8: validation against the law of propagation, here its exact
// convolution). Tolerance: the 2.5 % and 97.5 % points of 2,000 draws are known to about 5 %
// each here, and the linearisation is not exact: 10 % allowed. The normal draw this replaces
// gives 1.96 sqrt(a^2 + b^2), about 0.75 of it. C, which the common factor does not move, keeps
// normal draws: u from its percentiles matches its standard error.
TEST(FitStageTest, MonteCarloDrawsTheSpecimenFactorFromStudentT) {
  const ModelFit gab = SpecimenTermMonteCarloFit(2.0);
  ASSERT_TRUE(gab.result.ok());
  ASSERT_EQ(gab.specimen_sensitivities.size(), 1u);
  const SpecimenSensitivity& factor = gab.specimen_sensitivities[0];
  const double a = std::sqrt(gab.covariance_independent(0, 0));
  const double b = std::abs(factor.parameter_sensitivity[0]) * factor.relative_standard_uncertainty;
  const double expected = ConvolutionUpperPoint(a, b);
  const double half_width =
      0.5 * (gab.monte_carlo.parameter_high[0] - gab.monte_carlo.parameter_low[0]);
  EXPECT_NEAR(half_width, expected, 0.1 * expected);
  EXPECT_GT(half_width, 1.15 * 1.96 * std::hypot(a, b));  // wider than the normal draw's
  EXPECT_NEAR(gab.monte_carlo.parameter_u[1], gab.result.estimates[1].standard_error,
              0.1 * gab.result.estimates[1].standard_error);
}

}  // namespace
}  // namespace sorbtrace::fit
