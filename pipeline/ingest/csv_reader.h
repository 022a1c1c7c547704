// Internal to the ingest stage: a streaming CSV reader that keeps only one chunk of the file
// in memory, tracks line and column of every field, and parses numbers without allocation.
// Accepts what lab software and spreadsheets write: UTF-8 byte-order mark, CRLF or LF line
// ends (CR-only line ends, classic Mac OS, are refused at line 1 by name), a missing final line
// end, '#' comment lines, blank lines, quoted fields ("" inside a quoted field is one quote), ','
// ';' or tab delimiters and decimal commas. Refuses UTF-16 and UTF-32 files by name. Quotes of the
// file in messages are capped (CapEchoes).
#pragma once

#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <string>
#include <string_view>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::ingest::internal {

// A test temperature outside this range is a unit mix-up rather than a sorption test or an
// oven drying (sanity bound, common practice): -50 degC .. 150 degC.
inline constexpr double kMinPlausibleTemperature_K = 223.15;
inline constexpr double kMaxPlausibleTemperature_K = 423.15;

// Longest line a data file may hold (README, "Limits of inputs"). A balance log line is under
// 100 bytes and a weighing with a long note a few hundred; 1 MiB is far above any real line and
// bounds the memory a line without end can take (the whole line must be held to split it).
inline constexpr std::size_t kMaxCsvLineBytes = std::size_t{1} << 20;  // 1 MiB

// Result of parsing one decimal number.
enum class NumberStatus { kOk, kEmpty, kNotANumber, kNotFinite, kOutOfRange };

// Parses a whole field (surrounding spaces allowed) as a finite double. `decimal_point` is '.'
// or ','. Exact: simple decimals take the correctly rounded Clinger fast path (mantissa below
// 2^53, at most 22 fraction digits), everything else std::from_chars.
NumberStatus ParseNumber(std::string_view text, char decimal_point, double* value);

// Powers of ten exactly representable in a double (5^22 < 2^53), the limit of the fast path of
// W. D. Clinger, "How to read floating point numbers accurately", PLDI 1990: an exact
// mantissa divided by an exact power of ten is one correctly rounded IEEE operation.
inline constexpr double kExactPowersOfTen[23] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                                 1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                                 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

// The inline fast path of ParseNumber: reads [-+]digits[<decimal_point>digits] from p with at
// most 19 digits, mantissa <= 2^53 and <= 22 fraction digits. Returns where the number ends
// (the caller checks what follows), or nullptr (value untouched) when there is no such number
// at p, in which case ParseNumber's general path decides.
inline const char* ScanSimpleDecimal(const char* p, const char* const end, char decimal_point,
                                     double* value) {
  if (p == end) return nullptr;
  const bool negative = *p == '-';
  if (*p == '-' || *p == '+') ++p;
  std::uint64_t mantissa = 0;
  const char* const digits_start = p;
  while (p < end && static_cast<unsigned char>(*p - '0') < 10) {
    mantissa = mantissa * 10 + static_cast<std::uint64_t>(*p - '0');
    ++p;
  }
  long num_digits = p - digits_start;
  long fraction_digits = 0;
  if (p < end && *p == decimal_point) {
    const char* const fraction_start = ++p;
    while (p < end && static_cast<unsigned char>(*p - '0') < 10) {
      mantissa = mantissa * 10 + static_cast<std::uint64_t>(*p - '0');
      ++p;
    }
    fraction_digits = p - fraction_start;
    num_digits += fraction_digits;
  }
  if (num_digits == 0 || num_digits > 19 || mantissa > (std::uint64_t{1} << 53) ||
      fraction_digits > 22) {
    return nullptr;
  }
  double v = static_cast<double>(mantissa);
  if (fraction_digits > 0) v /= kExactPowersOfTen[fraction_digits];
  *value = negative ? -v : v;
  return p;
}

// The whole text is one number for ScanSimpleDecimal (no spaces, nothing after it).
inline bool ParseSimpleDecimal(std::string_view text, char decimal_point, double* value) {
  const char* const end = text.data() + text.size();
  double v = 0.0;
  const char* const number_end = ScanSimpleDecimal(text.data(), end, decimal_point, &v);
  if (number_end == nullptr || number_end != end) return false;
  *value = v;
  return true;
}

// One field of the current record: its text (unquoted) and 1-based byte column.
struct CsvField {
  std::string_view text;
  int column = 0;
};

class CsvReader {
 public:
  // Opens `path` for reading; `display_name` is what error messages call the file. Throws
  // InputError if the file cannot be opened.
  CsvReader(const std::filesystem::path& path, std::string display_name, char delimiter,
            bool decimal_comma);
  ~CsvReader();
  CsvReader(const CsvReader&) = delete;
  CsvReader& operator=(const CsvReader&) = delete;

  // Reads the header: the first line that is neither blank nor a comment. Throws InputError for
  // an empty file. Detects a header written with another delimiter than the declared one.
  const std::vector<CsvField>& ReadHeader();

