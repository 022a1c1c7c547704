// Tests of the design rule and the identifiability predicate of the fit stage
// (pipeline/fit/fit_stage.h: ModelDesign, MinimumPoints, CheckIdentifiability, IsIdentified):
// a model the points cannot support is not fitted, ranked or flagged; a fit whose parameters
// its data do not determine is never ranked, so it never becomes a group's best fit.
#include <gtest/gtest.h>

#include <Eigen/Core>
#include <algorithm>
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

// Six points evenly spaced over 5..95 % RH: 5, 23, 41, ... % RH, so two lie in the BET range
// 5..35 % RH (the wood-fibre case).
reduce::ReducedIsotherms SixPoints() {
  BranchSpec spec;
  spec.num_points = 6;
  return testing::OneBranch(9277, spec);
}

// A converged result with the given values and standard uncertainties (diagonal covariance).
fitters::FitResult Converged(const std::vector<double>& values, const std::vector<double>& u) {
  fitters::FitResult r;
  r.parameters = values;
  r.summary.termination = fitters::FitTermination::kConverged;
  r.summary.covariance_available = true;
  const Eigen::Index p = static_cast<Eigen::Index>(values.size());
  r.covariance = Eigen::MatrixXd::Zero(p, p);
  for (Eigen::Index j = 0; j < p; ++j) {
    r.covariance(j, j) = u[static_cast<size_t>(j)] * u[static_cast<size_t>(j)];
    fitters::ParameterEstimate e;
    e.name = "p" + std::to_string(j + 1);
    e.value = values[static_cast<size_t>(j)];
    e.standard_error = u[static_cast<size_t>(j)];
    r.estimates.push_back(e);
  }
  return r;
}

// One residual degree of freedom: p + 1 points. For BET (p = 2) that is three points, the
// minimum of a multipoint BET determination (ISO 9277:2010, 7.2; from memory); Durner's
// bimodal curve (p = 6) needs seven.
TEST(ModelDesignTest, MinimumPointsLeaveOneResidualDegreeOfFreedom) {
  EXPECT_EQ(MinimumPoints(2), 3);
  EXPECT_EQ(MinimumPoints(3), 4);
  EXPECT_EQ(MinimumPoints(6), 7);
}

TEST(ModelDesignTest, UnsupportedModelsAreNotFittedRankedOrFlagged) {
  const IsothermFits fits = FitIsotherms(SixPoints(), QuickOptions({"gab", "bet", "durner2"}, 20));
  const ModelFit& bet = FindFit(fits, 0, "bet");
  EXPECT_FALSE(bet.design.supported);
  EXPECT_EQ(bet.design.points, 2);
  EXPECT_EQ(bet.design.points_needed, 3);
  EXPECT_TRUE(bet.design.restricted_range);
  EXPECT_DOUBLE_EQ(bet.design.rh_min_fraction, 0.05);
  EXPECT_DOUBLE_EQ(bet.design.rh_max_fraction, 0.35);
  // The machine reason (results.json "termination").
  EXPECT_EQ(bet.result.summary.message,
            "not evaluated: n = 2 points in RH 0.05..0.35 for p = 2 parameters; at least 3 "
            "needed");
  EXPECT_TRUE(bet.flags.empty());
  EXPECT_FALSE(bet.result.ok());
  EXPECT_EQ(bet.rank, 0);
  const ModelFit& durner = FindFit(fits, 0, "durner2");
  EXPECT_FALSE(durner.design.supported);
  EXPECT_EQ(durner.design.points, 6);
  EXPECT_EQ(durner.design.points_needed, 7);
  EXPECT_FALSE(durner.design.restricted_range);
  EXPECT_TRUE(durner.flags.empty());
  // Neither is a failure: no warning, not attempted.
  EXPECT_TRUE(fits.summary.warnings.empty());
  EXPECT_EQ(fits.summary.models_not_evaluated, 2);
  EXPECT_EQ(fits.summary.fits_attempted, 1);
  // GAB (p = 3, six points) is evaluated, identified and the group's best fit.
  const ModelFit& gab = FindFit(fits, 0, "gab");
  EXPECT_TRUE(gab.design.supported);
  EXPECT_TRUE(IsIdentified(gab)) << IdentifiabilityOf(gab).reason;
  EXPECT_EQ(gab.rank, 1);
  ASSERT_EQ(fits.best_fit_per_group.size(), 1u);
  EXPECT_EQ(fits.fits[static_cast<size_t>(fits.best_fit_per_group[0])].model_name, "gab");
}

