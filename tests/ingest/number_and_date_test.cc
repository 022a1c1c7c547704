// Number and date-time parsing of the ingest CSV reader.
#include <gtest/gtest.h>

#include <charconv>
#include <cstdint>
#include <random>
#include <string>

#include "pipeline/ingest/csv_reader.h"
#include "pipeline/ingest/date_time.h"

namespace sorbtrace::ingest::internal {
namespace {

double Parse(std::string_view text, char decimal_point = '.') {
  double value = -12345.0;
  EXPECT_EQ(ParseNumber(text, decimal_point, &value), NumberStatus::kOk) << text;
  return value;
}

NumberStatus Status(std::string_view text, char decimal_point = '.') {
  double value = 0.0;
  return ParseNumber(text, decimal_point, &value);
}

// Expected values are the C++ literals themselves: the compiler rounds decimal literals
// correctly (IEEE 754-2008 section 5.12.2), which is what the reader must reproduce exactly.
TEST(ParseNumberTest, DecimalsAreCorrectlyRounded) {
  EXPECT_EQ(Parse("0.1"), 0.1);
  EXPECT_EQ(Parse("24.3012"), 24.3012);
  EXPECT_EQ(Parse("-0.000123"), -0.000123);
  EXPECT_EQ(Parse("+2.5"), 2.5);
  EXPECT_EQ(Parse(" 7 "), 7.0);
  EXPECT_EQ(Parse("1012.55123"), 1012.55123);
  EXPECT_EQ(Parse("1e-3"), 1e-3);
  EXPECT_EQ(Parse("1.5E+5"), 1.5e5);
  EXPECT_EQ(Parse("123456789012345678"), 123456789012345678.0);  // beyond 2^53: slow path
  EXPECT_EQ(Parse("0.30000000000000000000001"), 0.30000000000000000000001);
  EXPECT_EQ(Parse("2.2250738585072014e-308"), 2.2250738585072014e-308);  // DBL_MIN
  EXPECT_EQ(Parse(".5"), 0.5);
  EXPECT_EQ(Parse("5."), 5.0);
}

TEST(ParseNumberTest, DecimalComma) {
  EXPECT_EQ(Parse("1,5", ','), 1.5);
  EXPECT_EQ(Parse("-24,3012", ','), -24.3012);
  EXPECT_EQ(Parse("1,2345e1", ','), 12.345);
  EXPECT_EQ(Status("1.5", ','), NumberStatus::kNotANumber);  // a thousands point is not guessed
  EXPECT_EQ(Status("1,5", '.'), NumberStatus::kNotANumber);
}

TEST(ParseNumberTest, RejectsWhatIsNotAFiniteNumber) {
  EXPECT_EQ(Status(""), NumberStatus::kEmpty);
  EXPECT_EQ(Status("   "), NumberStatus::kEmpty);
  EXPECT_EQ(Status("nan"), NumberStatus::kNotFinite);
  EXPECT_EQ(Status("NaN"), NumberStatus::kNotFinite);
  EXPECT_EQ(Status("inf"), NumberStatus::kNotFinite);
  EXPECT_EQ(Status("-Infinity"), NumberStatus::kNotFinite);
  EXPECT_EQ(Status("1e400"), NumberStatus::kOutOfRange);
  EXPECT_EQ(Status("-1e400"), NumberStatus::kOutOfRange);
  EXPECT_EQ(Status("0x10"), NumberStatus::kNotANumber);
  EXPECT_EQ(Status("1.2.3"), NumberStatus::kNotANumber);
  EXPECT_EQ(Status("--1"), NumberStatus::kNotANumber);
  EXPECT_EQ(Status("12 g"), NumberStatus::kNotANumber);
  EXPECT_EQ(Status("1-2"), NumberStatus::kNotANumber);
  EXPECT_EQ(Status("-"), NumberStatus::kNotANumber);
  EXPECT_EQ(Status("."), NumberStatus::kNotANumber);
}

// The Clinger fast path must agree bit for bit with std::from_chars (correctly rounded).
TEST(ParseNumberTest, FastPathAgreesWithFromChars) {
  std::mt19937_64 rng(42);
  for (int i = 0; i < 20000; ++i) {
    const std::uint64_t mantissa = rng() % 10000000000000000ULL;  // up to 16 digits
    const int decimals = static_cast<int>(rng() % 17);
    std::string text = std::to_string(mantissa);
    if (decimals > 0) {
      while (static_cast<int>(text.size()) <= decimals) text.insert(0, "0");
      text.insert(text.size() - static_cast<std::size_t>(decimals), ".");
    }
    double expected = 0.0;
    std::from_chars(text.data(), text.data() + text.size(), expected);
    ASSERT_EQ(Parse(text), expected) << text;
  }
}

double Seconds(std::string_view text, std::string_view format = "iso8601") {
  double seconds = -1.0;
  std::string error;
  EXPECT_TRUE(ParseDateTime(text, format, &seconds, &error)) << text << ": " << error;
  return seconds;
}

std::string DateError(std::string_view text, std::string_view format = "iso8601") {
  double seconds = 0.0;
  std::string error;
  EXPECT_FALSE(ParseDateTime(text, format, &seconds, &error)) << text;
  return error;
}

// Reference: POSIX "Seconds Since the Epoch" (IEEE Std 1003.1-2017, Base Definitions 4.16):
// 2000-03-01T00:00:00Z = 10957 days (to 2000-01-01) + 60 days = 11017 days = 951868800 s.
TEST(DateTimeTest, IsoToSecondsSinceEpoch) {
  EXPECT_EQ(Seconds("1970-01-01T00:00"), 0.0);
  EXPECT_EQ(Seconds("2000-03-01T00:00:00Z"), 951868800.0);
  EXPECT_EQ(Seconds("2000-03-01 00:00"), 951868800.0);
  EXPECT_EQ(Seconds("2000-03-01T02:00+02:00"), 951868800.0);
  EXPECT_EQ(Seconds("1999-12-31T22:30-0130"), 951868800.0 - 60.0 * 86400.0);
  EXPECT_EQ(Seconds("1970-01-01T00:00:01.25"), 1.25);
}

TEST(DateTimeTest, DayFirstPattern) {
  EXPECT_EQ(Seconds("01.03.2000 00:00", "%d.%m.%Y %H:%M"), 951868800.0);
  EXPECT_EQ(Seconds("1.3.2000 0:00", "%d.%m.%Y %H:%M"), 951868800.0);
  EXPECT_EQ(Seconds("01/03/2000 00:00:30", "%d/%m/%Y %H:%M:%S"), 951868830.0);
  EXPECT_EQ(DateError("2000-03-01T00:00", "%d.%m.%Y %H:%M"), "character 3 is not '.'");
}

// Gregorian leap years: divisible by 4, except centuries not divisible by 400.
TEST(DateTimeTest, CalendarChecks) {
  EXPECT_EQ(Seconds("2000-02-29T00:00") - Seconds("2000-02-28T00:00"), 86400.0);
  EXPECT_EQ(Seconds("2024-02-29T12:00") - Seconds("2024-02-28T12:00"), 86400.0);
  EXPECT_EQ(DateError("2023-02-29T00:00"), "day 29 does not exist in month 2 of 2023");
  EXPECT_EQ(DateError("1900-02-29T00:00"), "day 29 does not exist in month 2 of 1900");
  EXPECT_EQ(DateError("2026-13-01T00:00"), "month 13 is not 1..12");
  EXPECT_EQ(DateError("2026-01-01T24:00"), "hour 24 is not 0..23");
  EXPECT_EQ(DateError("2026-01-01"), "no time Thh:mm after the date");
  EXPECT_EQ(DateError("2026-01-01T10:00 CET"), "unexpected text ' CET' after the time");
  EXPECT_TRUE(IsIsoDate("2026-10-20"));
  EXPECT_FALSE(IsIsoDate("20.10.2026"));
  EXPECT_FALSE(IsIsoDate("2026-02-30"));
}

TEST(DateTimeTest, FormatCheck) {
  EXPECT_EQ(CheckDateTimeFormat("iso8601"), "");
  EXPECT_EQ(CheckDateTimeFormat("%d.%m.%Y %H:%M"), "");
  EXPECT_EQ(CheckDateTimeFormat("%d.%m.%Y"), "field %H is missing");
  EXPECT_EQ(CheckDateTimeFormat("%d.%m.%y %H:%M"), "unknown field %y");
  EXPECT_EQ(CheckDateTimeFormat("%d.%d.%Y %H:%M"), "field %d twice");
}

}  // namespace
}  // namespace sorbtrace::ingest::internal
