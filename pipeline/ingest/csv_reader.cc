#include "pipeline/ingest/csv_reader.h"

#include <algorithm>
#include <array>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstring>
#include <string>
#include <system_error>
#include <utility>

#include "pipeline/common/bounded_input.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::ingest::internal {
namespace {

// Chunk read at a time; lines longer than this grow the buffer up to kMaxCsvLineBytes.
constexpr std::size_t kChunkBytes = std::size_t{1} << 20;

bool IsBlankRecord(std::string_view line, char delimiter) {
  for (char c : line) {
    if (c != ' ' && c != delimiter && c != '\t') return false;
  }
  return true;
}

std::string_view Trim(std::string_view text) {
  while (!text.empty() && (text.front() == ' ' || text.front() == '\t')) text.remove_prefix(1);
  while (!text.empty() && (text.back() == ' ' || text.back() == '\t')) text.remove_suffix(1);
  return text;
}

std::string DelimiterName(char delimiter) {
  if (delimiter == '\t') return "tab";
  return std::string("'") + delimiter + "'";
}

std::string DelimiterTomlValue(char delimiter) {
  if (delimiter == '\t') return "\"\\t\"";
  return std::string("\"") + delimiter + "\"";
}

}  // namespace

NumberStatus ParseNumber(std::string_view text, char decimal_point, double* value) {
  const char* p = text.data();
  const char* end = p + text.size();
  while (p < end && *p == ' ') ++p;
  while (end > p && end[-1] == ' ') --end;
  if (p == end) return NumberStatus::kEmpty;

  if (ParseSimpleDecimal(std::string_view(p, static_cast<std::size_t>(end - p)), decimal_point,
                         value)) {
    return NumberStatus::kOk;
  }
  bool negative = false;
  if (*p == '+' || *p == '-') {
    negative = *p == '-';
    ++p;
  }

  // General path: exponents, long mantissas, nan/inf (rejected).
  std::string copy;
  copy.reserve(static_cast<std::size_t>(end - p) + 1);
  if (negative) copy.push_back('-');
  for (const char* c = p; c < end; ++c) {
    if (decimal_point == ',' && *c == '.') return NumberStatus::kNotANumber;
    if (*c == '+' || *c == '-') {
      // only allowed right after an exponent letter
      if (c == p || (c[-1] != 'e' && c[-1] != 'E')) return NumberStatus::kNotANumber;
    }
    copy.push_back(*c == decimal_point ? '.' : *c);
  }
  double v = 0.0;
  const auto [ptr, ec] =
      std::from_chars(copy.data(), copy.data() + copy.size(), v, std::chars_format::general);
  // Text after the digits makes it no number, even when the digits alone overflow.
  if (ptr != copy.data() + copy.size()) return NumberStatus::kNotANumber;
  if (ec == std::errc::result_out_of_range) return NumberStatus::kOutOfRange;
  if (ec != std::errc()) return NumberStatus::kNotANumber;
  if (!std::isfinite(v)) return NumberStatus::kNotFinite;
  *value = v;
  return NumberStatus::kOk;
}

CsvReader::CsvReader(const std::filesystem::path& path, std::string display_name, char delimiter,
                     bool decimal_comma)
    : display_name_(std::move(display_name)),
      delimiter_(delimiter),
      decimal_point_(decimal_comma ? ',' : '.') {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) {
    throw InputError({display_name_, 0, 0}, "is a directory", "a CSV file");
  }
  file_ = std::fopen(path.c_str(), "rb");
  if (file_ == nullptr) {
    throw InputError({display_name_, 0, 0},
                     std::string("cannot open the file (") + std::strerror(errno) + ")",
                     "a readable CSV file");
  }
  std::setvbuf(file_, nullptr, _IONBF, 0);  // we buffer ourselves
  buffer_.resize(kChunkBytes);
  fields_.reserve(16);
}

CsvReader::~CsvReader() {
  if (file_ != nullptr) std::fclose(file_);
}

SourceLocation CsvReader::Where(int column) const {
  return SourceLocation{display_name_, static_cast<int>(line_number_), column};
}

