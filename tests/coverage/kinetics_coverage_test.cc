// Coverage of "value ± U" on generated vapour-log jobs whose sorption kinetics are NOT first
// order (job_generator.h: two parallel exponentials, Fickian diffusion into a plane sheet), with
// a milligram specimen and the 80 and 90 % steps cut by the operator early, run through
// equilibrate -> reduce -> fit (GAB, errors in variables) -> pores (reference conditions). The
// equilibrate stage fits a first-order tail, so these jobs test the kinetics term of the
// extrapolation and approach budgets (pipeline/equilibrate/exponential_tail.h): every reported
// equilibrium point, pooled and the cut steps on their own, must lie inside value ± U in
// 90-98 % of the replicates and the mean reported u over the scatter of the errors must lie in
// 0.7-1.5 (JCGM 100:2008, 3.3 / 6.2; acceptance band common practice), as for the first-order
// jobs of equilibrium_coverage_test.cc.
//
// DISABLED: the equilibrate stage does not meet this yet (open item of issue 13: a model term
// for extrapolations whose tail is not first order). Measured with the stage as it stands
// (run with --gtest_also_run_disabled_tests):
//  - two exponentials, 80/90 % cut at 1.5 tau: cut points 84.5 % (u/sd 2.44), all points
//    64.6 % (u/sd 0.63: the criterion-terminated steps' approach correction, fitted first
//    order, under-reads), GAB and reference moisture 91-96 % (u/sd 1.01-1.04);
//  - Fickian plane sheet, cut at 0.5 tau: cut points 0 % (u/sd 0.37), all points 75.6 %, GAB K
//    55 %, moisture at 80 % RH 35 %.
// Tried and rejected (each breaks the first-order coverage of equilibrium_coverage_test.cc,
// where the 80 and 90 % points sit at 97 % / 93.5 %, u/sd 1.02 / 0.94): the later half of the
// tail refitted and the asymptote difference taken as a model term (u/sd 1.5-1.8 on first-order
// tails), the same de-noised by the variance of the difference (still 1.76), a significance-gated
// correction to the later half's asymptote (false detections, u/sd 0.45 on first-order tails),
// and a fixed fraction of the extrapolated mass (3 % already gives u/sd 7: the first-order fit
// pins its asymptote to about 0.4 % of the extrapolated mass).
#include <gtest/gtest.h>

#include <cmath>
#include <iostream>
#include <map>
#include <string>
#include <vector>

#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/fit/fit_stage.h"
#include "pipeline/pores/pores.h"
#include "pipeline/reduce/reduce.h"
#include "tests/coverage/job_generator.h"

