// Fitting engine (fitters/): one multi-start fit, a delta-method band and resampling refits
// on an invented 3-parameter sorption-like curve y = a b c x / ((1 - c x)(1 - c x + b c x))
// (the GAB form) with 24 points. Measures the engine, not a particular isotherm model.
#include <benchmark/benchmark.h>

#include <cmath>
#include <vector>

#include "fitters/autodiff_model.h"
#include "fitters/fitter.h"

namespace {

using namespace sorbtrace::fitters;

struct GabLike {
  static constexpr int kNumParameters = 3;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info() {
    ModelInfo info;
    info.name = "gab_like";
    for (const char* name : {"a", "b", "c"}) {
      ParameterSpec spec;
      spec.name = name;
      spec.unit = "1";
      spec.lower_bound = 0.0;
      info.parameters.push_back(spec);
    }
    info.parameters[2].upper_bound = 1.0;
    return info;
  }
  template <typename T>
  static T Evaluate(const T* p, const T* x, const ModelContext&) {
    const T cx = p[2] * x[0];
    return p[0] * p[1] * cx / ((1.0 - cx) * (1.0 - cx + p[1] * cx));
  }
  static std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>&,
                                                         const ModelContext&) {
    return {{0.05, 10.0, 0.8}};
  }
  static std::vector<std::string> PhysicalFlags(const double*) { return {}; }
};

std::vector<Observation> Data() {
  std::vector<Observation> data;
  const double p[3] = {0.06, 12.0, 0.85};  // invented "true" values
  for (int i = 0; i < 24; ++i) {
    Observation o;
    o.x = {0.05 + 0.9 * i / 23.0, 0.0};
    const double cx = p[2] * o.x[0];
    const double y = p[0] * p[1] * cx / ((1.0 - cx) * (1.0 - cx + p[1] * cx));
    o.y = y * (1.0 + 0.01 * std::sin(7.0 * i));  // deterministic 1 % scatter
    o.sigma_y = 0.01 * y + 1e-4;
    data.push_back(o);
  }
  return data;
}

void BM_FitWithMultistarts(benchmark::State& state) {
  const auto model = MakeAutoDiffModel<GabLike>();
  const std::vector<Observation> data = Data();
  FitOptions options;
  options.num_multistarts = static_cast<int>(state.range(0));
  for (auto _ : state) {
    FitResult fit = FitModel(*model, data, ModelContext{}, options);
    benchmark::DoNotOptimize(fit.parameters.data());
  }
}
BENCHMARK(BM_FitWithMultistarts)->Arg(0)->Arg(4)->Unit(benchmark::kMicrosecond);

void BM_DeltaMethodBand200(benchmark::State& state) {
  const auto model = MakeAutoDiffModel<GabLike>();
  const FitResult fit = FitModel(*model, Data(), ModelContext{}, FitOptions{});
  std::vector<double> grid;
  for (int i = 0; i < 200; ++i) grid.push_back(0.01 + 0.97 * i / 199.0);
  for (auto _ : state) {
    auto band = DeltaMethodBand(*model, fit, ModelContext{}, grid, 0.95);
    benchmark::DoNotOptimize(band.data());
  }
}
BENCHMARK(BM_DeltaMethodBand200)->Unit(benchmark::kMicrosecond);

void BM_Resample1000(benchmark::State& state) {
  const auto model = MakeAutoDiffModel<GabLike>();
  const std::vector<Observation> data = Data();
  const FitOptions fit_options;
  const FitResult fit = FitModel(*model, data, ModelContext{}, fit_options);
  ResampleOptions options;
  options.kind = static_cast<ResampleKind>(state.range(0));
  options.num_resamples = 1000;
  for (auto _ : state) {
    ResampleResult r = Resample(*model, data, ModelContext{}, fit, fit_options, options);
    benchmark::DoNotOptimize(r.parameter_draws.data());
  }
}
BENCHMARK(BM_Resample1000)
    ->Arg(static_cast<int>(ResampleKind::kResidualBootstrap))
    ->Arg(static_cast<int>(ResampleKind::kCaseBootstrap))
    ->Arg(static_cast<int>(ResampleKind::kMonteCarloInputs))
    ->Unit(benchmark::kMillisecond);

}  // namespace

BENCHMARK_MAIN();
