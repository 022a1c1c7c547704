#include "pipeline/equilibrate/criteria.h"

#include <algorithm>
#include <cmath>
#include <vector>

#include "pipeline/physics/physics.h"

namespace sorbtrace::equilibrate::internal {
namespace {

using physics::kSecondsPerMinute;

// Indices of the chain ending at weighing `end`: end, then repeatedly the latest earlier
// weighing at least `interval_s` before the previous chain member; at most `length` members.
std::vector<int> Chain(std::span<const ingest::Weighing> weighings, int end, double interval_s,
                       int length) {
  std::vector<int> chain{end};
  int current = end;
  for (int k = end - 1; k >= 0 && static_cast<int>(chain.size()) < length; --k) {
    if (weighings[static_cast<std::size_t>(current)].time_s -
            weighings[static_cast<std::size_t>(k)].time_s >=
        interval_s) {
      chain.push_back(k);
      current = k;
    }
  }
  return chain;
}

struct ChainStats {
  double change_fraction = 0.0;
  double last_change_g = 0.0;
  double span_s = 0.0;
};

ChainStats Stats(std::span<const ingest::Weighing> weighings, const std::vector<int>& chain) {
  ChainStats stats;
  if (chain.size() < 2) return stats;
  double low = weighings[static_cast<std::size_t>(chain[0])].mass_g;
  double high = low;
  for (int index : chain) {
    low = std::min(low, weighings[static_cast<std::size_t>(index)].mass_g);
    high = std::max(high, weighings[static_cast<std::size_t>(index)].mass_g);
  }
  const auto& last = weighings[static_cast<std::size_t>(chain[0])];
  const auto& previous = weighings[static_cast<std::size_t>(chain[1])];
  stats.change_fraction = (high - low) / last.mass_g;
  stats.last_change_g = last.mass_g - previous.mass_g;
  stats.span_s = last.time_s - weighings[static_cast<std::size_t>(chain.back())].time_s;
  return stats;
}

}  // namespace

ConstantMassResult EvaluateConstantMass(std::span<const ingest::Weighing> weighings,
                                        const EquilibrateOptions& options) {
  ConstantMassResult result;
  const int n = static_cast<int>(weighings.size());
  if (n == 0) return result;
  auto holds = [&](const std::vector<int>& chain, const ChainStats& stats) {
    return static_cast<int>(chain.size()) >= options.min_weighings &&
           stats.change_fraction < options.mass_change_limit_fraction;
  };
  for (int end = 0; end < n; ++end) {
    const std::vector<int> chain = Chain(
        weighings, end,
        std::max(0.0, options.min_weighing_interval_s - options.weighing_interval_tolerance_s),
        options.min_weighings);
    const ChainStats stats = Stats(weighings, chain);
    if (result.first_met_index < 0 && holds(chain, stats)) result.first_met_index = end;
    if (end == n - 1) {
      result.met = holds(chain, stats);
      result.chain_length = static_cast<int>(chain.size());
      result.change_fraction = stats.change_fraction;
      result.last_change_g = stats.last_change_g;
      result.chain_span_s = stats.span_s;
    }
  }
  return result;
}

std::vector<int> ConstantMassChain(std::span<const ingest::Weighing> weighings, int length,
                                   const EquilibrateOptions& options) {
  if (weighings.empty()) return {};
  return Chain(
      weighings, static_cast<int>(weighings.size()) - 1,
      std::max(0.0, options.min_weighing_interval_s - options.weighing_interval_tolerance_s),
      length);
}

double BlockSlope_g_per_s(std::span<const ingest::LogBlock> blocks, std::size_t first,
                          std::size_t last) {
  if (last <= first || last >= blocks.size()) return 0.0;
  const double count = static_cast<double>(last - first + 1);
  // Centre the times for a well-conditioned sum of squares.
  double mean_t = 0.0;
  double mean_m = 0.0;
  for (std::size_t i = first; i <= last; ++i) {
    mean_t += blocks[i].time_s;
    mean_m += blocks[i].mass_g;
  }
  mean_t /= count;
  mean_m /= count;
  double sxx = 0.0;
  double sxy = 0.0;
  for (std::size_t i = first; i <= last; ++i) {
    const double dt = blocks[i].time_s - mean_t;
    sxx += dt * dt;
    sxy += dt * (blocks[i].mass_g - mean_m);
  }
  return sxx > 0.0 ? sxy / sxx : 0.0;
}

RateCriterionResult EvaluateRateCriterion(std::span<const ingest::LogBlock> blocks,
                                          double step_start_s, double reference_mass_g,
                                          const EquilibrateOptions& options) {
  RateCriterionResult result;
  if (blocks.size() < 2 || reference_mass_g <= 0.0) return result;
  auto rate_fraction = [&](double slope_g_per_s) {
    return std::abs(slope_g_per_s) * kSecondsPerMinute / reference_mass_g;
  };
  std::size_t first = 0;
  for (std::size_t end = 0; end < blocks.size(); ++end) {
    while (blocks[end].time_s - blocks[first].time_s > options.rate_window_s) ++first;
    // The window is full once the step has lasted a whole window.
    const bool complete =
        blocks[end].time_s - step_start_s >= options.rate_window_s && end >= first + 2;
    double slope = 0.0;
    if (complete) {
      slope = BlockSlope_g_per_s(blocks, first, end);
      if (!result.ever_met && rate_fraction(slope) < options.rate_limit_fraction_per_min) {
        result.ever_met = true;
        result.first_met_time_s = blocks[end].time_s;
      }
    }
    if (end + 1 == blocks.size()) {
      result.window_complete = complete;
      result.window_first = first;
      if (!complete) slope = BlockSlope_g_per_s(blocks, first, end);
      result.final_slope_g_per_s = slope;
      result.final_rate_fraction_per_min = rate_fraction(slope);
      result.met =
          complete && result.final_rate_fraction_per_min < options.rate_limit_fraction_per_min;
    }
  }
  return result;
}

}  // namespace sorbtrace::equilibrate::internal
