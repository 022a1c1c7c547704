// Coverage of the resampled intervals results.json states (fit stage: JCGM 101 Monte Carlo and
// residual bootstrap, percentile intervals of the GAB parameters) on generated desiccator jobs
// whose three specimens differ (job_generator.h, specimen factor sd 3 %). The reduce stage
// estimates the specimen term with nu_d <= 2 degrees of freedom, and the draws carry it as one
// common factor per resample: drawn from the scaled and shifted t with nu_d degrees of freedom
// (JCGM 101:2008, 6.4.9.7), its few degrees of freedom widen the percentile intervals as the
// Student-t k widens the covariance intervals (equilibrium_coverage_test.cc,
// DesiccatorJobsSpecimensDiffer). Checked: the share of replicates whose truth lies inside the
// stated interval, for the GAB parameters (the Monte Carlo and bootstrap percentile intervals)
// and the moisture contents at 23 degC / 50 % and 80 % RH (the 95 % interval of the curve over
// the Monte Carlo draws, DrawStatisticsOf: the reduction every uncertainty from draws uses), in
// 90-98 % (95 % intervals: the acceptance band of issue 13, common practice), and the stated u
// (DrawStatistics::standard_uncertainty: the half-width of the draws' central 68.27 % interval)
// within 0.7-1.5 times the scatter of the estimates over the replicates. The studentised
// intervals are not formed with a common factor (fitters/fitter.h): checked to be absent, with
// their reason stated.
// Measured (200 replicates, seeds 3000-3199):
//  - factor drawn normal with its u -> t with nu_d: Monte Carlo X_m 85 -> 94 %, moisture at 50 %
//    RH 79 -> 93.5 %, at 80 % RH 79.5 -> 93.5 %; bootstrap percentile X_m 83.5 -> 93.5 %;
//  - then the bootstrap's residual scale drawn with its n - p = 3 degrees of freedom
//    (fitters/fitter.h): bootstrap percentile C 83.5 -> 96.5 %, K 85 -> 96 %, X_m 93.5 -> 97.5 %;
//    u as the draws' 95 % half-width / 1.96 -> the 68.27 % half-width: mean u / sd of X_m and the
//    moisture contents 1.9 -> 1.09-1.15 (with nu_d <= 2 the 95 % interval is t-wide in every
//    replicate; the k of the draws carries that now); Monte Carlo coverage 93-93.5 % for every
//    quantity, u / sd 0.91-1.15; bootstrap u / sd 1.06-1.23. Studentised intervals (before:
//    97.5-98.5 %, their pivots carried the factor's t draw in the numerator only) not formed;
//  - then, under the fit stage's absolute weights, the bootstrap's pool scaled to the stated
//    sigmas instead of the residuals' own scale and no scale drawn (fitters/fitter.h): bootstrap
//    percentile C 96.5 -> 93 %, K 96 -> 93.5 %, X_m 97.5 -> 93 %, u / sd 0.96-1.15 (Monte Carlo
//    unchanged).
#include <gtest/gtest.h>

#include <cmath>
#include <iostream>
#include <map>
#include <string>
#include <vector>

#include "fitters/fitter.h"
#include "pipeline/common/draw_statistics.h"
#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/fit/fit_stage.h"
#include "pipeline/reduce/reduce.h"
#include "tests/coverage/job_generator.h"
#include "tests/coverage/replicates.h"

