// Equilibrium criteria: ISO 12571 constant mass (desiccator) and the rate criterion (logs).
#include "pipeline/equilibrate/criteria.h"

#include <gtest/gtest.h>

#include <vector>

namespace sorbtrace::equilibrate::internal {
namespace {

constexpr double kHour_s = 3600.0;

std::vector<ingest::Weighing> Weighings(const std::vector<std::pair<double, double>>& hours_grams) {
  std::vector<ingest::Weighing> out;
  int line = 2;
  for (const auto& [hours, grams] : hours_grams) {
    ingest::Weighing w;
    w.time_s = hours * kHour_s;
    w.mass_g = grams;
    w.line = line++;
    out.push_back(w);
  }
  return out;
}

// ISO 12571 (from memory, edition not confirmed): constant mass when the change between three
// consecutive weighings, each at least 24 h apart, is below 0.1 % of the total mass.
TEST(ConstantMassTest, MetAtFourthWeighing) {
  // Chain at 72 h: 72, 48, 24 h -> masses 10.0550, 10.0540, 10.0500; range 0.0050 g;
  // 0.0050 / 10.0550 = 0.0497 % < 0.1 %: met. At 48 h: 48, 24, 0 h -> range 0.0540 g,
  // 0.0540 / 10.0540 = 0.537 %: not met. So it first holds at index 3.
  const auto w = Weighings({{0, 10.0000}, {24, 10.0500}, {48, 10.0540}, {72, 10.0550}});
  const ConstantMassResult r = EvaluateConstantMass(w, EquilibrateOptions{});
  EXPECT_TRUE(r.met);
  EXPECT_EQ(r.first_met_index, 3);
  EXPECT_EQ(r.chain_length, 3);
  EXPECT_NEAR(r.change_fraction, 0.0050 / 10.0550, 1e-12);
  EXPECT_NEAR(r.last_change_g, 0.0010, 1e-12);  // 10.0550 - 10.0540
  EXPECT_DOUBLE_EQ(r.chain_span_s, 48 * kHour_s);
}

TEST(ConstantMassTest, DriftingMassIsNotConstant) {
  // Chain at 72 h: 72, 48, 24 h: range 10.065 - 10.030 = 0.035 g; 0.035 / 10.065 = 0.3477 %.
  const auto w = Weighings({{0, 10.000}, {24, 10.030}, {48, 10.050}, {72, 10.065}});
  const ConstantMassResult r = EvaluateConstantMass(w, EquilibrateOptions{});
  EXPECT_FALSE(r.met);
  EXPECT_EQ(r.first_met_index, -1);
  EXPECT_NEAR(r.change_fraction, 0.035 / 10.065, 1e-12);
}

TEST(ConstantMassTest, WeighingsCloserThanTheIntervalDoNotCount) {
  // 12 h spacing: chain at 36 h is 36 h -> 12 h (24 h earlier) -> nothing 24 h before 12 h.
  const auto w = Weighings({{0, 10.0}, {12, 10.0}, {24, 10.0}, {36, 10.0}});
  const ConstantMassResult r = EvaluateConstantMass(w, EquilibrateOptions{});
  EXPECT_FALSE(r.met);
  EXPECT_EQ(r.chain_length, 2);
  // Same masses with a 12 h interval (min_weighing_interval_h = 12): met at the third.
  EquilibrateOptions twelve;
  twelve.min_weighing_interval_s = 12 * kHour_s;
  const ConstantMassResult r12 = EvaluateConstantMass(w, twelve);
  EXPECT_TRUE(r12.met);
  EXPECT_EQ(r12.first_met_index, 2);
}

TEST(ConstantMassTest, DailyWeighingsAFewMinutesEarlyCountAs24h) {
  // Weighed at 09:05, 09:02 and 09:00 on three days: 23.95 h apart. With the default 1 h
  // tolerance (EquilibrateOptions) they form a chain; with the literal reading they do not.
  const auto w = Weighings({{0, 10.0000}, {23.95, 10.0004}, {47.9, 10.0005}});
  EXPECT_TRUE(EvaluateConstantMass(w, EquilibrateOptions{}).met);
  EquilibrateOptions literal;
  literal.weighing_interval_tolerance_s = 0.0;
  const ConstantMassResult r = EvaluateConstantMass(w, literal);
  EXPECT_FALSE(r.met);
  EXPECT_EQ(r.chain_length, 2);  // 47.9 h -> 0 h only
}

TEST(ConstantMassTest, LimitIsStrict) {
  // Range exactly 0.1 % of the last mass is not "less than 0.1 %". 10.010 * 0.001 = 0.01001,
  // so a range of 0.0101 g fails and 0.0100 g passes.
  EXPECT_FALSE(EvaluateConstantMass(Weighings({{0, 9.9999}, {24, 10.005}, {48, 10.0100}}),
                                    EquilibrateOptions{})
                   .met);
  EXPECT_TRUE(EvaluateConstantMass(Weighings({{0, 10.0000}, {24, 10.005}, {48, 10.0100}}),
                                   EquilibrateOptions{})
                  .met);
}

std::vector<ingest::LogBlock> LinearBlocks(double t0, double t1, double dt, double m0,
                                           double slope) {
  std::vector<ingest::LogBlock> out;
  for (double t = t0; t <= t1 + 1e-9; t += dt) {
    ingest::LogBlock b;
    b.time_s = t;
    b.mass_g = m0 + slope * (t - t0);
    b.rh_measured_fraction = 0.5;
    b.temperature_K = 296.15;
    b.num_rows = 1;
    out.push_back(b);
  }
  return out;
}

TEST(RateCriterionTest, SlopeOfALine) {
  const auto blocks = LinearBlocks(0, 600, 10, 1.0, 2.5e-7);
  EXPECT_NEAR(BlockSlope_g_per_s(blocks, 0, blocks.size() - 1), 2.5e-7, 1e-18);
  EXPECT_NEAR(BlockSlope_g_per_s(blocks, 10, 20), 2.5e-7, 1e-18);
}

TEST(RateCriterionTest, ThresholdOfTwoThousandthsPercentPerMinute) {
  // Reference 1 g: limit 0.002 %/min = 2e-5 g/min = 3.333e-7 g/s (common practice).
  const auto fast = LinearBlocks(0, 3600, 10, 1.0, 4e-7);  // 0.0024 %/min
  const auto slow = LinearBlocks(0, 3600, 10, 1.0, 3e-7);  // 0.0018 %/min
  const RateCriterionResult r_fast = EvaluateRateCriterion(fast, 0.0, 1.0, EquilibrateOptions{});
  const RateCriterionResult r_slow = EvaluateRateCriterion(slow, 0.0, 1.0, EquilibrateOptions{});
  EXPECT_FALSE(r_fast.met);
  EXPECT_FALSE(r_fast.ever_met);
  EXPECT_NEAR(r_fast.final_rate_fraction_per_min, 2.4e-5, 1e-12);
  EXPECT_TRUE(r_slow.met);
  // First full 600 s window ends at t = 600 s.
  EXPECT_DOUBLE_EQ(r_slow.first_met_time_s, 600.0);
  EXPECT_TRUE(r_slow.window_complete);
  EXPECT_DOUBLE_EQ(slow[r_slow.window_first].time_s, 3000.0);
}

TEST(RateCriterionTest, StepShorterThanTheWindowIsNotJudged) {
  const auto flat = LinearBlocks(0, 300, 10, 1.0, 0.0);
  const RateCriterionResult r = EvaluateRateCriterion(flat, 0.0, 1.0, EquilibrateOptions{});
  EXPECT_FALSE(r.met);
  EXPECT_FALSE(r.window_complete);
}

}  // namespace
}  // namespace sorbtrace::equilibrate::internal
