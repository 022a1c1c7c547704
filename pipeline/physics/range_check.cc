#include "pipeline/physics/range_check.h"

#include <fmt/format.h>

#include <cmath>
#include <string>

#include "pipeline/physics/physics.h"

namespace sorbtrace::physics::internal {
namespace {

// " K" for a unit, "" for a dimensionless quantity.
std::string UnitSuffix(std::string_view unit) {
  return unit.empty() ? std::string() : fmt::format(" {}", unit);
}

}  // namespace

void RequireInRange(std::string_view quantity, double value, double lower, double upper,
                    std::string_view unit, std::string_view correlation) {
  if (value >= lower && value <= upper) return;
  const std::string u = UnitSuffix(unit);
  throw RangeError(fmt::format("{} = {:g}{} is outside the valid range {:g} .. {:g}{} of {}",
                               quantity, value, u, lower, upper, u, correlation));
}

void RequireInOpenRange(std::string_view quantity, double value, double lower, double upper,
                        std::string_view unit, std::string_view correlation) {
  if (value > lower && value < upper) return;
  const std::string u = UnitSuffix(unit);
  throw RangeError(fmt::format("{} = {:g}{} is outside the valid range {:g} < {} < {:g}{} of {}",
                               quantity, value, u, lower, quantity, upper, u, correlation));
}

void RequireFinite(std::string_view quantity, double value, std::string_view unit,
                   std::string_view correlation) {
  if (std::isfinite(value)) return;
  throw RangeError(fmt::format("{} = {:g}{} is not a finite number (required by {})", quantity,
                               value, UnitSuffix(unit), correlation));
}

}  // namespace sorbtrace::physics::internal
