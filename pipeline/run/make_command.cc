// `sorbtrace make JOB [--out DIR]`: one job file to a datasheet folder.
#include <CLI/CLI.hpp>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <string>

#include "pipeline/common/diagnostics.h"
#include "pipeline/run/commands.h"
#include "pipeline/run/console.h"
#include "pipeline/run/run.h"

namespace sorbtrace::run {
namespace {

struct MakeArguments {
  std::string job_file;
  std::string output_dir;
  bool quiet = false;
  bool verbose = false;
};

int Make(const MakeArguments& args) {
  Console console(args.quiet ? Verbosity::kQuiet
                             : (args.verbose ? Verbosity::kVerbose : Verbosity::kNormal));
  std::filesystem::path out = args.output_dir;
  if (out.empty()) {
    out = std::filesystem::path("sorbtrace_output") / std::filesystem::path(args.job_file).stem();
  }
  const std::string label = std::filesystem::path(args.job_file).parent_path().filename().string() +
                            "/" + std::filesystem::path(args.job_file).filename().string();
  RunOptions options;
  options.output_dir = out;
  options.progress = [&](const std::string& stage, int index, int count) {
    console.Stage(label, stage, index, count);
  };
  try {
    const RunResult result = RunJob(args.job_file, options);
    WriteOutputDirectory(result, out);
    console.Finish();
    if (console.verbosity() != Verbosity::kQuiet) {
      for (const auto& warning : result.warnings) console.Line(FormatDiagnostic(warning));
    }
    std::printf("%s\n", (out / "datasheet.pdf").string().c_str());
    return static_cast<int>(ExitCode::kOk);
  } catch (const InputError& error) {
    console.Finish();
    std::fprintf(stderr, "%s\n", error.what());
    return static_cast<int>(ExitCode::kBadInput);
  } catch (const ComputationError& error) {
    console.Finish();
    std::fprintf(stderr, "sorbtrace: fit failure: %s\n", error.what());
    return static_cast<int>(ExitCode::kFitFailure);
  }
}

}  // namespace

void AddMakeCommand(CLI::App& app, int& exit_code) {
  auto args = std::make_shared<MakeArguments>();
  CLI::App* command = app.add_subcommand(
      "make", "Run a job file through the whole pipeline and issue its datasheet folder");
  command->add_option("job", args->job_file, "Job file (TOML)")->required();
  command->add_option(
      "-o,--out", args->output_dir,
      "Output folder (default sorbtrace_output/<job file stem>); replaced atomically");
  command->add_flag("-q,--quiet", args->quiet, "No progress or warnings on stderr");
  command->add_flag("-v,--verbose", args->verbose, "Warnings and stage timings on stderr");
  command->callback([args, &exit_code] { exit_code = Make(*args); });
}

}  // namespace sorbtrace::run
