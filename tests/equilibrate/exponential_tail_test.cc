// Extrapolation of an unfinished step: recovery of a known asymptote from synthetic
// first-order, two-exponential and Fickian-sheet kinetics with deterministic noise.
#include "pipeline/equilibrate/exponential_tail.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdint>
#include <numbers>
#include <random>
#include <vector>

namespace sorbtrace::equilibrate::internal {
namespace {

// Standard normal deviates by the Box-Muller transform on std::mt19937_64, so the numbers do
// not depend on the standard library's distributions.
class Normal {
 public:
  explicit Normal(std::uint64_t initial_state) : engine_(initial_state) {}
  double operator()() {
    constexpr double kTwoPow53 = 9007199254740992.0;
    const double u1 = (static_cast<double>(engine_() >> 11) + 1.0) / (kTwoPow53 + 1.0);
    const double u2 = static_cast<double>(engine_() >> 11) / kTwoPow53;
    return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
  }

 private:
  std::mt19937_64 engine_;
};

// Candidates one exponential only (no step start: no Fickian sheet; no second exponential).
TailFitOptions OneTerm() {
  TailFitOptions options;
  options.max_exponential_terms = 1;
  return options;
}

TEST(ExponentialTailTest, RecoversAsymptoteOfFirstOrderKinetics) {
  // Truth: m(t) = 1.0500 - 0.0500 exp(-t / 7200 s); the step stopped at 3 h (t < 1.5 tau), when
  // the mass was still 0.0500 exp(-1.5) = 0.0112 g below the asymptote. Tail: 1..3 h, one
  // block mean per 10 s, balance noise sd 2 ug.
  Normal noise(12571);
  std::vector<double> t, m;
  for (double s = 3600.0; s <= 10800.0; s += 10.0) {
    t.push_back(s);
    m.push_back(1.0500 - 0.0500 * std::exp(-s / 7200.0) + 2e-6 * noise());
  }
  const TailFit fit = FitExponentialTail(t, m, OneTerm());
  ASSERT_TRUE(fit.ok) << fit.message;
  EXPECT_GT(fit.u_m_inf_g, 0.0);
  EXPECT_LT(fit.u_m_inf_g, 1e-4);
  // Within 3 standard uncertainties of the truth (and the uncertainty is small).
  EXPECT_NEAR(fit.m_inf_g, 1.0500, 3.0 * fit.u_m_inf_g);
  EXPECT_NEAR(fit.tau_s, 7200.0, 100.0);
  EXPECT_NEAR(fit.rms_residual_g, 2e-6, 3e-7);
  // Model slope at the end: A/tau exp(-t/tau) = 0.05/7200 exp(-1.5) = 1.5495e-6 g/s.
  EXPECT_NEAR(fit.Slope_g_per_s(10800.0), 0.05 / 7200.0 * std::exp(-1.5), 5e-8);
}

TEST(ExponentialTailTest, DesorptionApproachesFromAbove) {
  // m(t) = 2.000 + 0.030 exp(-t / 3600 s): A = -0.030.
  Normal noise(7);
  std::vector<double> t, m;
  for (double s = 1800.0; s <= 7200.0; s += 10.0) {
    t.push_back(s);
    m.push_back(2.000 + 0.030 * std::exp(-s / 3600.0) + 1e-6 * noise());
  }
  const TailFit fit = FitExponentialTail(t, m, OneTerm());
  ASSERT_TRUE(fit.ok) << fit.message;
  EXPECT_NEAR(fit.m_inf_g, 2.000, 3.0 * fit.u_m_inf_g);
  EXPECT_LT(fit.amplitude_g, 0.0);
}

TEST(ExponentialTailTest, StraightLineHasNoAsymptote) {
  std::vector<double> t, m;
  for (double s = 0.0; s <= 3600.0; s += 10.0) {
    t.push_back(s);
    m.push_back(1.0 + 1e-6 * s);
  }
  const TailFit fit = FitExponentialTail(t, m, OneTerm());
  // Either rejected outright or with a time constant far beyond the tail (rejected upstream
  // by max_tau_to_tail_ratio).
  if (fit.ok) {
    EXPECT_GT(fit.slowest_tau_s, 100.0 * 3600.0);
  } else {
    EXPECT_FALSE(fit.message.empty());
  }
}

TEST(ExponentialTailTest, TwoTermsRecoverAsymptote) {
  // m(t) = 1.100 - 0.060 exp(-t/1800) - 0.040 exp(-t/14400), observed 0.5..8 h.
  Normal noise(42);
  std::vector<double> t, m;
  for (double s = 1800.0; s <= 28800.0; s += 20.0) {
    t.push_back(s);
    m.push_back(1.100 - 0.060 * std::exp(-s / 1800.0) - 0.040 * std::exp(-s / 14400.0) +
                1e-6 * noise());
  }
  const TailFit two = FitExponentialTail(t, m, TailFitOptions{});
  ASSERT_TRUE(two.ok) << two.message;
  ASSERT_EQ(two.terms, 2) << DescribeCandidates(two);
  EXPECT_NEAR(two.m_inf_g, 1.100, 3.0 * two.u_m_inf_g);
  EXPECT_NEAR(two.slowest_tau_s, 14400.0, 1500.0);
  // The one-term model on the same data misses the slow part: its asymptote is further from the
  // truth than the two-term one.
  const TailFit one = FitExponentialTail(t, m, OneTerm());
  ASSERT_TRUE(one.ok);
  EXPECT_GT(std::abs(one.m_inf_g - 1.100), std::abs(two.m_inf_g - 1.100));
}

// A 12 mg specimen (logged in g) cut at 1.5 time constants: m(t) = 0.012600 - 0.000600
// exp(-t / 2400 s), tail 0.6 x 3600 s = 1440..3600 s of 10 s block means, balance noise sd
// 0.2 ug. Returns the tail in the unit given by `grams_to_unit` (1: g, 1e3: mg, 1e6: ug).
void MilligramTail(double grams_to_unit, std::vector<double>& t, std::vector<double>& m) {
  Normal noise(20261203);
  t.clear();
  m.clear();
  for (double s = 1440.0; s <= 3600.0; s += 10.0) {
    t.push_back(s);
    m.push_back((0.012600 - 0.000600 * std::exp(-s / 2400.0) + 0.2e-6 * noise()) * grams_to_unit);
  }
}

TEST(ExponentialTailTest, MilligramSpecimenIsIdentifiable) {
  std::vector<double> t, m;
  MilligramTail(1.0, t, m);
  const TailFit fit = FitExponentialTail(t, m, OneTerm());
  ASSERT_TRUE(fit.ok) << fit.message;
  // The extrapolation adds 0.0006 exp(-1.5) = 134 ug; the asymptote within 3 u of the truth,
  // u well below the extrapolated amount.
  EXPECT_NEAR(fit.m_inf_g, 0.012600, 3.0 * fit.TotalUncertainty_g());
  EXPECT_LT(fit.TotalUncertainty_g(), 0.1 * 0.000600 * std::exp(-1.5));
  EXPECT_NEAR(fit.tau_s, 2400.0, 240.0);
}

TEST(ExponentialTailTest, SameAsymptoteInGramsMilligramsMicrograms) {
  // The result must not depend on the mass unit: fits of the same tail in g, mg and ug agree
  // to 1e-9 relative (scaled variables, exponential_tail.h).
  std::vector<double> t, m_g, m_mg, m_ug;
  MilligramTail(1.0, t, m_g);
  MilligramTail(1e3, t, m_mg);
  MilligramTail(1e6, t, m_ug);
  const TailFit g = FitExponentialTail(t, m_g, OneTerm());
  const TailFit mg = FitExponentialTail(t, m_mg, OneTerm());
  const TailFit ug = FitExponentialTail(t, m_ug, OneTerm());
  ASSERT_TRUE(g.ok && mg.ok && ug.ok);
  EXPECT_NEAR(mg.m_inf_g / 1e3, g.m_inf_g, 1e-9 * g.m_inf_g);
  EXPECT_NEAR(ug.m_inf_g / 1e6, g.m_inf_g, 1e-9 * g.m_inf_g);
  EXPECT_NEAR(mg.u_m_inf_g / 1e3, g.u_m_inf_g, 1e-9 * g.u_m_inf_g);
  EXPECT_NEAR(ug.u_m_inf_g / 1e6, g.u_m_inf_g, 1e-9 * g.u_m_inf_g);
  EXPECT_NEAR(mg.tau_s, g.tau_s, 1e-9 * g.tau_s);
  EXPECT_NEAR(ug.tau_s, g.tau_s, 1e-9 * g.tau_s);
  // The extrapolated increment itself (a difference of nearly equal masses) to 1e-6.
  EXPECT_NEAR((ug.m_inf_g - ug.Mass_g(3600.0)) / 1e6, g.m_inf_g - g.Mass_g(3600.0),
              1e-6 * std::abs(g.m_inf_g - g.Mass_g(3600.0)));
}

TEST(ExponentialTailTest, ModelAverageOfTheCandidates) {
  // Two-exponential truth (data of TwoTermsRecoverAsymptote) with every candidate: the average
  // and its two parts are the Akaike-weighted mean, within- and between-model variances
  // (Burnham & Anderson 2002, 4.2-4.3), and the two-exponential model carries the weight.
  Normal noise(42);
  std::vector<double> t, m;
  for (double s = 1800.0; s <= 28800.0; s += 20.0) {
    t.push_back(s);
    m.push_back(1.100 - 0.060 * std::exp(-s / 1800.0) - 0.040 * std::exp(-s / 14400.0) +
                1e-6 * noise());
  }
  TailFitOptions options;
  options.step_start_s = 0.0;
  const TailFit fit = FitExponentialTail(t, m, options);
  ASSERT_TRUE(fit.ok) << fit.message;
  ASSERT_GE(fit.candidates.size(), 2u);
  double sum_w = 0.0, mean = 0.0, within = 0.0, between = 0.0;
  for (const TailCandidate& c : fit.candidates) {
    sum_w += c.weight;
    mean += c.weight * c.m_inf_g;
  }
  for (const TailCandidate& c : fit.candidates) {
    within += c.weight * c.u_m_inf_g * c.u_m_inf_g;
    between += c.weight * (c.m_inf_g - mean) * (c.m_inf_g - mean);
  }
  EXPECT_NEAR(sum_w, 1.0, 1e-12);
  EXPECT_NEAR(fit.m_inf_g, mean, 1e-12);
  EXPECT_NEAR(fit.u_m_inf_g, std::sqrt(within), 1e-9 * std::sqrt(within));
  EXPECT_NEAR(fit.u_model_g, std::sqrt(between), 1e-9 * std::sqrt(between) + 1e-18);
  EXPECT_EQ(fit.model, KineticModel::kTwoExponentials) << DescribeCandidates(fit);
  EXPECT_NEAR(fit.m_inf_g, 1.100, 3.0 * fit.TotalUncertainty_g());
}

// Fickian sheet F(x) against its series summed to 1000 terms (J. Crank, The Mathematics of
// Diffusion, 2nd ed. 1975, eq. 4.18): the short-time form below x = 0.2 agrees to 1e-6.
TEST(ExponentialTailTest, FickianSheetMatchesItsSeries) {
  for (double x : {1e-4, 0.01, 0.1, 0.19, 0.2, 0.5, 1.0, 3.0}) {
    double series = 0.0;
    for (int k = 0; k < 1000; ++k) {
      const double j = 2.0 * k + 1.0;
      series += 8.0 / (j * j * std::numbers::pi * std::numbers::pi) * std::exp(-j * j * x);
    }
    EXPECT_NEAR(FickianSheetUnaccomplished(x), series, 1e-6) << x;
  }
  // F(0) = 1 (sum of 8/(j^2 pi^2) over odd j, Crank eq. 4.18 at t = 0).
  EXPECT_NEAR(FickianSheetUnaccomplished(0.0), 1.0, 1e-12);
}

// Fickian uptake cut at half its time constant: m(t) = 0.012 + 0.0004 (1 - F(t / 2400 s)),
// step from t = 0 to 1200 s, tail the last 80 % (240..1200 s), 10 s block means, noise 0.1 ug.
// Half of the uptake is still to come (F(0.5) = 0.49).
void FickianTail(std::uint64_t initial_state, std::vector<double>& t, std::vector<double>& m) {
  Normal noise(initial_state);
  t.clear();
  m.clear();
  for (double s = 245.0; s <= 1200.0; s += 10.0) {
    t.push_back(s);
    m.push_back(0.012 + 0.0004 * (1.0 - FickianSheetUnaccomplished(s / 2400.0)) + 0.1e-6 * noise());
  }
}

TEST(ExponentialTailTest, FickianSheetCutEarlyIsRecovered) {
  TailFitOptions options;
  options.step_start_s = 0.0;
  int inside = 0;
  constexpr int kTrials = 40;
  for (int trial = 0; trial < kTrials; ++trial) {
    std::vector<double> t, m;
    FickianTail(100 + static_cast<std::uint64_t>(trial), t, m);
    const TailFit fit = FitExponentialTail(t, m, options);
    ASSERT_TRUE(fit.ok) << fit.message;
    EXPECT_EQ(fit.model, KineticModel::kFickianSheet) << DescribeCandidates(fit);
    if (std::abs(fit.m_inf_g - 0.0124) <= 2.0 * fit.TotalUncertainty_g()) ++inside;
  }
  // About 95 % inside m_inf +- 2u (binomial: at least 34 of 40 with probability > 0.99).
  EXPECT_GE(inside, 34);
}

TEST(ExponentialTailTest, TooFewPointsIsRejected) {
  const std::vector<double> t = {0, 1, 2}, m = {1, 1.1, 1.15};
  const TailFit fit = FitExponentialTail(t, m, OneTerm());
  EXPECT_FALSE(fit.ok);
  EXPECT_EQ(fit.message, "too few points in the tail");
}

// A stated point standard deviation (TailFitOptions::point_sd_g; e.g. the data set's pooled
// weighing scatter): u(m_inf) = sd sqrt([(J'J)^-1]_00) is linear in the stated sd and does not
// depend on the residuals; the fit carries the stated degrees of freedom; four points suffice
// (five without it: s^2 needs n - p >= 2 for AICc). Daily weighings of a first-order step,
// m(t) = 20.0200 - 0.0200 exp(-t / 1.5 d), with +-0.1 mg deterministic wiggles.
TEST(ExponentialTailTest, StatedPointStandardDeviation) {
  constexpr double kDay_s = 86400.0;
  std::vector<double> t, m;
  for (int day = 0; day <= 3; ++day) {
    t.push_back(day * kDay_s);
    m.push_back(20.0200 - 0.0200 * std::exp(-day / 1.5) + (day % 2 == 0 ? 1e-4 : -1e-4));
  }
  TailFitOptions options = OneTerm();
  EXPECT_FALSE(FitExponentialTail(t, m, options).ok);  // four points, residual scale unknown
  options.point_sd_g = 1e-4;
  options.point_sd_degrees_of_freedom = 21;
  const TailFit one = FitExponentialTail(t, m, options);
  ASSERT_TRUE(one.ok) << one.message;
  EXPECT_EQ(one.degrees_of_freedom, 21);
  EXPECT_GT(one.u_m_inf_g, 0.0);
  options.point_sd_g = 2e-4;
  const TailFit two = FitExponentialTail(t, m, options);
  ASSERT_TRUE(two.ok) << two.message;
  EXPECT_DOUBLE_EQ(two.m_inf_g, one.m_inf_g);  // the estimate does not depend on the sd
  EXPECT_NEAR(two.u_m_inf_g, 2.0 * one.u_m_inf_g, 1e-12 * one.u_m_inf_g);
}

}  // namespace
}  // namespace sorbtrace::equilibrate::internal
