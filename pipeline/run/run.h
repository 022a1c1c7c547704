// Run stage: ties the stages into one job run (ingest -> equilibrate -> reduce -> fit ->
// pores -> report), reads the stage settings of the job file, and writes the outputs into
// an output folder atomically (a complete new folder replaces the old one in one step).
#pragma once

#include <filesystem>
#include <functional>
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
  nlohmann::ordered_json effective;  // all of the above, as recorded in results.json
};

// Reads [equilibrium], [fit], [pores] and [report] of the job file over the defaults and the
// template (reference conditions, units). Unknown keys are InputErrors naming the key.
JobSettings LoadJobSettings(const std::filesystem::path& job_file, const ingest::JobSpec& job,
                            const std::filesystem::path& output_dir);

// Progress callback: stage name ("ingest", ...), 0-based stage index, number of stages.
using ProgressCallback = std::function<void(const std::string& stage, int index, int count)>;

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
};

// Runs the whole pipeline on one job file; throws InputError (bad input) or
// ComputationError (fit failure). Writes nothing.
RunResult RunJob(const std::filesystem::path& job_file, const RunOptions& options);

// Writes a run's artefacts into output_dir: builds a complete sibling folder, then swaps it
// in atomically (renameat2 RENAME_EXCHANGE); an earlier folder is never half-overwritten.
void WriteOutputDirectory(const RunResult& result, const std::filesystem::path& output_dir);

// Where templates are looked up by name: $SORBTRACE_TEMPLATE_DIR, else the source tree's
// templates/ (compiled in).
std::filesystem::path ResolveTemplate(const std::string& name_or_path,
                                      const std::filesystem::path& job_dir);

}  // namespace sorbtrace::run
