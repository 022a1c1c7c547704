// The fit stage's threads setting (FitStageOptions::threads, ThreadsToUse): the whole fit result,
// resampled draws and intervals included, is the same for one thread and two.
#include <gtest/gtest.h>

#include <cstring>
#include <thread>
#include <vector>

#include "pipeline/fit/fit_stage.h"
#include "tests/fit/fit_stage_fixture.h"

namespace sorbtrace::fit {
namespace {

bool SameBits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() &&
         (a.empty() || std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0);
}

bool SameDraws(const fitters::ResampleResult& a, const fitters::ResampleResult& b) {
  if (a.parameter_draws.size() != b.parameter_draws.size()) return false;
  for (std::size_t d = 0; d < a.parameter_draws.size(); ++d) {
    if (!SameBits(a.parameter_draws[d], b.parameter_draws[d])) return false;
  }
  return SameBits(a.parameter_low, b.parameter_low) &&
         SameBits(a.parameter_high, b.parameter_high) &&
         SameBits(a.studentized_low, b.studentized_low) &&
         SameBits(a.studentized_high, b.studentized_high) && a.num_failed == b.num_failed &&
         a.refit_iterations == b.refit_iterations;
}

TEST(FitThreadsTest, ThreadsToUse) {
  EXPECT_EQ(ThreadsToUse(1), 1);
  EXPECT_EQ(ThreadsToUse(3), 3);
  const int automatic = ThreadsToUse(0);
  EXPECT_GE(automatic, 1);
  EXPECT_LE(automatic, kMaxAutomaticThreads);
  if (std::thread::hardware_concurrency() >= 2) {
    EXPECT_EQ(automatic, kMaxAutomaticThreads);
  }
  FitStageOptions options;
  options.threads = -1;
  EXPECT_FALSE(options.IsValid(nullptr));
}

// Two branches of a noisy synthetic GAB isotherm with RH errors and a specimen term, four
// models, bootstrap and Monte Carlo: one thread and two give the same fits bit for bit.
TEST(FitThreadsTest, OneAndTwoThreadsGiveIdenticalFits) {
  reduce::ReducedIsotherms reduced = testing::AdsorptionAndDesorption(7);
  testing::AddSpecimenTermToEveryPoint({"A", "B", "C"}, 0.03, 2.0, &reduced);
  FitStageOptions options;
  // (fits that fail their goodness-of-fit check are not resampled: four models so that at least
  // three resampled fits are compared)
  options.models = {"gab", "oswin", "henderson", "peleg"};
  options.bootstrap_resamples = 80;
  options.monte_carlo_draws = 80;
  options.band_grid_points = 20;
  options.threads = 1;
  const IsothermFits one = FitIsotherms(reduced, options);
  options.threads = 2;
  const IsothermFits two = FitIsotherms(reduced, options);
  ASSERT_EQ(one.fits.size(), two.fits.size());
  int resampled = 0;
  for (std::size_t f = 0; f < one.fits.size(); ++f) {
    const ModelFit& a = one.fits[f];
    const ModelFit& b = two.fits[f];
    EXPECT_TRUE(SameBits(a.result.parameters, b.result.parameters));
    EXPECT_TRUE(SameBits(a.expanded_uncertainty, b.expanded_uncertainty));
    EXPECT_TRUE(SameDraws(a.bootstrap, b.bootstrap)) << a.model_name << " bootstrap";
    EXPECT_TRUE(SameDraws(a.monte_carlo, b.monte_carlo)) << a.model_name << " Monte Carlo";
    EXPECT_EQ(a.flags, b.flags);
    EXPECT_EQ(a.rank, b.rank);
    if (!a.bootstrap.parameter_draws.empty() && !a.monte_carlo.parameter_draws.empty()) {
      ++resampled;
    }
  }
  EXPECT_GE(resampled, 3) << "the comparison must cover resampled fits";
}

}  // namespace
}  // namespace sorbtrace::fit
