// Datasheet quantities of the pores stage: surface area, reference moisture contents,
// hygroscopicity class, hysteresis and isosteric heat, through AnalysePores on fit-stage
// results built by hand (known GAB parameters) or fitted to synthetic data.

#include "pipeline/pores/quantities.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <string>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/registry.h"
#include "pipeline/physics/physics.h"
#include "pipeline/pores/pores.h"
#include "pipeline/pores/sampling.h"
#include "pores_test_util.h"

namespace sorbtrace::pores {
namespace {

using testing::Gab;
using testing::MakeFit;
using testing::MakeGroup;

double K(double temperature_C) { return physics::CelsiusToKelvin(temperature_C); }

std::vector<double> RhGrid(double low, double high, int n) {
  std::vector<double> rh;
  for (int i = 0; i < n; ++i) rh.push_back(low + (high - low) * i / (n - 1));
  return rh;
}

// One adsorption (and optionally desorption) GAB group per temperature, parameters known.
fit::IsothermFits GabFits(const std::vector<double>& temperatures_K, double rh_low, double rh_high,
                          const std::vector<double>& gab, const Eigen::MatrixXd& covariance) {
  fit::IsothermFits fits;
  for (double t : temperatures_K) {
    const std::vector<double> rh = RhGrid(rh_low, rh_high, 8);
    std::vector<double> u;
    for (double a : rh) u.push_back(Gab(gab[0], gab[1], gab[2], a));
    fits.groups.push_back(MakeGroup(ingest::Branch::kAdsorption, t, rh, u, 1e-4));
    const int g = static_cast<int>(fits.groups.size()) - 1;
    fits.fits.push_back(MakeFit("gab", g, gab, covariance));
    fits.best_fit_per_group.push_back(static_cast<int>(fits.fits.size()) - 1);
  }
  return fits;
}

PoreOptions QuantitiesOnly() {
  PoreOptions options;
  options.stepwise = false;
  options.band_draws = 0;
  return options;
}

TEST(SurfaceArea, HandCalculation) {
  // S = X_m / M_w * N_A * a_m: 0.05 kg/kg / 0.018015268 kg/mol (IAPWS-95 molar mass) =
  // 2.775424 mol/kg; * 6.02214076e23 /mol (SI 2019) = 1.671399e24 /kg; * 0.106e-18 m2 (water
  // cross-section, Emmett & Brunauer 1937 J. Am. Chem. Soc. 59, 1553, from memory) =
  // 1.771683e5 m2/kg = 177.168 m2/g.
  EXPECT_NEAR(internal::SurfaceArea_m2_per_g(0.05, 0.106e-18), 177.168, 0.001);
  // With 0.125 nm2 (McClellan & Harnsberger 1967 J. Colloid Interface Sci. 23, 577, from
  // memory) the area is larger by 0.125/0.106: 208.925 m2/g.
  EXPECT_NEAR(internal::SurfaceArea_m2_per_g(0.05, 0.125e-18), 208.925, 0.001);
}

TEST(SurfaceArea, FromGabFitWithUncertainty) {
  Eigen::MatrixXd cov = Eigen::MatrixXd::Zero(3, 3);
  cov(0, 0) = 1e-6;  // u(X_m) = 0.001 kg/kg
  cov(1, 1) = 1.0;
  cov(2, 2) = 1e-4;
  const fit::IsothermFits fits = GabFits({K(23)}, 0.1, 0.9, {0.05, 10.0, 0.7}, cov);
  const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, QuantitiesOnly());
  ASSERT_EQ(a.surface_areas.size(), 1u);
  EXPECT_EQ(a.surface_areas[0].model_name, "gab");
  // Hand calculation above: 177.168 m2/g; u(S) = S u(X_m) / X_m = 177.168 * 0.02 = 3.543.
  EXPECT_NEAR(a.surface_areas[0].area_m2_per_g, 177.168, 0.001);
  EXPECT_NEAR(a.surface_areas[0].u_area_m2_per_g, 3.543, 0.001);
}

TEST(Hygroscopicity, PharmacopoeiaClassBoundaries) {
  // Ph. Eur. 5.11 (thresholds as quoted from Swarbrick, Encyclopedia of Pharmaceutical Technology, 3rd ed., 2007): very hygroscopic >= 15 %, hygroscopic 2..15 %,
  // slightly hygroscopic 0.2..2 %, below 0.2 % non-hygroscopic.
  EXPECT_EQ(internal::HygroscopicityClassName(0.19), "non-hygroscopic");
  EXPECT_EQ(internal::HygroscopicityClassName(0.2), "slightly hygroscopic");
  EXPECT_EQ(internal::HygroscopicityClassName(1.99), "slightly hygroscopic");
  EXPECT_EQ(internal::HygroscopicityClassName(2.0), "hygroscopic");
  EXPECT_EQ(internal::HygroscopicityClassName(14.99), "hygroscopic");
  EXPECT_EQ(internal::HygroscopicityClassName(15.0), "very hygroscopic");
}

TEST(Hygroscopicity, FromAdsorptionFitAt25CSpanning80Percent) {
  Eigen::MatrixXd cov = Eigen::MatrixXd::Identity(3, 3) * 1e-8;
  const fit::IsothermFits fits = GabFits({K(25)}, 0.1, 0.9, {0.05, 10.0, 0.7}, cov);
  const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, QuantitiesOnly());
  ASSERT_TRUE(a.hygroscopicity.applicable) << a.hygroscopicity.reason;
  // GAB at 0.8: 0.05*10*0.56 / (0.44 * (0.44 + 5.6)) = 0.28 / 2.6576 = 0.10536 -> 10.536 %.
  EXPECT_NEAR(a.hygroscopicity.mass_increase_percent, 10.536, 0.001);
  EXPECT_EQ(a.hygroscopicity.class_name, "hygroscopic");
  EXPECT_NE(a.hygroscopicity.reason.find("as received"), std::string::npos);
}

