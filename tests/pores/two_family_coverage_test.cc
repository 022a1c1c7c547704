// Coverage of the model-based pore quantities (label "slow"): a known two-family pore system
// turned into desorption isotherms by the forward Kelvin model, measured with noise in both
// humidity and moisture content, fitted as the fit stage fits (durner2 with errors in
// variables, absolute weights, JCGM 101 Monte Carlo refits), inverted by the pores stage; the modal
// radii, the resolved pore volume and the volume fractions per decade must lie within their
// value +- 2 u of the truth in at least 90 % of the replicates, and the stated u of the modes
// and the volume lie within 0.7-1.5 times the scatter of their errors over the replicates.
//
// The pore system (two_family_pores.h): two van Genuchten pore families, modes of dV/dlog r near
// 2 nm and 8 nm, turned into u(RH) by the forward Kelvin model without a film.
// Measurement: 25 steps at RH 0.10 ... 0.96 read with 0.5 %RH (a vapour-sorption instrument's
// sensor, common practice) and u with 1.5 % relative and 0.2 g/kg absolute standard
// uncertainty (the reduce stage's budgets, common practice), normal.
// The true quantities are computed here from V(r) on the resolved range [r_min, r_max] that
// the distribution reports (r_max follows from the highest measured RH), modes by a search of
// the analytic dV/dlog r on a fine grid. With R = 200 replicates the Monte Carlo standard error
// of a 95 % coverage is 1.5 %, so the 90 % floor sits 3 of them below it. Measured at this
// seed: modes 0.960 and 0.940, volume 0.970, decade fractions 0.905 inside +- 2 u; u / sd 1.01,
// 0.92, 1.04 and 0.91 (fraction of 1-10 nm). The same from the residual bootstrap's draws:
// 0.955, 0.925, 0.945, 0.890; u / sd 0.96, 0.88, 0.99, 0.85 (the pores stage therefore
// takes the Monte Carlo draws, pores.cc).
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <string>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/registry.h"
#include "pipeline/physics/physics.h"
#include "pipeline/pores/distribution.h"
#include "pipeline/pores/kelvin_film.h"
#include "tests/models/synthetic.h"
#include "tests/pores/two_family_pores.h"

