// NIST StRD nonlinear regression: all 27 datasets from both certified starts. Certified
// values: NIST StRD, Statistical Engineering Division, ITL (tests/data/nist/*.dat, lines
// 41-60). Pass rule: parameters to LRE >= 6, standard deviations to LRE >= 4 (the README of
// the StRD suite calls LRE >= 4 the common rule and 6 the strict one).
#include <gtest/gtest.h>

#include <algorithm>
#include <cstdio>
#include <string>

#include "fitters/fitter.h"
#include "tests/fitters/nist_models.h"

namespace sorbtrace::fitters::nist {
namespace {

struct Case {
  std::string name;
  int start = 1;
};

std::vector<Case> AllCases() {
  std::vector<Case> cases;
  for (const Problem& problem : AllProblems()) {
    cases.push_back({problem.name, 1});
    cases.push_back({problem.name, 2});
  }
  return cases;
}

const Problem& FindProblem(const std::string& name) {
  for (const Problem& problem : AllProblems()) {
    if (problem.name == name) return problem;
  }
  throw std::runtime_error("unknown problem " + name);
}

FitOptions NistOptions(const std::vector<double>& start) {
  FitOptions options;
  options.starting_points = {start};
  options.num_multistarts = 0;
  options.weights = WeightConvention::kRelative;  // sigma 1: NIST's s^2 (J'J)^-1
  options.use_bounds = false;
  options.max_iterations = 1000;
  options.function_tolerance = 1e-16;
  options.gradient_tolerance = 1e-16;
  options.parameter_tolerance = 1e-16;
  return options;
}

// The pass bar of one dataset/start and why it differs from the general rule.
struct Bar {
  double value_lre = 6.0;
  double sd_lre = 4.0;
  int num_multistarts = 0;  // 0: only the certified start
  const char* why = "";
};

Bar BarFor(const std::string& name, int start) {
  Bar bar;
  if (name == "Lanczos1") {
    // Certified RSS is 1.4e-25: the residuals (~8e-14) are at the rounding level of f in
    // double precision, so s and hence the standard deviations carry only ~3 digits (the
    // StRD README says as much). Parameters are still checked at LRE >= 6.
    bar.sd_lre = 2.0;
    bar.why = "residuals at double rounding level";
  }
  if (name == "BoxBOD" && start == 1) {
    // From start 1 (1, 1) the first Levenberg-Marquardt steps throw b2 onto the plateau
    // exp(-b2 x) ~ 0 where the objective is flat: a stationary point at infinity. The single
    // start run is checked below to be FLAGGED; the bar is checked with the engine's default
    // deterministic multi-starts (4 perturbations of start 1).
    bar.num_multistarts = FitOptions{}.num_multistarts;
    bar.why = "single start ends on the b2 -> infinity plateau (flagged)";
  }
  return bar;
}

class NistTest : public ::testing::TestWithParam<Case> {};

TEST_P(NistTest, CertifiedValues) {
  const Case& c = GetParam();
  const Problem& problem = FindProblem(c.name);
  const Dataset data = ReadDataset(
      std::string(SORBTRACE_SOURCE_DIR) + "/tests/data/nist/" + c.name + ".dat", c.name);
  const std::unique_ptr<Model> model = problem.make_model();
  ASSERT_EQ(model->num_parameters(), data.num_parameters);
  ASSERT_EQ(data.observations.size(), data.observations.size());
  const Bar bar = BarFor(c.name, c.start);
  FitOptions options = NistOptions(c.start == 1 ? data.start1 : data.start2);
  options.num_multistarts = bar.num_multistarts;
  const FitResult fit = FitModel(*model, data.observations, ModelContext{}, options);
  ASSERT_EQ(fit.parameters.size(), data.certified_values.size()) << fit.summary.BriefReport();
  ASSERT_EQ(fit.estimates.size(), data.certified_values.size());
  double min_lre_value = 11.0, min_lre_sd = 11.0;
  for (std::size_t k = 0; k < data.certified_values.size(); ++k) {
    min_lre_value =
        std::min(min_lre_value, LogRelativeError(fit.parameters[k], data.certified_values[k]));
    min_lre_sd = std::min(
        min_lre_sd, LogRelativeError(fit.estimates[k].standard_error, data.certified_std_devs[k]));
  }
  const double lre_rss = LogRelativeError(fit.statistics.weighted_ssr, data.certified_rss);
  const double lre_sd = LogRelativeError(fit.statistics.residual_std, data.certified_residual_sd);
  std::printf(
      "NIST %-9s start %d: %-13s starts %2d iterations %4d  min LRE: values %5.2f  sd %5.2f  "
      "rss %5.2f  s %5.2f %s\n",
      c.name.c_str(), c.start, fit.ok() ? "converged" : "NOT CONVERGED", fit.summary.starts_tried,
      fit.summary.iterations, min_lre_value, min_lre_sd, lre_rss, lre_sd, bar.why);
  EXPECT_TRUE(fit.ok()) << fit.summary.BriefReport();
  EXPECT_TRUE(fit.summary.covariance_available) << fit.summary.BriefReport();
  EXPECT_GE(min_lre_value, bar.value_lre);
  EXPECT_GE(min_lre_sd, bar.sd_lre);
  if (c.name != "Lanczos1") {
    EXPECT_GE(lre_rss, 6.0);
    EXPECT_GE(lre_sd, 6.0);
  }
}

// BoxBOD from start 1 with a single start: the engine must not present the plateau point
// (b2 -> infinity) as a clean fit; it flags that b2 has no effect and withholds the covariance.
TEST(NistKnownHard, BoxBodStart1SingleStartIsFlagged) {
  const Dataset data =
      ReadDataset(std::string(SORBTRACE_SOURCE_DIR) + "/tests/data/nist/BoxBOD.dat", "BoxBOD");
  const std::unique_ptr<Model> model = FindProblem("BoxBOD").make_model();
  const FitResult fit =
      FitModel(*model, data.observations, ModelContext{}, NistOptions(data.start1));
  const bool clean = fit.ok() && fit.summary.covariance_available;
  if (clean) {  // if a future solver reaches the certified point, it must be right
    EXPECT_GE(LogRelativeError(fit.parameters[1], data.certified_values[1]), 6.0);
  } else {
    EXPECT_FALSE(fit.summary.flags.empty()) << fit.summary.BriefReport();
  }
}

// MGH10 from start 1 needs ~350 iterations; capped at 5 the engine must say it did not
// converge (and still return the best point reached), not claim success.
TEST(NistKnownHard, IterationCapIsReportedAsNoConvergence) {
  const Dataset data =
      ReadDataset(std::string(SORBTRACE_SOURCE_DIR) + "/tests/data/nist/MGH10.dat", "MGH10");
  const std::unique_ptr<Model> model = FindProblem("MGH10").make_model();
  FitOptions options = NistOptions(data.start1);
  options.max_iterations = 5;
  const FitResult fit = FitModel(*model, data.observations, ModelContext{}, options);
  EXPECT_EQ(fit.summary.termination, FitTermination::kNoConvergence);
  EXPECT_FALSE(fit.ok());
  ASSERT_EQ(fit.parameters.size(), 3u);
  bool flagged = false;
  for (const std::string& f : fit.summary.flags) flagged |= f.find("no convergence") == 0;
  EXPECT_TRUE(flagged) << fit.summary.BriefReport();
  ASSERT_EQ(fit.summary.starts.size(), 1u);
  EXPECT_FALSE(fit.summary.starts[0].converged);
}

INSTANTIATE_TEST_SUITE_P(StRD, NistTest, ::testing::ValuesIn(AllCases()),
                         [](const ::testing::TestParamInfo<Case>& param_info) {
                           return param_info.param.name + "_start" +
                                  std::to_string(param_info.param.start);
                         });

}  // namespace
}  // namespace sorbtrace::fitters::nist