TEST(Hygroscopicity, NotApplicableAwayFrom25COrWithout80Percent) {
  Eigen::MatrixXd cov = Eigen::MatrixXd::Identity(3, 3) * 1e-8;
  const PoreAnalysis at23 =
      AnalysePores(reduce::ReducedIsotherms{}, GabFits({K(23)}, 0.1, 0.9, {0.05, 10.0, 0.7}, cov),
                   QuantitiesOnly());
  EXPECT_FALSE(at23.hygroscopicity.applicable);
  EXPECT_NE(at23.hygroscopicity.reason.find("25 +- 1 degC"), std::string::npos)
      << at23.hygroscopicity.reason;
  const PoreAnalysis short_range =
      AnalysePores(reduce::ReducedIsotherms{}, GabFits({K(25)}, 0.1, 0.75, {0.05, 10.0, 0.7}, cov),
                   QuantitiesOnly());
  EXPECT_FALSE(short_range.hygroscopicity.applicable);
  EXPECT_NE(short_range.hygroscopicity.reason.find("80 % RH is outside the measured range"),
            std::string::npos)
      << short_range.hygroscopicity.reason;
  // A highest step at 79 % RH is inside the 80 +- 2 % RH tolerance of Ph. Eur. 5.11 (from
  // memory): applicable, and said so.
  const PoreAnalysis near =
      AnalysePores(reduce::ReducedIsotherms{}, GabFits({K(25)}, 0.1, 0.79, {0.05, 10.0, 0.7}, cov),
                   QuantitiesOnly());
  EXPECT_TRUE(near.hygroscopicity.applicable) << near.hygroscopicity.reason;
  EXPECT_NE(near.hygroscopicity.reason.find("79.00 % RH, within the 80 +- 2 % RH tolerance"),
            std::string::npos)
      << near.hygroscopicity.reason;
}

