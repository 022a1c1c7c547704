#include "pipeline/physics/range_check.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <string>

#include "pipeline/physics/physics.h"

namespace sorbtrace::physics::internal {
namespace {

// " K" for a unit, "" for a dimensionless quantity.
std::string UnitSuffix(std::string_view unit) {
  return unit.empty() ? std::string() : fmt::format(" {}", unit);
}

// Slack on closed ranges: a bound is met if missed by no more than 1e-12 relative to the
// larger finite bound, so that values produced by rounding (e.g. -25 degC converted to
// 248.14999999999998 K, or rh * p_s / p_s) are not rejected.
constexpr double kRelativeSlack = 1e-12;

double Slack(double lower, double upper) {
  double scale = 0.0;
  if (std::isfinite(lower)) scale = std::max(scale, std::abs(lower));
  if (std::isfinite(upper)) scale = std::max(scale, std::abs(upper));
  return kRelativeSlack * scale;
}

}  // namespace

void RequireInRange(std::string_view quantity, double value, double lower, double upper,
                    std::string_view unit, std::string_view correlation) {
  const double slack = Slack(lower, upper);
  if (value >= lower - slack && value <= upper + slack) return;
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
