// The reduction of draws to a stated uncertainty (DrawStatisticsOf) and the Student-t variate
// of a Type A input with few degrees of freedom (StudentTVariate),
// pipeline/common/draw_statistics.h.
#include "pipeline/common/draw_statistics.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <numbers>
#include <vector>

namespace sorbtrace {
namespace {

// 2^-54: StudentTVariate moves its uniform value up by this (the middle of its 2^-53 cell).
constexpr double kHalfCell = 0.5 / 9007199254740992.0;

// Quantiles of the t distribution. t_1 is the Cauchy distribution, quantile tan(pi (u - 1/2));
// t_2 has the closed-form quantile (2u - 1) / sqrt(2 u (1 - u)) (both from memory; they agree
// with JCGM 100:2008 Table G.2: t_0.975(1) = 12.71, t_0.975(2) = 4.30); the normal quantile
// z_0.975 = 1.959964 (Table G.1 gives 1.960).
TEST(DrawStatisticsTest, StudentTVariateMatchesClosedFormQuantiles) {
  for (double u : {0.01, 0.1, 0.3, 0.5, 0.8, 0.975, 0.999}) {
    const double v = u - kHalfCell;
    EXPECT_NEAR(StudentTVariate(v, 1.0), std::tan(std::numbers::pi * (u - 0.5)), 1e-9) << u;
    EXPECT_NEAR(StudentTVariate(v, 2.0), (2.0 * u - 1.0) / std::sqrt(2.0 * u * (1.0 - u)), 1e-9)
        << u;
  }
  EXPECT_NEAR(StudentTVariate(0.975 - kHalfCell, 2.0), 4.30, 0.005);
  EXPECT_NEAR(StudentTVariate(0.975 - kHalfCell, std::numeric_limits<double>::infinity()), 1.959964,
              1e-6);
  // The extreme uniform values stay finite (0 and 1 never reach the quantile function), and
  // the two ends are symmetric (Cauchy: -+1 / (pi 2^-54) = -+5.7e15).
  for (double nu : {0.5, 1.0, 2.0, std::numeric_limits<double>::infinity()}) {
    const double lowest = StudentTVariate(0.0, nu);
    const double highest = StudentTVariate(1.0 - 2.0 * kHalfCell, nu);
    EXPECT_TRUE(std::isfinite(lowest)) << nu;
    EXPECT_TRUE(std::isfinite(highest)) << nu;
    EXPECT_EQ(lowest, -highest) << nu;
  }
  const double cauchy_lowest = -1.0 / (std::numbers::pi * kHalfCell);
  EXPECT_NEAR(StudentTVariate(0.0, 1.0), cauchy_lowest, 1e-6 * -cauchy_lowest);
}

// Type 7 quantiles (Hyndman & Fan 1996; R's default) of 1, 2, ..., 101: position q (n - 1), so
// q = 0.025 -> 2.5 -> 3.5, q = 0.975 -> 97.5 -> 98.5, median 51, U = 47.5; the central 68.27 %
// interval: q = 0.158655 -> 16.8655, q = 0.841345 -> 85.1345, u = 34.1345, k = U / u = 1.39157.
TEST(DrawStatisticsTest, PercentileIntervalOfKnownValues) {
  std::vector<double> values;
  for (int i = 101; i >= 1; --i) values.push_back(i);  // order does not matter
  values.push_back(std::numeric_limits<double>::quiet_NaN());
  values.push_back(std::numeric_limits<double>::infinity());
  const DrawStatistics s = DrawStatisticsOf(values, 0.95);
  EXPECT_EQ(s.count, 101u);  // the non-finite draws are left out
  EXPECT_DOUBLE_EQ(s.central, 51.0);
  // (the interpolation weight 0.025 * 100 - 2 carries rounding of a few ulp)
  EXPECT_NEAR(s.low, 3.5, 1e-12);
  EXPECT_NEAR(s.high, 98.5, 1e-12);
  EXPECT_NEAR(s.expanded_uncertainty, 47.5, 1e-12);
  EXPECT_NEAR(s.standard_uncertainty, 34.134474, 1e-5);
  EXPECT_NEAR(s.coverage_factor, 47.5 / 34.134474, 1e-6);
}

TEST(DrawStatisticsTest, FewerThanTwoDrawsStateNoUncertainty) {
  EXPECT_EQ(DrawStatisticsOf(std::vector<double>{}, 0.95).standard_uncertainty, 0.0);
  const DrawStatistics one = DrawStatisticsOf(std::vector<double>{2.5}, 0.95);
  EXPECT_EQ(one.count, 1u);
  EXPECT_EQ(one.central, 2.5);
  EXPECT_EQ(one.standard_uncertainty, 0.0);
}

// Stratified draws (the quantile function at (i + 1/2) / N) of N(3, 0.2^2): u = the standard
// deviation 0.2, interval 3 -+ 1.96 * 0.2, k = 1.96. Of t_2 scaled by 0.2: the interval is 3 -+
// 4.303 * 0.2 (JCGM 100:2008, Table G.2) although the draws have no variance; u = 1.3213 * 0.2,
// the 84.13 % point of t_2 from its closed-form distribution function F(t) = 1/2 + t / (2
// sqrt(2 + t^2)) (t^2 = 2 c^2 / (1 - c^2) with c = 2 * 0.341345), and k = 4.303 / 1.3213 = 3.257.
TEST(DrawStatisticsTest, NormalAndStudentTDraws) {
  constexpr int kDraws = 100000;
  std::vector<double> normal, t2;
  for (int i = 0; i < kDraws; ++i) {
    const double u = (i + 0.5) / kDraws - kHalfCell;
    normal.push_back(3.0 + 0.2 * StudentTVariate(u, std::numeric_limits<double>::infinity()));
    t2.push_back(3.0 + 0.2 * StudentTVariate(u, 2.0));
  }
  const DrawStatistics n = DrawStatisticsOf(normal, 0.95);
  EXPECT_NEAR(n.central, 3.0, 1e-9);
  EXPECT_NEAR(n.standard_uncertainty, 0.2, 1e-3);
  EXPECT_NEAR(n.low, 3.0 - 1.96 * 0.2, 1e-3);
  EXPECT_NEAR(n.coverage_factor, 1.96, 1e-2);
  EXPECT_DOUBLE_EQ(CoverageFactorOfDraws(n.coverage_factor, 2.0), 2.0);
  const DrawStatistics t = DrawStatisticsOf(t2, 0.95);
  EXPECT_NEAR(t.high, 3.0 + 4.303 * 0.2, 2e-3);
  EXPECT_NEAR(t.low, 3.0 - 4.303 * 0.2, 2e-3);
  EXPECT_NEAR(t.standard_uncertainty, 1.3213 * 0.2, 2e-3);
  EXPECT_NEAR(t.coverage_factor, 3.257, 1e-2);
  EXPECT_DOUBLE_EQ(CoverageFactorOfDraws(t.coverage_factor, 2.0), t.coverage_factor);
}

}  // namespace
}  // namespace sorbtrace
