// Deterministic random numbers for resampling and multi-starts: engines whose output sequences
// are fixed by their definitions (std::mt19937_64 by the C++ standard, xoshiro256** and
// SplitMix64 by their reference code) with our own uniform and normal transforms, so the draws
// do not depend on the standard library's distributions. Internal to fitters/.
#pragma once

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <numbers>
#include <random>

namespace sorbtrace::fitters::internal {

constexpr std::uint64_t kGoldenGamma = 0x9E3779B97F4A7C15ULL;  // SplitMix64's increment

// The SplitMix64 output function (finaliser) of state z (S. Vigna, splitmix64.c, public domain,
// prng.di.unimi.it; the generator of G. L. Steele, D. Lea, C. H. Flood, "Fast splittable
// pseudorandom number generators", OOPSLA 2014).
constexpr std::uint64_t SplitMix64Output(std::uint64_t z) {
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}

// The initial state of the random stream of draw `index` (0, 1, 2, ...) of a resampling run
// seeded with `seed`: output index + 1 of SplitMix64 started at `seed`. Each draw then owns its
// stream, so what it draws depends on (seed, index) alone, not on which thread runs it or in
// which order.
constexpr std::uint64_t DrawStreamState(std::uint64_t seed, std::uint64_t index) {
  return SplitMix64Output(seed + (index + 1) * kGoldenGamma);
}

// xoshiro256** 1.0 (D. Blackman, S. Vigna, "Scrambled linear pseudorandom number generators",
// ACM Trans. Math. Softw. 47 (2021) 36; reference code xoshiro256starstar.c, public domain),
// its 256-bit state filled with four SplitMix64 outputs of the seed as its authors advise. A
// stream starts in a few nanoseconds (std::mt19937_64 fills and twists 312 words first, about
// 1 us, which was 5 % of a demo job's CPU when every resampled draw started its own stream).
class Xoshiro256StarStar {
 public:
  using result_type = std::uint64_t;
  explicit Xoshiro256StarStar(std::uint64_t seed) {
    for (std::uint64_t& word : state_) {
      seed += kGoldenGamma;
      word = SplitMix64Output(seed);
    }
  }
  // The state given word for word (for checks against the reference code).
  static Xoshiro256StarStar FromState(std::uint64_t s0, std::uint64_t s1, std::uint64_t s2,
                                      std::uint64_t s3) {
    Xoshiro256StarStar engine(0);
    engine.state_[0] = s0;
    engine.state_[1] = s1;
    engine.state_[2] = s2;
    engine.state_[3] = s3;
    return engine;
  }
  static constexpr result_type min() { return 0; }
  static constexpr result_type max() { return std::numeric_limits<result_type>::max(); }
  result_type operator()() {
    const std::uint64_t result = RotateLeft(state_[1] * 5, 7) * 9;
    const std::uint64_t t = state_[1] << 17;
    state_[2] ^= state_[0];
    state_[3] ^= state_[1];
    state_[1] ^= state_[2];
    state_[0] ^= state_[3];
    state_[2] ^= t;
    state_[3] = RotateLeft(state_[3], 45);
    return result;
  }

 private:
  static constexpr std::uint64_t RotateLeft(std::uint64_t x, int k) {
    return (x << k) | (x >> (64 - k));
  }
  std::uint64_t state_[4] = {};
};

// Uniform, normal and index draws from a 64-bit engine (Random: one resampled draw's stream;
// MultistartRandom: the fitting engine's multi-start perturbations, std::mt19937_64).
template <typename Engine>
class BasicRandom {
 public:
  explicit BasicRandom(std::uint64_t state) : engine_(state) {}

  // Uniform on [0, 1): the top 53 bits of one engine output times 2^-53.
  double Uniform() {
    constexpr double kTwoToMinus53 = 1.0 / 9007199254740992.0;  // 2^-53
    return static_cast<double>(engine_() >> 11) * kTwoToMinus53;
  }

  // Standard normal by the Box-Muller transform (G. E. P. Box, M. E. Muller, Ann. Math.
  // Statist. 29 (1958) 610-611); both values of each pair are used.
  double Normal() {
    if (has_spare_) {
      has_spare_ = false;
      return spare_;
    }
    const double u1 = 1.0 - Uniform();  // (0, 1], so the logarithm is finite
    const double u2 = Uniform();
    const double radius = std::sqrt(-2.0 * std::log(u1));
    const double angle = 2.0 * std::numbers::pi * u2;
    spare_ = radius * std::sin(angle);
    has_spare_ = true;
    return radius * std::cos(angle);
  }

  // Uniform integer in [0, n), n > 0, by rejection (no modulo bias).
  std::size_t Index(std::size_t n) {
    const std::uint64_t range = static_cast<std::uint64_t>(n);
    const std::uint64_t max = std::numeric_limits<std::uint64_t>::max();
    const std::uint64_t limit = max - (max % range);  // accept draws below limit
    std::uint64_t draw = engine_();
    while (draw >= limit) draw = engine_();
    return static_cast<std::size_t>(draw % range);
  }

 private:
  Engine engine_;
  double spare_ = 0.0;
  bool has_spare_ = false;
};

using Random = BasicRandom<Xoshiro256StarStar>;
using MultistartRandom = BasicRandom<std::mt19937_64>;

}  // namespace sorbtrace::fitters::internal
