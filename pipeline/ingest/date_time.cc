#include "pipeline/ingest/date_time.h"

#include <cstddef>

namespace sorbtrace::ingest::internal {
namespace {

bool IsLeapYear(int year) { return (year % 4 == 0 && year % 100 != 0) || year % 400 == 0; }

int DaysInMonth(int year, int month) {
  constexpr int kDays[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  return month == 2 && IsLeapYear(year) ? 29 : kDays[month - 1];
}

// Days from 1970-01-01 to year-month-day in the proleptic Gregorian calendar: the
// "days_from_civil" algorithm of H. Hinnant, "chrono-Compatible Low-Level Date Algorithms".
std::int64_t DaysFromCivil(int year, int month, int day) {
  const int y = year - (month <= 2 ? 1 : 0);
  const int era = (y >= 0 ? y : y - 399) / 400;
  const int year_of_era = y - era * 400;                                             // [0, 399]
  const int day_of_year = (153 * (month + (month > 2 ? -3 : 9)) + 2) / 5 + day - 1;  // [0, 365]
  const int day_of_era = year_of_era * 365 + year_of_era / 4 - year_of_era / 100 + day_of_year;
  return static_cast<std::int64_t>(era) * 146097 + day_of_era - 719468;
}

// Reads between min_digits and max_digits decimal digits at text[*pos].
bool ReadDigits(std::string_view text, std::size_t* pos, int min_digits, int max_digits,
                int* value) {
  int n = 0;
  int v = 0;
  while (*pos < text.size() && n < max_digits && text[*pos] >= '0' && text[*pos] <= '9') {
    v = v * 10 + (text[*pos] - '0');
    ++*pos;
    ++n;
  }
  if (n < min_digits) return false;
  *value = v;
  return true;
}

struct Fields {
  int year = 0, month = 0, day = 0, hour = 0, minute = 0, second = 0;
  double fraction_s = 0.0;
  int offset_minutes = 0;
};

bool Validate(const Fields& f, std::string* error) {
  if (f.month < 1 || f.month > 12) {
    *error = "month " + std::to_string(f.month) + " is not 1..12";
  } else if (f.day < 1 || f.day > DaysInMonth(f.year, f.month)) {
    *error = "day " + std::to_string(f.day) + " does not exist in month " +
             std::to_string(f.month) + " of " + std::to_string(f.year);
  } else if (f.hour > 23) {
    *error = "hour " + std::to_string(f.hour) + " is not 0..23";
  } else if (f.minute > 59) {
    *error = "minute " + std::to_string(f.minute) + " is not 0..59";
  } else if (f.second > 59) {
    *error = "second " + std::to_string(f.second) + " is not 0..59";
  } else {
    return true;
  }
  return false;
}

double ToSeconds(const Fields& f) {
  const std::int64_t days = DaysFromCivil(f.year, f.month, f.day);
  const std::int64_t seconds = days * 86400 + f.hour * 3600 + f.minute * 60 + f.second -
                               static_cast<std::int64_t>(f.offset_minutes) * 60;
  return static_cast<double>(seconds) + f.fraction_s;
}

bool ParseIso(std::string_view text, Fields* f, std::string* error) {
  std::size_t pos = 0;
  auto expect = [&](char c) {
    if (pos < text.size() && text[pos] == c) {
      ++pos;
      return true;
    }
    return false;
  };
  if (!ReadDigits(text, &pos, 4, 4, &f->year) || !expect('-') ||
      !ReadDigits(text, &pos, 2, 2, &f->month) || !expect('-') ||
      !ReadDigits(text, &pos, 2, 2, &f->day)) {
    *error = "no ISO 8601 date YYYY-MM-DD at its start";
    return false;
  }
  if (!(expect('T') || expect(' ')) || !ReadDigits(text, &pos, 2, 2, &f->hour) || !expect(':') ||
      !ReadDigits(text, &pos, 2, 2, &f->minute)) {
    *error = "no time Thh:mm after the date";
    return false;
  }
  if (expect(':')) {
    if (!ReadDigits(text, &pos, 2, 2, &f->second)) {
      *error = "no two-digit seconds after hh:mm:";
      return false;
    }
    if (expect('.') || expect(',')) {
      double scale = 0.1;
      std::size_t start = pos;
      while (pos < text.size() && text[pos] >= '0' && text[pos] <= '9') {
        f->fraction_s += (text[pos] - '0') * scale;
        scale *= 0.1;
        ++pos;
      }
      if (pos == start) {
        *error = "no digits after the decimal sign of the seconds";
        return false;
      }
    }
  }
  if (pos < text.size()) {
    if (expect('Z')) {
      // UTC
    } else if (text[pos] == '+' || text[pos] == '-') {
      const int sign = text[pos] == '-' ? -1 : 1;
      ++pos;
      int hours = 0;
      int minutes = 0;
      if (!ReadDigits(text, &pos, 2, 2, &hours)) {
        *error = "UTC offset is not +hh:mm";
        return false;
      }
      expect(':');
      if (!ReadDigits(text, &pos, 2, 2, &minutes) || hours > 23 || minutes > 59) {
        *error = "UTC offset is not +hh:mm";
        return false;
      }
      f->offset_minutes = sign * (hours * 60 + minutes);
    }
  }
  if (pos != text.size()) {
    *error = "unexpected text '" + std::string(text.substr(pos)) + "' after the time";
    return false;
  }
  return Validate(*f, error);
}

bool ParsePattern(std::string_view text, std::string_view format, Fields* f, std::string* error) {
  std::size_t pos = 0;
  for (std::size_t i = 0; i < format.size(); ++i) {
    if (format[i] == '%' && i + 1 < format.size()) {
      const char field = format[++i];
      bool ok = false;
      switch (field) {
        case 'Y':
          ok = ReadDigits(text, &pos, 4, 4, &f->year);
          break;
        case 'm':
          ok = ReadDigits(text, &pos, 1, 2, &f->month);
          break;
        case 'd':
          ok = ReadDigits(text, &pos, 1, 2, &f->day);
          break;
        case 'H':
          ok = ReadDigits(text, &pos, 1, 2, &f->hour);
          break;
        case 'M':
          ok = ReadDigits(text, &pos, 1, 2, &f->minute);
          break;
        case 'S':
          ok = ReadDigits(text, &pos, 1, 2, &f->second);
          break;
        default:
          break;
      }
      if (!ok) {
        *error = std::string("no %") + field + " field at character " + std::to_string(pos + 1);
        return false;
      }
    } else {
      if (pos >= text.size() || text[pos] != format[i]) {
        *error =
            std::string("character ") + std::to_string(pos + 1) + " is not '" + format[i] + "'";
        return false;
      }
      ++pos;
    }
  }
  if (pos != text.size()) {
    *error = "unexpected text '" + std::string(text.substr(pos)) + "' at its end";
    return false;
  }
  return Validate(*f, error);
}

}  // namespace

std::string CheckDateTimeFormat(std::string_view format) {
  if (format == "iso8601") return {};
  bool seen[128] = {};
  for (std::size_t i = 0; i < format.size(); ++i) {
    if (format[i] != '%') continue;
    if (i + 1 >= format.size()) return "ends with a lone '%'";
    const char field = format[++i];
    if (field != 'Y' && field != 'm' && field != 'd' && field != 'H' && field != 'M' &&
        field != 'S') {
      return std::string("unknown field %") + field;
    }
    if (seen[static_cast<unsigned char>(field)]) return std::string("field %") + field + " twice";
    seen[static_cast<unsigned char>(field)] = true;
  }
  for (const char required : {'Y', 'm', 'd', 'H', 'M'}) {
    if (!seen[static_cast<unsigned char>(required)]) {
      return std::string("field %") + required + " is missing";
    }
  }
  return {};
}

bool ParseDateTime(std::string_view text, std::string_view format, double* seconds_since_epoch,
                   std::string* error) {
  Fields fields;
  const bool ok = format == "iso8601" ? ParseIso(text, &fields, error)
                                      : ParsePattern(text, format, &fields, error);
  if (!ok) return false;
  *seconds_since_epoch = ToSeconds(fields);
  return true;
}

bool IsIsoDate(std::string_view text) {
  Fields f;
  std::size_t pos = 0;
  if (text.size() != 10 || !ReadDigits(text, &pos, 4, 4, &f.year) || text[pos++] != '-' ||
      !ReadDigits(text, &pos, 2, 2, &f.month) || text[pos++] != '-' ||
      !ReadDigits(text, &pos, 2, 2, &f.day)) {
    return false;
  }
  std::string error;
  return Validate(f, &error);
}

}  // namespace sorbtrace::ingest::internal
