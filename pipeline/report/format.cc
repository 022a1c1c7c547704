// Rounding rule (JCGM 100:2008, 7.2.6): the expanded uncertainty is given to at most two
// significant digits and the value is rounded to the same decimal place. Rounding is to the
// nearest; an exact tie (possible only for values exactly representable in binary, such as
// 1234.5) goes to the even digit, rule B of ISO 80000-1:2009 Annex B (from memory) and the
// behaviour of C printf. Digits come from fmt's exact fixed-point formatting of the binary
// value, never from repeated floating-point scaling, so no "0.30000000000000004" can appear.
#include "pipeline/report/format.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <string>

#include "pipeline/report/plot/text.h"
#include "pipeline/report/report.h"

namespace sorbtrace::report {
namespace {

// Plain decimals are used while the value and its uncertainty stay within these decades
// (common practice in datasheets: no more than four leading zeros, no more than six digits
// before the point).
constexpr int kMinPlainExponent = -4;
constexpr int kMaxPlainExponent = 5;

std::string StripNegativeZero(std::string text) {
  if (!text.empty() && text.front() == '-' && text.find_first_not_of("-0.") == std::string::npos) {
    text.erase(0, 1);
  }
  return text;
}

int DecimalExponent(double x) { return static_cast<int>(std::floor(std::log10(std::abs(x)))); }

// Formats x rounded to the decimal place 10^place (place may be negative).
std::string AtPlace(double x, int place) {
  if (place < 0) return StripNegativeZero(fmt::format("{:.{}f}", x, -place));
  const double scaled = place == 0 ? x : x / std::pow(10.0, place);
  std::string digits = StripNegativeZero(fmt::format("{:.0f}", scaled));
  if (digits != "0") digits.append(static_cast<size_t>(place), '0');
  return digits;
}

// Decimal place of the last significant digit when u is rounded to n significant digits,
// after the carry (e.g. 0.0996 to 2 digits is 0.10: place -2, not -3).
int UncertaintyPlace(double u, int n) {
  int place = DecimalExponent(u) - (n - 1);
  const std::string rounded = AtPlace(u, place);
  const double back = std::stod(rounded);
  if (back >= std::pow(10.0, place + n) * (1.0 - 1e-12)) ++place;
  return place;
}

}  // namespace

std::string FormatFixed(double value, int decimals) {
  if (!std::isfinite(value)) return "n/a";
  return StripNegativeZero(fmt::format("{:.{}f}", value, std::clamp(decimals, 0, 15)));
}

std::string FormatSignificant(double value, int significant_digits) {
  if (!std::isfinite(value)) return "n/a";
  const int n = std::clamp(significant_digits, 1, 15);
  if (value == 0.0) return "0";
  int exponent = DecimalExponent(value);
  if (exponent >= kMinPlainExponent && exponent <= kMaxPlainExponent) {
    int place = exponent - (n - 1);
    std::string text = AtPlace(value, place);
    // A carry (9.99 -> 10.0) adds a digit: drop the last one.
    if (std::abs(std::stod(text)) >= std::pow(10.0, exponent + 1) * (1.0 - 1e-12)) {
      text = AtPlace(value, place + 1);
    }
    return text;
  }
  double mantissa = value / std::pow(10.0, exponent);
  std::string m = FormatFixed(mantissa, n - 1);
  if (std::abs(std::stod(m)) >= 10.0) {
    ++exponent;
    m = FormatFixed(value / std::pow(10.0, exponent), n - 1);
  }
  return m + " × 10" + plot::Superscript(exponent);
}

std::string FormatWithUncertainty(double value, double uncertainty, int significant_digits) {
  if (!std::isfinite(value)) return "n/a";
  const int n = std::clamp(significant_digits, 1, 4);
  if (!std::isfinite(uncertainty) || uncertainty <= 0.0) {
    // No usable uncertainty: the value alone, to four significant digits (common practice).
    return FormatSignificant(value, 4);
  }
  const int place = UncertaintyPlace(uncertainty, n);
  const double larger = std::max(std::abs(value), uncertainty);
  const int top = DecimalExponent(larger);
  if (place >= kMinPlainExponent - (n - 1) && top <= kMaxPlainExponent) {
    return AtPlace(value, place) + " ± " + AtPlace(uncertainty, place);
  }
  // Scientific: a common power of ten, chosen from the larger of |value| and U.
  const int exponent = top;
  const double scale = std::pow(10.0, exponent);
  const int scaled_place = place - exponent;
  return "(" + AtPlace(value / scale, scaled_place) + " ± " +
         AtPlace(uncertainty / scale, scaled_place) + ") × 10" + plot::Superscript(exponent);
}

}  // namespace sorbtrace::report
