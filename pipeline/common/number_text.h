// Number formatting: the one place that decides how a number reads wherever a person reads it — the
// PDF, the "as printed" columns of the CSV companions, the `text` fields of results.json and the
// output of `sorbtrace check`. Value fields of results.json and the numeric CSV columns keep full
// precision and are not formatted here.
//
// Rules:
//  - Rounding, JCGM 100:2008 (GUM) 7.2.6: the expanded uncertainty U to two significant
//    digits (the template may ask for one), the value rounded to the same decimal place;
//    GUM's example: y = 10.057 62 Ω with u = 27 mΩ is written 10.058 Ω. Rounding is to the
//    nearest, an exact tie to the even digit (rule B of ISO 80000-1:2009 Annex B, from memory;
//    the same as C printf). Digits come from exact fixed-point conversion of the binary
//    value, never from repeated floating-point scaling, so no "0.30000000000000004" appears.
//  - At most kMaxValueDigits significant digits in a value: where U's second significant
//    digit would lie below the value's eighth, the value is cut at its eighth digit and U is
//    rounded up to that decimal place, keeping two significant digits (a U below ten units of
//    that place is printed as 10 units: "62.973875 ± 0.000010"; GUM 7.2.6: "it may sometimes
//    be appropriate to round uncertainties up", e.g. 10.47 mΩ to 11 mΩ). The printed interval
//    then still contains the stated one; the full U stays in results.json.
//  - Notation: plain decimals while the larger of |value| and U lies in [1e-4, 1e6) and no
//    more than six decimals are needed; otherwise a common power of ten that is a multiple
//    of three (engineering notation, matching the SI prefixes: "(12.3 ± 1.1) × 10⁻⁶"), never
//    "× 10⁰".
#pragma once

#include <string>

namespace sorbtrace::common {

// Most significant digits a printed value carries (common practice: a semi-micro balance
// reads a 100 g load to 0.01 mg, eight digits; a moisture content averaged over a vapour log's
// readings is known to a few parts in 10^5 of itself, "18.42060 ± 0.00021 %"). A U below ten
// units of the eighth digit (about 1e-6 relative) is printed as that floor.
inline constexpr int kMaxValueDigits = 8;

// Significant digits of a printed uncertainty (standard or expanded) where no template sets
// them: two (JCGM 100:2008, 7.2.6: "at most two significant digits"; also the most a template
// may ask for).
inline constexpr int kUncertaintySignificantDigits = 2;

// `value` to `significant_digits` significant digits (1-15), plain or in engineering
// notation by the rules above; "0" for zero, "n/a" when not finite.
std::string FormatSignificant(double value, int significant_digits);

// Significant digits of a number in a diagnostic sentence (a statistic, a parameter at its
// bound, a check's detail) where no uncertainty beside it fixes them: three (common practice;
// enough to compare it with the limit the sentence names).
inline constexpr int kDiagnosticDigits = 3;

// A probability (a p-value, a risk) to `significant_digits` significant digits: plain down to
// 10^-4 like any value, below that in scientific notation with the leading digit before the
// point ("7.1 × 10⁻⁴⁹", not the engineering "710 × 10⁻⁵¹": a probability has no unit prefix a
// power of 1000 would stand for; ISO 80000-1:2009, 6.5.1 scientific notation, from memory).
// Significant digits of a printed p-value (a test's verdict needs its order of magnitude and
// one more digit; common practice).
inline constexpr int kProbabilityDigits = 2;
std::string FormatProbability(double probability, int significant_digits);

// `value` with a fixed number of decimals ("-0" printed as "0").
std::string FormatFixed(double value, int decimals);

// A coverage factor as printed, to two significant digits: "2" for any k that two digits
// print as "2.0" (k = 2.04 from 60 effective degrees of freedom), "2.3" otherwise.
std::string CoverageText(double k);

// A setting as a person wrote it: the shortest form of at most 15 significant digits
// (every decimal of up to 15 digits survives the round trip through a double, IEEE 754
// binary64; a value converted between units, e.g. 0.106 nm² -> m² -> nm², differs from it in
// the 17th digit only), exponent without padding ("1e-5"). "n/a" when not finite.
std::string FormatSetting(double value);

// Formats value +- uncertainty with the rule above (uncertainty to N significant digits, value
// to the same decimal place, common power of ten): "0.773 ± 0.055", "(12.3 ± 1.1) × 10⁻⁶".
std::string FormatWithUncertainty(double value, double uncertainty, int significant_digits);

// value alone, rounded to the decimal place of the significant_digits-th digit of its
// uncertainty (JCGM 100:2008, 7.2.6), for a text that states u beside it in its own words:
// "corrected by " + FormatAtUncertainty(0.000849152, 3.1e-5, 2) -> "0.000849"; sign kept,
// "+" when show_plus and value > 0. Without a usable uncertainty: FormatSignificant(value, 4).
std::string FormatAtUncertainty(double value, double uncertainty, int significant_digits,
                                bool show_plus = false);

// An integer written with Unicode superscript digits, e.g. -6 -> "⁻⁶".
std::string Superscript(int value);

}  // namespace sorbtrace::common
