// The rounding and notation rules of pipeline/common/number_text.h (report/format.h uses them).
// Check values: JCGM 100:2008 (GUM) 7.2.6 — U to (at most) two significant digits, the value
// rounded to the same decimal place, with GUM's own example; exact ties to even (ISO 80000-1:2009
// Annex B, rule B, from memory; the same as C printf); the digit cap rounds U up (GUM 7.2.6, "round
// uncertainties up").
#include "pipeline/report/format.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <string>

#include "pipeline/report/report.h"

namespace sorbtrace::report::internal {
namespace {

struct Case {
  double value;
  double uncertainty;
  int digits;
  const char* expected;
};

void ExpectAll(const Case* begin, const Case* end) {
  for (const Case* c = begin; c != end; ++c) {
    EXPECT_EQ(FormatWithUncertainty(c->value, c->uncertainty, c->digits), c->expected)
        << c->value << " ± " << c->uncertainty << " (" << c->digits << " digits)";
  }
}

TEST(FormatWithUncertaintyTest, GumRoundingTable) {
  const Case cases[] = {
      // GUM 7.2.6: y = 10.057 62 Ω, u_c = 27 mΩ -> "10.058 Ω" (the value to the digit of U).
      {10.05762, 0.027, 2, "10.058 ± 0.027"},
      {0.0123456, 0.00123, 2, "0.0123 ± 0.0012"},  // the example of report.h
      {1234.5, 56.0, 2, "1234 ± 56"},              // exact binary tie: to even
      {1235.5, 56.0, 2, "1236 ± 56"},              // exact binary tie: to even
      {1234.7, 56.0, 2, "1235 ± 56"},
      {12.3456, 0.96, 2, "12.35 ± 0.96"},
      {12.3456, 0.996, 2, "12.3 ± 1.0"},  // U carries to 1.0: one decimal fewer
      {1.0, 0.0996, 2, "1.00 ± 0.10"},
      {0.30000000000000004, 0.012, 2, "0.300 ± 0.012"},  // no binary noise
      {0.1 + 0.2, 0.1, 2, "0.30 ± 0.10"},
      {123456.0, 2345.0, 2, "123500 ± 2300"},
      {-0.00004, 0.0012, 2, "0.0000 ± 0.0012"},  // no "-0.0000"
      {-4.5678, 0.123, 2, "-4.57 ± 0.12"},
      {0.0123456, 0.00123, 1, "0.012 ± 0.001"},  // one significant digit
      {33.66, 1.49, 2, "33.7 ± 1.5"},
      {13.969, 0.021, 2, "13.969 ± 0.021"},  // a moisture content in % (wood-fibre demo)
      {0.0, 0.0042, 2, "0.0000 ± 0.0042"},
      {0.5, 3.0, 2, "0.5 ± 3.0"},  // U larger than the value
  };
  ExpectAll(std::begin(cases), std::end(cases));
}

TEST(FormatWithUncertaintyTest, NeverMoreThanEightSignificantDigitsInTheValue) {
  const Case cases[] = {
      // The printouts of issue 13: U below the eighth digit is rounded up to it, keeping two
      // significant digits (10 units of that place where U is below ten units).
      {62.9738754178, 2.8e-9, 2, "62.973875 ± 0.000010"},
      {153.799396, 9.4e-7, 2, "153.79940 ± 0.00010"},
      {153.799396, 3.4e-5, 2, "153.79940 ± 0.00010"},  // 3.4 units of the eighth digit
      // Eight digits suffice: GUM 7.2.6 unchanged (vapour-log points of the wood-fibre demos,
      // which a six-digit cap printed "2.44196 ± 0.00007" and "18.4206 ± 0.0003": U with
      // one digit).
      {2.4419604, 0.0000741, 2, "2.441960 ± 0.000074"},
      {18.4206012, 0.00021, 2, "18.42060 ± 0.00021"},
      {153.799396, 3.4e-4, 2, "153.79940 ± 0.00034"},
      {177.2641, 0.0011, 2, "177.2641 ± 0.0011"},
      {1.993381, 0.000020, 2, "1.993381 ± 0.000020"},
      {123.456, 0.012, 2, "123.456 ± 0.012"},
      // A carry in the value (9.99999996 -> 10.000000) does not add a ninth digit.
      {9.99999996, 1e-10, 2, "10.000000 ± 0.000010"},
  };
  ExpectAll(std::begin(cases), std::end(cases));
  // U rounded up never prints below the computed U.
  for (const Case& c : cases) {
    const std::string text = FormatWithUncertainty(c.value, c.uncertainty, 2);
    const double printed_u = std::stod(text.substr(text.find("± ") + 3));
    EXPECT_GE(printed_u, c.uncertainty * (1.0 - 0.05)) << text;  // nearest rounding: <= 5 %
  }
}

TEST(FormatWithUncertaintyTest, EngineeringPowersOfTenNeverTenToTheZero) {
  const Case cases[] = {
      {2.5e-7, 3.1e-8, 2, "(250 ± 31) × 10⁻⁹"},
      {7.9e-9, 1.2e-9, 2, "(7.9 ± 1.2) × 10⁻⁹"},
      {4.2e7, 3.0e5, 2, "(42.00 ± 0.30) × 10⁶"},
      {1.2e6, 3.4e4, 2, "(1.200 ± 0.034) × 10⁶"},
      {0.000123456, 1.2e-7, 2, "(123.46 ± 0.12) × 10⁻⁶"},  // plain would need 8 decimals
      {0.000123456, 1.2e-6, 2, "(123.5 ± 1.2) × 10⁻⁶"},    // plain would need 7 decimals
  };
  ExpectAll(std::begin(cases), std::end(cases));
  // Plain at the edges of the plain range.
  EXPECT_EQ(FormatWithUncertainty(0.00123, 0.00012, 2), "0.00123 ± 0.00012");
  EXPECT_EQ(FormatWithUncertainty(999000.0, 1200.0, 2), "999000 ± 1200");
  // A sweep over 30 decades: no "10⁰", never more than eight digits in a value, U always with
  // two significant digits.
  for (int e = -15; e <= 15; ++e) {
    for (double rel : {3e-1, 2e-3, 1e-5, 1e-9}) {
      const double v = 1.2345678901 * std::pow(10.0, e);
      const std::string text = FormatWithUncertainty(v, v * rel, 2);
      EXPECT_EQ(text.find("10⁰"), std::string::npos) << text;
      const std::string value_part = text.substr(text[0] == '(' ? 1 : 0, text.find(" ±"));
      int digits = 0;
      bool leading = true;
      for (char ch : value_part) {
        if (ch >= '1' && ch <= '9') leading = false;
        if (ch >= '0' && ch <= '9' && !leading) ++digits;
      }
      EXPECT_LE(digits, kMaxValueDigits) << text;
      std::string u_part = text.substr(text.find("± ") + 3);
      u_part = u_part.substr(0, u_part.find_first_not_of("0123456789."));
      const std::size_t first = u_part.find_first_of("123456789");
      ASSERT_NE(first, std::string::npos) << text;
      int u_digits = 0;
      for (std::size_t i = first; i < u_part.size(); ++i) u_digits += u_part[i] != '.';
      if (u_part.find('.') != std::string::npos) {
        EXPECT_EQ(u_digits, 2) << text;
      }
    }
  }
}

TEST(FormatWithUncertaintyTest, MissingUncertaintyAndNonFiniteValues) {
  EXPECT_EQ(FormatWithUncertainty(0.0123456, 0.0, 2), "0.01235");
  EXPECT_EQ(FormatWithUncertainty(0.0123456, std::nan(""), 2), "0.01235");
  EXPECT_EQ(FormatWithUncertainty(std::numeric_limits<double>::infinity(), 0.1, 2), "n/a");
}

// A value stated beside its standard uncertainty in words ("corrected by ... (u = ...)"): the value
// to the decimal place of u's second significant digit, GUM 7.2.6 as above.
TEST(FormatAtUncertaintyTest, ValueToTheDigitOfItsUncertainty) {
  EXPECT_EQ(common::FormatAtUncertainty(0.000849152, 3.1e-5, 2, true), "+0.000849");
  EXPECT_EQ(common::FormatAtUncertainty(10.05762, 0.027, 2), "10.058");  // GUM's example
  // Seven decimals would be needed: engineering notation, as for value ± U.
  EXPECT_EQ(common::FormatAtUncertainty(-0.00776584, 1.2e-6, 2, true), "-7.7658 × 10⁻³");
  EXPECT_EQ(common::FormatAtUncertainty(0.00776584, 1.2e-9, 2), "7.7658400 × 10⁻³");  // 8-digit cap
  EXPECT_EQ(common::FormatAtUncertainty(1.5e-8, 2.3e-9, 2), "15.0 × 10⁻⁹");
  EXPECT_EQ(common::FormatAtUncertainty(0.25, 0.0, 2), "0.2500");  // no usable u: 4 digits
}

// A coverage factor to two significant digits; one that two digits print as "2.0" is the
// sheet's "2" (a Student-t k of 2.04 beside a heading "k = 2" would read as a contradiction).
// Check values: Student-t quantiles for 95.45 % (JCGM 100:2008, Table G.2: nu = 2 -> 4.53,
// nu = 50 -> 2.05; nu = 3 -> 3.31).
TEST(CoverageTextTest, TwoSignificantDigitsAndTheSheetsTwo) {
  EXPECT_EQ(common::CoverageText(2.0), "2");
  EXPECT_EQ(common::CoverageText(2.004), "2");
  EXPECT_EQ(common::CoverageText(2.04), "2");
  EXPECT_EQ(common::CoverageText(2.06), "2.1");
  EXPECT_EQ(common::CoverageText(2.87), "2.9");
  EXPECT_EQ(common::CoverageText(4.53), "4.5");
  EXPECT_EQ(common::CoverageText(13.97), "14");
}

TEST(FormatSignificantTest, PlainAndEngineering) {
  EXPECT_EQ(FormatSignificant(0.0123456, 4), "0.01235");
  EXPECT_EQ(FormatSignificant(9.996, 3), "10.0");
  EXPECT_EQ(FormatSignificant(123456.0, 2), "120000");
  EXPECT_EQ(FormatSignificant(0.00012, 2), "0.00012");
  EXPECT_EQ(FormatSignificant(3.1e-5, 2), "31 × 10⁻⁶");
  EXPECT_EQ(FormatSignificant(3.7e-8, 2), "37 × 10⁻⁹");
  EXPECT_EQ(FormatSignificant(2.0e-6, 2), "2.0 × 10⁻⁶");
  EXPECT_EQ(FormatSignificant(-4.56e7, 3), "-45.6 × 10⁶");
  EXPECT_EQ(FormatSignificant(0.0, 3), "0");
  EXPECT_EQ(FormatFixed(-0.00001, 2), "0.00");
  EXPECT_EQ(FormatFixed(23.0, 1), "23.0");
  EXPECT_EQ(FormatFixed(-1.25, 1), "-1.2");  // exact binary tie: to even
}

TEST(FormatSettingTest, NumbersAsAPersonWroteThem) {
  // 0.106 nm² converted to m² and back (the molecular-area setting) is 0.10600000000000001.
  EXPECT_EQ(FormatSetting(0.106e-18 * 1e18), "0.106");
  EXPECT_EQ(FormatSetting(0.1 * 100.0 / 100.0), "0.1");
  EXPECT_EQ(FormatSetting(0.002), "0.002");
  EXPECT_EQ(FormatSetting(24.0), "24");
  EXPECT_EQ(FormatSetting(86400.0 / 3600.0), "24");
  EXPECT_EQ(FormatSetting(1e-5), "1e-5");
  EXPECT_EQ(FormatSetting(2.5e20), "2.5e20");
  EXPECT_EQ(FormatSetting(0.123456789012345), "0.123456789012345");  // 15 digits kept
  EXPECT_EQ(FormatSetting(-0.5), "-0.5");
}

// A p-value in scientific notation: the chi-square p of a poor fit seen on a held-out job,
// 7.1e-49, read "710 × 10⁻⁵¹" in engineering notation (ISO 80000-1 scientific notation, from
// memory; plain down to 10^-4 like every printed value).
TEST(FormatProbabilityTest, ScientificBelowPlainRange) {
  EXPECT_EQ(FormatProbability(7.1e-49, 2), "7.1 × 10⁻⁴⁹");
  EXPECT_EQ(FormatProbability(9.96e-50, 2), "1.0 × 10⁻⁴⁹");
  EXPECT_EQ(FormatProbability(3.4e-5, 2), "3.4 × 10⁻⁵");
  EXPECT_EQ(FormatProbability(0.0123, 2), "0.012");
  EXPECT_EQ(FormatProbability(0.5, 2), "0.50");
  EXPECT_EQ(FormatProbability(0.0, 2), "0");
}

}  // namespace
}  // namespace sorbtrace::report::internal
