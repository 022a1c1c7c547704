// Forward/inverse round trip of the pore-size distribution.
//
// A synthetic pore system (two log-normal families of cylindrical pores, modes 3 nm and 30 nm,
// 40 % / 60 % of the pore volume) generates a desorption isotherm through a forward Kelvin
// model written here: at RH, pores with r_p <= r_K(RH) + t(RH) are full, wider ones carry the
// Badmann film t(RH) on their walls. The inversions must recover the modal radii and the
// volume fractions within 10 %.
//
// What is tested, honestly: the forward model uses the stage's own RH <-> radius map (Kelvin
// equation + film, checked against independent values in kelvin_film_test.cc), so the round
// trip checks the inversion (film-volume bookkeeping, differentiation, mode finding, volume
// accounting), not the Kelvin physics. Method "model" is run on (a) a model that reproduces the
// forward isotherm exactly and (b) durner3 and durner2 models fitted to 40 points of it
// (fitters::FitModel), which adds the error of representing the isotherm by a fitted curve.
// Method "stepwise" runs on 60 points of the isotherm.

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numbers>
#include <string>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/registry.h"
#include "pipeline/physics/physics.h"
#include "pipeline/pores/distribution.h"
#include "pipeline/pores/kelvin_film.h"
#include "pipeline/pores/pores.h"

namespace sorbtrace::pores::internal {
namespace {

constexpr double kNm = 1e-9;
const double kTemperature_K = physics::CelsiusToKelvin(23.0);

struct Family {
  double mode_m;
  double sigma_ln;  // standard deviation of ln r
  double volume_m3_per_kg;
};

// The synthetic material: 0.04 + 0.06 = 0.10 kg/kg of pore water at saturation.
const Family kSmall{3.0 * kNm, 0.25, 4.0e-5};
const Family kLarge{30.0 * kNm, 0.35, 6.0e-5};
constexpr double kTrueSmallFraction = 0.4;

// Forward model: u(RH) = rho_w sum over pores of (full ? V : V (1 - ((r - t)/r)^2)).
class ForwardPores {
 public:
  explicit ForwardPores(const PoreRadiusMap& map) : map_(map) {
    rho_ = physics::LiquidWaterDensity_kg_per_m3(map.temperature_K());
    // ln r from 0.2 nm to 20 um in 6000 steps.
    const int n = 6000;
    const double lo = std::log(0.2 * kNm);
    const double hi = std::log(20000.0 * kNm);
    h_ = (hi - lo) / n;
    for (int i = 0; i <= n; ++i) {
      const double ln_r = lo + h_ * i;
      log_radius_.push_back(ln_r);
      radius_.push_back(std::exp(ln_r));
      small_.push_back(Weight(kSmall, ln_r) * h_);
      large_.push_back(Weight(kLarge, ln_r) * h_);
    }
  }

  // Moisture content [kg/kg] with family volumes scaled by (a, b).
  double Moisture(double rh, double a, double b, double* d_a = nullptr,
                  double* d_b = nullptr) const {
    const double r_fill = map_.PoreRadius_m(rh);
    const double t = map_.FilmThickness_m(rh);
    // The cell of width h in ln r around each node is full up to ln r_fill (a fraction of the
    // cell when r_fill falls inside it), so that u(RH) is continuous.
    const double ln_fill = std::log(r_fill);
    double s = 0.0;
    double l = 0.0;
    for (std::size_t i = 0; i < radius_.size(); ++i) {
      const double r = radius_[i];
      const double full = std::clamp((ln_fill - (log_radius_[i] - 0.5 * h_)) / h_, 0.0, 1.0);
      const double film = r > t ? 1.0 - ((r - t) / r) * ((r - t) / r) : 1.0;
      const double held = full + (1.0 - full) * film;
      s += small_[i] * held;
      l += large_[i] * held;
    }
    if (d_a != nullptr) *d_a = rho_ * s;
    if (d_b != nullptr) *d_b = rho_ * l;
    return rho_ * (a * s + b * l);
  }

