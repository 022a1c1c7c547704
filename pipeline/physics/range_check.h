// Internal to pipeline/physics: validity-range checks that throw physics::RangeError with
// a message naming the quantity, its value, the valid range and the correlation.
#pragma once

#include <string_view>

namespace sorbtrace::physics::internal {

// Throws RangeError unless lower <= value <= upper (NaN always fails). `quantity` is e.g.
// "temperature", `unit` e.g. "K", `correlation` names the equation whose range it is.
void RequireInRange(std::string_view quantity, double value, double lower, double upper,
                    std::string_view unit, std::string_view correlation);

// Throws RangeError unless lower < value < upper (open interval; NaN always fails).
void RequireInOpenRange(std::string_view quantity, double value, double lower, double upper,
                        std::string_view unit, std::string_view correlation);

// Throws RangeError unless value is finite.
void RequireFinite(std::string_view quantity, double value, std::string_view unit,
                   std::string_view correlation);

// Temperature range accepted by the moist-air, Kelvin and capillary functions [K]: from the
// lower end of the liquid saturation-pressure equation to the normal boiling point region.
inline constexpr double kLiquidRangeLow_K = 273.15;
inline constexpr double kLiquidRangeHigh_K = 373.15;

}  // namespace sorbtrace::physics::internal
