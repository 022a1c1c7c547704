// The rules are stated in format.h (JCGM 100:2008, 7.2.6; notation; digit cap).
#include "pipeline/common/number_text.h"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <string>

namespace sorbtrace::common {
namespace {

// Plain decimals while the larger magnitude stays within these decades and no more than
// kMaxPlainDecimals decimals are needed (common practice in datasheets: at most four leading
// zeros, at most six digits before the point).
constexpr int kMinPlainExponent = -4;
constexpr int kMaxPlainExponent = 5;
constexpr int kMaxPlainDecimals = 6;
// Engineering notation: exponents are multiples of three (ISO 80000-1 SI prefixes).
constexpr int kEngineeringStep = 3;
// Decimal digits that every double reproduces exactly (IEEE 754 binary64: DBL_DIG = 15).
constexpr int kSettingDigits = 15;

// |x| rounded to a whole number of units 10^place: its decimal digits (no leading zeros,
// "0" for zero) and sign.
struct Rounded {
  bool negative = false;
  std::string digits = "0";
  int place = 0;
  bool zero() const { return digits == "0"; }
  int num_digits() const { return zero() ? 0 : static_cast<int>(digits.size()); }
  // Decimal exponent of the leading digit (place for zero).
  int top() const { return place + std::max(num_digits(), 1) - 1; }
};

Rounded RoundAt(double x, int place) {
  Rounded r;
  r.place = place;
  // fmt prints the exact binary value rounded to the requested decimals (ties to even).
  std::string text = place <= 0 ? fmt::format("{:.{}f}", std::abs(x), -place)
                                : fmt::format("{:.0f}", std::abs(x) / std::pow(10.0, place));
  text.erase(std::remove(text.begin(), text.end(), '.'), text.end());
  const size_t first = text.find_first_not_of('0');
  r.digits = first == std::string::npos ? "0" : text.substr(first);
  r.negative = x < 0.0 && !r.zero();
  return r;
}

// The smallest whole number of units 10^place that is not below u (u > 0), at least one unit.
Rounded RoundUpAt(double u, int place) {
  Rounded r = RoundAt(u, place);
  const double units = u / std::pow(10.0, place);
  // A relative slack of 1e-12 keeps a U that is a whole number of units (0.0012 at place
  // -4, binary 0.00120000000000000002) from being bumped by its representation error.
  const long long up = std::max(1LL, static_cast<long long>(std::ceil(units * (1.0 - 1e-12))));
  r.digits = std::to_string(up);
  r.negative = false;
  return r;
}

// r written as a decimal number in units of 10^exponent (exponent <= r.place or not).
std::string Decimal(const Rounded& r, int exponent) {
  const int shift = r.place - exponent;  // digits x 10^shift
  std::string out = r.digits;
  if (shift >= 0) {
    if (!r.zero()) out.append(static_cast<size_t>(shift), '0');
  } else {
    const size_t decimals = static_cast<size_t>(-shift);
    if (out.size() <= decimals) out.insert(0, decimals - out.size() + 1, '0');
    out.insert(out.size() - decimals, ".");
  }
  return (r.negative ? "-" : "") + out;
}

int DecimalExponent(double x) { return static_cast<int>(std::floor(std::log10(std::abs(x)))); }

// The power of ten for numbers whose larger magnitude has its leading digit at 10^top and
// whose last digit is at 10^place: 0 for plain decimals, else a multiple of three.
int NotationExponent(int top, int place) {
  if (top >= kMinPlainExponent && top <= kMaxPlainExponent && place >= -kMaxPlainDecimals) {
    return 0;
  }
  const int e = static_cast<int>(
                    std::floor(static_cast<double>(top) / static_cast<double>(kEngineeringStep))) *
                kEngineeringStep;
  return e;
}

std::string TimesTenTo(int exponent) {
  return exponent == 0 ? "" : " × 10" + Superscript(exponent);
}

// x (finite, not zero) rounded to n significant digits (clamped to 1-15); a carry into a new
// leading digit keeps n digits by rounding one place higher (9.996 to 3 digits is 10.0, place
// -1; 0.0996 to 2 digits is 0.10, place -2; 9.96e-50 is 1.0e-49).
Rounded RoundToSignificant(double x, int n) {
  n = std::clamp(n, 1, 15);
  const int place = DecimalExponent(x) - (n - 1);
  Rounded r = RoundAt(x, place);
  return r.num_digits() > n ? RoundAt(x, place + 1) : r;
}

}  // namespace

std::string FormatFixed(double value, int decimals) {
  if (!std::isfinite(value)) return "n/a";
  return Decimal(RoundAt(value, -std::clamp(decimals, 0, 15)), 0);
}

std::string FormatSignificant(double value, int significant_digits) {
  if (!std::isfinite(value)) return "n/a";
  if (value == 0.0) return "0";
  const Rounded r = RoundToSignificant(value, significant_digits);
  const int exponent = NotationExponent(r.top(), r.place);
  return Decimal(r, exponent) + TimesTenTo(exponent);
}

std::string FormatProbability(double probability, int significant_digits) {
  if (!std::isfinite(probability)) return "n/a";
  if (probability == 0.0) return "0";
  const Rounded r = RoundToSignificant(probability, significant_digits);
  if (r.top() >= kMinPlainExponent) return FormatSignificant(probability, significant_digits);
  return Decimal(r, r.top()) + TimesTenTo(r.top());
}

std::string CoverageText(double k) {
  // Within half a unit of the second significant digit of a whole k (k < 10) two digits read
  // "2.0": printed "2", the k the sheet states unless another is printed beside a value.
  constexpr double kHalfOfSecondDigit = 0.05;
  return std::abs(k - std::round(k)) < kHalfOfSecondDigit ? FormatFixed(k, 0)
                                                          : FormatSignificant(k, 2);
}

std::string FormatSetting(double value) {
  if (!std::isfinite(value)) return "n/a";
  std::string text = fmt::format("{:.{}g}", value, kSettingDigits);
  // "1e-05" -> "1e-5", "1e+20" -> "1e20".
  const size_t e = text.find('e');
  if (e != std::string::npos) {
    std::string mantissa = text.substr(0, e);
    std::string exponent = text.substr(e + 1);
    const bool negative = !exponent.empty() && exponent.front() == '-';
    if (!exponent.empty() && (exponent.front() == '-' || exponent.front() == '+')) {
      exponent.erase(0, 1);
    }
    exponent.erase(0, std::min(exponent.find_first_not_of('0'), exponent.size() - 1));
    text = mantissa + "e" + (negative ? "-" : "") + exponent;
  }
  return text;
}

std::string FormatWithUncertainty(double value, double uncertainty, int significant_digits) {
  if (!std::isfinite(value)) return "n/a";
  if (!std::isfinite(uncertainty) || uncertainty <= 0.0) {
    // No usable uncertainty: the value alone, to four significant digits (common practice).
    return FormatSignificant(value, 4);
  }
  const int n = std::clamp(significant_digits, 1, 4);
  // U to n significant digits fixes the last printed decimal place (JCGM 100:2008, 7.2.6).
  int place = RoundToSignificant(uncertainty, n).place;
  Rounded v = RoundAt(value, place);
  Rounded u = RoundAt(uncertainty, place);
  // Digit cap: U rounded up to the value's kMaxValueDigits-th digit, keeping its n
  // significant digits (see number_text.h; n - 1 zeros after a one where U is below 10^(n-1)
  // units of that place).
  bool capped = false;
  while (v.num_digits() > kMaxValueDigits) {
    place += v.num_digits() - kMaxValueDigits;
    v = RoundAt(value, place);
    capped = true;
  }
  if (capped) {
    u = RoundUpAt(uncertainty, place);
    if (u.num_digits() < n) u.digits = "1" + std::string(static_cast<std::size_t>(n - 1), '0');
  }
  const int top = std::max(v.top(), u.top());
  const int exponent = NotationExponent(top, place);
  if (exponent == 0) return Decimal(v, 0) + " ± " + Decimal(u, 0);
  return "(" + Decimal(v, exponent) + " ± " + Decimal(u, exponent) + ")" + TimesTenTo(exponent);
}

std::string FormatAtUncertainty(double value, double uncertainty, int significant_digits,
                                bool show_plus) {
  if (!std::isfinite(value)) return "n/a";
  const std::string sign = show_plus && value > 0.0 ? "+" : "";
  if (!std::isfinite(uncertainty) || uncertainty <= 0.0) {
    return sign + FormatSignificant(value, 4);  // as FormatWithUncertainty without u
  }
  int place = RoundToSignificant(uncertainty, std::clamp(significant_digits, 1, 4)).place;
  Rounded v = RoundAt(value, place);
  if (v.num_digits() > kMaxValueDigits)
    v = RoundAt(value, place + v.num_digits() - kMaxValueDigits);
  const int exponent = NotationExponent(std::max(v.top(), place), v.place);
  return sign + Decimal(v, exponent) + TimesTenTo(exponent);
}

std::string Superscript(int value) {
  static constexpr std::array<const char*, 10> kDigits = {"⁰", "¹", "²", "³", "⁴",
                                                          "⁵", "⁶", "⁷", "⁸", "⁹"};
  std::string out;
  long magnitude = value;
  if (magnitude < 0) {
    out += "⁻";
    magnitude = -magnitude;
  }
  const std::string digits = std::to_string(magnitude);
  for (char d : digits) out += kDigits[static_cast<size_t>(d - '0')];
  return out;
}

}  // namespace sorbtrace::common