std::string CsvReader::CapEchoes(std::string message) const {
  // Long text is cut, and text with control bytes or invalid UTF-8 escaped, wherever the
  // message quotes it (a short cell of stray bytes would otherwise reach the terminal raw).
  const auto shorten = [&message](std::string_view text) {
    const std::string excerpt = Excerpt(text);
    if (excerpt == text) return;
    for (std::size_t at = message.find(text); at != std::string::npos;
         at = message.find(text, at + excerpt.size())) {
      message.replace(at, text.size(), excerpt);
    }
  };
  shorten(current_line_);
  for (const CsvField& field : fields_) {
    shorten(field.text);
    shorten(Trim(field.text));
  }
  // Whatever else a message quotes from the file (kMaxMessageBytes: a few lines of a terminal).
  constexpr std::size_t kMaxMessageBytes = 1000;
  if (message.size() > kMaxMessageBytes) message = Excerpt(message, kMaxMessageBytes);
  return message;
}

void CsvReader::Fail(int column, std::string message, std::string expected) const {
  throw InputError(Where(column), CapEchoes(std::move(message)), std::move(expected));
}

void CsvReader::FailAt(std::int64_t line, int column, std::string message,
                       std::string expected) const {
  throw InputError(SourceLocation{display_name_, static_cast<int>(line), column},
                   CapEchoes(std::move(message)), std::move(expected));
}

void CsvReader::RejectOtherEncodings(std::string_view first_line) const {
  const auto starts = [first_line](std::string_view prefix) {
    return first_line.substr(0, prefix.size()) == prefix;
  };
  using namespace std::string_view_literals;
  std::string found;
  // Byte-order marks (Unicode Standard, sec. 23.8): UTF-32 LE/BE before UTF-16 LE/BE, whose
  // marks are their prefixes.
  if (starts("\xFF\xFE\x00\x00"sv) || starts("\x00\x00\xFE\xFF"sv)) {
    found = "UTF-32 encoded (byte-order mark)";
  } else if (starts("\xFF\xFE"sv) || starts("\xFE\xFF"sv)) {
    found = "UTF-16 encoded (byte-order mark " +
            std::string(starts("\xFF\xFE"sv) ? "FF FE" : "FE FF") + ")";
  } else {
    // Without a mark: ASCII text saved as UTF-16 has a NUL in every other byte.
    const std::string_view head = first_line.substr(0, 64);
    std::size_t nul_even = 0;
    std::size_t nul_odd = 0;
    for (std::size_t i = 0; i < head.size(); ++i) {
      if (head[i] == '\0') ++(i % 2 == 0 ? nul_even : nul_odd);
    }
    const std::size_t pairs = head.size() / 2;
    if (pairs >= 2 && std::max(nul_even, nul_odd) * 10 >= pairs * 9) {
      found = "UTF-16 encoded (a NUL byte in every other byte)";
    }
  }
  if (!found.empty()) {
    FailAt(1, 1, "the file is " + found,
           "UTF-8 or ASCII text (save the file as UTF-8 or CSV, not as Unicode text)");
  }
}

void CsvReader::RejectCarriageReturnLineEnds(std::string_view first_line) const {
  // A CR left inside the first line (its CR before the LF is already removed) ends a line in a
  // file written with classic Mac OS line ends (CR only): without a LF the whole file would
  // read as one line. Fields may not hold line breaks (csv_reader.h), so a CR is never data.
  const std::size_t cr = first_line.find('\r');
  if (cr == std::string_view::npos) return;
  FailAt(1, static_cast<int>(cr) + 1,
         "line ends are CR only (carriage return without line feed, as classic Mac OS wrote "
         "them): the line break after column " +
             std::to_string(cr) + " of line 1 is a bare CR",
         "LF or CRLF line ends (save the file as CSV with Windows or Unix line ends)");
}

void CsvReader::Refill() {
  const std::size_t remaining = end_ - begin_;
  if (begin_ > 0 && remaining > 0) std::memmove(buffer_.data(), buffer_.data() + begin_, remaining);
  begin_ = 0;
  end_ = remaining;
  if (end_ == buffer_.size()) {  // one line fills the whole buffer
    if (buffer_.size() >= kMaxCsvLineBytes) {
      // A CR-only file longer than the limit is one endless line too: say why.
      // (The last byte may be the CR of a CRLF split across reads: not looked at.)
      if (first_line_) RejectCarriageReturnLineEnds(std::string_view(buffer_.data(), end_ - 1));
      // Refused where the limit is passed, before the rest of the line is read: a file that is
      // one endless line (a binary export, /dev/zero copied out) costs at most this much memory.
      throw InputError(SourceLocation{display_name_, static_cast<int>(line_number_ + 1),
                                      static_cast<int>(end_) + 1},
                       "line " + std::to_string(line_number_ + 1) + " is longer than " +
                           std::to_string(kMaxCsvLineBytes) + " bytes",
                       "lines of at most " + std::to_string(kMaxCsvLineBytes) +
                           " bytes (one reading or weighing per line)");
    }
    buffer_.resize(std::min(buffer_.size() * 2, kMaxCsvLineBytes));
  }
  const std::size_t got = std::fread(buffer_.data() + end_, 1, buffer_.size() - end_, file_);
  if (got == 0) {
    if (std::ferror(file_)) {
      throw InputError(SourceLocation{display_name_, static_cast<int>(line_number_ + 1), 0},
                       "read error", "a readable file");
    }
    eof_ = true;
  }
  end_ += got;
}

