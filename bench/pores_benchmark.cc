// Pores stage: model-based pore-size distribution on a 400-radius grid with a 1,000-draw
// Monte Carlo band (target: under 50 ms on one core), for a durner2 and a GAB isotherm; and the
// stepwise (BJH-type) method on 40 measured points with a 1,000-draw band.

#include <benchmark/benchmark.h>

#include <Eigen/Core>
#include <cmath>
#include <vector>

#include "fitters/registry.h"
#include "pipeline/physics/physics.h"
#include "pipeline/pores/distribution.h"
#include "pipeline/pores/kelvin_film.h"
#include "pipeline/pores/pores.h"

namespace {

using sorbtrace::ingest::Branch;
using namespace sorbtrace::pores;

const double kTemperature_K = sorbtrace::physics::CelsiusToKelvin(23.0);

internal::PoreRadiusMap DesorptionMap(const PoreOptions& options) {
  return internal::PoreRadiusMap(
      kTemperature_K, internal::MeniscusFor(options.geometry, Branch::kDesorption),
      options.contact_angle_rad, internal::MakeFilmCurve(options, nullptr));
}

internal::ModelCurve Curve(const char* name, std::vector<double> parameters) {
  internal::ModelCurve curve;
  curve.model = sorbtrace::fitters::FindModel(name);
  curve.name = name;
  curve.parameters = std::move(parameters);
  const Eigen::Index p = static_cast<Eigen::Index>(curve.parameters.size());
  curve.covariance = Eigen::MatrixXd::Zero(p, p);
  for (Eigen::Index i = 0; i < p; ++i) {
    // 1 % of each parameter (or 0.01 absolute) as standard uncertainty, uncorrelated.
    const double u = std::max(0.01, 0.01 * std::abs(curve.parameters[static_cast<std::size_t>(i)]));
    curve.covariance(i, i) = u * u;
  }
  curve.context.temperature_K = kTemperature_K;
  return curve;
}

void Run(benchmark::State& state, const internal::ModelCurve& curve) {
  PoreOptions options;  // 400 grid points, 1,000 draws
  const internal::PoreRadiusMap map = DesorptionMap(options);
  const double rh_top = map.RhForPoreRadius(200e-9);
  for (auto _ : state) {
    PoreDistribution d =
        internal::ModelPoreDistribution(curve, Branch::kDesorption, rh_top, map, options);
    benchmark::DoNotOptimize(d);
    if (d.band_draws_used != options.band_draws || d.points.size() != 400u) {
      state.SkipWithError("unexpected distribution size");
    }
  }
}

void BM_ModelDistributionDurner2(benchmark::State& state) {
  // Durner2 parameters of a two-family mesoporous material (u_sat, w1, log10_alpha1, n1,
  // dlog10_alpha2, n2).
  Run(state, Curve("durner2", {0.0997, 0.55, -6.66, 5.34, 1.09, 2.59}));
}
BENCHMARK(BM_ModelDistributionDurner2)->Unit(benchmark::kMillisecond);

void BM_ModelDistributionGab(benchmark::State& state) {
  Run(state, Curve("gab", {0.05, 10.0, 0.85}));
}
BENCHMARK(BM_ModelDistributionGab)->Unit(benchmark::kMillisecond);

// Reference: the model evaluations alone that the durner2 distribution needs (1,001 parameter
// sets x 400 RH values), i.e. the floor set by the model's cost.
void BM_Durner2EvaluationsOnly(benchmark::State& state) {
  const internal::ModelCurve curve = Curve("durner2", {0.0997, 0.55, -6.66, 5.34, 1.09, 2.59});
  std::vector<double> rh(400);
  for (std::size_t i = 0; i < rh.size(); ++i) rh[i] = 0.3 + 0.69 * static_cast<double>(i) / 399.0;
  for (auto _ : state) {
    double sum = 0.0;
    for (int d = 0; d < 1001; ++d) {
      for (double a : rh) {
        const double x[sorbtrace::fitters::kMaxInputs] = {a, 0.0};
        sum += curve.model->Evaluate(curve.parameters.data(), x, curve.context);
      }
    }
    benchmark::DoNotOptimize(sum);
  }
}
BENCHMARK(BM_Durner2EvaluationsOnly)->Unit(benchmark::kMillisecond);

void BM_StepwiseDistribution(benchmark::State& state) {
  PoreOptions options;
  const internal::PoreRadiusMap map = DesorptionMap(options);
  const internal::ModelCurve curve = Curve("gab", {0.05, 10.0, 0.85});
  std::vector<internal::MeasuredPoint> points;
  for (int i = 0; i < 40; ++i) {
    const double rh = 0.05 + 0.94 * i / 39.0;
    const double x[sorbtrace::fitters::kMaxInputs] = {rh, 0.0};
    points.push_back({rh, curve.model->Evaluate(curve.parameters.data(), x, curve.context), 2e-4});
  }
  for (auto _ : state) {
    PoreDistribution d =
        internal::StepwisePoreDistribution(points, Branch::kDesorption, map, options);
    benchmark::DoNotOptimize(d);
  }
}
BENCHMARK(BM_StepwiseDistribution)->Unit(benchmark::kMillisecond);

}  // namespace

BENCHMARK_MAIN();
