// Ingest(): reads every file of a job and checks that each specimen has a dry-mass source.
#include "pipeline/ingest/ingest.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <stdexcept>
#include <string>
#include <system_error>

#include "pipeline/common/files.h"
#include "pipeline/ingest/plausibility.h"

namespace sorbtrace::ingest {
namespace {

InputFileRecord Record(std::string role, const std::filesystem::path& path,
                       std::string path_as_written) {
  InputFileRecord record;
  record.role = std::move(role);
  record.path = std::move(path_as_written);
  std::error_code ec;
  record.size_bytes = static_cast<std::uint64_t>(std::filesystem::file_size(path, ec));
  if (ec) {
    throw InputError(SourceLocation{path.string(), 0, 0}, "cannot read the file size",
                     "a readable file");
  }
  record.sha256 = Sha256HexOfFile(path);
  return record;
}

bool IsOvenStep(const DesiccatorStep& step) {
  return step.branch == Branch::kDrying && !step.salt && !step.set_rh_fraction;
}

bool IsZeroRhStep(const DesiccatorStep& step) {
  return step.branch == Branch::kDrying && step.set_rh_fraction && *step.set_rh_fraction == 0.0;
}

// Checks that `specimen` has what job.dry_mass_method needs; false + *missing says what not.
bool HasDryMassSource(const IngestResult& result, const SpecimenSpec& specimen,
                      std::string* missing) {
  const DesiccatorStep* last_step = nullptr;  // the specimen's last desiccator step
  bool oven = false;
  bool zero_rh = false;
  bool final_drying = false;
  for (const DesiccatorSeries& series : result.desiccator_series) {
    for (const DesiccatorStep& step : series.steps) {
      if (step.specimen_id != specimen.id) continue;
      oven = oven || IsOvenStep(step);
      zero_rh = zero_rh || IsZeroRhStep(step);
      last_step = &step;
    }
  }
  if (last_step != nullptr && last_step->branch == Branch::kDrying) final_drying = true;
  for (const VaporLog& log : result.vapor_logs) {
    if (log.specimen_id != specimen.id) continue;
    for (const VaporLogStep& step : log.steps) zero_rh = zero_rh || step.branch == Branch::kDrying;
    if (!log.steps.empty() && log.steps.back().branch == Branch::kDrying) final_drying = true;
  }
  switch (result.job.dry_mass_method) {
    case DryMassMethod::kOvenDrying:
      *missing =
          "dry_mass_g in its [[specimen]] entry or weighings with atmosphere oven and "
          "branch drying (dry_mass_method = \"oven\")";
      return specimen.dry_mass_g.has_value() || oven;
    case DryMassMethod::kDesiccantStep:
      *missing =
          "a desiccant (or rh:0%) step in a desiccator file or a 0 % step in the "
          "specimen's vapour log (dry_mass_method = \"desiccant_step\")";
      return zero_rh;
    case DryMassMethod::kFinalDryingStep:
      *missing =
          "a drying step as the last step of the specimen in a desiccator file or its "
          "vapour log (dry_mass_method = \"final_drying_step\")";
      return final_drying;
  }
  return false;
}

}  // namespace

bool IngestOptions::IsValid(std::string* error) const {
  if (!(std::isfinite(log_block_s) && log_block_s > 0.0)) {
    *error = "log_block_s must be positive";
    return false;
  }
  if (!(log_gap_warning_s > 0.0)) {
    *error = "log_gap_warning_s must be positive";
    return false;
  }
  return true;
}

IngestResult Ingest(const JobSpec& job, const IngestOptions& options) {
  std::string error;
  if (!options.IsValid(&error)) throw std::invalid_argument("IngestOptions: " + error);
  IngestResult result;
  result.job = job;
  result.inputs.push_back(Record("job", job.job_file, job.job_file.filename().string()));
  // Every data file is recorded (SHA-256) before it is read: plausibility rule R1 compares them.
  std::vector<const DataSetSpec*> sources;
  for (const DataSetSpec& dataset : job.datasets) {
    sources.push_back(&dataset);
    result.inputs.push_back(
        Record(dataset.method == Method::kDesiccator ? "desiccator" : "vapor_log", dataset.file,
               dataset.file_as_written));
  }
  if (job.retention) {
    sources.push_back(&*job.retention);
    result.inputs.push_back(
        Record("retention", job.retention->file, job.retention->file_as_written));
  }
  internal::CheckDistinctDataSources(
      sources, std::vector<InputFileRecord>(result.inputs.begin() + 1, result.inputs.end()));

  std::vector<internal::SpecimenMasses> masses;  // for the plausibility rules across files
  for (const DataSetSpec& dataset : job.datasets) {
    if (dataset.method == Method::kDesiccator) {
      result.desiccator_series.push_back(internal::ReadDesiccatorSeries(job, dataset, &masses));
      for (const auto& step : result.desiccator_series.back().steps) {
        result.summary.rows_read += static_cast<std::int64_t>(step.weighings.size());
      }
      result.summary.num_steps += static_cast<int>(result.desiccator_series.back().steps.size());
    } else {
      result.vapor_logs.push_back(
          internal::ReadVaporLog(dataset, options, &result.summary, &masses));
      result.summary.rows_read += result.vapor_logs.back().num_rows;
      result.summary.num_steps += static_cast<int>(result.vapor_logs.back().steps.size());
    }
  }
  if (job.retention) {
    result.retention_points = ReadRetentionPoints(job, *job.retention);
    result.summary.rows_read += static_cast<std::int64_t>(result.retention_points.size());
  }

  for (const SpecimenSpec& specimen : job.specimens) {
    const bool has_data =
        std::any_of(result.desiccator_series.begin(), result.desiccator_series.end(),
                    [&](const DesiccatorSeries& series) {
                      return std::any_of(series.steps.begin(), series.steps.end(),
                                         [&](const DesiccatorStep& step) {
                                           return step.specimen_id == specimen.id;
                                         });
                    }) ||
        std::any_of(result.vapor_logs.begin(), result.vapor_logs.end(),
                    [&](const VaporLog& log) { return log.specimen_id == specimen.id; });
    if (!has_data) {
      result.summary.warnings.push_back(
          Diagnostic{Severity::kWarning, specimen.where,
                     "specimen '" + specimen.id + "' has no sorption data in any dataset",
                     "weighings or a vapour log of every declared specimen"});
      continue;
    }
    std::string missing;
    if (!HasDryMassSource(result, specimen, &missing)) {
      throw InputError(specimen.where, "no dry mass for specimen '" + specimen.id + "'", missing);
    }
  }
  internal::CheckAcrossFiles(result, masses);
  result.summary.num_specimens = static_cast<int>(job.specimens.size());
  return result;
}

}  // namespace sorbtrace::ingest
