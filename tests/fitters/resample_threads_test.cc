// Resampling on several threads (fitters::ResampleOptions::num_threads): every draw has its own
// random stream, internal::DrawStreamState(seed, index), so the draws, intervals and counts are
// the same bit for bit whatever the number of threads, and a draw does not depend on how many
// draws the run makes. A numerical failure in a draw run on another thread reaches the caller
// as it does on one thread.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdint>
#include <cstring>
#include <stdexcept>
#include <vector>

#include "fitters/autodiff_model.h"
#include "fitters/fitter.h"
#include "fitters/internal/random.h"
#include "fitters/registry.h"
#include "tests/models/synthetic.h"

namespace sorbtrace::fitters {
namespace {

// Bitwise equality of two vectors of doubles (NaN equals NaN when its bits do).
bool SameBits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() &&
         (a.empty() || std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0);
}

void ExpectSameResult(const ResampleResult& a, const ResampleResult& b) {
  ASSERT_EQ(a.parameter_draws.size(), b.parameter_draws.size());
  for (std::size_t d = 0; d < a.parameter_draws.size(); ++d) {
    EXPECT_TRUE(SameBits(a.parameter_draws[d], b.parameter_draws[d])) << "draw " << d;
  }
  EXPECT_TRUE(SameBits(a.parameter_low, b.parameter_low));
  EXPECT_TRUE(SameBits(a.parameter_high, b.parameter_high));
  EXPECT_TRUE(SameBits(a.studentized_low, b.studentized_low));
  EXPECT_TRUE(SameBits(a.studentized_high, b.studentized_high));
  EXPECT_EQ(a.num_studentized, b.num_studentized);
  EXPECT_EQ(a.num_failed, b.num_failed);
  EXPECT_EQ(a.refit_iterations, b.refit_iterations);
}

// SplitMix64 started at 0 gives 0xE220A8397B1DCDAF, 0x6E789E6AA1B965F4, 0x06C45D188009454F as
// its first three outputs: computed by hand (Python integers mod 2^64) from the reference code
// splitmix64.c (S. Vigna, 2015, public domain, prng.di.unimi.it; its text as kept in the numpy
// repository, numpy/random/src/splitmix64/splitmix64.orig.c), not from the code under test.
TEST(DrawStreamStateTest, IsSplitMix64OfSeedAndIndex) {
  EXPECT_EQ(internal::DrawStreamState(0, 0), 0xE220A8397B1DCDAFULL);
  EXPECT_EQ(internal::DrawStreamState(0, 1), 0x6E789E6AA1B965F4ULL);
  EXPECT_EQ(internal::DrawStreamState(0, 2), 0x06C45D188009454FULL);
  // Neighbouring seeds and indices give unrelated streams.
  EXPECT_NE(internal::DrawStreamState(1, 0), internal::DrawStreamState(0, 0));
  EXPECT_NE(internal::DrawStreamState(20261201, 7), internal::DrawStreamState(20261201, 8));
}

// xoshiro256** from the state {1, 2, 3, 4}: the first ten outputs of the reference code
// xoshiro256starstar.c (D. Blackman, S. Vigna), as listed in the test "reference" of the Rust
// crate rand_xoshiro (rust-random/rngs, rand_xoshiro/src/xoshiro256starstar.rs: "produced with
// the reference implementation").
TEST(DrawStreamStateTest, Xoshiro256StarStarMatchesTheReferenceOutputs) {
  internal::Xoshiro256StarStar engine = internal::Xoshiro256StarStar::FromState(1, 2, 3, 4);
  const std::uint64_t expected[] = {11520ULL,
                                    0ULL,
                                    1509978240ULL,
                                    1215971899390074240ULL,
                                    1216172134540287360ULL,
                                    607988272756665600ULL,
                                    16172922978634559625ULL,
                                    8476171486693032832ULL,
                                    10595114339597558777ULL,
                                    2904607092377533576ULL};
  for (const std::uint64_t value : expected) EXPECT_EQ(engine(), value);
  // Seeded by a number: four SplitMix64 outputs of it fill the state.
  internal::Xoshiro256StarStar seeded(0);
  internal::Xoshiro256StarStar same = internal::Xoshiro256StarStar::FromState(
      0xE220A8397B1DCDAFULL, 0x6E789E6AA1B965F4ULL, 0x06C45D188009454FULL,
      0xF88BB8A8724C81ECULL);  // the fourth output, computed as the first three above
  for (int i = 0; i < 4; ++i) EXPECT_EQ(seeded(), same());
}

// GAB with errors in variables and a specimen-like common factor on every point, each kind of
// resampling, 1, 2 and 3 threads: the same result, bit for bit.
TEST(ResampleThreadsTest, ResultIsTheSameForAnyNumberOfThreads) {
  const Model* gab = FindModel("gab");
  ASSERT_NE(gab, nullptr);
  // The invented 16-point GAB isotherm, u(RH) = 0.008 on every point (tests/models/synthetic.h).
  const std::vector<Observation> data = testing::GabPointsWithRhErrors(testing::GabScatterSpec{});
  FitOptions fit_options;
  fit_options.errors_in_variables = true;
  const FitResult fit = FitModel(*gab, data, ModelContext{}, fit_options);
  ASSERT_TRUE(fit.ok());
  ASSERT_TRUE(fit.summary.covariance_available);
  for (ResampleKind kind : {ResampleKind::kResidualBootstrap, ResampleKind::kCaseBootstrap,
                            ResampleKind::kMonteCarloInputs}) {
    ResampleOptions options;
    options.kind = kind;
    options.num_resamples = 120;
    options.common_factors.push_back({0.02, std::vector<double>(data.size(), 1.0)});
    options.num_threads = 1;
    const ResampleResult one = Resample(*gab, data, ModelContext{}, fit, fit_options, options);
    ASSERT_GE(one.parameter_draws.size(), 100u) << "most refits converge";
    options.num_threads = 2;
    const ResampleResult two = Resample(*gab, data, ModelContext{}, fit, fit_options, options);
    options.num_threads = 3;
    const ResampleResult three = Resample(*gab, data, ModelContext{}, fit, fit_options, options);
    ExpectSameResult(one, two);
    ExpectSameResult(one, three);
    // The draws do spread (a run that returned the full fit every time would pass the above).
    EXPECT_LT(one.parameter_low[0], one.parameter_high[0]);
  }
}

// Draw b depends on (seed, b) alone: a run of 40 draws is the first 40 of a run of 80.
TEST(ResampleThreadsTest, ShorterRunIsAPrefixOfALongerOne) {
  const Model* gab = FindModel("gab");
  ASSERT_NE(gab, nullptr);
  const std::vector<Observation> data = testing::GabPointsWithRhErrors(testing::GabScatterSpec{});
  FitOptions fit_options;
  const FitResult fit = FitModel(*gab, data, ModelContext{}, fit_options);
  ASSERT_TRUE(fit.ok());
  ResampleOptions options;
  options.kind = ResampleKind::kMonteCarloInputs;
  options.num_threads = 2;
  options.num_resamples = 40;
  const ResampleResult shorter = Resample(*gab, data, ModelContext{}, fit, fit_options, options);
  options.num_resamples = 80;
  const ResampleResult longer = Resample(*gab, data, ModelContext{}, fit, fit_options, options);
  ASSERT_EQ(shorter.num_failed, 0);
  ASSERT_EQ(longer.num_failed, 0);
  ASSERT_EQ(longer.parameter_draws.size(), 80u);
  for (std::size_t d = 0; d < shorter.parameter_draws.size(); ++d) {
    EXPECT_TRUE(SameBits(shorter.parameter_draws[d], longer.parameter_draws[d])) << "draw " << d;
  }
  EXPECT_FALSE(SameBits(longer.parameter_draws[0], longer.parameter_draws[1]));
}

ModelInfo LineInfo() {
  ModelInfo info;
  info.name = "failing_line";
  for (const char* name : {"a", "b"}) {
    ParameterSpec spec;
    spec.name = name;
    spec.unit = "1";
    info.parameters.push_back(spec);
  }
  return info;
}

double ValueOf(double v) { return v; }
template <typename Jet>
double ValueOf(const Jet& v) {
  return v.a;
}

// y = a + b x, which throws a numerical failure (std::domain_error) wherever a > kLimit.
struct FailingLine {
  static constexpr double kLimit = 1.0;
  static constexpr int kNumParameters = 2;
  static constexpr int kNumInputs = 1;
  static ModelInfo Info() { return LineInfo(); }
  template <typename T>
  static T Evaluate(const T* p, const T* x, const ModelContext&) {
    if (ValueOf(p[0]) > kLimit) throw std::domain_error("intercept above the limit");
    return p[0] + p[1] * x[0];
  }
  static std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>&,
                                                         const ModelContext&) {
    return {{0.0, 0.0}};
  }
  static std::vector<std::string> PhysicalFlags(const double*) { return {}; }
};

