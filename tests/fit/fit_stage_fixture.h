// What the fit stage tests share: quick options, one synthetic branch from a seed, and finding
// one model's fit in a result. The synthetic data themselves: tests/fit/fit_test_data.h.
#pragma once

#include <gtest/gtest.h>

#include <cstdint>
#include <string>
#include <utility>
#include <vector>

#include "pipeline/fit/fit_stage.h"
#include "tests/fit/fit_test_data.h"

namespace sorbtrace::fit::testing {

// Band grid of QuickOptions unless a test asks for another (FitStageOptions documents it).
inline constexpr int kQuickBandGridPoints = 50;

// Fast settings: no bootstrap or Monte Carlo resampling keeps the suite quick.
inline FitStageOptions QuickOptions(std::vector<std::string> models,
                                    int band_grid_points = kQuickBandGridPoints) {
  FitStageOptions options;
  options.models = std::move(models);
  options.bootstrap_resamples = 0;
  options.monte_carlo_draws = 0;
  options.band_grid_points = band_grid_points;
  return options;
}

// The reduced points of one synthetic branch made by `spec`, noise from `seed`.
inline reduce::ReducedIsotherms OneBranch(std::uint64_t seed, const BranchSpec& spec = {}) {
  reduce::ReducedIsotherms reduced;
  NormalStream noise(seed);
  AppendBranch(spec, &noise, &reduced);
  return reduced;
}

// The fit of `model` in group `group`; a test failure (and an empty fit) when there is none.
inline const ModelFit& FindFit(const IsothermFits& fits, int group, const std::string& model) {
  for (const ModelFit& fit : fits.fits) {
    if (fit.group_index == group && fit.model_name == model) return fit;
  }
  ADD_FAILURE() << "no fit of " << model << " in group " << group;
  static const ModelFit kNone;
  return kNone;
}

}  // namespace sorbtrace::fit::testing
