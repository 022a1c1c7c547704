// `sorbtrace verify RESULTS.json`: what an auditor runs on an issued sheet. Checks the SHA-256
// of every recorded input, re-runs the pipeline from those inputs and the recorded settings,
// and compares every number of the recorded results with the recomputed one.
#include <fmt/format.h>
#include <sys/stat.h>

#include <CLI/CLI.hpp>
#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <system_error>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"
#include "pipeline/common/paths.h"
#include "pipeline/run/audit.h"
#include "pipeline/run/commands.h"
#include "pipeline/run/exit_status.h"
#include "pipeline/run/run.h"

namespace sorbtrace::run {
namespace {

struct VerifyArguments {
  std::string results_file;
  std::string job_file;                     // override of the recorded location
  std::string report_file;                  // full verification report (every quantity)
  std::vector<std::string> allowed_inputs;  // recorded paths outside the job folder to hash
  bool show_all = false;
};

// First line of every report `verify --report` writes; an existing file is replaced only if
// it starts with this line.
constexpr char kReportHeader[] = "sorbtrace verification report";
nlohmann::json ParseResults(const std::string& path) { return ReadResultsFile(path); }

// Where a recorded data file is: relative to the job folder and inside it, unless the user
// allowed the path explicitly with --allow-input (an auditor decides what gets opened).
std::filesystem::path ResolveRecordedInput(const std::string& recorded,
                                           const std::filesystem::path& job_dir,
                                           const VerifyArguments& args,
                                           const std::string& results_file) {
  namespace fs = std::filesystem;
  const fs::path written(recorded);
  fs::path candidate = (job_dir / written).lexically_normal();  // not const: returned by move
  const fs::path relative = written.lexically_normal();
  const bool escapes = written.is_absolute() || written.has_root_name() ||
                       (!relative.empty() && *relative.begin() == "..");
  if (!escapes) return candidate;
  for (const auto& allowed : args.allowed_inputs) {
    if (ResolvedPath(allowed) == ResolvedPath(written.is_absolute() ? written : candidate)) {
      return candidate;
    }
  }
  throw InputError(
      SourceLocation{results_file, 0, 0},
      "recorded input '" + recorded + "' lies outside the job folder; it was not opened",
      "inputs inside the job folder, or the path named with --allow-input");
}

// Refuses a --report target that is an input or an existing file `verify` did not write.
void CheckReportTarget(const std::string& report_file,
                       const std::vector<std::filesystem::path>& inputs) {
  namespace fs = std::filesystem;
  auto refuse = [&](const std::string& why) {
    throw InputError(SourceLocation{report_file, 0, 0},
                     "report file refused: " + why + "; nothing was written",
                     "a new file, or an earlier report of `sorbtrace verify --report`");
  };
  const fs::path target = ResolvedPath(report_file);
  struct stat target_status {};
  const bool exists = ::lstat(target.c_str(), &target_status) == 0;
  for (const auto& input : inputs) {
    struct stat input_status {};
    const bool same_file = exists && ::stat(input.c_str(), &input_status) == 0 &&
                           input_status.st_dev == target_status.st_dev &&
                           input_status.st_ino == target_status.st_ino;
    if (same_file || ResolvedPath(input) == target) refuse("it is the input " + input.string());
  }
  if (!exists) return;
  if (!S_ISREG(target_status.st_mode)) refuse("it exists and is not a regular file");
  // Only the first line matters: a large foreign file is not read beyond it.
  const std::string text = ReadRegularFileUpTo(target, target.string(), sizeof kReportHeader - 1,
                                               "a report of `sorbtrace verify`");
  if (text.rfind(kReportHeader, 0) != 0) {
    refuse("it exists and is not a report of `sorbtrace verify`");
  }
}

std::string Line(const AuditLine& line) {
  char tolerance[32];
  std::snprintf(tolerance, sizeof tolerance, "%.0e", line.tolerance);
  return std::string(line.passed ? "pass" : "FAIL") + "  " + line.pointer + "  reported " +
         line.reported + "  recomputed " + line.recomputed + "  tolerance " +
         (line.tolerance > 0 ? std::string("rel ") + tolerance : std::string("exact"));
}

// Checks every file the output manifest lists (kOutputManifestName beside results.json) and
// that results.json itself is listed with its present bytes; records one line per file and
// returns the number of failures. A folder without a manifest fails: `make` always writes one.
template <typename Record>
int CheckOutputManifest(const std::filesystem::path& results_dir,
                        const std::filesystem::path& results_file, Record& record) {
  const std::filesystem::path manifest_file = results_dir / kOutputManifestName;
  std::vector<ManifestEntry> entries;
  try {
    entries = ReadOutputManifest(manifest_file);
  } catch (const InputError& error) {
    record(fmt::format("FAIL  outputs {}  {}", kOutputManifestName, error.diagnostic().message),
           false, true);
    return 1;
  }
  int failures = 0;
  bool results_listed = false;
  for (const ManifestEntry& entry : entries) {
    const std::filesystem::path file = results_dir / entry.file_name;
    std::error_code ec;
    results_listed = results_listed || std::filesystem::equivalent(file, results_file, ec);
    std::string actual;
    try {
      actual = Sha256HexOfFile(file);
    } catch (const InputError& error) {
      actual = "(" + error.diagnostic().message + ")";
    }
    const bool same = actual == entry.sha256_hex;
    if (!same) ++failures;
    record(fmt::format("{}  output {}  sha256 {}", same ? "pass" : "FAIL", entry.file_name,
                       same ? std::string("as issued")
                            : fmt::format("CHANGED: issued {}, now {}", entry.sha256_hex, actual)),
           same, true);
  }
  if (!results_listed) {
    ++failures;
    record(fmt::format("FAIL  outputs {} does not list {}", kOutputManifestName,
                       results_file.filename().string()),
           false, true);
  }
  return failures;
}

int Verify(const VerifyArguments& args) {
  namespace fs = std::filesystem;
  const nlohmann::json reported = ParseResults(args.results_file);
  const fs::path results_dir = fs::absolute(args.results_file).parent_path();
  if (!reported.is_object() || !reported.contains("settings") ||
      !reported["settings"].is_object() || !reported["settings"].contains("job_file") ||
      !reported["settings"]["job_file"].is_string() || !reported.contains("inputs") ||
      !reported["inputs"].is_array()) {
    throw InputError(SourceLocation{args.results_file, 0, 0},
                     "results file has no settings.job_file or inputs list",
                     "a results.json written by `sorbtrace make`");
  }
  // `make` records the job file relative to the output folder; an absolute recorded path is
  // not followed unless the auditor names the job with --job or --allow-input.
  const fs::path recorded_job = reported["settings"]["job_file"].get<std::string>();
  fs::path job_file = args.job_file;
  if (job_file.empty()) {
    job_file = (results_dir / recorded_job).lexically_normal();
    const bool allowed = std::any_of(args.allowed_inputs.begin(), args.allowed_inputs.end(),
                                     [&](const std::string& allowed_path) {
                                       return ResolvedPath(allowed_path) == ResolvedPath(job_file);
                                     });
    if (recorded_job.is_absolute() && !allowed) {
      throw InputError(SourceLocation{args.results_file, 0, 0},
                       "recorded job file '" + recorded_job.string() +
                           "' is an absolute path; it was not opened",
                       "a job file relative to results.json, or the job named with --job");
    }
  }
  std::string full_report;
  int failures = 0;
  auto record = [&](const std::string& text, bool passed, bool always_print) {
    full_report += text + "\n";
    if (!passed) ++failures;
    if (!passed || always_print || args.show_all) std::printf("%s\n", text.c_str());
  };

  // 0. The issued files unchanged? (the manifest `make` wrote beside results.json)
  const int output_failures = CheckOutputManifest(results_dir, fs::path(args.results_file), record);

  // 1. Inputs unchanged? Every path is resolved before anything is opened or written.
  struct ResolvedInput {
    std::string role;
    std::string expected;
    fs::path path;
  };
  std::vector<ResolvedInput> resolved_inputs;
  std::vector<fs::path> protected_paths = {fs::path(args.results_file), job_file};
  for (const auto& input : reported["inputs"]) {
    auto text = [&input](const char* key) {
      return input.is_object() && input.contains(key) && input[key].is_string()
                 ? input[key].get<std::string>()
                 : std::string();
    };
    const std::string role = text("role");
    const std::string path = text("path");
    const fs::path written(path);
    const bool escapes =
        written.is_absolute() || (!written.empty() && *written.lexically_normal().begin() == "..");
    fs::path resolved;
    if (role == "job") {
      resolved = job_file;
    } else if (role == "template" && !escapes) {
      resolved = ResolveTemplate(path, job_file.parent_path());
      std::error_code ec;
      if (!fs::exists(resolved, ec))
        resolved = ResolveTemplate(fs::path(path).stem().string(), job_file.parent_path());
    } else {
      resolved = ResolveRecordedInput(path, job_file.parent_path(), args, args.results_file);
    }
    resolved_inputs.push_back({role, text("sha256"), resolved});
    protected_paths.push_back(resolved);
  }
  if (!args.report_file.empty()) CheckReportTarget(args.report_file, protected_paths);
  auto write_report = [&] {
    if (!args.report_file.empty()) {
      WriteFileAtomically(args.report_file, std::string(kReportHeader) + "\n" + full_report);
    }
  };
  for (const auto& input : resolved_inputs) {
    // Only regular files are hashed (a FIFO or /dev/zero would block or never end); one that
    // cannot be read is a changed input, not the end of the audit.
    std::string actual;
    try {
      actual = Sha256HexOfFile(input.path);
    } catch (const InputError& error) {
      actual = "(input " + error.diagnostic().message + ")";
    }
    const bool same = actual == input.expected;
    record(fmt::format("{}  input {} {}  sha256 {}", same ? "pass" : "FAIL", input.role,
                       input.path.string(),
                       same ? std::string("unchanged")
                            : fmt::format("CHANGED: recorded {}, now {}", input.expected, actual)),
           same, true);
  }
  if (failures > output_failures) {
    std::printf("verify: %d input file(s) changed or missing; numbers not re-derived\n",
                failures - output_failures);
    write_report();
    return static_cast<int>(ExitCode::kAuditMismatch);
  }

  // 2. Re-derive every number.
  RunOptions options;
  options.output_dir = results_dir;
  const RunResult rerun = RunJob(job_file, options);
  nlohmann::json recomputed = nlohmann::json::parse(rerun.artifacts.results_json);
  if (!args.job_file.empty() && recomputed.contains("settings")) {
    // Where the job file lies is not a result: a job named with --job is verified where it
    // is now, and its recorded location is kept in the comparison.
    std::printf("note: job file verified at %s (recorded as %s)\n", job_file.string().c_str(),
                recorded_job.string().c_str());
    recomputed["settings"]["job_file"] = reported["settings"]["job_file"];
  }
  const std::vector<AuditLine> lines = CompareResults(reported, recomputed);
  int numbers = 0;
  for (const auto& line : lines) {
    if (line.tolerance > 0) ++numbers;
    record(Line(line), line.passed, false);
  }
  std::printf("verify: %zu quantities compared (%d numbers), %d mismatch(es)\n", lines.size(),
              numbers, failures);
  write_report();
  return failures == 0 ? static_cast<int>(ExitCode::kOk)
                       : static_cast<int>(ExitCode::kAuditMismatch);
}

}  // namespace

void AddVerifyCommand(CLI::App& app, int& exit_code) {
  auto args = std::make_shared<VerifyArguments>();
  CLI::App* command = app.add_subcommand(
      "verify", "Re-derive every number of an issued results.json from its recorded inputs");
  command->add_option("results", args->results_file, "results.json of an issued datasheet")
      ->required();
  command->add_option(
      "--job", args->job_file,
      "Job file location, if it moved (default: as recorded, relative to results.json)");
  command->add_option("--report", args->report_file,
                      "Write the full verification report (every quantity) to this file");
  command->add_option("--allow-input", args->allowed_inputs,
                      "Hash this recorded input although it lies outside the job folder "
                      "(absolute or ../ path); repeatable");
  command->add_flag("--all", args->show_all, "Print every compared quantity, not only failures");
  command->callback([args, &exit_code] {
    try {
      exit_code = Verify(*args);
    } catch (const std::exception& error) {
      exit_code = ReportFailure(error);
    }
  });
}

}  // namespace sorbtrace::run
