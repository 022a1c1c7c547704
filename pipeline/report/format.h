// Number formatting of the report stage (internal). FormatWithUncertainty is public
// (report.h); these are its companions for values printed without an uncertainty.
#pragma once

#include <string>

namespace sorbtrace::report {

// `value` to `significant_digits` significant digits in plain decimal notation for
// 1e-4 <= |value| < 1e6 and as "m × 10ⁿ" outside; "n/a" when not finite.
std::string FormatSignificant(double value, int significant_digits);

// `value` with a fixed number of decimals ("-0" printed as "0").
std::string FormatFixed(double value, int decimals);

}  // namespace sorbtrace::report
