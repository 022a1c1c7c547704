// Run stage: ties the stages into one job run (ingest -> equilibrate -> reduce -> fit ->
// pores -> report), reads the stage settings of the job file, and writes the outputs into
// an output folder atomically (a complete new folder replaces the old one in one step).
#pragma once

#include <array>
#include <filesystem>
#include <functional>
#include <map>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/fit/fit_stage.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/pores/pores.h"
#include "pipeline/reduce/reduce.h"
#include "pipeline/report/report.h"

namespace sorbtrace::run {

// Settings of every stage after built-in defaults, template and job-file overrides.
struct JobSettings {
  ingest::IngestOptions ingest;
  equilibrate::EquilibrateOptions equilibrate;
  reduce::ReduceOptions reduce;
  fit::FitStageOptions fit;
  pores::PoreOptions pores;
  std::filesystem::path template_file;
  // The report template, read once per run (its reference conditions seed pores; the report
  // stage lays the sheet out with it).
  report::Template layout;
  nlohmann::ordered_json effective;  // all of the above, as recorded in results.json
  // Where each work setting ("fit.bootstrap_resamples", ...) is written; {job file, 0, 0} when
  // the default is used. For the messages of CheckWorkBudget.
  std::map<std::string, SourceLocation> work_keys;
};

// Reads [equilibrium], [fit], [pores] and [report] of the job file over the defaults and the
// template (reference conditions, units). Unknown keys are InputErrors naming the key.
JobSettings LoadJobSettings(const std::filesystem::path& job_file, const ingest::JobSpec& job,
                            const std::filesystem::path& output_dir);

// The cost of a job in work units (README, "Cost of a job"): fits (every model of every fit
// group refitted 1 + bootstrap_resamples + monte_carlo_draws times over its points, and its
// band evaluated at band_points for each refit) and the pore distributions (grid_points x
// (1 + band_draws) per group). One unit is one band point of one refit, about 70 ns on one core
// of the reference machine (2-vCPU Debian 12 VM, GCC 12; measured 2026-12-03 on the
// wood_fibre_board_23C_40C demo: band_points 200 -> 1000 added 3.4 s for 5.1e7 band points).
struct WorkEstimate {
  double fit_units = 0.0;
  double pore_units = 0.0;
  double total() const { return fit_units + pore_units; }
};
WorkEstimate EstimateWork(const JobSettings& settings, const reduce::ReducedIsotherms& reduced);
// About 35 s of one core on the reference machine; the demo jobs need 1e6..4e7.
inline constexpr double kMaxWorkUnits = 5e8;

// Throws InputError when EstimateWork exceeds kMaxWorkUnits, located at the work setting that
// contributes most (or at the job file when only defaults are used) and naming the estimate.
// `make` and `check` both call it after the reduce stage.
void CheckWorkBudget(const JobSettings& settings, const reduce::ReducedIsotherms& reduced);

// Progress callback: stage name ("ingest", ...), 0-based stage index, number of stages.
using ProgressCallback = std::function<void(const std::string& stage, int index, int count)>;

// The stages in the order they run (the progress callback's names and indices).
inline constexpr std::array<const char*, 6> kStageNames = {"ingest", "equilibrate", "reduce",
                                                           "fit",    "pores",       "report"};

// The stages `make` and `check` share, run in the one order: job spec, stage settings, every
// data file (the inputs list: job file, data files, then the template, as results.json lists
// them), equilibria, moisture contents, and the cost-of-a-job check.
struct PreparedJob {
  ingest::JobSpec job;
  JobSettings settings;
  ingest::IngestResult ingested;
  equilibrate::EquilibriumSet equilibria;
  reduce::ReducedIsotherms reduced;
  std::vector<Diagnostic> warnings;  // of these stages, in stage order
};
PreparedJob PrepareJob(const std::filesystem::path& job_file,
                       const std::filesystem::path& output_dir, const ProgressCallback& progress);
// The same for a job spec already read (ingest::LoadJobSpec): the job file is not parsed again.
PreparedJob PrepareJob(ingest::JobSpec job, const std::filesystem::path& output_dir,
                       const ProgressCallback& progress);

struct RunOptions {
  std::filesystem::path output_dir;  // recorded (relative job path) in results.json
  ProgressCallback progress;         // may be empty
};

// Everything a run produced, in memory.
struct RunResult {
  ingest::JobSpec job;
  report::ReportArtifacts artifacts;
  std::vector<Diagnostic> warnings;  // of every stage
  std::string log;                   // run log text (written as run.log)
  // Job file, its folder, data files and template: what an output folder must never be,
  // contain or replace.
  std::vector<std::filesystem::path> input_files;
};

// Paths an output folder must never be or contain for this job: the job file, its
// folder and every data file it names.
std::vector<std::filesystem::path> ProtectedInputs(const ingest::JobSpec& job);

// Runs the whole pipeline on one job file; throws InputError (bad input) or
// ComputationError (fit failure). Writes nothing.
RunResult RunJob(const std::filesystem::path& job_file, const RunOptions& options);
// The same for a job spec already read (ingest::LoadJobSpec): the job file is not parsed again.
RunResult RunJob(ingest::JobSpec job, const RunOptions& options);

// The marker file inside every output folder: first line "sorbtrace output folder", then
// "job_id: ID" and one "file: NAME" line per file written.
inline constexpr char kOutputMarkerName[] = ".sorbtrace-output";

// Folder name for a job id: ASCII letters, digits, '-', '_' and '.' kept, every other byte
// replaced by '_', no leading '.', at most 100 characters, "job" when nothing is left.
std::string OutputFolderName(const std::string& job_id);

// Throws InputError (exit 3, nothing written) unless `output_dir` may receive the output of
// job `job_id`: it must not be or contain "/", the home folder, the current folder, or any
// of `inputs`; must not lie below a file; and if it exists, it must be a real folder that
// is empty or holds only what sorbtrace wrote for the same job (marker, output_dir.cc).
void CheckOutputFolder(const std::filesystem::path& output_dir, const std::string& job_id,
                       const std::vector<std::filesystem::path>& inputs);

// Writes a run's artefacts into output_dir after CheckOutputFolder: builds a complete
// sibling folder, then swaps it in atomically (renameat2 RENAME_EXCHANGE); an earlier folder
// is never half-overwritten. Write failures (disk full, read-only) throw OutputError and
// leave no staging folder behind.
void WriteOutputDirectory(const RunResult& result, const std::filesystem::path& output_dir);

// Where templates are looked up by name: $SORBTRACE_TEMPLATE_DIR, else the source tree's
// templates/ (compiled in).
std::filesystem::path ResolveTemplate(const std::string& name_or_path,
                                      const std::filesystem::path& job_dir);

}  // namespace sorbtrace::run