namespace sorbtrace::coverage {
namespace {

// 200 replicates (the acceptance of issue 13 asks for >= 100): the binomial standard deviation
// of a 95 % coverage is 1.5 %, so 90-98 % is not left by chance alone. About 12 s (Release).
constexpr int kReplicates = 200;
constexpr double kCoverageProbability = 0.95;
// Reference conditions of the datasheet (pores::PoreOptions defaults: 23 degC, 50 and 80 % RH).
constexpr double kReferenceRh[] = {0.5, 0.8};

// The moisture content of the GAB curve at rh_fraction for parameters p (X_m, C, K).
double GabAt(const std::vector<double>& p, double rh_fraction) {
  const Gab gab{p[0], p[1], p[2]};
  return gab(rh_fraction);
}

// Equilibrate, reduce and the fit of GAB alone (the fit stage's defaults: covariance, Monte Carlo
// and bootstrap intervals) of one generated job, as the run stage takes it.
struct GabReplicate {
  reduce::ReducedIsotherms reduced;
  fit::IsothermFits fits;
};

GabReplicate FitGab(const GeneratedJob& job) {
  const equilibrate::EquilibriumSet equilibria =
      equilibrate::Equilibrate(job.ingested, equilibrate::EquilibrateOptions{});
  GabReplicate replicate;
  replicate.reduced = reduce::Reduce(job.ingested, equilibria, reduce::ReduceOptions{});
  fit::FitStageOptions options;
  options.models = {"gab"};
  replicate.fits = fit::FitIsotherms(replicate.reduced, options);
  return replicate;
}

// Adds the Monte Carlo and the bootstrap percentile interval of GAB parameter j (value: the
// fitted one) against its truth.
void AddResampledIntervals(const fit::ModelFit& gab, std::size_t j, double value, double truth,
                           std::map<std::string, Tally>& tallies) {
  const char* const names[] = {"X_m", "C", "K"};
  tallies[std::string("Monte Carlo ") + names[j]].AddInterval(
      value, truth, gab.monte_carlo.parameter_low[j], gab.monte_carlo.parameter_high[j],
      gab.monte_carlo.parameter_u[j]);
  tallies[std::string("bootstrap percentile ") + names[j]].AddInterval(
      value, truth, gab.bootstrap.parameter_low[j], gab.bootstrap.parameter_high[j],
      gab.bootstrap.parameter_u[j]);
}

// Prints every tally (coverage of the stated interval, mean u / sd) under `title`, then checks
// that there are num_tallies of them, each covering in min_coverage-kMaxCoverage with its mean
// u / sd in kMinRatio-kMaxRatio.
void ReportAndCheck(const std::string& title, const std::map<std::string, Tally>& tallies,
                    std::size_t num_tallies, double min_coverage) {
  std::cout << title << " (" << kReplicates
            << " replicates): coverage of the stated interval, mean u / sd\n";
  for (const auto& [name, t] : tallies) {
    std::cout << "  " << name << ": " << 100.0 * t.Coverage() << " %, " << t.Ratio() << "\n";
  }
  ASSERT_EQ(tallies.size(), num_tallies);
  for (const auto& [name, t] : tallies) {
    SCOPED_TRACE(name);
    EXPECT_GE(t.Coverage(), min_coverage);
    EXPECT_LE(t.Coverage(), kMaxCoverage);
    EXPECT_GE(t.Ratio(), kMinRatio);
    EXPECT_LE(t.Ratio(), kMaxRatio);
  }
}

TEST(ResampledCoverageTest, DesiccatorJobsSpecimensDifferMonteCarloAndBootstrap) {
  std::map<std::string, Tally> tallies;
  for (int r = 0; r < kReplicates; ++r) {
    const GeneratedJob job = MakeDesiccatorJob(3000 + static_cast<std::uint64_t>(r), 0.03);
    const fit::IsothermFits fits = FitGab(job).fits;
    ASSERT_EQ(fits.fits.size(), 1u);
    const fit::ModelFit& gab = fits.fits[0];
    ASSERT_TRUE(gab.result.ok());
    // The test is about the specimen factor: every replicate must carry it, with few dof.
    ASSERT_FALSE(fits.groups[0].specimen_factors.empty());
    EXPECT_LE(fits.groups[0].specimen_factors[0].degrees_of_freedom, 2.0);
    const double truth[] = {job.truth.xm_kg_per_kg, job.truth.c, job.truth.k};
    ASSERT_GE(gab.monte_carlo.parameter_draws.size(), 900u);
    ASSERT_GE(gab.bootstrap.parameter_draws.size(), 900u);
    EXPECT_EQ(gab.bootstrap.studentized_not_formed, fitters::kStudentizedWithCommonFactor);
    for (std::size_t j = 0; j < 3; ++j) {
      AddResampledIntervals(gab, j, gab.result.parameters[j], truth[j], tallies);
      EXPECT_TRUE(std::isnan(gab.bootstrap.studentized_low[j]));
      EXPECT_TRUE(std::isnan(gab.bootstrap.studentized_high[j]));
    }
    for (double rh : kReferenceRh) {
      std::vector<double> curve;
      for (const std::vector<double>& draw : gab.monte_carlo.parameter_draws) {
        curve.push_back(GabAt(draw, rh));
      }
      const DrawStatistics stats = DrawStatisticsOf(curve, kCoverageProbability);
      tallies["Monte Carlo moisture at " + std::to_string(static_cast<int>(100 * rh + 0.5)) +
              " % RH"]
          .AddInterval(GabAt(gab.result.parameters, rh), job.truth(rh), stats.low, stats.high,
                       stats.standard_uncertainty);
    }
  }
  // 3 Monte Carlo and 3 bootstrap parameters, 2 moistures.
  ReportAndCheck("desiccator, specimens differing by 3 %", tallies, 8, kMinCoverage);
}

// Several specimens that differ (factor sd 3 %, 3-5 specimens) over 6-8 salts: the class of job
// in which a pure specimen scale factor moves X_m only. Each of the three stated intervals of
// every GAB parameter is checked: the covariance interval (Student-t with the parameter's
// nu_eff, the one printed: fit_stage.h, effective degrees of freedom), the Monte Carlo and the
// bootstrap percentile intervals; each must cover the truth in 92-98 % of the replicates
// (issue 13's acceptance for a 95 % interval) and its u lie within 0.7-1.5 times the scatter of
// the estimates. Designs cycle over the replicates: specimens 3, 4, 5; salts 6, 7, 8.
// Measured (200 replicates, seeds 7000-7199), coverage and mean u / sd: covariance X_m 92 %
// (0.91), C 96.5 % (1.06), K 96.5 -> 95.5 % (1.04) with the Type A / Type B split of the
// independent covariance (fit_stage.h, effective degrees of freedom: K's k from nu_e 10-14 to
// about 2); Monte Carlo X_m 94 % (1.10), C 95.5 % (1.03), K 95 % (1.00); bootstrap percentile
// X_m 95.5 % (1.17), C 97 % (1.20), K 96.5 % (1.17).
TEST(ResampledCoverageTest, SeveralSpecimensSixToEightSaltsEveryInterval) {
  constexpr double kMinCoverageHere = 0.92;  // issue 13: 92-98 % for these intervals
  std::map<std::string, Tally> tallies;
  const char* const names[] = {"X_m", "C", "K"};
  for (int r = 0; r < kReplicates; ++r) {
    const int num_specimens = 3 + r % 3;
    const int num_salts = 6 + (r / 3) % 3;
    const GeneratedJob job =
        MakeDesiccatorJob(7000 + static_cast<std::uint64_t>(r), 0.03, num_specimens, num_salts);
    const GabReplicate replicate = FitGab(job);
    const reduce::ReducedIsotherms& reduced = replicate.reduced;
    const fit::IsothermFits& fits = replicate.fits;
    ASSERT_EQ(fits.fits.size(), 1u);
    const fit::ModelFit& gab = fits.fits[0];
    ASSERT_TRUE(gab.result.ok());
    ASSERT_EQ(reduced.points.size(), static_cast<std::size_t>(num_salts));
    const double truth[] = {job.truth.xm_kg_per_kg, job.truth.c, job.truth.k};
    ASSERT_GE(gab.monte_carlo.parameter_draws.size(), 900u);
    ASSERT_GE(gab.bootstrap.parameter_draws.size(), 900u);
    for (std::size_t j = 0; j < 3; ++j) {
      const fitters::ParameterEstimate& estimate = gab.result.estimates[j];
      tallies[std::string("covariance ") + names[j]].AddInterval(
          estimate.value, truth[j], estimate.interval_low, estimate.interval_high,
          estimate.standard_error);
      AddResampledIntervals(gab, j, estimate.value, truth[j], tallies);
    }
  }
  // 3 parameters x (covariance, Monte Carlo, bootstrap).
  ReportAndCheck("desiccator, 3-5 specimens differing by 3 %, 6-8 salts", tallies, 9,
                 kMinCoverageHere);
}

}  // namespace
}  // namespace sorbtrace::coverage
