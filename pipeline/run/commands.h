// The verbs of the `sorbtrace` command line. Each verb lives in its own file and registers
// itself on the CLI11 application; when its callback runs it stores the process exit code
// (a sorbtrace::ExitCode value) in `exit_code`.
//
//   sorbtrace calc ...        physical-property and Kelvin calculator   (calc_command.cc)
//   sorbtrace check JOB       validate a job and its data files only    (check_command.cc)
//   sorbtrace make JOB        run the whole pipeline to a datasheet     (make_command.cc)
//   sorbtrace verify RESULTS  re-derive every number of an issued sheet (verify_command.cc)
//   sorbtrace batch DIR       run every job under a folder in parallel  (batch_command.cc)
#pragma once

namespace CLI {
class App;
}

namespace sorbtrace::run {

void AddCalcCommand(CLI::App& app, int& exit_code);
void AddCheckCommand(CLI::App& app, int& exit_code);
void AddMakeCommand(CLI::App& app, int& exit_code);
void AddVerifyCommand(CLI::App& app, int& exit_code);
void AddBatchCommand(CLI::App& app, int& exit_code);

}  // namespace sorbtrace::run
