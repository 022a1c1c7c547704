// What the fit stage tests share: quick options, one synthetic branch or an adsorption and a
// desorption branch from a seed, a specimen term over every point, and finding one model's fit
// in a result. The synthetic data themselves: tests/fit/fit_test_data.h.
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

// Two branches of one dataset, noise from `seed`: adsorption as BranchSpec makes it, then
// desorption holding more water (X_m 0.06 kg/kg instead of 0.05: hysteresis).
inline reduce::ReducedIsotherms AdsorptionAndDesorption(std::uint64_t seed) {
  reduce::ReducedIsotherms reduced;
  NormalStream noise(seed);
  AppendBranch(BranchSpec{}, &noise, &reduced);
  BranchSpec desorption;
  desorption.branch = ingest::Branch::kDesorption;
  desorption.truth.monolayer_kg_per_kg = 0.06;
  AppendBranch(desorption, &noise, &reduced);
  return reduced;
}

// Makes every point of `reduced` a mean over the same `specimen_ids` (all present at every
// step), with one specimen term (reduce.h, SpecimenTerm) of relative standard deviation
// `relative_sd` and `degrees_of_freedom` on BranchSpec's dataset; each point's independent
// uncertainty is its whole uncertainty. Returns the term for a test to add to.
inline reduce::SpecimenTerm& AddSpecimenTermToEveryPoint(std::vector<std::string> specimen_ids,
                                                         double relative_sd,
                                                         double degrees_of_freedom,
                                                         reduce::ReducedIsotherms* reduced) {
  for (reduce::IsothermPoint& point : reduced->points) {
    point.specimen_term = static_cast<int>(reduced->specimen_terms.size());
    point.specimen_ids = specimen_ids;
    point.u_independent_kg_per_kg = point.u_moisture_kg_per_kg;
  }
  reduce::SpecimenTerm term;
  term.dataset_id = BranchSpec{}.dataset_id;
  term.specimen_ids = std::move(specimen_ids);
  term.relative_sd = relative_sd;
  term.degrees_of_freedom = degrees_of_freedom;
  reduced->specimen_terms.push_back(std::move(term));
  return reduced->specimen_terms.back();
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
