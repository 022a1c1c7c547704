// Coverage of the GAB parameter intervals with errors in variables (label "slow"): synthetic
// isotherms with a known truth, noise in both the humidity and the moisture content, fitted as
// the fit stage fits them (FitOptions::errors_in_variables, absolute weights).
//
// Design: X_m = 0.05 kg/kg, C = 10, K = 0.8 (the truth of gab_coverage_test.cc); 20 points at
// true a_w = 0.10 ... 0.90 evenly spaced; the humidity read with sigma_RH = 0.8 %RH (a
// calibrated capacitive sensor or a saturated-salt humidity with its temperature uncertainty,
// common practice) and the moisture content with 1.5 % relative standard uncertainty (the
// reduce stage's budget of a desiccator or vapour-sorption point is 1-2 % relative, common
// practice), both normal, both stated to the fit as sigma_x0 and sigma_y (sigma_y from the
// measured value, as the reduce stage states it). Per replicate:
//  * the covariance interval of the fit (kAbsolute: (J'J)^-1 of the parameters with the true
//    x of every point fitted, normal quantile);
//  * the residual bootstrap (1000 resamples, the fit stage's default): the studentised
//    (bootstrap-t) and percentile intervals;
//  * the JCGM 101 Monte Carlo propagation (1000 draws): percentile interval.
// Each 95 % interval must cover the truth in 92-98 % of the replicates, and the stated
// standard uncertainties (covariance u; the bootstrap's and the Monte Carlo's u, the half-width
// of their draws' central 68.27 % interval) must lie within 0.7-1.5 times the scatter of the
// estimates over the replicates. With R = 1000 replicates the Monte Carlo standard error of a 95 %
// coverage is sqrt(0.95 * 0.05 / 1000) = 0.69 %, so 92-98 % is about +-4 of them; the standard
// deviation over 1000 replicates is known to sqrt(1 / (2 * 999)) = 2.2 %. Measured at this test's
// seed (1000 x 1000): covariance 0.935, 0.940, 0.942; studentised 0.937, 0.943, 0.933; percentile
// 0.934, 0.943, 0.936; Monte Carlo 0.939, 0.941, 0.938 (X_m, C, K); u / sd 0.97-1.01 for all four.
// Before the residual bootstrap drew its residual scale with its n - p = 17 degrees of freedom
// (fitters/fitter.h) the percentile intervals covered 0.921, 0.927, 0.916 (they cut the spread of
// the estimates at normal-like points although that spread is estimated from 17 residuals: P(|t_17|
// <= 1.96) = 0.934) and were held to 90 %. Since the pool is scaled to the stated sigmas under
// absolute weights (no scale drawn; fitter.h): studentised 0.937, 0.940, 0.940; percentile 0.939,
// 0.943, 0.940; u / sd 0.97-0.99.
//
// Before the bootstrap put the drawn residual back along each point's normal (fitter.h), it
// resampled only the y legs of the residuals and kept the humidities: on a 25 degC vapour-log
// job the bootstrap standard deviation of X_m was 7.9e-8 against a covariance u of 0.00128,
// and its intervals covered the truth in 0 of 30 generated jobs (the issue that led here).
#include <gtest/gtest.h>

#include <array>
#include <cmath>
#include <cstdio>
#include <string>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/models/gab.h"
#include "tests/models/synthetic.h"

