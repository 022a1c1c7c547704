#include "pipeline/common/bounded_input.h"

#include <algorithm>
#include <string>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"

namespace sorbtrace {
namespace {

// Length of the valid UTF-8 sequence starting at text[i] (RFC 3629: no overlongs, no
// surrogates, at most U+10FFFF), or 0 when the bytes there are not one.
std::size_t Utf8SequenceLength(std::string_view text, std::size_t i) {
  const auto byte = [&](std::size_t k) { return static_cast<unsigned char>(text[k]); };
  const unsigned char lead = byte(i);
  std::size_t length = 0;
  unsigned char low = 0x80;
  unsigned char high = 0xBF;
  if (lead >= 0xC2 && lead <= 0xDF) {
    length = 2;
  } else if (lead >= 0xE0 && lead <= 0xEF) {
    length = 3;
    if (lead == 0xE0) low = 0xA0;
    if (lead == 0xED) high = 0x9F;
  } else if (lead >= 0xF0 && lead <= 0xF4) {
    length = 4;
    if (lead == 0xF0) low = 0x90;
    if (lead == 0xF4) high = 0x8F;
  } else {
    return 0;
  }
  if (i + length > text.size()) return 0;
  if (byte(i + 1) < low || byte(i + 1) > high) return 0;
  for (std::size_t k = 2; k < length; ++k) {
    if (byte(i + k) < 0x80 || byte(i + k) > 0xBF) return 0;
  }
  return length;
}

// 1-based line and byte column of `offset` in `text`.
SourceLocation LocationOf(std::string_view text, std::size_t offset, const std::string& display) {
  int line = 1;
  std::size_t line_start = 0;
  for (std::size_t i = 0; i < offset && i < text.size(); ++i) {
    if (text[i] == '\n') {
      ++line;
      line_start = i + 1;
    }
  }
  return {display, line, static_cast<int>(offset - line_start) + 1};
}

// Walks the raw text of a TOML or JSON file, keeping line and column, skipping comments and
// strings, and calling back at every bracket and key part outside them.
class Scanner {
 public:
  Scanner(std::string_view text, std::string display, std::size_t max_line_bytes)
      : text_(text), display_(std::move(display)), max_line_bytes_(max_line_bytes) {}

  bool AtEnd() const { return i_ >= text_.size(); }
  char Peek(std::size_t ahead = 0) const {
    return i_ + ahead < text_.size() ? text_[i_ + ahead] : '\0';
  }
  bool StartsWith(std::string_view s) const { return text_.substr(i_, s.size()) == s; }

  // Consumes one byte, keeping the line count (and checking the line length).
  void Advance() {
    if (text_[i_] == '\n') {
      ++line_;
      line_start_ = i_ + 1;
    } else if (i_ - line_start_ + 1 > max_line_bytes_) {
      Fail("line " + std::to_string(line_) + " is longer than " + std::to_string(max_line_bytes_) +
               " bytes",
           "lines of at most " + std::to_string(max_line_bytes_) + " bytes");
    }
    ++i_;
  }

  // Skips a string that starts here with `quote` (one or three of it); `escapes`: a backslash
  // escapes the next byte. An unterminated single-line string ends at the line end (the parser
  // reports it).
  void SkipString(char quote, bool escapes) {
    const bool triple = Peek(1) == quote && Peek(2) == quote;
    const std::size_t open = triple ? 3 : 1;
    for (std::size_t k = 0; k < open; ++k) Advance();
    while (!AtEnd()) {
      const char c = Peek();
      if (!triple && c == '\n') return;
      if (escapes && c == '\\') {
        Advance();
        if (!AtEnd() && (triple || Peek() != '\n')) Advance();
        continue;
      }
      if (c == quote && (!triple || (Peek(1) == quote && Peek(2) == quote))) {
        for (std::size_t k = 0; k < open; ++k) Advance();
        // A closing """ may be followed by up to two more quotes that belong to the string.
        while (triple && Peek() == quote) Advance();
        return;
      }
      Advance();
    }
  }

  void SkipComment() {
    while (!AtEnd() && Peek() != '\n') Advance();
  }

  [[noreturn]] void Fail(std::string message, std::string expected) const {
    const int column = static_cast<int>(i_ - line_start_) + 1;
    throw InputError(SourceLocation{display_, line_, column}, std::move(message),
                     std::move(expected));
  }