bool CsvReader::NextLine(std::string_view* line) {
  for (;;) {
    const char* base = buffer_.data();
    const void* newline = std::memchr(base + begin_, '\n', end_ - begin_);
    if (newline != nullptr) {
      const auto pos = static_cast<std::size_t>(static_cast<const char*>(newline) - base);
      *line = std::string_view(base + begin_, pos - begin_);
      begin_ = pos + 1;
      break;
    }
    if (eof_) {
      if (begin_ == end_) return false;
      *line = std::string_view(base + begin_, end_ - begin_);
      begin_ = end_;
      break;
    }
    Refill();
  }
  ++line_number_;
  if (!line->empty() && line->back() == '\r') line->remove_suffix(1);
  if (first_line_) {
    first_line_ = false;
    RejectOtherEncodings(*line);
    RejectCarriageReturnLineEnds(*line);
    constexpr std::string_view kUtf8ByteOrderMark = "\xEF\xBB\xBF";
    if (line->substr(0, 3) == kUtf8ByteOrderMark) line->remove_prefix(3);
  }
  return true;
}

void CsvReader::Split(std::string_view line) {
  fields_.clear();
  const char* const start = line.data();
  const char* const end = start + line.size();
  const char* field = start;
  for (const char* p = start; p < end; ++p) {
    const char c = *p;
    if (c == delimiter_) {
      fields_.push_back({std::string_view(field, static_cast<std::size_t>(p - field)),
                         static_cast<int>(field - start) + 1});
      field = p + 1;
    } else if (c == '"') {
      SplitQuoted(line);
      return;
    }
  }
  fields_.push_back({std::string_view(field, static_cast<std::size_t>(end - field)),
                     static_cast<int>(field - start) + 1});
}

void CsvReader::SplitQuoted(std::string_view line) {
  fields_.clear();
  scratch_.clear();
  scratch_.reserve(line.size());  // views into scratch_ stay valid: it never reallocates here
  const std::size_t n = line.size();
  std::size_t i = 0;
  for (;;) {
    const int column = static_cast<int>(i) + 1;
    std::size_t j = i;
    while (j < n && line[j] == ' ') ++j;
    if (j < n && line[j] == '"') {
      const std::size_t out_start = scratch_.size();
      i = j + 1;
      for (;;) {
        if (i >= n) {
          Fail(static_cast<int>(j) + 1, "quoted field is not closed on this line",
               "a closing '\"' (fields may not contain line breaks)");
        }
        if (line[i] == '"') {
          if (i + 1 < n && line[i + 1] == '"') {
            scratch_.push_back('"');
            i += 2;
          } else {
            ++i;
            break;
          }
        } else {
          scratch_.push_back(line[i]);
          ++i;
        }
      }
      while (i < n && line[i] == ' ') ++i;
      if (i < n && line[i] != delimiter_) {
        Fail(static_cast<int>(i) + 1, "text after the closing quote of a field",
             "the delimiter " + DelimiterName(delimiter_) + " after a quoted field");
      }
      fields_.push_back({std::string_view(scratch_.data() + out_start, scratch_.size() - out_start),
                         static_cast<int>(j) + 1});
    } else {
      std::size_t k = i;
      while (k < n && line[k] != delimiter_) {
        if (line[k] == '"') {
          Fail(static_cast<int>(k) + 1, "quote inside an unquoted field",
               "a field quoted as a whole (\"...\", with \"\" for a quote inside)");
        }
        ++k;
      }
      fields_.push_back({line.substr(i, k - i), column});
      i = k;
    }
    if (i < n && line[i] == delimiter_) {
      ++i;
      continue;
    }
    break;
  }
}

