// `sorbtrace make JOB [--out DIR]`: one job file to a datasheet folder.
#include <unistd.h>

#include <CLI/CLI.hpp>
#include <cerrno>
#include <csignal>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>

#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"
#include "pipeline/run/commands.h"
#include "pipeline/run/console.h"
#include "pipeline/run/exit_status.h"
#include "pipeline/run/run.h"

namespace sorbtrace::run {
namespace {

struct MakeArguments {
  std::string job_file;
  std::string output_dir;
  bool quiet = false;
  bool verbose = false;
  int status_fd = -1;  // hidden: `batch` runs each job as a child and reads its outcome here
};

// Test hook of `batch` (tests/bad_inputs/output_safety_test.cc): a batch child whose job id
// equals $SORBTRACE_TEST_CRASH_JOB_ID dies by SIGSEGV, as a bug in one job would. Consulted
// only in children started by `batch` (--status-fd), never by a plain `make`.
void SimulateCrashIfRequested(const std::string& job_id) {
  const char* crash_id = std::getenv("SORBTRACE_TEST_CRASH_JOB_ID");
  if (crash_id != nullptr && job_id == crash_id) std::raise(SIGSEGV);
}

// The outcome a batch child reports to its parent: one JSON object on the status descriptor.
void WriteStatus(int fd, int exit_code, const std::string& job_id, const std::string& message,
                 const std::string& results_json) {
  nlohmann::json status = {{"exit_code", exit_code}, {"job_id", job_id}, {"message", message}};
  if (!results_json.empty()) {
    const auto results = nlohmann::json::parse(results_json, nullptr, false);
    if (results.is_object() && results.contains("headline")) {
      status["headline"] = results["headline"];
    }
  }
  const std::string text = status.dump(-1, ' ', true, nlohmann::json::error_handler_t::replace);
  for (size_t done = 0; done < text.size();) {
    const ssize_t put = ::write(fd, text.data() + done, text.size() - done);
    if (put < 0 && errno == EINTR) continue;
    if (put <= 0) break;
    done += static_cast<size_t>(put);
  }
}

int Make(const MakeArguments& args) {
  namespace fs = std::filesystem;
  Console console(args.quiet ? Verbosity::kQuiet
                             : (args.verbose ? Verbosity::kVerbose : Verbosity::kNormal));
  const fs::path job_file = args.job_file;
  // "folder/job.toml" (the job's folder names the job where every job file is job.toml);
  // "job.toml" alone when it is given without a folder.
  const std::string folder = job_file.parent_path().filename().string();
  const std::string label = (folder.empty() ? "" : folder + "/") + job_file.filename().string();
  std::string job_id;
  std::string results_json;
  std::string message;
  int code = static_cast<int>(ExitCode::kOk);
  try {
    RequireRegularFile(job_file, job_file.string(), "a TOML job file");
    // The job is read once up front: its id names the default output folder, and the output
    // folder is checked against the job's inputs before any work is done.
    const ingest::JobSpec spec = ingest::LoadJobSpec(job_file);
    job_id = spec.job_id;
    const fs::path out = args.output_dir.empty()
                             ? fs::path("sorbtrace_output") / OutputFolderName(spec.job_id)
                             : fs::path(args.output_dir);
    CheckOutputFolder(out, spec.job_id, ProtectedInputs(spec));
    if (args.status_fd >= 0) SimulateCrashIfRequested(spec.job_id);
    RunOptions options;
    options.output_dir = out;
    options.progress = [&](const std::string& stage, int index, int count) {
      console.Stage(label, stage, index, count);
    };
    const RunResult result = RunJob(spec, options);  // the job file is parsed once
    WriteOutputDirectory(result, out);
    results_json = result.artifacts.results_json;
    console.Finish();
    if (console.verbosity() != Verbosity::kQuiet) {
      for (const auto& warning : result.warnings) console.Line(FormatDiagnostic(warning));
    }
    message = std::to_string(result.warnings.size()) + " warning(s)";
    const char* sheet = result.artifacts.pdf.empty() ? "datasheet.html" : "datasheet.pdf";
    std::printf("%s\n", (out / sheet).string().c_str());
  } catch (const std::exception& error) {
    const Failure failure = FailureOf(error);
    code = failure.exit_code;
    message = failure.message;
    console.Finish();
    std::fprintf(stderr, "%s\n", FailureLine(failure).c_str());
  }
  if (args.status_fd >= 0) WriteStatus(args.status_fd, code, job_id, message, results_json);
  return code;
}

}  // namespace

void AddMakeCommand(CLI::App& app, int& exit_code) {
  auto args = std::make_shared<MakeArguments>();
  CLI::App* command = app.add_subcommand(
      "make", "Run a job file through the whole pipeline and issue its datasheet folder");
  command->add_option("job", args->job_file, "Job file (TOML)")->required();
  command->add_option(
      "-o,--out", args->output_dir,
      "Output folder (default sorbtrace_output/<job id>); replaced atomically, and only if "
      "sorbtrace wrote it for the same job");
  command->add_flag("-q,--quiet", args->quiet, "No progress or warnings on stderr");
  command->add_flag("-v,--verbose", args->verbose, "Warnings and stage timings on stderr");
  command->add_option("--status-fd", args->status_fd)->group("");  // batch children only
  command->callback([args, &exit_code] { exit_code = Make(*args); });
}

}  // namespace sorbtrace::run
