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

class NistTest : public ::testing::TestWithParam<Case> {};

TEST_P(NistTest, CertifiedValues) {
  const Case& c = GetParam();
  const Problem& problem = FindProblem(c.name);
  const Dataset data = ReadDataset(
      std::string(SORBTRACE_SOURCE_DIR) + "/tests/data/nist/" + c.name + ".dat", c.name);
  const std::unique_ptr<Model> model = problem.make_model();
  ASSERT_EQ(model->num_parameters(), data.num_parameters);
  const FitResult fit = FitModel(*model, data.observations, ModelContext{},
                                 NistOptions(c.start == 1 ? data.start1 : data.start2));
  double min_lre_value = 11.0, min_lre_sd = 11.0;
  for (int j = 0; j < data.num_parameters; ++j) {
    const std::size_t k = static_cast<std::size_t>(j);
    if (!fit.parameters.empty()) {
      min_lre_value = std::min(min_lre_value,
                               LogRelativeError(fit.parameters[k], data.certified_values[k]));
    } else {
      min_lre_value = 0.0;
    }
    if (fit.estimates.size() > k) {
      min_lre_sd = std::min(min_lre_sd, LogRelativeError(fit.estimates[k].standard_error,
                                                          data.certified_std_devs[k]));
    } else {
      min_lre_sd = 0.0;
    }
  }
  const double lre_rss = LogRelativeError(fit.statistics.weighted_ssr, data.certified_rss);
  std::printf("NIST %-9s start %d: %-14s iterations %4d  LRE values %5.2f  sd %5.2f  rss %5.2f\n",
              c.name.c_str(), c.start, fit.ok() ? "converged" : "NOT CONVERGED",
              fit.summary.iterations, min_lre_value, min_lre_sd, lre_rss);
  EXPECT_TRUE(fit.ok()) << fit.summary.BriefReport();
  EXPECT_GE(min_lre_value, 6.0);
  EXPECT_GE(min_lre_sd, 4.0);
}

INSTANTIATE_TEST_SUITE_P(StRD, NistTest, ::testing::ValuesIn(AllCases()),
                         [](const ::testing::TestParamInfo<Case>& param_info) {
                           return param_info.param.name + "_start" + std::to_string(param_info.param.start);
                         });

}  // namespace
}  // namespace sorbtrace::fitters::nist
