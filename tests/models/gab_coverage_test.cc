// Coverage of the GAB parameter intervals on synthetic data with known truth and known noise
// (label "slow"): the fraction of replicates whose 95 % interval contains the true value.
//
// Design: X_m = 0.05 kg/kg, C = 10, K = 0.8; 20 points (the 20-point isotherm of the fitting
// issue) at a_w = 0.10 ... 0.90 evenly spaced; additive normal noise sigma = 0.001 kg/kg
// (constant, as from a balance), sigma_y = sigma. Intervals checked:
//  * Student-t (FitOptions::weights = kRelative): s^2 (J'J)^-1 with s^2 = SSR / (n - p) and
//    t(n - p) quantile. For a linear model with normal errors of unknown common variance this
//    interval is exact; here it is exact to first order in the curvature of the GAB equation.
//  * known-sigma normal interval (kAbsolute convention: (J'J)^-1, quantile 1.96), derived from
//    the same fit by dividing the standard error by s.
//  * residual bootstrap (Resample, 400 resamples per replicate): the studentised (bootstrap-t)
//    interval, held to the same 92..98 % band, and the percentile interval.
// With R replicates the Monte Carlo standard error of a 95 % coverage is sqrt(0.95 0.05 / R):
// 0.69 % at R = 1000, so the band 92..98 % is about +-4 of them.
//
// Percentile intervals under-cover at small n - p where the bootstrap treats the estimated
// residual scale s as the true sigma and cuts at normal-like quantiles: coverage then tends to
// P(|t_(n-p)| <= 1.96) (0.934 at n - p = 17, 0.926 at 12; Boost.Math). Measured while writing
// this test (500 replicates x 400 resamples): with 15 points, studentised X_m 0.926, C 0.930,
// K 0.916 and percentile 0.898, 0.906, 0.902; at this test's 1000 replicates, studentised 0.952,
// 0.953, 0.947 and percentile 0.928, 0.929, 0.927. Since each residual bootstrap draw also
// draws the residual scale from its distribution given s with n - p degrees of freedom
// (fitters/fitter.h, "residual scale"), the percentile intervals carry the t-like tails too:
// percentile 0.945, 0.943, 0.940 (studentised 0.947, 0.952, 0.940), and both are held to the
// full 92..98 % band.
#include <gtest/gtest.h>

#include <array>
#include <cstdio>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/models/gab.h"
#include "tests/models/synthetic.h"

