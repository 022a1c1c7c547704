// One job run: ingest -> equilibrate -> reduce -> fit -> pores -> report, in memory.
#include <cstdlib>
#include <ctime>
#include <filesystem>
#include <string>

#include "pipeline/common/files.h"
#include "pipeline/run/run.h"
#include "pipeline/run/version.h"

namespace sorbtrace::run {
namespace {

// The document date printed on the sheet: the job's issue date, else SOURCE_DATE_EPOCH
// (reproducible-builds.org convention), else "undated". Never the wall clock, so the same
// inputs always give the same bytes.
std::string DocumentDate(const ingest::JobSpec& job) {
  if (!job.issue_date.empty()) return job.issue_date;
  if (const char* epoch = std::getenv("SOURCE_DATE_EPOCH"); epoch != nullptr && *epoch != '\0') {
    char* end = nullptr;
    const long long seconds = std::strtoll(epoch, &end, 10);
    if (end != nullptr && *end == '\0' && seconds >= 0) {
      const std::time_t time = static_cast<std::time_t>(seconds);
      std::tm utc{};
      gmtime_r(&time, &utc);
      char buffer[16];
      std::strftime(buffer, sizeof buffer, "%Y-%m-%d", &utc);
      return buffer;
    }
  }
  return "undated";
}

void Append(std::vector<Diagnostic>& to, const std::vector<Diagnostic>& from) {
  to.insert(to.end(), from.begin(), from.end());
}

}  // namespace

std::vector<std::filesystem::path> ProtectedInputs(const ingest::JobSpec& job) {
  std::vector<std::filesystem::path> paths = {job.job_file, job.job_file.parent_path()};
  if (paths.back().empty()) paths.back() = ".";
  for (const auto& dataset : job.datasets) paths.push_back(dataset.file);
  if (job.retention) paths.push_back(job.retention->file);
  return paths;
}

namespace {

// PrepareJob after the job spec is read (stage 0, "ingest", already reported).
PreparedJob PrepareLoadedJob(ingest::JobSpec job, const std::filesystem::path& output_dir,
                             const ProgressCallback& progress) {
  auto stage = [&progress](int index) {
    if (progress) progress(kStageNames[index], index, static_cast<int>(kStageNames.size()));
  };
  PreparedJob prepared;
  prepared.job = std::move(job);
  prepared.settings = LoadJobSettings(prepared.job.job_file, prepared.job, output_dir);
  prepared.ingested = ingest::Ingest(prepared.job, prepared.settings.ingest);
  {
    const std::string content = ReadWholeFile(prepared.settings.template_file);
    ingest::InputFileRecord record;
    record.role = "template";
    record.path = prepared.settings.template_file.filename().string();
    record.sha256 = Sha256Hex(content);
    record.size_bytes = content.size();
    prepared.ingested.inputs.push_back(record);
  }
  Append(prepared.warnings, prepared.ingested.summary.warnings);

  stage(1);
  prepared.equilibria = equilibrate::Equilibrate(prepared.ingested, prepared.settings.equilibrate);
  Append(prepared.warnings, prepared.equilibria.summary.warnings);

  stage(2);
  prepared.reduced =
      reduce::Reduce(prepared.ingested, prepared.equilibria, prepared.settings.reduce);
  Append(prepared.warnings, prepared.reduced.summary.warnings);
  CheckWorkBudget(prepared.settings, prepared.reduced);
  return prepared;
}

void ReportFirstStage(const ProgressCallback& progress) {
  if (progress) progress(kStageNames[0], 0, static_cast<int>(kStageNames.size()));
}

}  // namespace

PreparedJob PrepareJob(const std::filesystem::path& job_file,
                       const std::filesystem::path& output_dir, const ProgressCallback& progress) {
  ReportFirstStage(progress);
  RequireRegularFile(job_file, job_file.string(), "a TOML job file");
  return PrepareLoadedJob(ingest::LoadJobSpec(job_file), output_dir, progress);
}

PreparedJob PrepareJob(ingest::JobSpec job, const std::filesystem::path& output_dir,
                       const ProgressCallback& progress) {
  ReportFirstStage(progress);
  return PrepareLoadedJob(std::move(job), output_dir, progress);
}

namespace {

// RunJob after PrepareJob: fit, pores, report.
RunResult RunPreparedJob(const PreparedJob& prepared, const RunOptions& options) {
  const std::filesystem::path& job_file = prepared.job.job_file;
  auto progress = [&options](int index) {
    if (options.progress) {
      options.progress(kStageNames[index], index, static_cast<int>(kStageNames.size()));
    }
  };
  RunResult result;
  result.job = prepared.job;
  result.warnings = prepared.warnings;
  result.input_files = ProtectedInputs(result.job);
  result.input_files.push_back(prepared.settings.template_file);
  const JobSettings& settings = prepared.settings;
  const ingest::IngestResult& ingested = prepared.ingested;
  const equilibrate::EquilibriumSet& equilibria = prepared.equilibria;
  const reduce::ReducedIsotherms& reduced = prepared.reduced;

  progress(3);
  const fit::IsothermFits fits = fit::FitIsotherms(reduced, settings.fit);
  Append(result.warnings, fits.summary.warnings);

  progress(4);
  const pores::PoreAnalysis pore_analysis = pores::AnalysePores(reduced, fits, settings.pores);
  Append(result.warnings, pore_analysis.summary.warnings);

  progress(5);
  report::ReportInputs inputs;
  inputs.ingested = &ingested;
  inputs.equilibria = &equilibria;
  inputs.reduced = &reduced;
  inputs.fits = &fits;
  inputs.pores = &pore_analysis;
  inputs.effective_settings = settings.effective;
  // Where `sorbtrace verify` finds the job again: relative to the output folder.
  const std::filesystem::path out_abs = std::filesystem::absolute(options.output_dir);
  const std::filesystem::path job_abs = std::filesystem::absolute(job_file);
  inputs.effective_settings["job_file"] =
      job_abs.lexically_normal().lexically_relative(out_abs.lexically_normal()).generic_string();
  inputs.software_version = std::string("sorbtrace ") + kVersion;
  report::ReportOptions report_options;
  report_options.document_date = DocumentDate(result.job);
  result.artifacts = report::ComposeReport(inputs, settings.layout, report_options);
  Append(result.warnings, result.artifacts.warnings);

  result.log = "sorbtrace " + std::string(kVersion) + "\njob: " + job_file.string() + "\n";
  for (const auto& warning : result.warnings) result.log += FormatDiagnostic(warning) + "\n";
  result.log += "datasheet: " + std::to_string(result.artifacts.num_pages) + " pages\n";
  return result;
}

}  // namespace

RunResult RunJob(const std::filesystem::path& job_file, const RunOptions& options) {
  return RunPreparedJob(PrepareJob(job_file, options.output_dir, options.progress), options);
}

RunResult RunJob(ingest::JobSpec job, const RunOptions& options) {
  return RunPreparedJob(PrepareJob(std::move(job), options.output_dir, options.progress), options);
}

}  // namespace sorbtrace::run
