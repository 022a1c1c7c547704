// Writes a synthetic continuous vapour-sorption log in the format of docs/input-formats.md
// (section 3b) for benchmarks: one reading per second, `num_steps` set-point steps cycling
// 0 % -> 90 % -> 0 %, an exponential approach of the mass to an invented isotherm within each
// step, and deterministic pseudo-random noise (std::mt19937_64, fixed seed). Invented data,
// not any instrument's output.
#pragma once

#include <cstdint>
#include <filesystem>

namespace sorbtrace::bench {

struct SyntheticLogOptions {
  std::int64_t num_rows = 2'000'000;  // one per second
  int num_steps = 40;
  double dry_mass_mg = 1012.5;  // specimen dry mass
  std::uint64_t seed = 20261201;
};

// Writes the log to `path` (overwrites). Returns the number of bytes written.
std::uint64_t WriteSyntheticVaporLog(const std::filesystem::path& path,
                                     const SyntheticLogOptions& options);

}  // namespace sorbtrace::bench