TEST(IdentifiabilityTest, CovarianceBoundsAndRelativeUncertaintyDecide) {
  // Every parameter known to half its value: identifiable.
  EXPECT_TRUE(CheckIdentifiability(Converged({0.05, 10.0}, {0.025, 5.0}), 1.0).identifiable);
  // u equal to the value is the limit itself (<= 100 %): still identifiable.
  EXPECT_TRUE(CheckIdentifiability(Converged({0.05, 10.0}, {0.01, 10.0}), 1.0).identifiable);
  // u = 140 % of the value (the "n1 = 0 ± 140" kind): not identifiable, named.
  const Identifiability wide = CheckIdentifiability(Converged({0.05, 10.0}, {0.01, 14.0}), 1.0);
  EXPECT_FALSE(wide.identifiable);
  EXPECT_EQ(wide.reason,
            "parameter p2 has a standard uncertainty of 140 % of its value (more "
            "than 100 %)");
  // A parameter of value 0 is not determined by any finite uncertainty.
  EXPECT_FALSE(CheckIdentifiability(Converged({0.0, 10.0}, {0.01, 1.0}), 1.0).identifiable);
  // No covariance.
  fitters::FitResult no_covariance = Converged({0.05, 10.0}, {0.01, 1.0});
  no_covariance.summary.covariance_available = false;
  const Identifiability none = CheckIdentifiability(no_covariance, 1.0);
  EXPECT_FALSE(none.identifiable);
  EXPECT_EQ(none.reason, "the parameter covariance could not be computed");
  // A parameter at a bound.
  fitters::FitResult bound = Converged({0.05, 1.0}, {0.01, 0.1});
  bound.estimates[1].at_bound = true;
  const Identifiability at_bound = CheckIdentifiability(bound, 1.0);
  EXPECT_FALSE(at_bound.identifiable);
  EXPECT_NE(at_bound.reason.find("p2 = 1.00 sits at a bound"), std::string::npos)
      << at_bound.reason;
  // Not converged.
  fitters::FitResult failed = Converged({0.05, 10.0}, {0.01, 1.0});
  failed.summary.termination = fitters::FitTermination::kNoConvergence;
  EXPECT_FALSE(CheckIdentifiability(failed, 1.0).identifiable);
}

// IsIdentified applies the limit the fit stage judged the fit with, and the design.
TEST(IdentifiabilityTest, IsIdentifiedUsesTheFitsLimitAndDesign) {
  ModelFit fit;
  fit.result = Converged({0.05, 10.0}, {0.01, 6.0});  // 60 %
  EXPECT_TRUE(IsIdentified(fit));
  fit.max_relative_parameter_uncertainty = 0.5;
  EXPECT_FALSE(IsIdentified(fit));
  EXPECT_NE(IdentifiabilityOf(fit).reason.find("more than 50 %"), std::string::npos);
  fit.max_relative_parameter_uncertainty = 1.0;
  fit.design.supported = false;
  fit.design.reason = "not evaluated: n = 2 points";
  EXPECT_FALSE(IsIdentified(fit));
  EXPECT_EQ(IdentifiabilityOf(fit).reason, "not evaluated: n = 2 points");
}

// A fit that is not identifiable is never ranked, so it is never a group's best fit (the
// headline values and the pores stage read the best fit). With a limit no real fit meets,
// no fit of the group is ranked and the group has no best fit.
TEST(IdentifiabilityTest, NotIdentifiableFitsAreNeverRanked) {
  FitStageOptions options = QuickOptions({"gab", "oswin"}, 20);
  options.max_relative_parameter_uncertainty = 1e-12;
  const IsothermFits fits = FitIsotherms(SixPoints(), options);
  for (const ModelFit& fit : fits.fits) {
    ASSERT_TRUE(fit.result.ok()) << fit.model_name;
    EXPECT_FALSE(IsIdentified(fit)) << fit.model_name;
    EXPECT_EQ(fit.rank, 0) << fit.model_name;
    EXPECT_TRUE(std::any_of(fit.flags.begin(), fit.flags.end(), [](const std::string& f) {
      return f.rfind("not ranked: not identifiable from these data", 0) == 0;
    })) << fit.model_name;
  }
  ASSERT_EQ(fits.best_fit_per_group.size(), 1u);
  EXPECT_EQ(fits.best_fit_per_group[0], -1);
  // With the default limit the same data rank both.
  const IsothermFits ranked = FitIsotherms(SixPoints(), QuickOptions({"gab", "oswin"}, 20));
  EXPECT_GE(ranked.best_fit_per_group[0], 0);
}

TEST(IdentifiabilityTest, LimitMustBePositive) {
  FitStageOptions options;
  options.max_relative_parameter_uncertainty = 0.0;
  std::string error;
  EXPECT_FALSE(options.IsValid(&error));
  EXPECT_NE(error.find("max_relative_parameter_uncertainty"), std::string::npos);
}

}  // namespace
}  // namespace sorbtrace::fit
