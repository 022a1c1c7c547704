// Internal to the run stage: comparison of a recorded results.json against a recomputed one,
// leaf by leaf, for `sorbtrace verify`.
#pragma once

#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>
#include <utility>
#include <vector>

namespace sorbtrace::run {

// One compared quantity: its JSON pointer, both values as text, tolerance and outcome.
struct AuditLine {
  std::string pointer;  // e.g. "/fits/0/parameters/0/value"
  std::string reported;
  std::string recomputed;
  double tolerance = 0.0;  // relative tolerance applied to numbers (0 for text)
  bool passed = false;
};

// Tolerance for recomputed numbers. The pipeline is deterministic (seeded resampling, fixed
// iteration order, no threads inside a job), so a re-run reproduces the issued numbers to
// about the last bit. "About": Eigen's vectorised reductions sum in an order that depends
// on the alignment of heap buffers, which differs from one process history to another, and
// in ill-conditioned differences (a band edge near zero) that rounding grows to ~1e-9
// relative. 1e-6 relative is still four orders of magnitude finer than the two significant
// digits of uncertainty printed on the sheet, so a real change to any reported number fails;
// the printed texts themselves are compared exactly.
inline constexpr double kAuditRelativeTolerance = 1e-6;
inline constexpr double kAuditAbsoluteTolerance = 1e-300;

std::vector<AuditLine> CompareResults(const nlohmann::json& reported,
                                      const nlohmann::json& recomputed);

// Reads a results.json for `verify`: size and nesting bounded before parsing
// (pipeline/common/bounded_input.h), then the fields verify looks up checked for their type
// (an object with settings.job_file a string and inputs a list of objects whose role, path and
// sha256 are strings). Throws InputError naming the file and the field.
nlohmann::json ReadResultsFile(const std::filesystem::path& path);

// The output manifest: `make` writes kOutputManifestName beside results.json, one line per
// file it wrote ("<lower-case hex SHA-256>  <file name>\n", the format of GNU coreutils'
// `sha256sum`, so `sha256sum -c outputs.sha256` checks it without sorbtrace), in the order
// written. File names only: the check works wherever the output folder is moved. `verify`
// checks every listed file against it, and that datasheet and results.json are listed.
inline constexpr char kOutputManifestName[] = "outputs.sha256";

struct ManifestEntry {
  std::string sha256_hex;
  std::string file_name;
};

// Manifest text of (file name, bytes) pairs.
std::string OutputManifestText(
    const std::vector<std::pair<std::string, std::string>>& files_and_bytes);

// Parses a manifest; a line that is not "<64 hex>  <plain file name>" throws InputError naming
// the manifest's line. File names with a folder part are refused (never followed).
std::vector<ManifestEntry> ParseOutputManifest(const std::filesystem::path& manifest_file,
                                               const std::string& text);

// Largest manifest `verify` reads (README, "Limits of inputs"): a line is 64 hex digits, two
// spaces and a file name of at most 255 bytes (NAME_MAX on Linux), so 64 KiB hold more than
// 200 lines; `make` writes one line per output file, fewer than 20.
inline constexpr std::size_t kMaxOutputManifestBytes = std::size_t{64} << 10;

// Reads (a regular file of at most kMaxOutputManifestBytes, bounded_input.h ReadBoundedFile)
// and parses the manifest; InputError for anything else.
std::vector<ManifestEntry> ReadOutputManifest(const std::filesystem::path& manifest_file);

}  // namespace sorbtrace::run
