// FormatWithUncertainty: JCGM 100:2008, 7.2.6 — the uncertainty to (at most) two significant
// digits, the value rounded to the same decimal place. Exact ties round to even (ISO
// 80000-1:2009 Annex B, rule B, from memory; the same as C printf).
#include "pipeline/report/format.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "pipeline/report/report.h"

namespace sorbtrace::report {
namespace {

struct Case {
  double value;
  double uncertainty;
  int digits;
  const char* expected;
};

TEST(FormatWithUncertaintyTest, TwoSignificantDigitsOfUncertainty) {
  const Case cases[] = {
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
  };
  for (const Case& c : cases) {
    EXPECT_EQ(FormatWithUncertainty(c.value, c.uncertainty, c.digits), c.expected)
        << c.value << " ± " << c.uncertainty;
  }
}

TEST(FormatWithUncertaintyTest, ScientificOutsideThePlainRange) {
  EXPECT_EQ(FormatWithUncertainty(2.5e-7, 3.1e-8, 2), "(2.50 ± 0.31) × 10⁻⁷");
  EXPECT_EQ(FormatWithUncertainty(7.9e-9, 1.2e-9, 2), "(7.9 ± 1.2) × 10⁻⁹");
  EXPECT_EQ(FormatWithUncertainty(4.2e7, 3.0e5, 2), "(4.200 ± 0.030) × 10⁷");
}

TEST(FormatWithUncertaintyTest, MissingUncertaintyAndNonFiniteValues) {
  EXPECT_EQ(FormatWithUncertainty(0.0123456, 0.0, 2), "0.01235");
  EXPECT_EQ(FormatWithUncertainty(0.0123456, std::nan(""), 2), "0.01235");
  EXPECT_EQ(FormatWithUncertainty(std::numeric_limits<double>::infinity(), 0.1, 2), "n/a");
}

TEST(FormatSignificantTest, PlainAndScientific) {
  EXPECT_EQ(FormatSignificant(0.0123456, 4), "0.01235");
  EXPECT_EQ(FormatSignificant(9.996, 3), "10.0");
  EXPECT_EQ(FormatSignificant(123456.0, 2), "120000");
  EXPECT_EQ(FormatSignificant(3.1e-5, 2), "3.1 × 10⁻⁵");
  EXPECT_EQ(FormatSignificant(0.0, 3), "0");
  EXPECT_EQ(FormatFixed(-0.00001, 2), "0.00");
}

}  // namespace
}  // namespace sorbtrace::report
