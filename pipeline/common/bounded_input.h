// Reading text files from outside within documented bounds, before any parser sees them.
//
// Every TOML file sorbtrace reads (job files, their stage settings, report templates) and the
// results.json that `verify` reads go through ParseTomlFile / ParseJsonFile: the file must be
// a regular file no larger than its size limit, and a scan of the raw text (strings and
// comments skipped) bounds the nesting depth and, for TOML, the line length before the parser
// runs. A recursive parser or a recursive walk of the parsed tree therefore never sees an input
// that could exhaust the stack (a 100 KB dotted key is 50,000 nested tables). Every refusal is
// an InputError naming file:line:column of the byte where the limit was passed.
//
// Excerpt() is the one rule for quoting text from an input file in a message: at most
// kMaxExcerptChars characters, control bytes and invalid UTF-8 escaped, and the length of the
// whole when it was shortened.
#pragma once

#include <toml++/toml.h>

#include <cstddef>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>
#include <string_view>

namespace sorbtrace {

// Limits (README, "Limits of inputs"). Chosen well above any real file (a full job file with
// every key is about 3 KB, the demo results.json files at most 200 KB, nested 6 levels) and far
// below what exhausts a default 8 MiB stack (common practice: a recursive parser uses a few
// hundred bytes of stack per level, several KB under AddressSanitizer).
inline constexpr std::size_t kMaxTomlFileBytes = std::size_t{1} << 20;   // 1 MiB
inline constexpr std::size_t kMaxJsonFileBytes = std::size_t{64} << 20;  // 64 MiB
// Nesting of a TOML value: tables of the header, parts of a dotted key, arrays, inline tables.
inline constexpr int kMaxTomlNestingLevels = 32;
inline constexpr int kMaxJsonNestingLevels = 64;  // arrays and objects
// A longer line is no hand-written setting (a 64 KiB unbroken word still fits).
inline constexpr std::size_t kMaxTomlLineBytes = std::size_t{128} << 10;  // 128 KiB
// Characters of foreign text quoted in a message.
inline constexpr std::size_t kMaxExcerptChars = 60;

// At most `max_chars` characters of `text` (cut on a UTF-8 character boundary), control bytes
// and invalid UTF-8 as \xNN; when shortened, "..." and the full length in bytes follow.
std::string Excerpt(std::string_view text, std::size_t max_chars = kMaxExcerptChars);

// Data-path policy (README, "Inputs"): true when `written`, a path as a job file gives it,
// resolved against `folder`, lies inside `folder`'s tree both as written (relative, no
// escaping "..") and after symbolic links are followed. A path whose links cannot be resolved
// (a loop) counts as inside: opening it fails anyway, with its own message.
bool LiesInsideFolder(const std::filesystem::path& written, const std::filesystem::path& folder);

// Reads a whole regular file of at most `max_bytes` bytes. `display` is the file as messages
// name it, `expected` what the file should be ("a TOML job file"). Throws InputError when the
// path is missing, not a regular file (folder, FIFO, device), unreadable or too large (located
// at the byte where the limit is passed).
std::string ReadBoundedFile(const std::filesystem::path& path, const std::string& display,
                            std::size_t max_bytes, const std::string& expected);

// The scans ParseTomlFile / ParseJsonFile run; throw InputError at the first byte past a limit.
void CheckTomlLimits(std::string_view text, const std::string& display);
void CheckJsonLimits(std::string_view text, const std::string& display);

// Bounded read + scan + parse. A syntax error becomes an InputError at its line and column,
// "TOML syntax: ..." / "not valid JSON: ...", with `expected` as the expectation.
toml::table ParseTomlFile(const std::filesystem::path& path, const std::string& expected);
toml::table ParseTomlText(std::string_view text, const std::string& display,
                          const std::string& expected);
nlohmann::json ParseJsonFile(const std::filesystem::path& path, const std::string& expected);
nlohmann::json ParseJsonText(std::string_view text, const std::string& display,
                             const std::string& expected);

}  // namespace sorbtrace