namespace sorbtrace::coverage {
namespace {

// 100 replicates per kinetics: 800 points pooled (binomial sd of a 95 % coverage 0.8 %), 200
// cut points (1.5 %).
constexpr int kReplicates = 100;
constexpr double kMinCoverage = 0.90;
constexpr double kMaxCoverage = 0.98;
constexpr double kMinRatio = 0.7;
constexpr double kMaxRatio = 1.5;

struct Tally {
  int inside = 0;
  int count = 0;
  double sum_u = 0.0;
  std::vector<double> errors;
  void Add(double value, double truth, double u, double expanded_u) {
    ++count;
    if (std::abs(value - truth) <= expanded_u) ++inside;
    sum_u += u;
    errors.push_back(value - truth);
  }
  double Coverage() const { return count > 0 ? static_cast<double>(inside) / count : 0.0; }
  double Ratio() const {
    double mean = 0.0;
    for (double e : errors) mean += e;
    mean /= static_cast<double>(errors.size());
    double ss = 0.0;
    for (double e : errors) ss += (e - mean) * (e - mean);
    const double sd = std::sqrt(ss / static_cast<double>(errors.size() - 1));
    return (sum_u / count) / sd;
  }
};

struct Tallies {
  std::map<std::string, Tally> headline;  // GAB parameters, reference moisture contents
  Tally all_points;
  Tally cut_points;  // the 80 and 90 % steps, cut early and extrapolated
  int extrapolated = 0;
};

void RunReplicate(const GeneratedJob& job, Tallies& tallies) {
  const equilibrate::EquilibriumSet equilibria =
      equilibrate::Equilibrate(job.ingested, equilibrate::EquilibrateOptions{});
  tallies.extrapolated += equilibria.summary.num_extrapolated;
  const reduce::ReducedIsotherms reduced =
      reduce::Reduce(job.ingested, equilibria, reduce::ReduceOptions{});
  ASSERT_EQ(reduced.points.size(), job.true_moisture_kg_per_kg.size());
  for (std::size_t i = 0; i < reduced.points.size(); ++i) {
    const reduce::IsothermPoint& p = reduced.points[i];
    const double truth = job.true_moisture_kg_per_kg[i];
    tallies.all_points.Add(p.moisture_kg_per_kg, truth, p.u_moisture_kg_per_kg,
                           p.expanded_u_moisture_kg_per_kg);
    // The generator's last two adsorption steps (80 and 90 % RH) are the cut ones.
    if (i + 2 >= reduced.points.size()) {
      tallies.cut_points.Add(p.moisture_kg_per_kg, truth, p.u_moisture_kg_per_kg,
                             p.expanded_u_moisture_kg_per_kg);
    }
  }
  fit::FitStageOptions fit_options;
  fit_options.models = {"gab"};
  fit_options.bootstrap_resamples = 0;  // the covariance intervals are the ones printed
  fit_options.monte_carlo_draws = 0;
  const fit::IsothermFits fits = fit::FitIsotherms(reduced, fit_options);
  ASSERT_EQ(fits.fits.size(), 1u);
  const fit::ModelFit& gab = fits.fits[0];
  ASSERT_TRUE(gab.result.summary.covariance_available);
  const double truth[] = {job.truth.xm_kg_per_kg, job.truth.c, job.truth.k};
  for (std::size_t k = 0; k < 3; ++k) {
    const auto& estimate = gab.result.estimates[k];
    tallies.headline["GAB " + estimate.name].Add(estimate.value, truth[k], estimate.standard_error,
                                                 gab.expanded_uncertainty[k]);
  }
  pores::PoreOptions pore_options;
  pore_options.band_draws = 0;
  pore_options.stepwise = false;
  const pores::PoreAnalysis pores = pores::AnalysePores(reduced, fits, pore_options);
  for (const pores::ReferenceMoisture& r : pores.reference_moisture) {
    tallies
        .headline["moisture at 23 C / " +
                  std::to_string(static_cast<int>(100 * r.condition.rh_fraction + 0.5)) + " % RH"]
        .Add(r.moisture_kg_per_kg, job.truth(r.condition.rh_fraction), r.u_moisture_kg_per_kg,
             fits.coverage_factor * r.u_moisture_kg_per_kg);
  }
}

void ReportAndCheck(const std::string& title, const Tallies& tallies) {
  std::cout << title << " (" << kReplicates << " replicates, " << tallies.extrapolated
            << " extrapolated steps): coverage of value ± U, mean u / sd\n";
  auto line = [](const std::string& name, const Tally& t) {
    std::cout << "  " << name << ": " << 100.0 * t.Coverage() << " %, " << t.Ratio() << "\n";
  };
  line("all points", tallies.all_points);
  line("80 and 90 % (cut early)", tallies.cut_points);
  for (const auto& [name, t] : tallies.headline) line(name, t);
  // Every cut step is extrapolated (none is left out as not equilibrated).
  EXPECT_EQ(tallies.extrapolated, 2 * kReplicates);
  for (const Tally* t : {&tallies.all_points, &tallies.cut_points}) {
    EXPECT_GE(t->Coverage(), kMinCoverage);
    EXPECT_LE(t->Coverage(), kMaxCoverage);
    EXPECT_GE(t->Ratio(), kMinRatio);
    EXPECT_LE(t->Ratio(), kMaxRatio);
  }
  for (const auto& [name, t] : tallies.headline) {
    SCOPED_TRACE(name);
    EXPECT_GE(t.Coverage(), kMinCoverage);
    EXPECT_LE(t.Coverage(), kMaxCoverage);
    EXPECT_GE(t.Ratio(), kMinRatio);
    EXPECT_LE(t.Ratio(), kMaxRatio);
  }
}

TEST(KineticsCoverageTest, DISABLED_TwoExponentialKineticsCutEarly) {
  Tallies tallies;
  for (int r = 0; r < kReplicates; ++r) {
    const GeneratedJob job =
        MakeVaporLogJob(7000 + static_cast<std::uint64_t>(r), Kinetics::kTwoExponential);
    ASSERT_NO_FATAL_FAILURE(RunReplicate(job, tallies));
  }
  ReportAndCheck("two-exponential kinetics", tallies);
}

TEST(KineticsCoverageTest, DISABLED_FickianSlabKineticsCutEarly) {
  Tallies tallies;
  for (int r = 0; r < kReplicates; ++r) {
    // Cut at 0.5 tau: the tail still carries the faster terms of the series.
    const GeneratedJob job =
        MakeVaporLogJob(9000 + static_cast<std::uint64_t>(r), Kinetics::kFickianSlab, 0.5);
    ASSERT_NO_FATAL_FAILURE(RunReplicate(job, tallies));
  }
  ReportAndCheck("Fickian plane-sheet kinetics", tallies);
}

}  // namespace
}  // namespace sorbtrace::coverage