namespace sorbtrace::pores {
namespace {

constexpr double kTemperature_K = testing::kTwoFamilyTemperature_K;
constexpr int kReplicates = 200;
constexpr int kResamples = 500;
constexpr int kNumPoints = 25;
constexpr double kSigmaRhFraction = 0.005;
constexpr double kRelativeSigmaMoisture = 0.015;
constexpr double kAbsoluteSigmaMoisture_kg_per_kg = 2e-4;
constexpr double kCoverageFactor = 2.0;
constexpr double kMinCoverage = 0.90;
constexpr double kMinRatio = 0.7;  // reported u / scatter of the errors over the replicates
constexpr double kMaxRatio = 1.5;

using testing::ErrorSpread;
using testing::TrueCumulativeVolume;
using testing::TrueModes;
using testing::TrueMoisture_kg_per_kg;

std::vector<fitters::Observation> Replicate(fitters::testing::NormalSource* noise) {
  std::vector<fitters::Observation> points;
  for (double rh : fitters::testing::Grid(0.10, 0.96, kNumPoints)) {
    const double u = TrueMoisture_kg_per_kg(rh);
    fitters::Observation o;
    o.x[0] = rh + kSigmaRhFraction * noise->Normal();
    o.sigma_y = std::hypot(kRelativeSigmaMoisture * u, kAbsoluteSigmaMoisture_kg_per_kg);
    o.y = u + o.sigma_y * noise->Normal();
    o.sigma_x0 = kSigmaRhFraction;
    points.push_back(o);
  }
  return points;
}

bool Within(double value, double u, double truth) {
  return std::abs(value - truth) <= kCoverageFactor * u;
}

TEST(TwoFamilyPoreCoverageTest, ModesVolumeAndDecadeFractions) {
  const fitters::Model* model = fitters::FindModel("durner2");
  ASSERT_NE(model, nullptr);
  fitters::testing::NormalSource noise(20261204);
  fitters::ModelContext context;
  context.temperature_K = kTemperature_K;
  fitters::FitOptions fit_options;
  fit_options.weights = fitters::WeightConvention::kAbsolute;
  fit_options.errors_in_variables = true;
  fitters::FitOptions refit_options = fit_options;  // as the fit stage refits (fit_stage.h)
  refit_options.function_tolerance = 1e-10;
  refit_options.parameter_tolerance = 1e-10;
  fitters::ResampleOptions resample;  // as the pores stage uses them: Monte Carlo first
  resample.kind = fitters::ResampleKind::kMonteCarloInputs;
  resample.num_resamples = kResamples;

  PoreOptions options;
  options.film = FilmModel::kNone;
  options.band_draws = kResamples;
  const internal::PoreRadiusMap map(
      kTemperature_K, internal::MeniscusFor(options.geometry, ingest::Branch::kDesorption),
      options.contact_angle_rad, internal::MakeFilmCurve(options, nullptr));

  int done = 0;
  int mode_hits[2] = {0, 0};
  int volume_hits = 0;
  int fraction_checks = 0;
  int fraction_hits = 0;
  ErrorSpread volume_spread;
  ErrorSpread mode_spread[2];
  ErrorSpread first_decade;  // the fraction of [1 nm, 10 nm]
  for (int r = 0; r < kReplicates; ++r) {
    const std::vector<fitters::Observation> points = Replicate(&noise);
    resample.seed = noise.Raw();
    const fitters::FitResult fit = fitters::FitModel(*model, points, context, fit_options);
    if (!fit.ok() || !fit.summary.covariance_available) continue;
    const fitters::ResampleResult draws =
        fitters::Resample(*model, points, context, fit, refit_options, resample);
    internal::ModelCurve curve;
    curve.model = model;
    curve.name = "durner2";
    curve.parameters = fit.parameters;
    curve.covariance = fit.covariance;
    curve.context = context;
    curve.resampled_draws = draws.parameter_draws;
    double rh_top = 0.0;
    for (const fitters::Observation& o : points) rh_top = std::max(rh_top, o.x[0]);
    const PoreDistribution d =
        internal::ModelPoreDistribution(curve, ingest::Branch::kDesorption, rh_top, map, options);
    ++done;
    const double r_min = d.resolved_radius_min_m;
    const double r_max = d.resolved_radius_max_m;
    const double true_volume = TrueCumulativeVolume(r_max) - TrueCumulativeVolume(r_min);
    volume_hits +=
        Within(d.total_resolved_volume_m3_per_kg, d.u_total_resolved_volume_m3_per_kg, true_volume);
    volume_spread.Add(d.total_resolved_volume_m3_per_kg - true_volume,
                      d.u_total_resolved_volume_m3_per_kg);
    const std::vector<double> truth_modes = TrueModes(r_min, r_max);
    ASSERT_EQ(truth_modes.size(), 2u);
    for (std::size_t m = 0; m < 2; ++m) {
      // The reported mode nearest the true one (within a quarter decade) must cover it.
      const ModalRadius* nearest = nullptr;
      for (const ModalRadius& mode : d.modes) {
        const double distance = std::abs(std::log10(mode.radius_m / truth_modes[m]));
        if (distance < 0.25 &&
            (nearest == nullptr ||
             distance < std::abs(std::log10(nearest->radius_m / truth_modes[m])))) {
          nearest = &mode;
        }
      }
      mode_hits[m] +=
          nearest != nullptr && Within(nearest->radius_m, nearest->u_radius_m, truth_modes[m]);
      if (nearest != nullptr) {
        mode_spread[m].Add(nearest->radius_m - truth_modes[m], nearest->u_radius_m);
      }
    }
    for (const DecadeFraction& f : d.decades) {
      const double truth =
          (TrueCumulativeVolume(f.radius_high_m) - TrueCumulativeVolume(f.radius_low_m)) /
          true_volume;
      ++fraction_checks;
      fraction_hits += Within(f.volume_fraction, f.u_volume_fraction, truth);
      if (f.radius_low_m < 1.5e-9) first_decade.Add(f.volume_fraction - truth, f.u_volume_fraction);
    }
    if (r == 0) {
      std::printf("first replicate: volume %.4g +- %.2g (truth %.4g) m3/kg; modes",
                  d.total_resolved_volume_m3_per_kg, d.u_total_resolved_volume_m3_per_kg,
                  true_volume);
      for (const ModalRadius& mode : d.modes) {
        std::printf(" %.4g +- %.2g nm", mode.radius_m * 1e9, mode.u_radius_m * 1e9);
      }
      std::printf(" (truth %.4g, %.4g nm)\n", truth_modes[0] * 1e9, truth_modes[1] * 1e9);
    }
  }
  ASSERT_GE(done, kReplicates * 9 / 10);
  const double n = static_cast<double>(done);
  std::printf(
      "%d replicates: mode 1 %.3f, mode 2 %.3f, volume %.3f, decade fractions %.3f "
      "(%d) inside +- %g u\n",
      done, mode_hits[0] / n, mode_hits[1] / n, volume_hits / n,
      static_cast<double>(fraction_hits) / fraction_checks, fraction_checks, kCoverageFactor);
  std::printf(
      "u / sd of the errors: mode 1 %.3f, mode 2 %.3f, volume %.3f, fraction 1-10 nm %.3f\n",
      mode_spread[0].Ratio(), mode_spread[1].Ratio(), volume_spread.Ratio(), first_decade.Ratio());
  double bias = 0.0;
  for (double e : first_decade.errors) bias += e / static_cast<double>(first_decade.errors.size());
  std::printf("fraction 1-10 nm: mean error %.4g, mean u %.4g\n", bias,
              first_decade.sum_u / static_cast<double>(first_decade.errors.size()));
  for (const ErrorSpread* spread :
       {&mode_spread[0], &mode_spread[1], &volume_spread, &first_decade}) {
    ASSERT_GE(spread->errors.size(), 10u);
    EXPECT_GE(spread->Ratio(), kMinRatio);
    EXPECT_LE(spread->Ratio(), kMaxRatio);
  }
  EXPECT_GE(mode_hits[0] / n, kMinCoverage);
  EXPECT_GE(mode_hits[1] / n, kMinCoverage);
  EXPECT_GE(volume_hits / n, kMinCoverage);
  ASSERT_GT(fraction_checks, 0);
  EXPECT_GE(static_cast<double>(fraction_hits) / fraction_checks, kMinCoverage);
}

}  // namespace
}  // namespace sorbtrace::pores