  // Advances to the next data record; false at the end of the file. Throws InputError when the
  // record has another number of fields than the header.
  bool Next();

  // Fast path for files of numbers only (vapour logs): reads the next record and, when every
  // field is a plain decimal (see ParseSimpleDecimal), stores the header-order values in
  // values[0 .. number of columns) and returns kNumbers without splitting the line into
  // fields(). Any other record (quotes, spaces, exponents, errors) is split as Next() does and
  // kFields is returned: read it with Number(). kEnd at the end of the file.
  enum class Record { kEnd, kNumbers, kFields };
  Record NextNumbers(double* values);
  // After kNumbers: splits the current line into fields() (to report an error at a column).
  void SplitCurrentLine() { Split(current_line_); }

  const std::vector<CsvField>& fields() const { return fields_; }
  std::string_view Text(std::size_t i) const;  // trimmed of surrounding spaces
  int Column(std::size_t i) const { return fields_[i].column; }
  std::int64_t line() const { return line_number_; }
  std::int64_t header_line() const { return header_line_; }
  const std::string& display_name() const { return display_name_; }
  char decimal_point() const { return decimal_point_; }

  // The number in field i; throws InputError naming the column when it is empty, text, not
  // finite or out of range.
  double Number(std::size_t i, std::string_view column_name) const {
    double value;
    if (ParseSimpleDecimal(fields_[i].text, decimal_point_, &value)) return value;
    return NumberSlow(i, column_name);
  }

  [[noreturn]] void Fail(int column, std::string message, std::string expected = {}) const;
  [[noreturn]] void FailAt(std::int64_t line, int column, std::string message,
                           std::string expected = {}) const;
  SourceLocation Where(int column) const;

 private:
  double NumberSlow(std::size_t i, std::string_view column_name) const;
  // A message with every long cell (or line) of the current record it quotes cut to an
  // Excerpt (pipeline/common/bounded_input.h), and at most 1000 bytes in all.
  std::string CapEchoes(std::string message) const;
  // Throws for a file in UTF-16 or UTF-32 (by byte-order mark or NUL-interleaved ASCII).
  void RejectOtherEncodings(std::string_view first_line) const;
  // Throws at line 1 for a file whose line ends are CR only (a CR inside the first line).
  void RejectCarriageReturnLineEnds(std::string_view first_line) const;
  bool NextLine(std::string_view* line);  // false at end of file
  void Split(std::string_view line);
  void SplitChecked(std::string_view line);  // Split + field count check
  void SplitQuoted(std::string_view line);
  void Refill();

  std::string display_name_;
  std::FILE* file_ = nullptr;
  char delimiter_ = ',';
  char decimal_point_ = '.';
  std::vector<char> buffer_;
  std::size_t begin_ = 0;  // start of unread data in buffer_
  std::size_t end_ = 0;    // end of valid data in buffer_
  bool eof_ = false;
  bool first_line_ = true;
  std::int64_t line_number_ = 0;
  std::int64_t header_line_ = 0;
  std::size_t num_columns_ = 0;
  std::vector<CsvField> fields_;
  std::string_view current_line_;  // the line of the current record
  std::string scratch_;            // unquoted text of quoted fields
};

// ---- Header mapping --------------------------------------------------------------------
// A column name a role accepts and the unit it implies (empty unit: bare name, unit from the
// job file).
struct ColumnChoice {
  std::string_view name;
  std::string_view unit;
};

// One quantity a file holds (e.g. "mass"), with the header names that give it.
struct ColumnRole {
  std::string_view role;
  bool required = true;
  std::vector<ColumnChoice> choices;
  std::string_view declared_unit;  // unit declared in the job file for the bare name ("" none)
  std::string_view unit_key;       // the job-file key that declares it, e.g. "mass_unit"
};

struct MappedColumn {
  int index = -1;    // field index, -1 when an optional column is absent
  std::string name;  // header name
  std::string unit;  // resolved unit
};

// Maps the header onto the roles. Throws InputError for an unknown column, a column named
// twice, two columns giving one quantity, a missing required column, a bare name without a
// declared unit, or a unit suffix contradicting the job file.
std::vector<MappedColumn> MapHeader(const CsvReader& reader, const std::vector<ColumnRole>& roles);

// Linear unit conversion: si = value * multiply / divide + offset (division kept separate so
// that 1012.551 mg -> g is the correctly rounded quotient).
struct UnitScale {
  double multiply = 1.0;
  double divide = 1.0;
  double offset = 0.0;
  double ToSi(double value) const { return value * multiply / divide + offset; }
};
UnitScale MassUnitToGram(std::string_view unit);
UnitScale RhUnitToFraction(std::string_view unit);
UnitScale TimeUnitToSecond(std::string_view unit);
UnitScale TemperatureUnitToKelvin(std::string_view unit);

// Branch names as written in files ("adsorption", "desorption", "drying").
bool ParseBranch(std::string_view text, Branch* branch);

}  // namespace sorbtrace::ingest::internal
