// The shared-time-constant estimate of the remaining approach to equilibrium of the specimens of
// one desiccator step (pipeline/equilibrate/approach.h), on weighings made from the first-order
// law m_j(t) = a_j - b_j exp(-(t - t0)/tau) (first-order sorption kinetics; the late-time limit
// of diffusion into a plane sheet, J. Crank, The Mathematics of Diffusion, 2nd ed., Oxford 1975,
// eq. 4.18): the remaining approach after the last weighing at T is b_j exp(-T/tau), exactly.
#include "pipeline/equilibrate/approach.h"

#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <vector>

#include "pipeline/equilibrate/equilibrate.h"

namespace sorbtrace::equilibrate::internal {
namespace {

constexpr double kHour_s = 3600.0;

struct Specimen {
  double asymptote_g;
  double amplitude_g;
};

// Three daily weighings (0, 24, 48 h) of each specimen, masses scaled by `unit` (1 = g).
std::vector<std::vector<ingest::Weighing>> Weighings(const std::vector<Specimen>& specimens,
                                                     double tau_s, double unit, double noise_g,
                                                     std::mt19937_64* engine) {
  std::normal_distribution<double> normal(0.0, 1.0);
  std::vector<std::vector<ingest::Weighing>> out;
  for (const Specimen& s : specimens) {
    std::vector<ingest::Weighing> weighings;
    for (double hours : {0.0, 24.0, 48.0}) {
      ingest::Weighing w;
      w.time_s = hours * kHour_s;
      w.mass_g = unit * (s.asymptote_g - s.amplitude_g * std::exp(-w.time_s / tau_s));
      if (engine != nullptr) w.mass_g += unit * noise_g * normal(*engine);
      weighings.push_back(w);
    }
    out.push_back(std::move(weighings));
  }
  return out;
}

std::vector<ApproachEstimate> Estimate(const std::vector<std::vector<ingest::Weighing>>& weighings,
                                       double balance_u_g) {
  std::vector<GroupMember> members;
  for (const auto& w : weighings) members.push_back(GroupMember{w, w.back().mass_g});
  return EstimateSharedDesiccatorApproach(members, balance_u_g, EquilibrateOptions{});
}

const std::vector<Specimen> kSpecimens = {{20.06, 0.040}, {19.48, 0.035}, {21.02, 0.046}};
const double kTau_s = 60.0 * kHour_s;

TEST(SharedApproachTest, ExactFirstOrderWeighingsGiveTheRemainingApproach) {
  const auto weighings = Weighings(kSpecimens, kTau_s, 1.0, 0.0, nullptr);
  const std::vector<ApproachEstimate> estimates = Estimate(weighings, 1.2e-4);
  ASSERT_EQ(estimates.size(), 3u);
  for (std::size_t j = 0; j < 3; ++j) {
    SCOPED_TRACE(j);
    ASSERT_TRUE(estimates[j].estimated);
    // b_j exp(-48 h / 60 h): 0.040 x 0.4493 = 0.017973 g for the first specimen.
    const double remaining = kSpecimens[j].amplitude_g * std::exp(-48.0 * kHour_s / kTau_s);
    EXPECT_NEAR(estimates[j].correction_g, remaining, 1e-6 * remaining);
    EXPECT_NEAR(estimates[j].time_constant_s, kTau_s, 1e-6 * kTau_s);
    EXPECT_TRUE(estimates[j].includes_weighing_scatter);
    EXPECT_EQ(estimates[j].degrees_of_freedom, 0);  // the balance u, residuals consistent
    EXPECT_GT(estimates[j].u_correction_g, 0.0);
    EXPECT_GT(estimates[j].u_model_g, 0.0);  // the shared time constant's part
  }
}

// The same weighings in mg give the same asymptote (issue: the result must not depend on the
// mass unit).
TEST(SharedApproachTest, MassUnitDoesNotChangeTheEstimate) {
  std::mt19937_64 engine(17);
  const auto grams = Weighings(kSpecimens, kTau_s, 1.0, 1.2e-4, &engine);
  std::mt19937_64 same(17);
  const auto milligrams = Weighings(kSpecimens, kTau_s, 1000.0, 1.2e-4, &same);
  const auto g = Estimate(grams, 1.2e-4);
  const auto mg = Estimate(milligrams, 0.12);
  for (std::size_t j = 0; j < 3; ++j) {
    ASSERT_TRUE(g[j].estimated);
    ASSERT_TRUE(mg[j].estimated);
    EXPECT_NEAR(mg[j].correction_g / 1000.0, g[j].correction_g, 1e-9 * g[j].correction_g);
    EXPECT_NEAR(mg[j].u_correction_g / 1000.0, g[j].u_correction_g, 1e-9 * g[j].u_correction_g);
  }
}

// Masses that do not curve beyond the balance scatter resolve no time constant: none of the
// specimens gets a correction (they keep the drift term).
TEST(SharedApproachTest, FlatWeighingsResolveNothing) {
  const std::vector<Specimen> flat = {{20.0, 0.0}, {19.5, 0.0}, {21.0, 0.0}};
  std::mt19937_64 engine(5);
  const auto weighings = Weighings(flat, kTau_s, 1.0, 1.2e-4, &engine);
  for (const ApproachEstimate& e : Estimate(weighings, 1.2e-4)) EXPECT_FALSE(e.estimated);
}

// Over replicates with the balance scatter (sd 0.12 mg, the stated u), the errors of the
// corrections scatter as the stated u says: RMS(error) / RMS(u) within 0.8-1.25 and the truth
// inside +-2u in 90-98 % (JCGM 100:2008, 3.3; acceptance band common practice).
TEST(SharedApproachTest, StatedUncertaintyDescribesTheScatter) {
  std::mt19937_64 engine(2024);
  double sum_e2 = 0.0, sum_u2 = 0.0;
  int inside = 0, count = 0;
  constexpr int kReplicates = 400;
  for (int r = 0; r < kReplicates; ++r) {
    const auto weighings = Weighings(kSpecimens, kTau_s, 1.0, 1.2e-4, &engine);
    const auto estimates = Estimate(weighings, 1.2e-4);
    for (std::size_t j = 0; j < 3; ++j) {
      if (!estimates[j].estimated) continue;
      const double truth = kSpecimens[j].asymptote_g;
      const double error = weighings[j].back().mass_g + estimates[j].correction_g - truth;
      const double u = std::hypot(estimates[j].u_correction_g, estimates[j].u_model_g);
      sum_e2 += error * error;
      sum_u2 += u * u;
      if (std::abs(error) <= 2.0 * u) ++inside;
      ++count;
    }
  }
  ASSERT_GT(count, 3 * kReplicates * 9 / 10);  // resolved in most replicates
  const double ratio = std::sqrt(sum_e2 / sum_u2);
  EXPECT_GT(ratio, 0.8);
  EXPECT_LT(ratio, 1.25);
  const double coverage = static_cast<double>(inside) / count;
  EXPECT_GE(coverage, 0.90);
  EXPECT_LE(coverage, 0.98);
}

}  // namespace
}  // namespace sorbtrace::equilibrate::internal
