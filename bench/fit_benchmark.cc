// Speed of the fit stage: GAB, BET and the bimodal van Genuchten (Durner) model fitted to both
// branches of a 20-point synthetic isotherm, with covariance, delta-method bands on a 200-point
// grid and 1,000 residual-bootstrap refits per fit (Monte Carlo off). Target: < 200 ms on one
// core (aim 50 ms).
#include <benchmark/benchmark.h>

#include "pipeline/fit/fit_stage.h"
#include "tests/fit/fit_test_data.h"

namespace {

using sorbtrace::fit::testing::AppendBranch;
using sorbtrace::fit::testing::BranchSpec;
using sorbtrace::fit::testing::NormalStream;

sorbtrace::reduce::ReducedIsotherms TwoBranchIsotherm() {
  sorbtrace::reduce::ReducedIsotherms reduced;
  NormalStream noise(12571);
  BranchSpec adsorption;
  AppendBranch(adsorption, &noise, &reduced);
  BranchSpec desorption;
  desorption.branch = sorbtrace::ingest::Branch::kDesorption;
  desorption.truth.monolayer_kg_per_kg = 0.06;  // hysteresis: more water on desorption
  AppendBranch(desorption, &noise, &reduced);
  return reduced;
}

sorbtrace::fit::FitStageOptions BenchmarkOptions(int bootstrap_resamples) {
  sorbtrace::fit::FitStageOptions options;
  options.models = {"gab", "bet", "durner2"};
  options.bootstrap_resamples = bootstrap_resamples;
  options.monte_carlo_draws = 0;
  options.band_grid_points = 200;
  return options;
}

// The case: argument = bootstrap resamples per fit (1000); 0 shows the cost of the
// fits, covariances and bands alone.
void BM_FitIsothermsGabBetDurner2(benchmark::State& state) {
  const sorbtrace::reduce::ReducedIsotherms reduced = TwoBranchIsotherm();
  const sorbtrace::fit::FitStageOptions options =
      BenchmarkOptions(static_cast<int>(state.range(0)));
  int converged = 0;
  for (auto _ : state) {
    const sorbtrace::fit::IsothermFits fits = sorbtrace::fit::FitIsotherms(reduced, options);
    converged = fits.summary.fits_converged;
    benchmark::DoNotOptimize(fits.fits.data());
  }
  state.counters["fits_converged"] = converged;
}
BENCHMARK(BM_FitIsothermsGabBetDurner2)->Arg(0)->Arg(1000)->Unit(benchmark::kMillisecond);

// One model at a time with 1000 resamples, to see where the time goes.
void BM_FitIsothermsOneModel(benchmark::State& state, const char* model) {
  const sorbtrace::reduce::ReducedIsotherms reduced = TwoBranchIsotherm();
  sorbtrace::fit::FitStageOptions options = BenchmarkOptions(1000);
  options.models = {model};
  for (auto _ : state) {
    const sorbtrace::fit::IsothermFits fits = sorbtrace::fit::FitIsotherms(reduced, options);
    benchmark::DoNotOptimize(fits.fits.data());
  }
}
BENCHMARK_CAPTURE(BM_FitIsothermsOneModel, gab, "gab")->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(BM_FitIsothermsOneModel, bet, "bet")->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(BM_FitIsothermsOneModel, durner2, "durner2")->Unit(benchmark::kMillisecond);

}  // namespace

BENCHMARK_MAIN();