namespace sorbtrace::fitters {
namespace {

using testing::Grid;

constexpr std::array<double, 3> kTruth = {0.05, 10.0, 0.8};
constexpr int kNumPoints = 20;
constexpr double kSigmaRhFraction = 0.008;        // 0.8 %RH
constexpr double kRelativeSigmaMoisture = 0.015;  // 1.5 % of the value
constexpr int kReplicates = 1000;
constexpr int kResamples = 1000;
constexpr double kMinRatio = 0.7;
constexpr double kMaxRatio = 1.5;

std::vector<Observation> Replicate(testing::NormalSource* noise) {
  const Model& model = models::GabModel();
  std::vector<Observation> points;
  for (double a : Grid(0.1, 0.9, kNumPoints)) {
    // The humidity is read with an error of sd kSigmaRhFraction.
    const double read_rh = a + kSigmaRhFraction * noise->Normal();
    points.push_back(testing::ErrorsInVariablesPoint(
        model, kTruth.data(), a, read_rh, kSigmaRhFraction, kRelativeSigmaMoisture, noise));
  }
  return points;
}

bool Inside(double low, double value, double high) { return low <= value && value <= high; }

struct Tally {
  std::array<int, 3> hits{};
  std::array<double, 3> sum_u{};  // stated standard uncertainties, summed
  void Add(std::size_t j, bool hit, double u) {
    hits[j] += hit ? 1 : 0;
    sum_u[j] += u;
  }
};

double StandardDeviation(const std::vector<double>& v) {
  double mean = 0.0;
  for (double x : v) mean += x;
  mean /= static_cast<double>(v.size());
  double sum = 0.0;
  for (double x : v) sum += (x - mean) * (x - mean);
  return std::sqrt(sum / static_cast<double>(v.size() - 1));
}

TEST(GabErrorsInVariablesCoverageTest, CovarianceBootstrapAndMonteCarloIntervals) {
  testing::NormalSource noise(20261203);
  Tally covariance, studentized, percentile, mc;
  std::array<std::vector<double>, 3> estimates;
  int done = 0;
  testing::RunResampledReplicates(
      models::GabModel(), testing::ErrorsInVariablesOptions(), kReplicates, kResamples, &noise,
      Replicate,
      [&](const FitResult& fit, const ResampleResult& boot, const ResampleResult& draws) {
        if (boot.num_studentized < kResamples / 2 ||
            static_cast<int>(draws.parameter_draws.size()) < kResamples / 2) {
          return;
        }
        ++done;
        for (std::size_t j = 0; j < 3; ++j) {
          const ParameterEstimate& e = fit.estimates[j];
          estimates[j].push_back(e.value);
          covariance.Add(j, Inside(e.interval_low, kTruth[j], e.interval_high), e.standard_error);
          studentized.Add(j, Inside(boot.studentized_low[j], kTruth[j], boot.studentized_high[j]),
                          boot.parameter_u[j]);
          percentile.Add(j, Inside(boot.parameter_low[j], kTruth[j], boot.parameter_high[j]),
                         boot.parameter_u[j]);
          mc.Add(j, Inside(draws.parameter_low[j], kTruth[j], draws.parameter_high[j]),
                 draws.parameter_u[j]);
        }
      });
  EXPECT_GE(done, kReplicates - 10);  // practically every replicate fits and resamples
  ASSERT_GT(done, 1);
  const char* names[] = {"X_m", "C", "K"};
  const std::array<std::pair<const char*, const Tally*>, 4> kinds = {
      {{"covariance", &covariance},
       {"bootstrap studentised", &studentized},
       {"bootstrap percentile", &percentile},
       {"Monte Carlo", &mc}}};
  for (std::size_t j = 0; j < 3; ++j) {
    const double scatter = StandardDeviation(estimates[j]);
    for (const auto& [kind, tally] : kinds) {
      const double coverage = static_cast<double>(tally->hits[j]) / done;
      const double ratio = tally->sum_u[j] / done / scatter;
      std::printf("GAB EIV %s: %s coverage %.3f, mean u / sd %.3f (%d replicates x %d)\n", names[j],
                  kind, coverage, ratio, done, kResamples);
      RecordProperty(std::string(kind) + "_coverage_" + names[j], std::to_string(coverage));
      EXPECT_GE(coverage, testing::kMinIntervalCoverage) << names[j] << " " << kind;
      EXPECT_LE(coverage, testing::kMaxIntervalCoverage) << names[j] << " " << kind;
      EXPECT_GE(ratio, kMinRatio) << names[j] << " " << kind;
      EXPECT_LE(ratio, kMaxRatio) << names[j] << " " << kind;
    }
  }
}

}  // namespace
}  // namespace sorbtrace::fitters
