// What the coverage tests share: the tally of "value ± U" against the truth over replicates,
// the acceptance limits, the loop over replicates, and the GAB fit and reference moisture
// contents of one replicate (equilibrate -> reduce done by the test, fit -> pores here).
#pragma once

#include <gtest/gtest.h>

#include <cmath>
#include <cstdint>
#include <map>
#include <string>
#include <vector>

#include "pipeline/fit/fit_stage.h"
#include "pipeline/pores/pores.h"
#include "pipeline/reduce/reduce.h"
#include "tests/coverage/job_generator.h"

namespace sorbtrace::coverage {

// Coverage of U at about 95 % must lie in 90-98 %, and the mean reported standard
// uncertainty over the scatter of the errors in 0.7-1.5 (JCGM 100:2008, 3.3 / 6.2;
// acceptance band common practice).
inline constexpr double kMinCoverage = 0.90;
inline constexpr double kMaxCoverage = 0.98;
inline constexpr double kMinRatio = 0.7;
inline constexpr double kMaxRatio = 1.5;

// Errors, standard and expanded uncertainties of one quantity over the replicates.
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
  // The same for a stated interval [low, high] (a Monte Carlo or bootstrap interval, not
  // necessarily symmetric about the value).
  void AddInterval(double value, double truth, double low, double high, double u) {
    ++count;
    if (truth >= low && truth <= high) ++inside;
    sum_u += u;
    errors.push_back(value - truth);
  }
  // A replicate in which the quantity is not stated (no model passed its own checks, so the
  // product refused to state it: honest, but no statement about the truth). It counts as a
  // trial that did not cover, so refusals are bounded by the coverage floor, and adds no
  // error or u (it must not enter the ratio as 0 +- 0).
  void AddNotStated() { ++count; }
  double Coverage() const { return count > 0 ? static_cast<double>(inside) / count : 0.0; }
  // Sample standard deviation of the errors.
  double ErrorSd() const {
    double mean = 0.0;
    for (double e : errors) mean += e;
    mean /= static_cast<double>(errors.size());
    double ss = 0.0;
    for (double e : errors) ss += (e - mean) * (e - mean);
    return std::sqrt(ss / static_cast<double>(errors.size() - 1));
  }
  // Mean reported standard uncertainty over the scatter of the errors.
  double Ratio() const { return (sum_u / static_cast<double>(errors.size())) / ErrorSd(); }
};

// Runs `run(job, tallies)` on the jobs `make(seed)` makes for seeds first_seed,
// first_seed + 1, ..., `replicates` of them; stops at the first fatal failure of a replicate.
template <typename Tallies, typename MakeJob, typename RunReplicate>
void RunReplicates(int replicates, std::uint64_t first_seed, MakeJob make, RunReplicate run,
                   Tallies& tallies) {
  for (int r = 0; r < replicates; ++r) {
    const GeneratedJob job = make(first_seed + static_cast<std::uint64_t>(r));
    ASSERT_NO_FATAL_FAILURE(run(job, tallies));
  }
}

// The coverage factor of a reference moisture content's U.
enum class ReferenceK {
  // k of the curve at that RH from its effective degrees of freedom (fit::CurveUncertainty:
  // Welch-Satterthwaite over the independent part and the specimen term); its u must equal
  // the pore stage's (the delta method on the fit's covariance, which holds the specimen term).
  kCurve,
  // The fit stage's coverage factor (fits.coverage_factor): no specimen term in the job.
  kFits,
};

// Fits GAB to `reduced` (covariance intervals, the ones printed) and adds its three parameters
// ("GAB <name>") and the reference moisture contents at 23 degC ("moisture at 23 C / <RH> % RH")
// of the pore stage to `tallies`, against the job's truth.
inline void TallyGabAndReferences(const GeneratedJob& job, const reduce::ReducedIsotherms& reduced,
                                  ReferenceK reference_k, std::map<std::string, Tally>& tallies) {
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
    tallies["GAB " + estimate.name].Add(estimate.value, truth[k], estimate.standard_error,
                                        gab.expanded_uncertainty[k]);
  }
  pores::PoreOptions pore_options;
  pore_options.band_draws = 0;
  pore_options.stepwise = false;
  const pores::PoreAnalysis pores = pores::AnalysePores(reduced, fits, pore_options);
  for (const pores::ReferenceMoisture& r : pores.reference_moisture) {
    const std::string name = "moisture at 23 C / " +
                             std::to_string(static_cast<int>(100 * r.condition.rh_fraction + 0.5)) +
                             " % RH";
    if (r.model_name.empty() || !(r.u_moisture_kg_per_kg > 0.0)) {
      tallies[name].AddNotStated();  // no best fit (e.g. GAB failed its goodness of fit)
      continue;
    }
    double k = fits.coverage_factor;
    if (reference_k == ReferenceK::kCurve) {
      const fit::DerivedUncertainty curve =
          fit::CurveUncertainty(fits, gab, r.condition.rh_fraction);
      EXPECT_NEAR(curve.standard_uncertainty, r.u_moisture_kg_per_kg,
                  1e-9 * r.u_moisture_kg_per_kg);
      k = curve.coverage_factor;
    }
    tallies[name].Add(r.moisture_kg_per_kg, job.truth(r.condition.rh_fraction),
                      r.u_moisture_kg_per_kg, k * r.u_moisture_kg_per_kg);
  }
}

}  // namespace sorbtrace::coverage