 private:
  std::string_view text_;
  std::string display_;
  std::size_t max_line_bytes_;
  std::size_t i_ = 0;
  int line_ = 1;
  std::size_t line_start_ = 0;
};

[[noreturn]] void FailNesting(const Scanner& scan, int limit, const char* what) {
  scan.Fail("nesting deeper than " + std::to_string(limit) + " levels (" + what + ")",
            "at most " + std::to_string(limit) + " levels of nesting");
}

}  // namespace

std::string Excerpt(std::string_view text, std::size_t max_chars) {
  static constexpr char kHex[] = "0123456789abcdef";
  std::string out;
  std::size_t chars = 0;
  std::size_t i = 0;
  while (i < text.size() && chars < max_chars) {
    const auto byte = static_cast<unsigned char>(text[i]);
    if (byte >= 0x20 && byte < 0x7f) {
      out += text[i++];
    } else if (const std::size_t length = byte >= 0x80 ? Utf8SequenceLength(text, i) : 0) {
      out.append(text.substr(i, length));
      i += length;
    } else {
      out += "\\x";
      out += kHex[byte >> 4];
      out += kHex[byte & 0x0f];
      ++i;
    }
    ++chars;
  }
  if (i < text.size()) out += "... (" + std::to_string(text.size()) + " bytes)";
  return out;
}

bool LiesInsideFolder(const std::filesystem::path& written, const std::filesystem::path& folder) {
  namespace fs = std::filesystem;
  const auto inside = [](const fs::path& path, const fs::path& dir) {
    const fs::path relative = path.lexically_relative(dir);
    return !relative.empty() && relative != "." && *relative.begin() != ".." &&
           relative.is_relative();
  };
  if (written.empty() || written.is_absolute()) return false;
  std::error_code ec;
  fs::path base = fs::absolute(folder.empty() ? fs::path(".") : folder, ec).lexically_normal();
  if (ec) return false;
  if (!base.has_filename()) base = base.parent_path();  // "/a/b/" -> "/a/b"
  const fs::path as_written = (base / written).lexically_normal();
  if (!inside(as_written, base)) return false;
  // Symbolic links resolved where they can be; a path that cannot be resolved (a link loop)
  // is judged as written, and its reading then names the problem (RegularFileProblem).
  std::error_code file_ec;
  std::error_code folder_ec;
  const fs::path real_file = fs::weakly_canonical(as_written, file_ec);
  const fs::path real_folder = fs::weakly_canonical(base, folder_ec);
  return file_ec || folder_ec || inside(real_file, real_folder);
}

std::string ReadBoundedFile(const std::filesystem::path& path, const std::string& display,
                            std::size_t max_bytes, const std::string& expected) {
  // One byte past the limit is read to tell a file at the limit from a longer one.
  std::string content = ReadRegularFileUpTo(path, display, max_bytes + 1, expected);
  if (content.size() > max_bytes) {
    throw InputError(LocationOf(content, max_bytes, display),
                     "the file goes on past " + std::to_string(max_bytes) + " bytes",
                     expected + " of at most " + std::to_string(max_bytes) + " bytes");
  }
  return content;
}

void CheckTomlLimits(std::string_view text, const std::string& display) {
  // Nesting levels: the table of the last [header] has as many levels as the header has
  // parts; a key adds its parts to the level of the table or inline table it is written in; an
  // array or inline table value is one level below the key (or array) holding it.
  enum class Mode { kLineStart, kKey, kHeader, kValue };
  struct Open {
    char bracket;
    int level;
  };
  Scanner scan(text, display, kMaxTomlLineBytes);
  std::vector<Open> open;
  Mode mode = Mode::kLineStart;
  int header_level = 0;
  int level = 0;  // of the key part or value being read
  const auto check = [&](int reached) {
    if (reached > kMaxTomlNestingLevels) {
      FailNesting(scan, kMaxTomlNestingLevels,
                  "tables, dotted-key parts, arrays and inline tables");
    }
  };
  while (!scan.AtEnd()) {
    const char c = scan.Peek();
    if (c == ' ' || c == '\t' || c == '\r') {
      scan.Advance();
      continue;
    }
    if (c == '\n') {
      if (open.empty()) mode = Mode::kLineStart;
      scan.Advance();
      continue;
    }
    if (c == '#') {
      scan.SkipComment();
      continue;
    }
    if (mode == Mode::kLineStart) {
      if (c == '[') {
        mode = Mode::kHeader;
        level = 1;
        check(level);
        scan.Advance();
        if (scan.Peek() == '[') scan.Advance();
        continue;
      }
      mode = Mode::kKey;
      level = header_level + 1;
      check(level);
    }
    if (c == '"' || c == '\'') {
      scan.SkipString(c, c == '"');
      continue;
    }
    switch (mode) {
      case Mode::kHeader:
        if (c == '.') {
          check(++level);
        } else if (c == ']') {
          header_level = level;
          mode = Mode::kValue;  // the rest of the line: "]" of [[...]] or a comment
        }
        break;
      case Mode::kKey:
        if (c == '.') {
          check(++level);
        } else if (c == '=') {
          mode = Mode::kValue;
        }
        break;
      case Mode::kValue:
        if (c == '[' || c == '{') {
          check(++level);
          open.push_back({c, level});
          if (c == '{') {
            mode = Mode::kKey;
            check(++level);
          }
        } else if ((c == ']' || c == '}') && !open.empty()) {
          open.pop_back();
          level = open.empty() ? level : open.back().level;
        } else if (c == ',' && !open.empty()) {
          level = open.back().level;
          if (open.back().bracket == '{') {
            mode = Mode::kKey;
            check(++level);
          }
        }
        break;
      case Mode::kLineStart:
        break;
    }
    scan.Advance();
  }
}

void CheckJsonLimits(std::string_view text, const std::string& display) {
  Scanner scan(text, display, text.size() + 1);  // JSON lines are not limited
  int depth = 0;
  while (!scan.AtEnd()) {
    const char c = scan.Peek();
    if (c == '"') {
      scan.SkipString('"', true);
      continue;
    }
    if (c == '[' || c == '{') {
      if (++depth > kMaxJsonNestingLevels) {
        FailNesting(scan, kMaxJsonNestingLevels, "arrays and objects");
      }
    } else if ((c == ']' || c == '}') && depth > 0) {
      --depth;
    }
    scan.Advance();
  }
}

toml::table ParseTomlText(std::string_view text, const std::string& display,
                          const std::string& expected) {
  CheckTomlLimits(text, display);
  try {
    return toml::parse(text, display);
  } catch (const toml::parse_error& error) {
    const auto& begin = error.source().begin;
    throw InputError(
        SourceLocation{display, static_cast<int>(begin.line), static_cast<int>(begin.column)},
        "TOML syntax: " + Excerpt(error.description(), 200), expected);
  }
}

toml::table ParseTomlFile(const std::filesystem::path& path, const std::string& expected) {
  const std::string display = path.string();
  return ParseTomlText(ReadBoundedFile(path, display, kMaxTomlFileBytes, expected), display,
                       expected);
}

nlohmann::json ParseJsonText(std::string_view text, const std::string& display,
                             const std::string& expected) {
  CheckJsonLimits(text, display);
  try {
    return nlohmann::json::parse(text);
  } catch (const nlohmann::json::parse_error& error) {
    // error.byte: 1-based index of the byte where parsing stopped.
    const std::size_t offset = error.byte > 0 ? error.byte - 1 : 0;
    std::string what = error.what();
    // "[json.exception.parse_error.101] parse error at line L, column C: <reason>"
    if (const auto colon = what.find(": "); colon != std::string::npos) {
      what = what.substr(colon + 2);
    }
    throw InputError(LocationOf(text, offset, display), "not valid JSON: " + Excerpt(what, 200),
                     expected);
  } catch (const nlohmann::json::out_of_range& error) {
    // A number beyond a double (1e400): the message quotes the number; locate its first use.
    std::string what = error.what();
    if (const auto colon = what.find("] "); colon != std::string::npos) {
      what = what.substr(colon + 2);
    }
    std::size_t offset = 0;
    if (const auto open = what.find('\''); open != std::string::npos) {
      const auto close = what.find('\'', open + 1);
      const auto found = text.find(what.substr(open + 1, close - open - 1));
      if (close != std::string::npos && found != std::string_view::npos) offset = found;
    }
    throw InputError(LocationOf(text, offset, display), "not valid JSON: " + Excerpt(what, 200),
                     expected);
  } catch (const nlohmann::json::exception& error) {
    throw InputError(SourceLocation{display, 0, 0}, "not valid JSON: " + Excerpt(error.what(), 200),
                     expected);
  }
}

nlohmann::json ParseJsonFile(const std::filesystem::path& path, const std::string& expected) {
  const std::string display = path.string();
  return ParseJsonText(ReadBoundedFile(path, display, kMaxJsonFileBytes, expected), display,
                       expected);
}

}  // namespace sorbtrace
