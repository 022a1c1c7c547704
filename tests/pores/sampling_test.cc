// Deterministic draws and percentiles of the pores stage.

#include "pipeline/pores/sampling.h"

#include <gtest/gtest.h>

#include <Eigen/Core>
#include <cmath>
#include <vector>

#include "pipeline/pores/modes.h"

namespace sorbtrace::pores::internal {
namespace {

TEST(Quantile, LinearInterpolationBetweenOrderStatistics) {
  // Hyndman & Fan (1996) type 7: position p (n - 1); for 1..101 at p = 0.025 the position is
  // 2.5, between the values 3 and 4.
  std::vector<double> values;
  for (int i = 101; i >= 1; --i) values.push_back(i);
  EXPECT_DOUBLE_EQ(Quantile(values, 0.025), 3.5);
  EXPECT_DOUBLE_EQ(Quantile(values, 0.5), 51.0);
  EXPECT_DOUBLE_EQ(Quantile(values, 1.0), 101.0);
}

TEST(Quantile, PairAgreesWithSingleQuantiles) {
  NormalSource normal(7);
  for (int n : {1, 2, 5, 40, 1000}) {
    std::vector<double> values(static_cast<std::size_t>(n));
    for (double& v : values) v = normal.Normal();
    std::vector<double> a = values, b = values, c = values;
    double low = 0.0, high = 0.0;
    QuantilePair(a, 0.025, 0.975, &low, &high);
    EXPECT_DOUBLE_EQ(low, Quantile(b, 0.025)) << n;
    EXPECT_DOUBLE_EQ(high, Quantile(c, 0.975)) << n;
  }
}

TEST(NormalSource, MomentsAndDeterminism) {
  NormalSource a(42), b(42);
  const int n = 200000;
  double sum = 0.0, sum2 = 0.0;
  for (int i = 0; i < n; ++i) {
    const double x = a.Normal();
    EXPECT_EQ(x, b.Normal());
    sum += x;
    sum2 += x * x;
  }
  // Standard normal: mean 0, variance 1; standard errors 1/sqrt(n) = 0.0022 and
  // sqrt(2/n) = 0.0032, checked at about 4 standard errors.
  EXPECT_NEAR(sum / n, 0.0, 0.01);
  EXPECT_NEAR(sum2 / n, 1.0, 0.013);
}

TEST(MultivariateNormalDraws, ReproduceTheCovarianceAndRespectBounds) {
  Eigen::Matrix2d cov;
  cov << 4.0, 1.2, 1.2, 1.0;  // correlation 0.6
  const int n = 40000;
  const std::vector<std::vector<double>> draws =
      MultivariateNormalDraws({10.0, -3.0}, cov, n, 1, {});
  ASSERT_EQ(draws.size(), static_cast<std::size_t>(n));
  Eigen::Vector2d mean = Eigen::Vector2d::Zero();
  for (const auto& d : draws) mean += Eigen::Vector2d(d[0], d[1]);
  mean /= n;
  Eigen::Matrix2d sample = Eigen::Matrix2d::Zero();
  for (const auto& d : draws) {
    const Eigen::Vector2d x = Eigen::Vector2d(d[0], d[1]) - mean;
    sample += x * x.transpose();
  }
  sample /= n - 1;
  EXPECT_NEAR(mean(0), 10.0, 0.05);
  EXPECT_NEAR(mean(1), -3.0, 0.025);
  // Sampling error of a covariance element ~ sqrt((s_ii s_jj + s_ij^2) / n): below 0.03 here.
  EXPECT_NEAR(sample(0, 0), 4.0, 0.12);
  EXPECT_NEAR(sample(0, 1), 1.2, 0.05);
  EXPECT_NEAR(sample(1, 1), 1.0, 0.03);

  fitters::ParameterSpec positive;
  positive.lower_bound = 9.0;
  const std::vector<std::vector<double>> clamped =
      MultivariateNormalDraws({10.0, -3.0}, cov, 1000, 1, {positive});
  for (const auto& d : clamped) EXPECT_GE(d[0], 9.0);
}

TEST(MultivariateNormalDraws, SemidefiniteCovarianceStillDraws) {
  Eigen::Matrix2d cov;
  cov << 1.0, 1.0, 1.0, 1.0;  // rank 1: the two parameters move together
  const auto draws = MultivariateNormalDraws({0.0, 0.0}, cov, 100, 3, {});
  ASSERT_EQ(draws.size(), 100u);
  for (const auto& d : draws) EXPECT_NEAR(d[0], d[1], 1e-9);
}

// Draws without a variance (a specimen factor drawn from t with nu_d = 1: Cauchy): the decade
// fractions' u is finite and percentile-based, the half-width of the central 68.27 % interval,
// tan(pi (0.841345 - 1/2)) = 1.8373 times the scale (the Cauchy quantile function), and their
// coverage factor U / u = 12.71 / 1.8373 = 6.92 with U the half-width of the 95 % interval,
// t_0.975(1) = 12.71 times the scale (JCGM 100:2008 Table G.2), where the draws' standard
// deviation grows without bound with the number of draws.
TEST(DecadeUncertainties, FiniteForDrawsWithoutVariance) {
  constexpr int kDraws = 4000;
  constexpr double kScale = 0.01;
  std::vector<std::vector<DecadeFraction>> draws;
  std::vector<double> first;
  for (int k = 0; k < kDraws; ++k) {
    const double t = StudentTVariate((k + 0.5) / kDraws, 1.0);
    DecadeFraction a, b;
    a.volume_fraction = 0.3 + kScale * t;
    b.volume_fraction = 0.7 - kScale * t;
    draws.push_back({a, b});
    first.push_back(a.volume_fraction);
  }
  std::vector<DecadeFraction> decades(2);
  DecadeUncertainties(draws, 0.95, &decades);
  for (const DecadeFraction& d : decades) {
    EXPECT_TRUE(std::isfinite(d.u_volume_fraction));
    EXPECT_NEAR(d.u_volume_fraction, 1.8373 * kScale, 0.01 * 1.8373 * kScale);
    EXPECT_NEAR(d.coverage_factor, 12.71 / 1.8373, 0.01 * 12.71 / 1.8373);
  }
  // The standard deviation of the same 4,000 draws is already about ten times that u.
  EXPECT_GT(StandardDeviation(first), 5.0 * decades[0].u_volume_fraction);
}

// A step across a decade boundary is split by the shape-preserving cubic of the cumulative
// volume (modes.h, SplitAtDecadeBoundaries). Nodes log10 r = -9, -8.5, -7.5, -7 with step
// volumes 1, 2, 0.5 (total 3.5): the boundary -8 is the middle of the second step. Worked by
// hand from Fritsch & Butland (1984) (the slope at an interior node is the weighted harmonic
// mean (w0 + w1) / (w0 / d_before + w1 / d_after), w0 = 2 h_after + h_before, w1 = h_after +
// 2 h_before, of the neighbouring secants d) and the cubic Hermite basis at t = 1/2: secants
// 2, 2, 1; slopes 2 at -8.5 and 4.5 / 3.5 = 9/7 at -7.5; cumulative at -8:
// 0.5 * 1 + 0.125 * 2 + 0.5 * 3 - 0.125 * 9/7 = 2.0892857..., so the part left of the boundary is
// 1.0892857 = 1 + 5/56, against 1 for the uniform spread in log r. The fraction of
// [1e-9, 1e-8] m moves from 2 / 3.5 by (5/56) / 3.5, and its u gains (5/56) / sqrt(3) / 3.5 in
// quadrature (JCGM 100:2008 4.3.7); the other decade loses what this one gains.
TEST(SplitAtDecadeBoundaries, FollowsTheMonotoneCubicWithItsModelError) {
  const std::vector<double> nodes = {-9.0, -8.5, -7.5, -7.0};
  const std::vector<double> volumes = {1.0, 2.0, 0.5};
  constexpr double kTotal = 3.5;
  std::vector<DecadeFraction> decades = DecadeFractions(nodes, volumes, kTotal);
  ASSERT_EQ(decades.size(), 2u);
  EXPECT_NEAR(decades[0].volume_fraction, 2.0 / kTotal, 1e-12);  // the uniform spread
  constexpr double kDrawsU = 0.01;
  for (DecadeFraction& d : decades) {
    d.u_volume_fraction = kDrawsU;
    d.coverage_factor = 2.1;
  }
  SplitAtDecadeBoundaries(nodes, volumes, kTotal, &decades);
  const double moved = 5.0 / 56.0;
  EXPECT_NEAR(decades[0].volume_fraction, (2.0 + moved) / kTotal, 1e-12);
  EXPECT_NEAR(decades[1].volume_fraction, (1.5 - moved) / kTotal, 1e-12);
  const double u_split = moved / std::sqrt(3.0) / kTotal;
  for (const DecadeFraction& d : decades) {
    EXPECT_NEAR(d.u_volume_fraction, std::hypot(kDrawsU, u_split), 1e-12);
    EXPECT_EQ(d.coverage_factor, 0.0);  // draws and a rectangular term: the sheet's k
  }
}

// Where the density is the same on both sides of the step (a uniform density in log r) the
// monotone cubic is the straight line (its slopes are the common secant), and where the
// boundary is a node there is nothing to split: the fractions and u stay as the draws gave them.
TEST(SplitAtDecadeBoundaries, NoTermForUniformDensityOrBoundaryOnANode) {
  const std::vector<double> uniform_nodes = {-9.0, -8.7, -7.6, -7.0};
  const std::vector<double> uniform_volumes = {0.3, 1.1, 0.6};  // density 1 throughout
  std::vector<DecadeFraction> decades = DecadeFractions(uniform_nodes, uniform_volumes, 2.0);
  const std::vector<DecadeFraction> before = decades;
  SplitAtDecadeBoundaries(uniform_nodes, uniform_volumes, 2.0, &decades);
  ASSERT_EQ(decades.size(), before.size());
  for (std::size_t k = 0; k < decades.size(); ++k) {
    EXPECT_NEAR(decades[k].volume_fraction, before[k].volume_fraction, 1e-12);
    EXPECT_NEAR(decades[k].u_volume_fraction, 0.0, 1e-12);
  }
  const std::vector<double> on_node = {-9.0, -8.5, -8.0, -7.0};
  const std::vector<double> volumes = {1.0, 3.0, 0.2};
  decades = DecadeFractions(on_node, volumes, 4.2);
  SplitAtDecadeBoundaries(on_node, volumes, 4.2, &decades);
  ASSERT_EQ(decades.size(), 2u);
  EXPECT_DOUBLE_EQ(decades[0].volume_fraction, 4.0 / 4.2);
  EXPECT_DOUBLE_EQ(decades[0].u_volume_fraction, 0.0);
}

}  // namespace
}  // namespace sorbtrace::pores::internal