TEST(ReferenceMoisture, ValueAndDeltaMethodUncertaintyWithFlags) {
  Eigen::MatrixXd cov(3, 3);
  cov << 4e-6, -1e-4, 0.0, -1e-4, 0.25, 1e-5, 0.0, 1e-5, 1e-4;
  const std::vector<double> p = {0.05, 10.0, 0.7};
  const fit::IsothermFits fits = GabFits({K(23)}, 0.1, 0.7, p, cov);
  const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, QuantitiesOnly());
  ASSERT_EQ(a.reference_moisture.size(), 2u);  // EN ISO 10456 convention: 23 degC, 50 / 80 %
  for (const ReferenceMoisture& r : a.reference_moisture) {
    const double rh = r.condition.rh_fraction;
    EXPECT_NEAR(r.moisture_kg_per_kg, Gab(p[0], p[1], p[2], rh), 1e-14);
    // Delta method by hand with a central-difference gradient (JCGM 100:2008, 5.1.2).
    Eigen::Vector3d g;
    for (int i = 0; i < 3; ++i) {
      std::vector<double> hi = p, lo = p;
      const double h = 1e-6 * std::abs(p[static_cast<std::size_t>(i)]);
      hi[static_cast<std::size_t>(i)] += h;
      lo[static_cast<std::size_t>(i)] -= h;
      g(i) = (Gab(hi[0], hi[1], hi[2], rh) - Gab(lo[0], lo[1], lo[2], rh)) / (2 * h);
    }
    EXPECT_NEAR(r.u_moisture_kg_per_kg, std::sqrt(g.dot(cov * g)), 1e-8);
    EXPECT_TRUE(r.temperature_matches);
  }
  EXPECT_TRUE(a.reference_moisture[0].flags.empty());
  ASSERT_EQ(a.reference_moisture[1].flags.size(), 1u);
  EXPECT_EQ(a.reference_moisture[1].flags[0],
            "extrapolated: 80 % RH is outside the measured range 10.0..70.0 % RH");

  // A highest step at 79.8 % RH: 80 % is within half a percent RH, not an extrapolation.
  const PoreAnalysis top_step = AnalysePores(
      reduce::ReducedIsotherms{}, GabFits({K(23)}, 0.1, 0.798, p, cov), QuantitiesOnly());
  EXPECT_TRUE(top_step.reference_moisture[1].flags.empty());

  const PoreAnalysis other_t = AnalysePores(reduce::ReducedIsotherms{},
                                            GabFits({K(30)}, 0.1, 0.9, p, cov), QuantitiesOnly());
  EXPECT_FALSE(other_t.reference_moisture[0].temperature_matches);
  ASSERT_FALSE(other_t.reference_moisture[0].flags.empty());
  EXPECT_EQ(other_t.reference_moisture[0].flags[0],
            "fitted at 30.00 degC, reference 23.00 degC: not converted to the reference "
            "temperature");
}

TEST(Hysteresis, DifferenceOfTwoGabFitsAndItsSignificance) {
  const std::vector<double> ads = {0.05, 10.0, 0.7};
  const std::vector<double> des = {0.06, 10.0, 0.7};
  for (double scale : {1e-10, 1e-2}) {
    const Eigen::MatrixXd cov = Eigen::MatrixXd::Identity(3, 3) * scale;
    fit::IsothermFits fits = GabFits({K(23)}, 0.1, 0.9, ads, cov);
    const std::vector<double> rh = RhGrid(0.2, 0.95, 6);
    std::vector<double> u;
    for (double a : rh) u.push_back(Gab(des[0], des[1], des[2], a));
    fits.groups.push_back(MakeGroup(ingest::Branch::kDesorption, K(23), rh, u, 1e-4));
    fits.fits.push_back(MakeFit("gab", 1, des, cov));
    fits.best_fit_per_group.push_back(1);
    const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, QuantitiesOnly());
    ASSERT_EQ(a.hysteresis.size(), 1u);
    const Hysteresis& h = a.hysteresis[0];
    ASSERT_TRUE(h.available) << h.reason;
    ASSERT_EQ(h.points.size(), 41u);
    EXPECT_NEAR(h.points.front().rh_fraction, 0.2, 1e-12);  // overlap of 0.1..0.9 and 0.2..0.95
    EXPECT_NEAR(h.points.back().rh_fraction, 0.9, 1e-12);
    for (const HysteresisPoint& p : h.points) {
      // GAB is linear in X_m: the difference is (0.06 - 0.05) / 0.05 of the adsorption curve.
      EXPECT_NEAR(p.difference_kg_per_kg, 0.2 * Gab(ads[0], ads[1], ads[2], p.rh_fraction), 1e-12);
    }
    EXPECT_NEAR(h.rh_at_max_fraction, 0.9, 1e-12);
    if (scale < 1e-6) {
      EXPECT_TRUE(h.points.front().significant);
      EXPECT_NEAR(h.significant_rh_low_fraction, 0.2, 1e-12);
      EXPECT_NEAR(h.significant_rh_high_fraction, 0.9, 1e-12);
    } else {
      for (const HysteresisPoint& p : h.points) EXPECT_FALSE(p.significant) << p.rh_fraction;
    }
  }
}