 private:
  static double Weight(const Family& f, double ln_r) {
    const double z = (ln_r - std::log(f.mode_m)) / f.sigma_ln;
    return f.volume_m3_per_kg * std::exp(-0.5 * z * z) /
           (f.sigma_ln * std::sqrt(2.0 * std::numbers::pi));
  }
  const PoreRadiusMap& map_;
  double rho_ = 0.0;
  double h_ = 0.0;
  std::vector<double> log_radius_, radius_, small_, large_;
};

// fitters::Model whose curve is the forward isotherm: u = a * u_small(RH) + b * u_large(RH),
// parameters (a, b) = (1, 1) reproduce the synthetic material exactly.
class ForwardModel final : public fitters::Model {
 public:
  explicit ForwardModel(const ForwardPores& forward) : forward_(forward) {
    info_.name = "synthetic_pores";
    info_.parameters = {{"a", "1", 0.0, fitters::kInfinity, "small-pore volume scale"},
                        {"b", "1", 0.0, fitters::kInfinity, "large-pore volume scale"}};
  }
  const fitters::ModelInfo& info() const override { return info_; }
  int num_inputs() const override { return 1; }
  double Evaluate(const double* p, const double* x, const fitters::ModelContext&) const override {
    return forward_.Moisture(x[0], p[0], p[1]);
  }
  void Gradient(const double* p, const double* x, const fitters::ModelContext&,
                double* g) const override {
    forward_.Moisture(x[0], p[0], p[1], &g[0], &g[1]);
  }
  double SlopeInX0(const double* p, const double* x, const fitters::ModelContext&) const override {
    const double h = 1e-6;
    return (forward_.Moisture(x[0] + h, p[0], p[1]) - forward_.Moisture(x[0] - h, p[0], p[1])) /
           (2 * h);
  }
  ceres::CostFunction* NewResidual(const fitters::Observation&,
                                   const fitters::ModelContext&) const override {
    return nullptr;
  }
  ceres::CostFunction* NewErrorsInVariablesResidual(const fitters::Observation&,
                                                    const fitters::ModelContext&) const override {
    return nullptr;
  }
  std::vector<std::vector<double>> StartingPoints(const std::vector<fitters::Observation>&,
                                                  const fitters::ModelContext&) const override {
    return {{1.0, 1.0}};
  }
  std::vector<std::string> PhysicalFlags(const double*) const override { return {}; }

