// `sorbtrace verify RESULTS.json`: what an auditor runs on an issued sheet. Checks the SHA-256
// of every recorded input, re-runs the pipeline from those inputs and the recorded settings,
// and compares every number of the recorded results with the recomputed one.
#include <fmt/format.h>

#include <CLI/CLI.hpp>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>

#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"
#include "pipeline/run/audit.h"
#include "pipeline/run/commands.h"
#include "pipeline/run/run.h"

namespace sorbtrace::run {
namespace {

struct VerifyArguments {
  std::string results_file;
  std::string job_file;     // override of the recorded location
  std::string report_file;  // full verification report (every quantity)
  bool show_all = false;
};

nlohmann::json ParseResults(const std::string& path) { return ReadResultsFile(path); }

std::string Line(const AuditLine& line) {
  char tolerance[32];
  std::snprintf(tolerance, sizeof tolerance, "%.0e", line.tolerance);
  return std::string(line.passed ? "pass" : "FAIL") + "  " + line.pointer + "  reported " +
         line.reported + "  recomputed " + line.recomputed + "  tolerance " +
         (line.tolerance > 0 ? std::string("rel ") + tolerance : std::string("exact"));
}

int Verify(const VerifyArguments& args) {
  namespace fs = std::filesystem;
  const nlohmann::json reported = ParseResults(args.results_file);
  const fs::path results_dir = fs::absolute(args.results_file).parent_path();
  if (!reported.contains("settings") || !reported["settings"].contains("job_file") ||
      !reported.contains("inputs") || !reported["inputs"].is_array()) {
    throw InputError(SourceLocation{args.results_file, 0, 0},
                     "results file has no settings.job_file or inputs list",
                     "a results.json written by `sorbtrace make`");
  }
  const fs::path job_file =
      args.job_file.empty()
          ? (results_dir / reported["settings"]["job_file"].get<std::string>()).lexically_normal()
          : fs::path(args.job_file);
  std::string full_report;
  int failures = 0;
  auto record = [&](const std::string& text, bool passed, bool always_print) {
    full_report += text + "\n";
    if (!passed) ++failures;
    if (!passed || always_print || args.show_all) std::printf("%s\n", text.c_str());
  };

  // 1. Inputs unchanged?
  for (const auto& input : reported["inputs"]) {
    const std::string role = input.value("role", "");
    const std::string path = input.value("path", "");
    const std::string expected = input.value("sha256", "");
    fs::path resolved;
    if (role == "job") {
      resolved = job_file;
    } else if (role == "template") {
      resolved = ResolveTemplate(path, job_file.parent_path());
      if (!fs::exists(resolved))
        resolved = ResolveTemplate(fs::path(path).stem().string(), job_file.parent_path());
    } else {
      resolved = job_file.parent_path() / path;
    }
    std::string actual = "(missing file)";
    if (fs::exists(resolved)) actual = Sha256HexOfFile(resolved);
    record(fmt::format("{}  input {} {}  sha256 {}", actual == expected ? "pass" : "FAIL", role,
                       resolved.string(),
                       actual == expected
                           ? std::string("unchanged")
                           : fmt::format("CHANGED: recorded {}, now {}", expected, actual)),
           actual == expected, true);
  }
  if (failures > 0) {
    std::printf("verify: %d input file(s) changed or missing; numbers not re-derived\n", failures);
    if (!args.report_file.empty()) WriteFileAtomically(args.report_file, full_report);
    return static_cast<int>(ExitCode::kAuditMismatch);
  }

  // 2. Re-derive every number.
  RunOptions options;
  options.output_dir = results_dir;
  const RunResult rerun = RunJob(job_file, options);
  const nlohmann::json recomputed = nlohmann::json::parse(rerun.artifacts.results_json);
  const std::vector<AuditLine> lines = CompareResults(reported, recomputed);
  int numbers = 0;
  for (const auto& line : lines) {
    if (line.tolerance > 0) ++numbers;
    record(Line(line), line.passed, false);
  }
  std::printf("verify: %zu quantities compared (%d numbers), %d mismatch(es)\n", lines.size(),
              numbers, failures);
  if (!args.report_file.empty()) WriteFileAtomically(args.report_file, full_report);
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
  command->add_flag("--all", args->show_all, "Print every compared quantity, not only failures");
  command->callback([args, &exit_code] {
    try {
      exit_code = Verify(*args);
    } catch (const InputError& error) {
      std::fprintf(stderr, "%s\n", error.what());
      exit_code = static_cast<int>(ExitCode::kBadInput);
    } catch (const ComputationError& error) {
      std::fprintf(stderr, "sorbtrace: fit failure: %s\n", error.what());
      exit_code = static_cast<int>(ExitCode::kFitFailure);
    }
  });
}

}  // namespace sorbtrace::run
