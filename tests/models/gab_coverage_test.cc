// Coverage of the GAB parameter intervals on synthetic data with known truth and known noise
// (label "slow"): the fraction of replicates whose 95 % interval contains the true value.
//
// Design: X_m = 0.05 kg/kg, C = 10, K = 0.8; 15 points at a_w = 0.10, 0.157, ..., 0.90;
// additive normal noise sigma = 0.001 kg/kg (constant, as from a balance), sigma_y = sigma.
// Intervals checked:
//  * Student-t (FitOptions::weights = kRelative): s^2 (J'J)^-1 with s^2 = SSR / (n - p) and
//    t(n - p) quantile. For a linear model with normal errors of unknown common variance this
//    interval is exact; here it is exact to first order in the curvature of the GAB equation.
//  * known-sigma normal interval (kAbsolute convention: (J'J)^-1, quantile 1.96), derived from
//    the same fit by dividing the standard error by s.
//  * residual-bootstrap percentile intervals (Resample, 200 resamples per replicate).
// With R replicates the Monte Carlo standard error of a 95 % coverage is sqrt(0.95 0.05 / R):
// 0.69 % at R = 1000 and 0.97 % at R = 500, so the band 92..98 % is about +-3 or more of them.
//
// Bootstrap percentile intervals under-cover at small n - p, a known effect: even an ideal
// bootstrap reproduces the spread of the estimates with the estimated s in place of sigma and
// cuts at normal-like quantiles, so its coverage tends to P(|t_12| <= 1.96) = 0.926 for
// n - p = 12 (computed with Boost.Math), not 0.95; the 2.5 % and 97.5 % points of only 200
// draws lower it further. Measured while writing this test (500 replicates, 200 resamples):
// X_m 0.898, C 0.898, K 0.890 at this generator state; 0.925, 0.930, 0.917 at another (400
// replicates); 0.932, 0.943, 0.935 with 1000 resamples; a residual bootstrap with
// leverage-adjusted residuals e_i / sqrt(1 - h_ii) (Davison & Hinkley 1997, Bootstrap Methods
// and their Application, eq. 6.9, linearised leverages) gave 0.935, 0.935, 0.915 with 200
// resamples: no systematic gain, the shortfall is the t-versus-normal effect. The bootstrap
// check therefore uses the band 0.88..0.98 (0.926 minus 3 Monte Carlo standard errors and the
// 200-draw quantile noise); the 92..98 % band is met by the Student-t intervals.
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
constexpr int kNumPoints = 15;
constexpr double kNormalQuantile975 = 1.959963984540054;  // standard normal, 97.5 %
constexpr double kMinCoverage = 0.92;
constexpr double kMaxCoverage = 0.98;
constexpr double kMinBootstrapCoverage = 0.88;  // see the header comment

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
    EXPECT_GE(t_coverage, kMinCoverage) << names[i];
    EXPECT_LE(t_coverage, kMaxCoverage) << names[i];
    EXPECT_GE(z_coverage, kMinCoverage) << names[i];
    EXPECT_LE(z_coverage, kMaxCoverage) << names[i];
  }
}

TEST(GabCoverageTest, ResidualBootstrapPercentileIntervals) {
  constexpr int kReplicates = 500;
  constexpr int kResamples = 200;
  testing::NormalSource noise(20261202);
  std::array<int, 3> hits{};
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
        Resample(models::GabModel(), points, ModelContext{}, fit, options, resample, {});
    if (boot.parameter_low.size() != 3) continue;
    ++done;
    for (std::size_t i = 0; i < 3; ++i)
      hits[i] += Inside(boot.parameter_low[i], kTruth[i], boot.parameter_high[i]);
  }
  EXPECT_GE(done, kReplicates - 5);
  const char* names[] = {"X_m", "C", "K"};
  for (std::size_t i = 0; i < 3; ++i) {
    const double coverage = static_cast<double>(hits[i]) / done;
    std::printf("GAB %s: residual-bootstrap percentile coverage %.4f (%d replicates x %d)\n",
                names[i], coverage, done, kResamples);
    RecordProperty(std::string("bootstrap_coverage_") + names[i], std::to_string(coverage));
    EXPECT_GE(coverage, kMinBootstrapCoverage) << names[i];
    EXPECT_LE(coverage, kMaxCoverage) << names[i];
  }
}

}  // namespace
}  // namespace sorbtrace::fitters
