// Deterministic random numbers for resampling and multi-starts: std::mt19937_64 (its output
// sequence is fixed by the C++ standard) with our own uniform and normal transforms, so the
// draws do not depend on the standard library's distributions. Internal to fitters/.
#pragma once

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <numbers>
#include <random>

namespace sorbtrace::fitters::internal {

// The initial state of the random stream of draw `index` (0, 1, 2, ...) of a resampling run
// seeded with `seed`: output index + 1 of SplitMix64 started at `seed`, i.e. the SplitMix64
// finaliser of seed + (index + 1) * 0x9E3779B97F4A7C15 (S. Vigna, splitmix64.c, public domain,
// prng.di.unimi.it; the generator of G. L. Steele, D. Lea, C. H. Flood, "Fast splittable
// pseudorandom number generators", OOPSLA 2014). Each draw then owns its stream, so what it
// draws depends on (seed, index) alone, not on which thread runs it or in which order.
constexpr std::uint64_t DrawStreamState(std::uint64_t seed, std::uint64_t index) {
  constexpr std::uint64_t kGoldenGamma = 0x9E3779B97F4A7C15ULL;
  std::uint64_t z = seed + (index + 1) * kGoldenGamma;
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}

class Random {
 public:
  explicit Random(std::uint64_t state) : engine_(state) {}

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
  std::mt19937_64 engine_;
  double spare_ = 0.0;
  bool has_spare_ = false;
};

}  // namespace sorbtrace::fitters::internal
