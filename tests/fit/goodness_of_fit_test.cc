// Tests of the goodness-of-fit gate of the fit stage (pipeline/fit/fit_stage.h: GoodnessOfFitOf,
// IsUsable, kMinGoodnessOfFitPValue): a fit whose own chi-square check (absolute weights) or runs
// test (relative weights) fails is not ranked, so it is never a group's best model; a group left
// without a ranked fit says why (IsothermFits::no_best_fit_reason).
#include <gtest/gtest.h>

#include <Eigen/Core>
#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "pipeline/fit/fit_stage.h"
#include "tests/fit/fit_stage_fixture.h"
#include "tests/fit/fit_test_data.h"

namespace sorbtrace::fit {
namespace {

using testing::BranchSpec;
using testing::FindFit;
using testing::QuickOptions;

// An identified fit (two parameters known to 10 %) with the given p-values.
ModelFit FitWithPValues(fitters::WeightConvention weights, double chi_square_p, double runs_p) {
  ModelFit fit;
  fit.result.parameters = {0.05, 10.0};
  fit.result.summary.termination = fitters::FitTermination::kConverged;
  fit.result.summary.covariance_available = true;
  fit.result.covariance = Eigen::MatrixXd::Zero(2, 2);
  fit.result.covariance(0, 0) = 0.005 * 0.005;
  fit.result.covariance(1, 1) = 1.0;
  fit.result.estimates.resize(2);
  fit.result.weight_convention = weights;
  fit.result.statistics.chi_square_p_value = chi_square_p;
  fit.result.statistics.runs_test_p_value = runs_p;
  return fit;
}

// The gate sits at p = 0.001 (fit_stage.h): p at the limit passes, below it fails, and the
// reason names the test, p and the limit. A NaN p (no degrees of freedom) fails.
TEST(GoodnessOfFitTest, ChiSquareUnderAbsoluteWeightsDecides) {
  EXPECT_EQ(kMinGoodnessOfFitPValue, 1e-3);
  using fitters::WeightConvention;
  EXPECT_TRUE(GoodnessOfFitOf(FitWithPValues(WeightConvention::kAbsolute, 1e-3, 0.0)).passed);
  EXPECT_TRUE(IsUsable(FitWithPValues(WeightConvention::kAbsolute, 0.5, 0.0)));
  // The held-out case: Oswin on four desorption points, chi-square p = 7.1e-49.
  const ModelFit oswin_like = FitWithPValues(WeightConvention::kAbsolute, 7.1e-49, 1.0);
  const GoodnessOfFit bad = GoodnessOfFitOf(oswin_like);
  EXPECT_FALSE(bad.passed);
  EXPECT_EQ(bad.test, "chi-square");
  EXPECT_EQ(bad.reason, "fails its chi-square check (p = 7.1 × 10⁻⁴⁹, below 0.001)");
  EXPECT_TRUE(IsIdentified(oswin_like));
  EXPECT_FALSE(IsUsable(oswin_like));
  EXPECT_FALSE(GoodnessOfFitOf(FitWithPValues(WeightConvention::kAbsolute, 9.99e-4, 1.0)).passed);
  EXPECT_FALSE(GoodnessOfFitOf(FitWithPValues(WeightConvention::kAbsolute,
                                              std::numeric_limits<double>::quiet_NaN(), 1.0))
                   .passed);
}

// Under relative weights chi-square tests nothing (the variance is estimated from the
// residuals): the runs test decides, and the chi-square p is not read.
TEST(GoodnessOfFitTest, RunsTestUnderRelativeWeightsDecides) {
  using fitters::WeightConvention;
  EXPECT_TRUE(GoodnessOfFitOf(FitWithPValues(WeightConvention::kRelative, 1e-40, 0.2)).passed);
  const GoodnessOfFit bad = GoodnessOfFitOf(FitWithPValues(WeightConvention::kRelative, 0.9, 1e-4));
  EXPECT_FALSE(bad.passed);
  EXPECT_EQ(bad.test, "runs test");
}

// Four desorption points on a GAB curve (X_m 0.05, C 10, K 0.8), 30..90 % RH, as the held-out
// job had: GAB (p = 3) is evaluated but its AICc is undefined (n < p + 2), so only the
// two-parameter models can be ranked.
reduce::ReducedIsotherms FourDesorptionPoints(double u_relative) {
  BranchSpec spec;
  spec.branch = ingest::Branch::kDesorption;
  spec.num_points = 4;
  spec.rh_min_fraction = 0.30;
  spec.rh_max_fraction = 0.90;
  spec.u_absolute_kg_per_kg = 1e-5;
  spec.u_relative = u_relative;
  spec.u_rh_fraction = 0.001;
  spec.noisy = false;
  return testing::OneBranch(4, spec);
}

// With uncertainties of 0.1 % of the value Oswin misses the GAB points by many standard
// uncertainties: its chi-square check fails, it is not ranked and the group has no best model;
// the reason names both models. With 20 % uncertainties the same Oswin fit passes and is best.
TEST(GoodnessOfFitTest, FailingFitIsNeverTheBestModel) {
  const IsothermFits tight =
      FitIsotherms(FourDesorptionPoints(0.001), QuickOptions({"gab", "oswin"}, 20));
  const ModelFit& oswin = FindFit(tight, 0, "oswin");
  ASSERT_TRUE(oswin.result.ok());
  EXPECT_TRUE(IsIdentified(oswin));
  EXPECT_LT(oswin.result.statistics.chi_square_p_value, kMinGoodnessOfFitPValue);
  EXPECT_FALSE(IsUsable(oswin));
  EXPECT_EQ(oswin.rank, 0);
  bool flagged = false;
  for (const std::string& flag : oswin.flags) {
    flagged = flagged || flag.rfind("not ranked: fails its chi-square check (p = ", 0) == 0;
  }
  EXPECT_TRUE(flagged);
  EXPECT_EQ(FindFit(tight, 0, "gab").rank, 0);
  ASSERT_EQ(tight.best_fit_per_group.size(), 1u);
  EXPECT_EQ(tight.best_fit_per_group[0], -1);
  ASSERT_EQ(tight.no_best_fit_reason.size(), 1u);
  const std::string& why = tight.no_best_fit_reason[0];
  EXPECT_NE(why.find("(GAB): AICc undefined (it needs n >= p + 2 points)"), std::string::npos)
      << why;
  EXPECT_NE(why.find("Oswin: fails its chi-square check"), std::string::npos) << why;

  const IsothermFits loose =
      FitIsotherms(FourDesorptionPoints(0.2), QuickOptions({"gab", "oswin"}, 20));
  const ModelFit& oswin_loose = FindFit(loose, 0, "oswin");
  EXPECT_GE(oswin_loose.result.statistics.chi_square_p_value, kMinGoodnessOfFitPValue);
  EXPECT_EQ(oswin_loose.rank, 1);
  ASSERT_EQ(loose.best_fit_per_group.size(), 1u);
  EXPECT_GE(loose.best_fit_per_group[0], 0);
  EXPECT_EQ(loose.no_best_fit_reason[0], "");
}

// A fit that fails its goodness-of-fit check states no result, so it is not resampled
// (fit_stage.cc): no bootstrap or Monte Carlo draws, and the reason in not_formed; the fit that
// passes on the same points is resampled.
TEST(GoodnessOfFitTest, FailingFitIsNotResampled) {
  FitStageOptions options = QuickOptions({"gab", "oswin"}, 20);
  options.bootstrap_resamples = 40;
  options.monte_carlo_draws = 40;
  const IsothermFits tight = FitIsotherms(FourDesorptionPoints(0.001), options);
  const ModelFit& oswin = FindFit(tight, 0, "oswin");
  ASSERT_FALSE(IsUsable(oswin));
  EXPECT_TRUE(oswin.bootstrap.parameter_draws.empty());
  EXPECT_TRUE(oswin.monte_carlo.parameter_draws.empty());
  EXPECT_NE(oswin.bootstrap.not_formed.find("fails its chi-square check"), std::string::npos)
      << oswin.bootstrap.not_formed;
  EXPECT_EQ(oswin.monte_carlo.not_formed, oswin.bootstrap.not_formed);
  const IsothermFits loose = FitIsotherms(FourDesorptionPoints(0.2), options);
  const ModelFit& oswin_loose = FindFit(loose, 0, "oswin");
  ASSERT_TRUE(IsUsable(oswin_loose));
  EXPECT_EQ(oswin_loose.bootstrap.parameter_draws.size() + oswin_loose.bootstrap.num_failed, 40u);
  EXPECT_TRUE(oswin_loose.bootstrap.not_formed.empty());
}

}  // namespace
}  // namespace sorbtrace::fit