// Invented line y = 0.9 + 2 x with scatter and sigma_y = 0.2: intercept about 1 standard error
// below FailingLine::kLimit, so a good part of the Monte Carlo refits cross it.
std::vector<Observation> LineNearTheLimit() {
  const double y[] = {0.95, 2.80, 4.95, 6.85, 8.90, 10.95};
  std::vector<Observation> data;
  for (int i = 0; i < 6; ++i) {
    Observation o;
    o.x = {static_cast<double>(i), 0.0};
    o.y = y[i];
    o.sigma_y = 0.2;
    data.push_back(o);
  }
  return data;
}

TEST(ResampleThreadsTest, FailureInADrawReachesTheCallerOnAnyNumberOfThreads) {
  const auto model = MakeAutoDiffModel<FailingLine>();
  const std::vector<Observation> data = LineNearTheLimit();
  const FitOptions fit_options;
  const FitResult fit = FitModel(*model, data, ModelContext{}, fit_options);
  ASSERT_TRUE(fit.ok());
  ASSERT_LT(fit.parameters[0], FailingLine::kLimit);
  ResampleOptions options;
  options.kind = ResampleKind::kMonteCarloInputs;
  options.num_resamples = 200;
  for (int threads : {1, 2, 3}) {
    options.num_threads = threads;
    EXPECT_THROW(Resample(*model, data, ModelContext{}, fit, fit_options, options),
                 std::domain_error)
        << threads << " thread(s)";
  }
}

}  // namespace
}  // namespace sorbtrace::fitters
