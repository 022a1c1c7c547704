// fitters::AkaikeWeights against the definition of K. P. Burnham and D. R. Anderson, Model
// Selection and Multimodel Inference, 2nd ed., Springer 2002, sec. 2.9 (eq. 2.14):
// w_i = exp(-Delta_i / 2) / sum_j exp(-Delta_j / 2), Delta_i = AICc_i - min AICc. The expected
// weights were computed by hand from that definition (exp(-1) = 0.36787944117144233, exp(-5) =
// 0.006737946999085467, sum 1.3746173881905297).
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <vector>

#include "fitters/fitter.h"

namespace sorbtrace::fitters {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

TEST(AkaikeWeights, HandComputedExample) {
  // Delta = 0, 2, 10.
  const std::vector<double> w = AkaikeWeights({100.0, 102.0, 110.0});
  ASSERT_EQ(w.size(), 3u);
  EXPECT_NEAR(w[0], 0.7274751568004648, 1e-15);
  EXPECT_NEAR(w[1], 0.2676231541498624, 1e-15);
  EXPECT_NEAR(w[2], 0.004901689049672921, 1e-15);
}

TEST(AkaikeWeights, OrderAndNegativeValuesDoNotMatter) {
  // Delta = 0, 2.5, 7.5 (AICc of a least-squares fit is negative when weighted SSR < n):
  // exp(-1.25) = 0.28650479686019009, exp(-3.75) = 0.023517745856009107.
  const std::vector<double> w = AkaikeWeights({-1.0, 4.0, -3.5});
  const double sum = 1.0 + 0.28650479686019009 + 0.023517745856009107;
  EXPECT_NEAR(w[0], 0.28650479686019009 / sum, 1e-15);
  EXPECT_NEAR(w[1], 0.023517745856009107 / sum, 1e-15);
  EXPECT_NEAR(w[2], 1.0 / sum, 1e-15);
  EXPECT_NEAR(w[2], 0.7633456428364973, 1e-15);
}

TEST(AkaikeWeights, UndefinedAiccTakesNoPart) {
  const std::vector<double> w = AkaikeWeights({kNaN, 100.0, kInf, 102.0});
  EXPECT_EQ(w[0], 0.0);
  EXPECT_EQ(w[2], 0.0);
  // The two defined ones as if alone: 1 / (1 + exp(-1)) and exp(-1) / (1 + exp(-1)).
  EXPECT_NEAR(w[1], 1.0 / 1.36787944117144233, 1e-15);
  EXPECT_NEAR(w[3], 0.36787944117144233 / 1.36787944117144233, 1e-15);
}

TEST(AkaikeWeights, ExactFitsShareTheWeight) {
  const std::vector<double> w = AkaikeWeights({-kInf, 5.0, -kInf});
  EXPECT_EQ(w[0], 0.5);
  EXPECT_EQ(w[1], 0.0);
  EXPECT_EQ(w[2], 0.5);
}

TEST(AkaikeWeights, NothingDefinedGivesZeros) {
  EXPECT_EQ(AkaikeWeights({kNaN, kInf}), std::vector<double>({0.0, 0.0}));
  EXPECT_TRUE(AkaikeWeights({}).empty());
}

}  // namespace
}  // namespace sorbtrace::fitters
