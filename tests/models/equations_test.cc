// Values of the isotherm equations against their published forms, and the BET consistency
// criteria.
#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "fitters/models/bet.h"
#include "fitters/models/durner.h"
#include "fitters/models/gab.h"
#include "fitters/models/halsey.h"
#include "fitters/models/henderson.h"
#include "fitters/models/oswin.h"
#include "fitters/models/peleg.h"
#include "fitters/models/van_genuchten.h"
#include "fitters/registry.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::fitters::models {
namespace {

const ModelContext kContext{};  // 23 degC

double At(const Model& model, const std::vector<double>& params, double rh,
          const ModelContext& context = kContext) {
  const double x[kMaxInputs] = {rh, 0.0};
  return model.Evaluate(params.data(), x, context);
}

// Check values derived by hand from the published GAB equation (Guggenheim 1966; Anderson 1946;
// de Boer 1953) and the BET equation (Brunauer, Emmett & Teller, J. Am. Chem. Soc. 60 (1938)
// 309) with X_m = 0.05, C = 10, K = 0.8 (BET: K = 1), rounded to 6 decimals.
struct IsothermValue {
  double a_w;
  double gab;
  double bet;
};
constexpr IsothermValue kIsothermValues[] = {
    {0.1, 0.025278, 0.029240}, {0.3, 0.049967, 0.057915}, {0.5, 0.072464, 0.090909},
    {0.8, 0.131492, 0.243902}, {0.9, 0.171887, 0.494505},
};
constexpr double kSixDecimals = 5e-7;  // half a unit in the last tabulated digit

TEST(GabTest, MatchesHandDerivedValues) {
  for (const IsothermValue& v : kIsothermValues) {
    EXPECT_NEAR(At(GabModel(), {0.05, 10.0, 0.8}, v.a_w), v.gab, kSixDecimals) << "a_w " << v.a_w;
  }
}

TEST(GabTest, ReducesToBetAtKEqualOne) {
  for (const IsothermValue& v : kIsothermValues) {
    EXPECT_NEAR(At(GabModel(), {0.05, 10.0, 1.0}, v.a_w), v.bet, kSixDecimals) << "a_w " << v.a_w;
  }
}

TEST(BetTest, MatchesHandDerivedValues) {
  for (const IsothermValue& v : kIsothermValues) {
    EXPECT_NEAR(At(BetModel(), {0.05, 10.0}, v.a_w), v.bet, kSixDecimals) << "a_w " << v.a_w;
  }
}

TEST(BetTest, DefaultValidityRangeIsTheBetRange) {
  // 0.05..0.35: classical 0.05..0.30 (Sing et al., Pure Appl. Chem. 57 (1985) 603, from memory)
  // widened for water vapour (common practice).
  EXPECT_DOUBLE_EQ(BetModel().info().x_min, 0.05);
  EXPECT_DOUBLE_EQ(BetModel().info().x_max, 0.35);
}

TEST(BetNLayerTest, OneLayerIsLangmuir) {
  // n = 1 in the n-layer BET equation (Brunauer, Emmett & Teller 1938) gives the Langmuir
  // isotherm X_m C a / (1 + C a) (derived by cancelling (1 - a)^2).
  for (double a : {0.1, 0.4, 0.8}) {
    EXPECT_NEAR(At(BetNLayerModel(), {0.05, 10.0, 1.0}, a), 0.05 * 10.0 * a / (1.0 + 10.0 * a),
                1e-14);
  }
}

TEST(BetNLayerTest, ManyLayersApproachBet) {
  // The n-layer terms differ from BET by O(a^n): at a = 0.3 and n = 50, 0.3^50 ~ 7e-27.
  for (double a : {0.1, 0.3}) {
    EXPECT_NEAR(At(BetNLayerModel(), {0.05, 10.0, 50.0}, a), At(BetModel(), {0.05, 10.0}, a),
                1e-14);
  }
}

TEST(BetNLayerTest, SaturationLimitIsContinuous) {
  // Limit at a -> 1 (l'Hopital on the 1938 equation): X_m C n (n + 1) / (2 (1 + C n)).
  const double limit = 0.05 * 10.0 * 5.0 * 6.0 / (2.0 * (1.0 + 10.0 * 5.0));
  EXPECT_NEAR(At(BetNLayerModel(), {0.05, 10.0, 5.0}, 1.0), limit, 1e-15);
  EXPECT_NEAR(At(BetNLayerModel(), {0.05, 10.0, 5.0}, 1.0 - 1e-5), limit, 1e-4 * limit);
}

TEST(VanGenuchtenTest, EffectiveSaturationMatchesHandDerivedValues) {
  // Derived from the van Genuchten (1980) equation S_e = [1 + (alpha h)^n]^(-m), m = 1 - 1/n,
  // with alpha = 0.01 per unit of h and n = 2.
  struct Check {
    double h;
    double s_e;
  };
  for (const Check c : {Check{10.0, 0.995037}, Check{100.0, 0.707107}, Check{1000.0, 0.099504}}) {
    EXPECT_NEAR(VanGenuchtenSaturationFromLog(std::log(0.01 * c.h), 2.0, 0.5), c.s_e, kSixDecimals)
        << "h " << c.h;
  }
}

TEST(VanGenuchtenTest, ModelUsesKelvinCapillaryPressure) {
  // u_sat = 1, alpha = 0.01 1/Pa (log10 = -2), n = 2: at the RH whose capillary pressure is
  // 100 Pa, u = S_e(100) = 0.707107 (same derivation as above).
  const double temperature_K = kContext.temperature_K;
  const double rh = physics::RhFromCapillaryPressure(100.0, temperature_K);
  EXPECT_NEAR(At(VanGenuchtenModel(), {1.0, -2.0, 2.0}, rh), 0.707107, kSixDecimals);
  EXPECT_NEAR(At(VanGenuchtenFreeMModel(), {1.0, -2.0, 2.0, 0.5}, rh), 0.707107, kSixDecimals);
}

TEST(VanGenuchtenTest, KelvinFactorAgreesWithPhysics) {
  for (double rh : {0.1, 0.5, 0.9, 0.999}) {
    const double expected = physics::CapillaryPressure_Pa(rh, kContext.temperature_K);
    EXPECT_NEAR(-KelvinPressureFactor_Pa(kContext.temperature_K) * std::log(rh), expected,
                1e-12 * expected);
  }
  // p_c = 94.51 MPa at 23 degC and RH 0.5: derived from p_c = -(rho_w R T / M_w) ln(RH) with
  // Kell (1975) density, CODATA 2018 R and the IAPWS-95 molar mass.
  EXPECT_NEAR(-KelvinPressureFactor_Pa(296.15) * std::log(0.5), 94.51e6, 0.01e6);
}

TEST(VanGenuchtenTest, PrecisionNearSaturation) {
  // Documented limit: about 1e-8 relative at p_c = 1 Pa (a_w stored in double).
  const double rh = physics::RhFromCapillaryPressure(1.0, kContext.temperature_K);
  const double p_c = -KelvinPressureFactor_Pa(kContext.temperature_K) * std::log(rh);
  EXPECT_NEAR(p_c, 1.0, 1e-7);
}

TEST(VanGenuchtenTest, EndPoints) {
  EXPECT_DOUBLE_EQ(At(VanGenuchtenModel(), {0.3, -7.0, 1.8}, 1.0), 0.3);
  EXPECT_DOUBLE_EQ(At(VanGenuchtenModel(), {0.3, -7.0, 1.8}, 0.0), 0.0);
  // Very large alpha p_c: no overflow in [1 + (alpha p_c)^n]^(-m).
  const double far = At(VanGenuchtenModel(), {0.3, 0.0, 20.0}, 0.01);
  EXPECT_TRUE(std::isfinite(far));
  EXPECT_GE(far, 0.0);
  EXPECT_LT(far, 1e-100);
}

TEST(DurnerTest, ReducesToVanGenuchten) {
  // Durner (1994): a weighted sum of van Genuchten curves. One system carrying all weight, or
  // coinciding systems, give the van Genuchten curve.
  const std::vector<double> vg = {0.3, -7.2, 1.7};
  for (double a : {0.2, 0.6, 0.95}) {
    const double expected = At(VanGenuchtenModel(), vg, a);
    EXPECT_NEAR(At(Durner2Model(), {0.3, 1.0, -7.2, 1.7, 2.0, 3.0}, a), expected, 1e-15);
    EXPECT_NEAR(At(Durner2Model(), {0.3, 0.37, -7.2, 1.7, 0.0, 1.7}, a), expected, 1e-15);
    EXPECT_NEAR(At(Durner3Model(), {0.3, 0.2, 0.7, -7.2, 1.7, 0.0, 1.7, 0.0, 1.7}, a), expected,
                1e-15);
  }
}

TEST(DurnerTest, WeightsAndOrdering) {
  // Weighted sum of the systems with alpha2 = alpha1 / 10^d2 (the documented parametrisation).
  const double a = 0.7;
  const double s1 = At(VanGenuchtenModel(), {1.0, -6.5, 2.0}, a);
  const double s2 = At(VanGenuchtenModel(), {1.0, -8.0, 1.5}, a);
  const double s3 = At(VanGenuchtenModel(), {1.0, -9.0, 3.0}, a);
  EXPECT_NEAR(At(Durner2Model(), {0.2, 0.4, -6.5, 2.0, 1.5, 1.5}, a), 0.2 * (0.4 * s1 + 0.6 * s2),
              1e-15);
  const std::vector<double> p3 = {0.2, 0.4, 0.25, -6.5, 2.0, 1.5, 1.5, 1.0, 3.0};
  const std::vector<double> w = Durner3Weights(p3.data());
  EXPECT_NEAR(w[0] + w[1] + w[2], 1.0, 1e-15);
  EXPECT_NEAR(w[1], 0.6 * 0.25, 1e-15);
  EXPECT_NEAR(At(Durner3Model(), p3, a), 0.2 * (w[0] * s1 + w[1] * s2 + w[2] * s3), 1e-15);
}

TEST(OswinTest, ParameterAIsTheValueAtHalfActivity) {
  // Oswin (1946): u = A (a/(1-a))^B, so u(0.5) = A for any B.
  EXPECT_NEAR(At(OswinModel(), {0.08, 0.4}, 0.5), 0.08, 1e-16);
  EXPECT_NEAR(At(OswinModel(), {0.08, 0.4}, 0.8), 0.08 * std::pow(4.0, 0.4), 1e-15);
}

TEST(HalseyTest, SatisfiesTheDefiningEquation) {
  // Halsey (1948): a_w = exp(-A / u^B).
  for (double a : {0.1, 0.5, 0.9}) {
    const double u = At(HalseyModel(), {0.016, 1.5}, a);
    EXPECT_NEAR(std::exp(-0.016 / std::pow(u, 1.5)), a, 1e-14);
  }
}

TEST(HendersonTest, SatisfiesTheDefiningEquation) {
  // Henderson (1952), isothermal: 1 - a_w = exp(-k u^n).
  for (double a : {1e-6, 0.1, 0.5, 0.9}) {
    const double u = At(HendersonModel(), {29.0, 1.5}, a);
    EXPECT_NEAR(-std::expm1(-29.0 * std::pow(u, 1.5)), a, 1e-14 * a);
  }
}

TEST(PelegTest, SumOfTwoPowerTerms) {
  // Peleg (1993): u = k1 a^n1 + k2 a^n2.
  EXPECT_NEAR(At(PelegModel(), {0.1, 0.5, 0.2, 5.0}, 0.5),
              0.1 * std::sqrt(0.5) + 0.2 * std::pow(0.5, 5.0), 1e-16);
  EXPECT_DOUBLE_EQ(At(PelegModel(), {0.1, 0.5, 0.2, 5.0}, 0.0), 0.0);
}

TEST(PhysicalFlagsTest, GabFlagsImplausibleConstants) {
  const double doubtful_k[] = {0.05, 10.0, 1.05};
  const double negative_c[] = {0.05, -1.0, 0.8};
  const double plausible[] = {0.05, 10.0, 0.8};
  const double low_c[] = {0.05, 3.0, 0.8};
  EXPECT_EQ(GabModel().PhysicalFlags(doubtful_k).size(), 1u);
  EXPECT_FALSE(GabModel().PhysicalFlags(negative_c).empty());
  EXPECT_TRUE(GabModel().PhysicalFlags(plausible).empty());
  ASSERT_EQ(GabModel().PhysicalFlags(low_c).size(), 1u);  // Lewicki (1997), from memory
  EXPECT_NE(GabModel().PhysicalFlags(low_c)[0].find("Lewicki"), std::string::npos);
}

std::vector<Observation> PointsFrom(const Model& model, const std::vector<double>& params,
                                    const std::vector<double>& rh) {
  std::vector<Observation> points;
  for (double a : rh) {
    Observation o;
    o.x[0] = a;
    o.y = At(model, params, a);
    points.push_back(o);
  }
  return points;
}

// Rouquerol, Llewellyn & Rouquerol, Stud. Surf. Sci. Catal. 160 (2007) 49 (wording from memory).
TEST(RouquerolTest, ExactBetDataMeetAllCriteria) {
  const std::vector<Observation> points =
      PointsFrom(BetModel(), {0.05, 10.0}, {0.05, 0.1, 0.15, 0.2, 0.25, 0.3, 0.35});
  const RouquerolCriteria r = CheckRouquerolCriteria(0.05, 10.0, points);
  EXPECT_TRUE(r.AllMet()) << (r.messages.empty() ? "" : r.messages.front());
  EXPECT_NEAR(r.bet_rh_at_monolayer, 1.0 / (std::sqrt(10.0) + 1.0), 1e-15);
  // Linear interpolation on the curve lands close to the exact a_w at u = X_m.
  EXPECT_NEAR(r.measured_rh_at_monolayer, r.bet_rh_at_monolayer, 0.01);
}

TEST(RouquerolTest, NegativeCFailsCriterionOne) {
  const std::vector<Observation> points =
      PointsFrom(BetModel(), {0.05, 10.0}, {0.05, 0.1, 0.2, 0.3});
  const RouquerolCriteria r = CheckRouquerolCriteria(0.05, -3.0, points);
  EXPECT_FALSE(r.c_positive);
  EXPECT_FALSE(r.monolayer_position_consistent);
  EXPECT_FALSE(r.AllMet());
}

TEST(RouquerolTest, HighActivityGabDataFailCriterionTwo) {
  // With K < 1, u (1 - a) of the GAB curve falls again towards a = 1.
  const std::vector<Observation> points =
      PointsFrom(GabModel(), {0.05, 10.0, 0.8}, {0.1, 0.3, 0.5, 0.7, 0.9, 0.97});
  const RouquerolCriteria r = CheckRouquerolCriteria(0.05, 10.0, points);
  EXPECT_FALSE(r.monotonic);
  EXPECT_TRUE(r.c_positive);
}

TEST(RouquerolTest, MonolayerOutsideRangeFailsCriterionThree) {
  const std::vector<Observation> points = PointsFrom(BetModel(), {0.05, 10.0}, {0.3, 0.33, 0.35});
  const RouquerolCriteria r = CheckRouquerolCriteria(0.05, 10.0, points);
  EXPECT_TRUE(r.monotonic);
  EXPECT_FALSE(r.monolayer_in_range);
  EXPECT_TRUE(std::isnan(r.measured_rh_at_monolayer));
  EXPECT_FALSE(r.monolayer_position_consistent);
}

TEST(RouquerolTest, InconsistentCFailsCriterionFour) {
  const std::vector<Observation> points =
      PointsFrom(BetModel(), {0.05, 10.0}, {0.05, 0.1, 0.15, 0.2, 0.25, 0.3, 0.35});
  const RouquerolCriteria r = CheckRouquerolCriteria(0.05, 100.0, points);
  EXPECT_TRUE(r.monolayer_in_range);
  EXPECT_FALSE(r.monolayer_position_consistent);
  EXPECT_GT(r.relative_difference, 0.10);
}

}  // namespace
}  // namespace sorbtrace::fitters::models