TEST(IsostericHeat, TwoPointFormulaByHand) {
  // q = -R (ln a2 - ln a1) / (1/T2 - 1/T1): a_w 0.40 at 15 degC and 0.45 at 35 degC give
  // -8.314462618 * ln(0.45/0.40) / (1/308.15 - 1/288.15) = 4.3478 kJ/mol (by hand:
  // ln(1.125) = 0.117783, 1/308.15 - 1/288.15 = -2.25240e-4).
  double q = 0.0;
  double u = 0.0;
  ASSERT_TRUE(internal::NetIsostericHeat({288.15, 308.15}, {std::log(0.40), std::log(0.45)},
                                         {0.01, 0.01}, &q, &u));
  EXPECT_NEAR(q, 4347.7, 1.0);
  // u(q) = R sqrt(0.01^2 + 0.01^2) / |1/T2 - 1/T1| = 8.314462618 * 0.0141421 / 2.2524e-4.
  EXPECT_NEAR(u, 522.0, 1.0);
}

TEST(IsostericHeat, VaporisationEnthalpyFromClausiusClapeyron) {
  // Enthalpy of vaporisation of water at 25 degC: 2441.7 kJ/kg * 18.015 g/mol = 43.99 kJ/mol
  // (IAPWS-95 tables, Wagner & Pruss 2002, from memory); the ideal-gas Clausius-Clapeyron slope
  // is higher by 1/Z of the saturated vapour (Z = 0.9985 at 25 degC), within 0.5 %.
  EXPECT_NEAR(internal::ClausiusClapeyronEnthalpy_J_per_mol(K(25)) / 43990.0, 1.0, 0.005);
}

TEST(IsostericHeat, NotAvailableWithOneTemperature) {
  const PoreAnalysis a = AnalysePores(
      reduce::ReducedIsotherms{},
      GabFits({K(23)}, 0.1, 0.9, {0.05, 10.0, 0.7}, Eigen::MatrixXd::Identity(3, 3) * 1e-8),
      QuantitiesOnly());
  ASSERT_EQ(a.isosteric_heat.size(), 1u);
  EXPECT_FALSE(a.isosteric_heat[0].available);
  EXPECT_EQ(a.isosteric_heat[0].reason,
            "not available: the isosteric heat needs adsorption isotherms at two or more "
            "temperatures; found 1");
}

