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

// One step of a specimen as the dry-mass rule sees it.
struct DryingCandidate {
  std::string dataset_id;
  int step_index = 0;
  bool drying = false;
  bool oven = false;     // atmosphere "oven": neither a salt nor a stated RH
  bool zero_rh = false;  // desiccant, rh:0%, or a drying step of a vapour log
  bool last = false;     // the specimen's last step in its data set
};

void AddCandidates(const DesiccatorSeries& series, const std::string& specimen_id,
                   std::vector<DryingCandidate>& out) {
  const std::size_t first = out.size();
  for (const DesiccatorStep& step : series.steps) {
    if (step.specimen_id != specimen_id) continue;
    const bool drying = step.branch == Branch::kDrying;
    out.push_back({series.dataset_id, step.step_index, drying,
                   drying && !step.salt && !step.set_rh_fraction,
                   drying && step.set_rh_fraction && *step.set_rh_fraction == 0.0, false});
  }
  if (out.size() > first) out.back().last = true;
}

void AddCandidates(const VaporLog& log, const std::string& specimen_id,
                   std::vector<DryingCandidate>& out) {
  if (log.specimen_id != specimen_id) return;
  for (const VaporLogStep& step : log.steps) {
    const bool drying = step.branch == Branch::kDrying;
    out.push_back({log.dataset_id, step.step_index, drying, false, drying, false});
  }
  if (!log.steps.empty()) out.back().last = true;
}

// Every step of `specimen_id`, data sets in job order (then any not named by the job).
std::vector<DryingCandidate> StepsOf(const IngestResult& result, const std::string& specimen_id) {
  std::vector<DryingCandidate> steps;
  std::vector<std::string> order;
  for (const DataSetSpec& dataset : result.job.datasets) order.push_back(dataset.id);
  for (const DesiccatorSeries& series : result.desiccator_series)
    order.push_back(series.dataset_id);
  for (const VaporLog& log : result.vapor_logs) order.push_back(log.dataset_id);
  std::vector<std::string> done;
  for (const std::string& id : order) {
    if (std::find(done.begin(), done.end(), id) != done.end()) continue;
    done.push_back(id);
    for (const DesiccatorSeries& series : result.desiccator_series) {
      if (series.dataset_id == id) AddCandidates(series, specimen_id, steps);
    }
    for (const VaporLog& log : result.vapor_logs) {
      if (log.dataset_id == id) AddCandidates(log, specimen_id, steps);
    }
  }
  return steps;
}

// The source of one specimen with data; InputError when the method finds none.
DryMassSource SourceOf(const JobSpec& job, const SpecimenSpec& specimen,
                       const std::vector<DryingCandidate>& steps) {
  DryMassSource source;
  source.specimen_id = specimen.id;
  const DryingCandidate* chosen = nullptr;
  std::string missing;
  switch (job.dry_mass_method) {
    case DryMassMethod::kOvenDrying:
      if (specimen.dry_mass_g) {
        source.stated_mass_g = specimen.dry_mass_g;
        return source;
      }
      for (const DryingCandidate& step : steps) {
        if (chosen == nullptr && step.oven) chosen = &step;
      }
      missing =
          "dry_mass_g in its [[specimen]] entry or weighings with atmosphere oven and "
          "branch drying (dry_mass_method = \"oven\")";
      break;
    case DryMassMethod::kDesiccantStep:
      for (const DryingCandidate& step : steps) {
        if (chosen == nullptr && step.zero_rh) chosen = &step;
      }
      missing =
          "a desiccant (or rh:0%) step in a desiccator file or a 0 % step in the "
          "specimen's vapour log (dry_mass_method = \"desiccant_step\")";
      break;
    case DryMassMethod::kFinalDryingStep:
      for (const DryingCandidate& step : steps) {
        if (step.last && step.drying) chosen = &step;
      }
      missing =
          "a drying step as the last step of the specimen in a desiccator file or its "
          "vapour log (dry_mass_method = \"final_drying_step\")";
      break;
  }
  if (chosen == nullptr) {
    throw InputError(specimen.where, "no dry mass for specimen '" + specimen.id + "'", missing);
  }
  source.dataset_id = chosen->dataset_id;
  source.step_index = chosen->step_index;
  return source;
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

std::vector<DryMassSource> FindDryMassSources(const IngestResult& result,
                                              std::vector<Diagnostic>* warnings) {
  std::vector<DryMassSource> sources;
  for (const SpecimenSpec& specimen : result.job.specimens) {
    const std::vector<DryingCandidate> steps = StepsOf(result, specimen.id);
    if (steps.empty()) {
      if (warnings != nullptr) {
        warnings->push_back(
            Diagnostic{Severity::kWarning, specimen.where,
                       "specimen '" + specimen.id + "' has no sorption data in any dataset",
                       "weighings or a vapour log of every declared specimen"});
      }
      continue;
    }
    sources.push_back(SourceOf(result.job, specimen, steps));
  }
  return sources;
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
  if (job.lab_profile) {
    result.inputs.push_back(
        Record("lab_profile", job.lab_profile->file, job.lab_profile->file_as_written));
    if (!job.lab_profile->logo_file.empty()) {
      result.inputs.push_back(
          Record("lab_logo", job.lab_profile->logo_file, job.lab_profile->logo_as_written));
    }
  }

  std::vector<internal::SpecimenMasses> masses;  // for the plausibility rules across files
  for (const DataSetSpec& dataset : job.datasets) {
    if (dataset.method == Method::kDesiccator) {
      result.desiccator_series.push_back(internal::ReadDesiccatorSeries(job, dataset, &masses));
      for (const auto& step : result.desiccator_series.back().steps) {
        result.summary.rows_read += static_cast<std::int64_t>(step.weighings.size());
      }
      result.summary.num_steps += static_cast<int>(result.desiccator_series.back().steps.size());
    } else {
      result.vapor_logs.push_back(internal::ReadVaporLog(
          dataset, options, job.balance_standard_uncertainty_g, &result.summary, &masses));
      result.summary.rows_read += result.vapor_logs.back().num_rows;
      result.summary.num_steps += static_cast<int>(result.vapor_logs.back().steps.size());
    }
  }
  if (job.retention) {
    result.retention_points = ReadRetentionPoints(job, *job.retention);
    result.summary.rows_read += static_cast<std::int64_t>(result.retention_points.size());
  }

  FindDryMassSources(result, &result.summary.warnings);
  internal::CheckAcrossFiles(result, masses);
  result.summary.num_specimens = static_cast<int>(job.specimens.size());
  return result;
}

}  // namespace sorbtrace::ingest