 private:
  const ForwardPores& forward_;
  fitters::ModelInfo info_;
};

PoreRadiusMap DesorptionMap() {
  PoreOptions options;  // Badmann film, open cylinders: desorption by a hemispherical meniscus
  return PoreRadiusMap(kTemperature_K, MeniscusFor(options.geometry, ingest::Branch::kDesorption),
                       0.0, MakeFilmCurve(options, nullptr));
}

// Fraction of the resolved volume below 10 nm (the two families are separated there: 10 nm is
// 4.8 sigma above the small mode and 3.1 sigma below the large one).
double SmallFraction(const PoreDistribution& d) {
  double small = 0.0;
  for (const DecadeFraction& f : d.decades) {
    if (f.radius_high_m <= 10.0 * kNm * (1 + 1e-9)) small += f.volume_fraction;
  }
  return small;
}

struct Recovery {
  double small_mode_error = 1.0;
  double large_mode_error = 1.0;
  double small_fraction_error = 1.0;
  double large_fraction_error = 1.0;
  double total_volume_error = 1.0;
};

Recovery Check(const PoreDistribution& d, const std::string& label) {
  Recovery r;
  const ModalRadius* small = nullptr;
  const ModalRadius* large = nullptr;
  for (const ModalRadius& m : d.modes) {
    if (m.radius_m < 10 * kNm &&
        (small == nullptr || m.dv_dlogr_m3_per_kg > small->dv_dlogr_m3_per_kg))
      small = &m;
    if (m.radius_m > 10 * kNm &&
        (large == nullptr || m.dv_dlogr_m3_per_kg > large->dv_dlogr_m3_per_kg))
      large = &m;
  }
  if (small != nullptr) r.small_mode_error = std::abs(small->radius_m / kSmall.mode_m - 1.0);
  if (large != nullptr) r.large_mode_error = std::abs(large->radius_m / kLarge.mode_m - 1.0);
  const double f = SmallFraction(d);
  r.small_fraction_error = std::abs(f / kTrueSmallFraction - 1.0);
  r.large_fraction_error = std::abs((1.0 - f) / (1.0 - kTrueSmallFraction) - 1.0);
  r.total_volume_error = std::abs(d.total_resolved_volume_m3_per_kg /
                                      (kSmall.volume_m3_per_kg + kLarge.volume_m3_per_kg) -
                                  1.0);
  std::printf(
      "[%s] modes %.4g nm, %.4g nm (errors %.2f %%, %.2f %%); fraction < 10 nm %.4f (error "
      "%.2f %%, large %.2f %%); total volume error %.2f %%; %zu modes\n",
      label.c_str(), small ? small->radius_m / kNm : 0.0, large ? large->radius_m / kNm : 0.0,
      100 * r.small_mode_error, 100 * r.large_mode_error, f, 100 * r.small_fraction_error,
      100 * r.large_fraction_error, 100 * r.total_volume_error, d.modes.size());
  return r;
}

void ExpectRecovered(const Recovery& r) {
  EXPECT_LT(r.small_mode_error, 0.10);
  EXPECT_LT(r.large_mode_error, 0.10);
  EXPECT_LT(r.small_fraction_error, 0.10);
  EXPECT_LT(r.large_fraction_error, 0.10);
}

// Highest RH of the synthetic measurement: resolves pores up to about 200 nm.
double TopRh(const PoreRadiusMap& map) { return map.RhForPoreRadius(200 * kNm); }

TEST(RoundTrip, ModelMethodOnExactIsothermRecoversModesAndFractions) {
  const PoreRadiusMap map = DesorptionMap();
  const ForwardPores forward(map);
  const ForwardModel model(forward);
  ModelCurve curve;
  curve.model = &model;
  curve.name = model.name();
  curve.parameters = {1.0, 1.0};
  curve.covariance = Eigen::Matrix2d::Identity() * 1e-4;  // 1 % standard uncertainty per family
  curve.context.temperature_K = kTemperature_K;
  PoreOptions options;
  options.band_draws = 20;  // the forward model is slow (6000-point integral per evaluation)
  const PoreDistribution d =
      ModelPoreDistribution(curve, ingest::Branch::kDesorption, TopRh(map), map, options);
  ASSERT_EQ(d.points.size(), 400u);
  const Recovery r = Check(d, "model, exact isotherm, film correction");
  ExpectRecovered(r);
  EXPECT_LT(r.total_volume_error, 0.05);
  EXPECT_EQ(d.band_source, "parameter covariance");
  EXPECT_EQ(d.band_draws_used, 20);
  // The band brackets the nominal curve at the small mode.
  for (const PoreDistributionPoint& p : d.points) {
    EXPECT_LE(p.dv_dlogr_low_m3_per_kg, p.dv_dlogr_high_m3_per_kg);
  }
  ASSERT_GE(d.modes.size(), 2u);
  EXPECT_GT(d.modes[0].u_radius_m, 0.0);
}

TEST(RoundTrip, FilmVolumeCorrectionMattersForTheSmallPores) {
  // Without the film correction the film held in the small pores before they fill, and in the
  // large pores while the small ones empty, is booked at the wrong radii: the small-pore
  // fraction comes out wrong by more than the corrected one.
  const PoreRadiusMap map = DesorptionMap();
  const ForwardPores forward(map);
  const ForwardModel model(forward);
  ModelCurve curve;
  curve.model = &model;
  curve.name = model.name();
  curve.parameters = {1.0, 1.0};
  curve.context.temperature_K = kTemperature_K;
  PoreOptions options;
  options.band_draws = 0;
  const Recovery corrected =
      Check(ModelPoreDistribution(curve, ingest::Branch::kDesorption, TopRh(map), map, options),
            "model, exact isotherm, film correction, no band");
  options.film_volume_correction = false;
  const Recovery raw =
      Check(ModelPoreDistribution(curve, ingest::Branch::kDesorption, TopRh(map), map, options),
            "model, exact isotherm, V = u/rho (no film correction)");
  EXPECT_LT(corrected.small_fraction_error, raw.small_fraction_error);
  EXPECT_LT(corrected.total_volume_error, raw.total_volume_error);
}

TEST(RoundTrip, StepwiseMethodOnMeasuredPointsRecoversModesAndFractions) {
  const PoreRadiusMap map = DesorptionMap();
  const ForwardPores forward(map);
  // 60 points equally spaced in log r between 0.9 nm and 200 nm (a dense desorption scan).
  std::vector<MeasuredPoint> points;
  const int n = 60;
  for (int i = 0; i < n; ++i) {
    const double r = 0.9 * kNm * std::pow(200.0 / 0.9, static_cast<double>(i) / (n - 1));
    const double rh = map.RhForPoreRadius(r);
    points.push_back({rh, forward.Moisture(rh, 1.0, 1.0), 0.0});
  }
  PoreOptions options;
  const PoreDistribution d =
      StepwisePoreDistribution(points, ingest::Branch::kDesorption, map, options);
  const Recovery r = Check(d, "stepwise, 60 points");
  ExpectRecovered(r);
  EXPECT_LT(r.total_volume_error, 0.05);
  EXPECT_NEAR(d.resolved_radius_min_m / kNm, 1.0, 1e-6);
}

// Issue: a stepwise method that sets negative steps to 0 put 13 % too much volume on noisy
// data. Without a film the step volumes telescope: their sum is (u_top - u(RH of 1 nm)) / rho_w
// whatever the points between do (here a zig-zag with two falling steps), and a step whose
// volume is not significant is merged into a bar with a neighbour it cannot be told from.
TEST(RoundTrip, StepwiseCarriesNegativeStepsAndMergesInsignificantOnes) {
  PoreOptions options;
  options.film = FilmModel::kNone;
  options.band_draws = 500;
  const PoreRadiusMap map(kTemperature_K, physics::Meniscus::kHemispherical, 0.0,
                          MakeFilmCurve(options, nullptr));
  const std::vector<double> rh = {0.30, 0.50, 0.60, 0.65, 0.70, 0.75, 0.80, 0.85, 0.90};
  const std::vector<double> u = {0.010, 0.020, 0.030, 0.036, 0.034, 0.045, 0.043, 0.060, 0.070};
  std::vector<MeasuredPoint> points;
  for (std::size_t i = 0; i < rh.size(); ++i) {
    MeasuredPoint p(rh[i], u[i], 0.002);
    p.u_rh_fraction = 0.003;
    points.push_back(p);
  }
  const PoreDistribution d =
      StepwisePoreDistribution(points, ingest::Branch::kDesorption, map, options);
  const double rh_1nm = map.RhForPoreRadius(1e-9);
  // r_K = 2 gamma V_m / (R T ln(1/RH)) = 1 nm at RH 0.35 (23 degC, hemispherical).
  ASSERT_GT(rh_1nm, 0.30);
  ASSERT_LT(rh_1nm, 0.50);
  const double u_1nm = 0.010 + (rh_1nm - 0.30) / 0.20 * (0.020 - 0.010);
  const double rho = physics::LiquidWaterDensity_kg_per_m3(kTemperature_K);
  EXPECT_NEAR(d.total_resolved_volume_m3_per_kg, (0.070 - u_1nm) / rho, 1e-15);
  EXPECT_EQ(d.negative_steps_carried, 2);
  EXPECT_EQ(d.negative_steps_clamped, 0);
  ASSERT_EQ(d.steps.size(), 8u);
  int negative = 0;
  for (const PoreStep& step : d.steps) negative += step.volume_m3_per_kg < 0.0;
  EXPECT_EQ(negative, 2);
  // The falling steps are not significant (0.002 kg/kg noise per point): each lies in a bar
  // that is not significant, or was merged into one with a neighbour.
  EXPECT_LT(d.points.size(), d.steps.size());
  for (const PoreStep& step : d.steps) {
    std::printf("step %.3g-%.3g nm: %.3g +- %.2g mm3/g, bar %d%s\n", step.radius_low_m / kNm,
                step.radius_high_m / kNm, step.volume_m3_per_kg * 1e6,
                step.u_volume_m3_per_kg * 1e6, step.bar,
                step.bar_significant ? " (significant)" : "");
    if (step.volume_m3_per_kg >= 0.0) continue;
    int in_bar = 0;
    for (const PoreStep& other : d.steps) in_bar += other.bar == step.bar;
    EXPECT_TRUE(in_bar >= 2 || !step.bar_significant);
  }
  EXPECT_GT(d.u_total_resolved_volume_m3_per_kg, 0.0);
}

// Fits `model_name` to 40 points of the synthetic desorption isotherm (equally spaced in log r
// between 0.9 nm and 200 nm, sigma 1e-4 kg/kg) and inverts the fitted curve.
Recovery FitAndInvert(const std::string& model_name) {
  const PoreRadiusMap map = DesorptionMap();
  const ForwardPores forward(map);
  const fitters::Model* model = fitters::FindModel(model_name);
  EXPECT_NE(model, nullptr);
  if (model == nullptr) return Recovery{};
  std::vector<fitters::Observation> observations;
  const int n = 40;
  for (int i = 0; i < n; ++i) {
    const double r = 0.9 * kNm * std::pow(200.0 / 0.9, static_cast<double>(i) / (n - 1));
    fitters::Observation o;
    o.x[0] = map.RhForPoreRadius(r);
    o.y = forward.Moisture(o.x[0], 1.0, 1.0);
    o.sigma_y = 1e-4;
    observations.push_back(o);
  }
  fitters::ModelContext context;
  context.temperature_K = kTemperature_K;
  const fitters::FitResult fit =
      fitters::FitModel(*model, observations, context, fitters::FitOptions{});
  EXPECT_TRUE(fit.ok()) << fit.summary.message;
  std::printf("%s fit: rmse %.3g kg/kg\n", model_name.c_str(), fit.statistics.rmse);
  ModelCurve curve;
  curve.model = model;
  curve.name = model_name;
  curve.parameters = fit.parameters;
  curve.covariance = fit.covariance;
  curve.context = context;
  const PoreDistribution d = ModelPoreDistribution(curve, ingest::Branch::kDesorption,
                                                   observations.back().x[0], map, PoreOptions{});
  EXPECT_EQ(d.band_source, "parameter covariance");
  return Check(d, "model, fitted " + model_name);
}

TEST(RoundTrip, ModelMethodOnFittedDurner3RecoversModesAndFractions) {
  // Three van Genuchten systems follow the isotherm closely (rmse about 2e-4 kg/kg, 0.2 % of
  // the pore volume): the full 10 % criterion holds.
  ExpectRecovered(FitAndInvert("durner3"));
}

TEST(RoundTrip, ModelMethodOnFittedDurner2IsLimitedByItsShape) {
  // Two van Genuchten systems cannot follow two log-normal families plus the film (rmse about
  // 1.7e-3 kg/kg): measured, the small mode comes out about 16 % low and its volume fraction
  // about 12 % high; the large mode within 4 %. This is the error of representing the isotherm
  // by durner2, not of the inversion (the exact isotherm recovers everything within 0.2 %).
  const Recovery r = FitAndInvert("durner2");
  EXPECT_LT(r.large_mode_error, 0.10);
  EXPECT_LT(r.large_fraction_error, 0.10);
  EXPECT_LT(r.small_mode_error, 0.20);
  EXPECT_LT(r.small_fraction_error, 0.15);
}

}  // namespace
}  // namespace sorbtrace::pores::internal