const std::vector<CsvField>& CsvReader::ReadHeader() {
  std::string_view line;
  while (NextLine(&line)) {
    if (line.empty() || line[0] == '#' || IsBlankRecord(line, delimiter_)) continue;
    header_line_ = line_number_;
    Split(line);
    num_columns_ = fields_.size();
    if (num_columns_ == 1) {
      for (const char other : {',', ';', '\t'}) {
        if (other != delimiter_ && line.find(other) != std::string_view::npos) {
          Fail(1,
               "the header is a single column but contains " + DelimiterName(other) +
                   ": the file seems to be delimited by " + DelimiterName(other),
               "columns separated by " + DelimiterName(delimiter_) + " (or declare delimiter = " +
                   DelimiterTomlValue(other) + " for this file in the job file)");
        }
      }
    }
    return fields_;
  }
  if (line_number_ == 0) {
    FailAt(1, 1, "empty file", "a header line naming the columns, then data lines");
  }
  FailAt(line_number_, 1, "no header: the file holds only comments and blank lines",
         "a header line naming the columns, then data lines");
}

CsvReader::Record CsvReader::NextNumbers(double* values) {
  std::string_view line;
  while (NextLine(&line)) {
    if (line.empty() || line[0] == '#') continue;
    if ((line[0] == delimiter_ || line[0] == ' ') && IsBlankRecord(line, delimiter_)) continue;
    current_line_ = line;
    // Scan: one plain decimal per field, delimiters between, nothing else.
    const char* p = line.data();
    const char* const end = p + line.size();
    std::size_t k = 0;
    for (; k < num_columns_; ++k) {
      const char* const number_end = ScanSimpleDecimal(p, end, decimal_point_, &values[k]);
      if (number_end == nullptr) break;
      if (k + 1 < num_columns_) {
        if (number_end == end || *number_end != delimiter_) break;
        p = number_end + 1;
      } else if (number_end != end) {
        break;  // text after the last number, or too many fields
      }
    }
    if (k == num_columns_) return Record::kNumbers;
    SplitChecked(line);
    return Record::kFields;
  }
  return Record::kEnd;
}

bool CsvReader::Next() {
  std::string_view line;
  while (NextLine(&line)) {
    if (line.empty() || line[0] == '#') continue;
    if ((line[0] == delimiter_ || line[0] == ' ') && IsBlankRecord(line, delimiter_)) continue;
    current_line_ = line;
    SplitChecked(line);
    return true;
  }
  return false;
}

void CsvReader::SplitChecked(std::string_view line) {
  Split(line);
  if (fields_.size() == num_columns_) return;
  const std::string counts = "the line has " + std::to_string(fields_.size()) +
                             " fields, the header (line " + std::to_string(header_line_) +
                             ") has " + std::to_string(num_columns_);
  const std::string expected =
      std::to_string(num_columns_) + " fields separated by " + DelimiterName(delimiter_);
  if (fields_.size() < num_columns_) {
    Fail(static_cast<int>(line.size()) + 1, "truncated line: " + counts, expected);
  }
  Fail(fields_[num_columns_].column, "too many fields: " + counts, expected);
}

std::string_view CsvReader::Text(std::size_t i) const { return Trim(fields_[i].text); }

double CsvReader::NumberSlow(std::size_t i, std::string_view column_name) const {
  double value = 0.0;
  const NumberStatus status = ParseNumber(fields_[i].text, decimal_point_, &value);
  if (status == NumberStatus::kOk) return value;
  const std::string text(Text(i));
  const std::string column = "column '" + std::string(column_name) + "'";
  switch (status) {
    case NumberStatus::kEmpty:
      Fail(fields_[i].column, "empty cell in " + column, "a number");
    case NumberStatus::kNotFinite:
      Fail(fields_[i].column, "'" + text + "' in " + column + " is not a finite number",
           "a finite decimal number");
    case NumberStatus::kOutOfRange:
      Fail(fields_[i].column, "'" + text + "' in " + column + " is out of the range of a double",
           "a magnitude between 2.2e-308 and 1.8e308, or 0");
    case NumberStatus::kNotANumber:
    case NumberStatus::kOk:
      break;
  }
  std::string expected = decimal_point_ == ',' ? "a decimal number written like 12,5"
                                               : "a decimal number written like 12.5";
  if (decimal_point_ == '.' && text.find(',') != std::string::npos) {
    expected += " (declare decimal_comma = true if the file writes decimal commas)";
  }
  Fail(fields_[i].column, "'" + text + "' in " + column + " is not a number", expected);
}

