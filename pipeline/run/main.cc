// Entry point of the `sorbtrace` binary: builds the command line and maps every failure
// to a documented exit code (pipeline/common/diagnostics.h, README "Exit codes").
#include <glog/logging.h>

#include <CLI/CLI.hpp>
#include <cstdio>
#include <exception>

#include "pipeline/common/cleanup.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/run/commands.h"
#include "pipeline/run/exit_status.h"
#include "pipeline/run/version.h"

int main(int argc, char** argv) {
  // Ceres Solver logs through glog. A trial step that leaves a model's domain is a normal
  // event of the solver (it retries with a smaller step); it is reported through the fit's
  // summary and flags, not as a log line on stderr.
  FLAGS_minloglevel = google::GLOG_FATAL;
  FLAGS_logtostderr = true;
  google::InitGoogleLogging(argv[0]);
  sorbtrace::InstallSignalCleanup();
  CLI::App app{"sorbtrace: gravimetric moisture-sorption data to a traceable PDF datasheet",
               "sorbtrace"};
  app.set_version_flag("--version", std::string("sorbtrace ") + sorbtrace::run::kVersion);
  app.require_subcommand(1);
  int exit_code = static_cast<int>(sorbtrace::ExitCode::kOk);
  sorbtrace::run::AddCalcCommand(app, exit_code);
  sorbtrace::run::AddCheckCommand(app, exit_code);
  sorbtrace::run::AddMakeCommand(app, exit_code);
  sorbtrace::run::AddVerifyCommand(app, exit_code);
  sorbtrace::run::AddBatchCommand(app, exit_code);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& error) {
    const int code = app.exit(error);
    return code == 0 ? 0 : static_cast<int>(sorbtrace::ExitCode::kUsage);
  } catch (const std::exception& error) {
    return sorbtrace::run::ReportFailure(error);
  }
  return exit_code;
}
