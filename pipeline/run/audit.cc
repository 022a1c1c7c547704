#include "pipeline/run/audit.h"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <set>
#include <sstream>

#include "pipeline/common/bounded_input.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"

namespace sorbtrace::run {
namespace {

std::string Escape(const std::string& key) {
  std::string out;
  for (char c : key) {
    if (c == '~') {
      out += "~0";
    } else if (c == '/') {
      out += "~1";
    } else {
      out += c;
    }
  }
  return out;
}

std::string Text(const nlohmann::json& value) {
  return value.is_null() ? "(missing)" : value.dump();
}

void Compare(const std::string& pointer, const nlohmann::json& a, const nlohmann::json& b,
             std::vector<AuditLine>& lines) {
  if (a.is_object() && b.is_object()) {
    std::set<std::string> keys;
    for (const auto& [key, value] : a.items()) keys.insert(key);
    for (const auto& [key, value] : b.items()) keys.insert(key);
    for (const auto& key : keys) {
      const nlohmann::json& left = a.contains(key) ? a.at(key) : nlohmann::json();
      const nlohmann::json& right = b.contains(key) ? b.at(key) : nlohmann::json();
      if (!a.contains(key) || !b.contains(key)) {
        lines.push_back({pointer + "/" + Escape(key), Text(left), Text(right), 0.0, false});
        continue;
      }
      Compare(pointer + "/" + Escape(key), left, right, lines);
    }
    return;
  }
  if (a.is_array() && b.is_array()) {
    const size_t n = std::max(a.size(), b.size());
    for (size_t i = 0; i < n; ++i) {
      const std::string child = pointer + "/" + std::to_string(i);
      if (i >= a.size() || i >= b.size()) {
        lines.push_back({child, i < a.size() ? Text(a[i]) : "(missing)",
                         i < b.size() ? Text(b[i]) : "(missing)", 0.0, false});
        continue;
      }
      Compare(child, a[i], b[i], lines);
    }
    return;
  }
  if (a.is_number() && b.is_number()) {
    const double x = a.get<double>();
    const double y = b.get<double>();
    const bool same =
        x == y || (std::isnan(x) && std::isnan(y)) ||
        std::fabs(x - y) <= kAuditRelativeTolerance * std::max(std::fabs(x), std::fabs(y)) +
                                kAuditAbsoluteTolerance;
    lines.push_back({pointer, a.dump(), b.dump(), kAuditRelativeTolerance, same});
    return;
  }
  lines.push_back({pointer, Text(a), Text(b), 0.0, a == b});
}

}  // namespace

std::vector<AuditLine> CompareResults(const nlohmann::json& reported,
                                      const nlohmann::json& recomputed) {
  std::vector<AuditLine> lines;
  Compare("", reported, recomputed, lines);
  return lines;
}

nlohmann::json ReadResultsFile(const std::filesystem::path& path) {
  const std::string expected = "a results.json written by `sorbtrace make`";
  nlohmann::json results = ParseJsonFile(path, expected);
  const auto fail = [&](const std::string& what) {
    throw InputError(SourceLocation{path.string(), 0, 0}, what, expected);
  };
  if (!results.is_object()) fail("the file is not a JSON object");
  const auto settings = results.find("settings");
  if (settings == results.end() || !settings->is_object() || !settings->contains("job_file") ||
      !(*settings)["job_file"].is_string()) {
    fail("settings.job_file is missing or not a string");
  }
  const auto inputs = results.find("inputs");
  if (inputs == results.end() || !inputs->is_array()) fail("inputs is missing or not a list");
  for (std::size_t i = 0; i < inputs->size(); ++i) {
    const nlohmann::json& input = (*inputs)[i];
    if (!input.is_object()) fail("inputs[" + std::to_string(i) + "] is not an object");
    for (const char* key : {"role", "path", "sha256"}) {
      if (input.contains(key) && !input[key].is_string()) {
        fail("inputs[" + std::to_string(i) + "]." + key + " is not a string");
      }
    }
  }
  return results;
}

std::string OutputManifestText(
    const std::vector<std::pair<std::string, std::string>>& files_and_bytes) {
  std::string text;
  for (const auto& [name, bytes] : files_and_bytes) text += Sha256Hex(bytes) + "  " + name + "\n";
  return text;
}

std::vector<ManifestEntry> ParseOutputManifest(const std::filesystem::path& manifest_file,
                                               const std::string& text) {
  // sha256sum's line: 64 hex digits, two spaces (text mode), the file name.
  constexpr size_t kHexDigits = 64;
  std::vector<ManifestEntry> entries;
  std::istringstream lines(text);
  std::string line;
  int line_number = 0;
  while (std::getline(lines, line)) {
    ++line_number;
    const bool hex = line.size() > kHexDigits + 2 &&
                     std::all_of(line.begin(), line.begin() + kHexDigits, [](unsigned char c) {
                       return std::isdigit(c) != 0 || (c >= 'a' && c <= 'f');
                     });
    const std::string name = hex ? line.substr(kHexDigits + 2) : std::string();
    if (!hex || line.compare(kHexDigits, 2, "  ") != 0 || name.empty() ||
        name.find('/') != std::string::npos || name == "." || name == "..") {
      throw InputError(SourceLocation{manifest_file.string(), line_number, 1},
                       "not a manifest line: '" + Excerpt(line) + "'",
                       "64 lower-case hex digits, two spaces and a file name of the folder");
    }
    entries.push_back({line.substr(0, kHexDigits), name});
  }
  return entries;
}

std::vector<ManifestEntry> ReadOutputManifest(const std::filesystem::path& manifest_file) {
  const std::string display = manifest_file.string();
  return ParseOutputManifest(manifest_file,
                             ReadBoundedFile(manifest_file, display, kMaxOutputManifestBytes,
                                             "an output manifest written by `sorbtrace make`"));
}

}  // namespace sorbtrace::run