std::vector<MappedColumn> MapHeader(const CsvReader& reader, const std::vector<ColumnRole>& roles) {
  std::vector<MappedColumn> mapped(roles.size());
  const auto& fields = reader.fields();
  auto choice_list = [](const ColumnRole& role) {
    std::string list;
    for (const auto& choice : role.choices) {
      if (!list.empty()) list += ", ";
      list += choice.name;
      if (!role.unit_key.empty() && choice.unit.empty()) {
        list += " (with " + std::string(role.unit_key) + " in the job file)";
      }
    }
    return list;
  };
  for (std::size_t i = 0; i < fields.size(); ++i) {
    const std::string_view name = reader.Text(i);
    const int column = fields[i].column;
    if (name.empty()) reader.Fail(column, "empty column name in the header", "a column name");
    for (std::size_t j = 0; j < i; ++j) {
      if (reader.Text(j) == name) {
        reader.Fail(column,
                    "column '" + std::string(name) + "' appears twice (also at column " +
                        std::to_string(fields[j].column) + ")",
                    "each column once");
      }
    }
    bool found = false;
    for (std::size_t r = 0; r < roles.size() && !found; ++r) {
      const ColumnRole& role = roles[r];
      for (const ColumnChoice& choice : role.choices) {
        if (choice.name != name) continue;
        found = true;
        if (mapped[r].index >= 0) {
          reader.Fail(column,
                      "columns '" + mapped[r].name + "' and '" + std::string(name) +
                          "' both give the " + std::string(role.role),
                      "one column for the " + std::string(role.role));
        }
        std::string unit(choice.unit);
        if (!role.unit_key.empty()) {
          if (choice.unit.empty()) {
            if (role.declared_unit.empty()) {
              reader.Fail(column,
                          "column '" + std::string(name) + "' carries no unit and the job file " +
                              "declares no " + std::string(role.unit_key),
                          "a unit in the column name (" + choice_list(role) + ") or " +
                              std::string(role.unit_key) + " in the job file");
            }
            unit = std::string(role.declared_unit);
          } else if (!role.declared_unit.empty() && role.declared_unit != choice.unit) {
            reader.Fail(column,
                        "column '" + std::string(name) + "' contradicts " +
                            std::string(role.unit_key) + " = \"" + std::string(role.declared_unit) +
                            "\" declared in the job file",
                        "the same unit in the header and in the job file");
          }
        }
        mapped[r] = MappedColumn{static_cast<int>(i), std::string(name), unit};
        break;
      }
    }
    if (!found) {
      std::string all;
      for (const auto& role : roles) {
        if (!all.empty()) all += "; ";
        all += choice_list(role);
      }
      reader.Fail(column, "unknown column '" + std::string(name) + "'", "columns among: " + all);
    }
  }
  for (std::size_t r = 0; r < roles.size(); ++r) {
    if (roles[r].required && mapped[r].index < 0) {
      reader.Fail(1, "missing column for the " + std::string(roles[r].role),
                  "a column named " + choice_list(roles[r]));
    }
  }
  return mapped;
}

UnitScale MassUnitToGram(std::string_view unit) {
  if (unit == "mg") return {1.0, 1e3, 0.0};
  if (unit == "ug") return {1.0, 1e6, 0.0};
  return {};  // "g"
}

UnitScale RhUnitToFraction(std::string_view unit) {
  if (unit == "percent") return {1.0, physics::kPercent, 0.0};
  return {};  // "fraction"
}

UnitScale TimeUnitToSecond(std::string_view unit) {
  if (unit == "min") return {physics::kSecondsPerMinute, 1.0, 0.0};
  if (unit == "h") return {physics::kSecondsPerHour, 1.0, 0.0};
  return {};  // "s"
}

UnitScale TemperatureUnitToKelvin(std::string_view unit) {
  if (unit == "C") return {1.0, 1.0, physics::kZeroCelsius_K};
  return {};  // "K"
}

bool ParseBranch(std::string_view text, Branch* branch) {
  for (const Branch candidate : {Branch::kAdsorption, Branch::kDesorption, Branch::kDrying}) {
    if (text == BranchName(candidate)) {
      *branch = candidate;
      return true;
    }
  }
  return false;
}

}  // namespace sorbtrace::ingest::internal
