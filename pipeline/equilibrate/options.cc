// EquilibrateOptions::IsValid.
#include <fmt/format.h>

#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::equilibrate {
namespace {

using physics::kPercent;
using physics::kSecondsPerHour;
using physics::kSecondsPerMinute;

}  // namespace

bool EquilibrateOptions::IsValid(std::string* error) const {
  auto fail = [error](std::string message) {
    if (error != nullptr) *error = std::move(message);
    return false;
  };
  if (!(mass_change_limit_fraction > 0.0 && mass_change_limit_fraction < 1.0)) {
    return fail(fmt::format("mass change limit {} % must lie in (0, 100) %",
                            mass_change_limit_fraction * kPercent));
  }
  if (!(min_weighing_interval_s >= 0.0)) {
    return fail(fmt::format("minimum weighing interval {} h must be >= 0",
                            min_weighing_interval_s / kSecondsPerHour));
  }
  if (!(weighing_interval_tolerance_s >= 0.0)) {
    return fail(fmt::format("weighing interval tolerance {} h must be >= 0",
                            weighing_interval_tolerance_s / kSecondsPerHour));
  }
  if (min_weighings < 2) {
    return fail(fmt::format("min_weighings {} must be at least 2", min_weighings));
  }
  if (!(rate_limit_fraction_per_min > 0.0)) {
    return fail(
        fmt::format("rate limit {} %/min must be > 0", rate_limit_fraction_per_min * kPercent));
  }
  if (!(rate_window_s > 0.0)) {
    return fail(fmt::format("rate window {} min must be > 0", rate_window_s / kSecondsPerMinute));
  }
  if (exponential_terms != 1 && exponential_terms != 2) {
    return fail(fmt::format("exponential_terms {} must be 1 or 2", exponential_terms));
  }
  if (!(tail_fraction > 0.0 && tail_fraction <= 1.0)) {
    return fail(fmt::format("tail_fraction {} must lie in (0, 1]", tail_fraction));
  }
  if (!(max_tau_to_tail_ratio > 0.0)) {
    return fail(fmt::format("max_tau_to_tail_ratio {} must be > 0", max_tau_to_tail_ratio));
  }
  if (min_tail_points < 5) {
    return fail(fmt::format("min_tail_points {} must be at least 5", min_tail_points));
  }
  return true;
}

}  // namespace sorbtrace::equilibrate