// Synthetic isotherms built from a known heat: GAB with K(T) = K_ref exp(q/R (1/T - 1/T_ref)),
// so that at constant u the product K(T) a_w is constant and ln a_w = const - (q/R)(1/T - 1/T_ref):
// q_st,net = q exactly (derived from the GAB equation). Noisy points are fitted by the GAB of
// the registry; the recovered heat must agree with q within its expanded uncertainty (k = 2).
TEST(IsostericHeat, RecoversKnownHeatFromFittedSyntheticIsotherms) {
  const double q_true = 5000.0;  // J/mol
  const double t_ref = K(25);
  const fitters::Model* gab = fitters::FindModel("gab");
  ASSERT_NE(gab, nullptr);
  internal::NormalSource noise(12345);
  fit::IsothermFits fits;
  for (double t : {K(15), K(25), K(35)}) {
    const double k_t =
        0.75 * std::exp(q_true / physics::kMolarGasConstant_J_per_mol_K * (1.0 / t - 1.0 / t_ref));
    const std::vector<double> rh = RhGrid(0.05, 0.9, 18);
    std::vector<double> u;
    for (double a : rh) u.push_back(Gab(0.06, 12.0, k_t, a) + 2e-4 * noise.Normal());
    fits.groups.push_back(MakeGroup(ingest::Branch::kAdsorption, t, rh, u, 2e-4));
    fitters::ModelContext context;
    context.temperature_K = t;
    const fitters::FitResult r =
        fitters::FitModel(*gab, fits.groups.back().observations, context, fitters::FitOptions{});
    ASSERT_TRUE(r.ok()) << r.summary.message;
    fits.fits.push_back(
        MakeFit("gab", static_cast<int>(fits.groups.size()) - 1, r.parameters, r.covariance));
    fits.best_fit_per_group.push_back(static_cast<int>(fits.fits.size()) - 1);
  }
  const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, QuantitiesOnly());
  ASSERT_EQ(a.isosteric_heat.size(), 1u);
  const IsostericHeat& q = a.isosteric_heat[0];
  ASSERT_TRUE(q.available) << q.reason;
  ASSERT_EQ(q.points.size(), 21u);
  double worst = 0.0;
  for (const IsostericHeatPoint& p : q.points) {
    EXPECT_GT(p.u_net_heat_J_per_mol, 0.0);
    EXPECT_LT(std::abs(p.net_heat_J_per_mol - q_true), 2.0 * p.u_net_heat_J_per_mol)
        << "u = " << p.moisture_kg_per_kg << " q = " << p.net_heat_J_per_mol << " +- "
        << p.u_net_heat_J_per_mol;
    EXPECT_NEAR(p.total_heat_J_per_mol - p.net_heat_J_per_mol,
                internal::ClausiusClapeyronEnthalpy_J_per_mol(
                    3.0 / (1.0 / K(15) + 1.0 / K(25) + 1.0 / K(35))),
                1e-6);
    worst = std::max(worst, std::abs(p.net_heat_J_per_mol - q_true) / p.u_net_heat_J_per_mol);
  }
  std::printf(
      "isosteric heat: first point %.0f +- %.0f J/mol, middle %.0f +- %.0f J/mol; worst "
      "|q - q_true| / u = %.2f\n",
      q.points.front().net_heat_J_per_mol, q.points.front().u_net_heat_J_per_mol,
      q.points[10].net_heat_J_per_mol, q.points[10].u_net_heat_J_per_mol, worst);
}

TEST(IsostericHeat, ExactForNoiseFreeParametersAtTwoTemperatures) {
  const double q_true = 8000.0;
  const double t_ref = K(20);
  fit::IsothermFits fits;
  for (double t : {K(20), K(40)}) {
    const double k_t =
        0.7 * std::exp(q_true / physics::kMolarGasConstant_J_per_mol_K * (1.0 / t - 1.0 / t_ref));
    const std::vector<double> rh = RhGrid(0.1, 0.85, 8);
    std::vector<double> u;
    for (double a : rh) u.push_back(Gab(0.04, 8.0, k_t, a));
    fits.groups.push_back(MakeGroup(ingest::Branch::kAdsorption, t, rh, u, 1e-4));
    fits.fits.push_back(MakeFit("gab", static_cast<int>(fits.groups.size()) - 1, {0.04, 8.0, k_t},
                                Eigen::MatrixXd::Identity(3, 3) * 1e-10));
    fits.best_fit_per_group.push_back(static_cast<int>(fits.fits.size()) - 1);
  }
  const PoreAnalysis a = AnalysePores(reduce::ReducedIsotherms{}, fits, QuantitiesOnly());
  ASSERT_TRUE(a.isosteric_heat[0].available) << a.isosteric_heat[0].reason;
  for (const IsostericHeatPoint& p : a.isosteric_heat[0].points) {
    EXPECT_NEAR(p.net_heat_J_per_mol, q_true, 1e-6 * q_true);
  }
}

}  // namespace
}  // namespace sorbtrace::pores