namespace sorbtrace::fitters {
namespace {

using testing::Grid;

constexpr std::array<double, 3> kTruth = {0.05, 10.0, 0.8};
constexpr double kNoise_kg_per_kg = 0.001;
constexpr int kNumPoints = 20;
constexpr double kNormalQuantile975 = 1.959963984540054;  // standard normal, 97.5 %

std::vector<Observation> Replicate(testing::NormalSource* noise) {
  const std::vector<double> truth(kTruth.begin(), kTruth.end());
  return testing::Synthesize(models::GabModel(), truth, Grid(0.1, 0.9, kNumPoints), ModelContext{},
                             0.0, kNoise_kg_per_kg, kNoise_kg_per_kg, noise);
}

bool Inside(double low, double value, double high) { return low <= value && value <= high; }

TEST(GabCoverageTest, StudentTAndKnownSigmaIntervals) {
  constexpr int kReplicates = 1000;
  testing::NormalSource noise(20261201);
  std::array<int, 3> t_hits{};
  std::array<int, 3> z_hits{};
  int fitted = 0;
  FitOptions options;
  options.weights = WeightConvention::kRelative;
  for (int r = 0; r < kReplicates; ++r) {
    const FitResult fit = FitModel(models::GabModel(), Replicate(&noise), ModelContext{}, options);
    if (!fit.ok() || !fit.summary.covariance_available) continue;
    ++fitted;
    const double s = fit.statistics.residual_std;
    for (std::size_t i = 0; i < 3; ++i) {
      const ParameterEstimate& e = fit.estimates[i];
      t_hits[i] += Inside(e.interval_low, kTruth[i], e.interval_high);
      const double half_width = kNormalQuantile975 * e.standard_error / s;
      z_hits[i] += Inside(e.value - half_width, kTruth[i], e.value + half_width);
    }
  }
  EXPECT_GE(fitted, kReplicates - 5);  // practically every replicate converges
  const char* names[] = {"X_m", "C", "K"};
  for (std::size_t i = 0; i < 3; ++i) {
    const double t_coverage = static_cast<double>(t_hits[i]) / fitted;
    const double z_coverage = static_cast<double>(z_hits[i]) / fitted;
    std::printf("GAB %s: Student-t coverage %.4f, known-sigma coverage %.4f (%d fits)\n", names[i],
                t_coverage, z_coverage, fitted);
    RecordProperty(std::string("t_coverage_") + names[i], std::to_string(t_coverage));
    EXPECT_GE(t_coverage, testing::kMinIntervalCoverage) << names[i];
    EXPECT_LE(t_coverage, testing::kMaxIntervalCoverage) << names[i];
    EXPECT_GE(z_coverage, testing::kMinIntervalCoverage) << names[i];
    EXPECT_LE(z_coverage, testing::kMaxIntervalCoverage) << names[i];
  }
}

TEST(GabCoverageTest, ResidualBootstrapIntervals) {
  constexpr int kReplicates = 1000;
  constexpr int kResamples = 400;
  testing::NormalSource noise(20261202);
  std::array<int, 3> percentile_hits{};
  std::array<int, 3> studentized_hits{};
  int done = 0;
  FitOptions options;
  options.weights = WeightConvention::kRelative;
  ResampleOptions resample;
  resample.kind = ResampleKind::kResidualBootstrap;
  resample.num_resamples = kResamples;
  for (int r = 0; r < kReplicates; ++r) {
    const std::vector<Observation> points = Replicate(&noise);
    const FitResult fit = FitModel(models::GabModel(), points, ModelContext{}, options);
    if (!fit.ok()) continue;
    resample.seed = noise.Raw();
    const ResampleResult boot =
        Resample(models::GabModel(), points, ModelContext{}, fit, options, resample);
    if (boot.parameter_low.size() != 3 || boot.num_studentized < kResamples - 20) continue;
    ++done;
    for (std::size_t i = 0; i < 3; ++i) {
      percentile_hits[i] += Inside(boot.parameter_low[i], kTruth[i], boot.parameter_high[i]);
      studentized_hits[i] += Inside(boot.studentized_low[i], kTruth[i], boot.studentized_high[i]);
    }
  }
  EXPECT_GE(done, kReplicates - 5);
  const char* names[] = {"X_m", "C", "K"};
  for (std::size_t i = 0; i < 3; ++i) {
    const double percentile = static_cast<double>(percentile_hits[i]) / done;
    const double studentized = static_cast<double>(studentized_hits[i]) / done;
    std::printf(
        "GAB %s: residual bootstrap coverage: studentised %.4f, percentile %.4f (%d replicates "
        "x %d)\n",
        names[i], studentized, percentile, done, kResamples);
    RecordProperty(std::string("bootstrap_t_coverage_") + names[i], std::to_string(studentized));
    RecordProperty(std::string("bootstrap_percentile_coverage_") + names[i],
                   std::to_string(percentile));
    EXPECT_GE(studentized, testing::kMinIntervalCoverage) << names[i];
    EXPECT_LE(studentized, testing::kMaxIntervalCoverage) << names[i];
    EXPECT_GE(percentile, testing::kMinIntervalCoverage) << names[i];
    EXPECT_LE(percentile, testing::kMaxIntervalCoverage) << names[i];
  }
}

}  // namespace
}  // namespace sorbtrace::fitters
