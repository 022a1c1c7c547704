// `sorbtrace check JOB [--json]`: validates a job and its data files without fitting or
// writing anything. Loads the job and its stage settings, ingests every data file, finds the
// equilibria and reduces them to moisture contents, then prints what it found: data sets,
// specimens and dry masses, steps (equilibrated / extrapolated / not), equilibria and
// warnings. Bad input is an InputError, which main() prints and maps to exit code 3.
#include <fmt/format.h>

#include <CLI/CLI.hpp>
#include <algorithm>
#include <cstdio>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>

#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"
#include "pipeline/common/number_text.h"
#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/physics/physics.h"
#include "pipeline/reduce/reduce.h"
#include "pipeline/report/report.h"
#include "pipeline/run/commands.h"
#include "pipeline/run/run.h"

namespace sorbtrace::run {
namespace {

using physics::kPercent;
using physics::kSecondsPerHour;

struct CheckArguments {
  std::string job_file;
  bool json = false;
};

std::string_view MethodText(ingest::Method method) {
  return method == ingest::Method::kDesiccator ? "desiccator" : "vapor_log";
}

std::string_view Status(const equilibrate::EquilibriumPoint& point) {
  if (point.extrapolated) return "extrapolated";
  return point.equilibrated ? "equilibrated" : "not equilibrated";
}

struct DataSetCounts {
  int steps = 0;
  std::int64_t rows = 0;
  std::vector<std::string> specimens;
};

DataSetCounts Count(const ingest::IngestResult& in, const std::string& id) {
  DataSetCounts counts;
  for (const auto& series : in.desiccator_series) {
    if (series.dataset_id != id) continue;
    counts.steps += static_cast<int>(series.steps.size());
    for (const auto& step : series.steps) {
      counts.rows += static_cast<std::int64_t>(step.weighings.size());
      if (std::find(counts.specimens.begin(), counts.specimens.end(), step.specimen_id) ==
          counts.specimens.end()) {
        counts.specimens.push_back(step.specimen_id);
      }
    }
  }
  for (const auto& log : in.vapor_logs) {
    if (log.dataset_id != id) continue;
    counts.steps += static_cast<int>(log.steps.size());
    counts.rows += log.num_rows;
    counts.specimens.push_back(log.specimen_id);
  }
  return counts;
}

std::string JoinIds(const std::vector<std::string>& ids) {
  std::string out;
  for (const auto& id : ids) out += (out.empty() ? "" : ", ") + id;
  return out;
}

std::vector<Diagnostic> AllWarnings(const ingest::IngestResult& in,
                                    const equilibrate::EquilibriumSet& eq,
                                    const reduce::ReducedIsotherms& reduced) {
  std::vector<Diagnostic> all = in.summary.warnings;
  all.insert(all.end(), eq.summary.warnings.begin(), eq.summary.warnings.end());
  all.insert(all.end(), reduced.summary.warnings.begin(), reduced.summary.warnings.end());
  return all;
}

void PrintText(const ingest::IngestResult& in, const equilibrate::EquilibriumSet& eq,
               const reduce::ReducedIsotherms& reduced) {
  const ingest::JobSpec& job = in.job;
  std::string out;
  out += fmt::format("job {}: {}\n", job.job_id, job.material_name);
  out += fmt::format("inputs: {}\n", in.inputs.size());
  for (const auto& input : in.inputs) {
    out += fmt::format("  {:<10} {}  {} bytes  sha256 {}\n", input.role, input.path,
                       input.size_bytes, input.sha256);
  }
  out += fmt::format("datasets: {}\n", job.datasets.size());
  for (const auto& dataset : job.datasets) {
    const DataSetCounts counts = Count(in, dataset.id);
    out +=
        fmt::format("  {:<20} {:<10} {:6.2f} degC  {}  specimens {}; {} steps; {} {}\n", dataset.id,
                    MethodText(dataset.method), physics::KelvinToCelsius(dataset.temperature_K),
                    dataset.file_as_written, JoinIds(counts.specimens), counts.steps, counts.rows,
                    dataset.method == ingest::Method::kDesiccator ? "weighings" : "rows");
  }
  out += fmt::format("specimens: {}\n", eq.dry_masses.size());
  for (const auto& dry : eq.dry_masses) {
    out += fmt::format("  {:<10} dry mass {:.6f} g  {}{}\n", dry.specimen_id, dry.mass_g,
                       dry.method, dry.equilibrated ? "" : "  [NOT at constant mass]");
  }
  const auto& s = eq.summary;
  out += fmt::format("steps: {} ({} equilibrated, {} extrapolated, {} not equilibrated)\n",
                     s.num_steps, s.num_equilibrated, s.num_extrapolated, s.num_not_equilibrated);
  out += "equilibria:\n";
  out += fmt::format("  {:<20} {:<10} {:>4} {:<12} {:<10} {:>5} {:>7} {:>7} {:>12} {:>9}  {}\n",
                     "dataset", "specimen", "step", "atmosphere", "branch", "cycle", "T/degC",
                     "RH/%", "mass/g", "t_eq/h", "status");
  for (const auto& p : eq.points) {
    out += fmt::format(
        "  {:<20} {:<10} {:>4} {:<12} {:<10} {:>5} {:7.2f} {:7.2f} {:12.6f} {:9.2f}  {}\n",
        p.dataset_id, p.specimen_id, p.step_index + 1, p.step_label, ingest::BranchName(p.branch),
        p.cycle, physics::KelvinToCelsius(p.temperature_K), p.rh_fraction * kPercent, p.mass_g,
        p.time_to_equilibrium_s / kSecondsPerHour, Status(p));
  }
  out += fmt::format("isotherm points: {} (specimen points excluded: {})\n",
                     reduced.summary.num_points, reduced.summary.num_excluded);
  for (const auto& p : reduced.points) {
    // Value ± U rounded as on the datasheet (JCGM 100:2008 7.2.6; report::FormatWithUncertainty).
    out += fmt::format(
        "  {:<20} {:<12} {:<10} cycle {}  RH {} %  u {} kg/kg (k = {}, n = {})\n", p.dataset_id,
        p.step_label, ingest::BranchName(p.branch), p.cycle,
        report::FormatWithUncertainty(p.rh_fraction * kPercent, p.expanded_u_rh_fraction * kPercent,
                                      common::kUncertaintySignificantDigits),
        report::FormatWithUncertainty(p.moisture_kg_per_kg, p.expanded_u_moisture_kg_per_kg,
                                      common::kUncertaintySignificantDigits),
        common::CoverageText(p.coverage_factor), p.num_specimens);
  }
  if (!reduced.retention.empty()) {
    out += fmt::format("retention points: {}\n", reduced.retention.size());
  }
  const std::vector<Diagnostic> warnings = AllWarnings(in, eq, reduced);
  out += fmt::format("warnings: {}\n", warnings.size());
  for (const auto& w : warnings) out += "  " + FormatDiagnostic(w) + "\n";
  std::fputs(out.c_str(), stdout);
}

nlohmann::ordered_json Json(const ingest::IngestResult& in, const equilibrate::EquilibriumSet& eq,
                            const reduce::ReducedIsotherms& reduced) {
  const ingest::JobSpec& job = in.job;
  nlohmann::ordered_json j;
  j["job"] = {{"id", job.job_id}, {"material", job.material_name}, {"file", job.job_file.string()}};
  j["inputs"] = nlohmann::ordered_json::array();
  for (const auto& input : in.inputs) {
    j["inputs"].push_back({{"role", input.role},
                           {"path", input.path},
                           {"size_bytes", input.size_bytes},
                           {"sha256", input.sha256}});
  }
  j["datasets"] = nlohmann::ordered_json::array();
  for (const auto& dataset : job.datasets) {
    const DataSetCounts counts = Count(in, dataset.id);
    j["datasets"].push_back({{"id", dataset.id},
                             {"method", MethodText(dataset.method)},
                             {"file", dataset.file_as_written},
                             {"temperature_C", physics::KelvinToCelsius(dataset.temperature_K)},
                             {"specimens", counts.specimens},
                             {"steps", counts.steps},
                             {"rows", counts.rows}});
  }
  j["specimens"] = nlohmann::ordered_json::array();
  for (const auto& dry : eq.dry_masses) {
    j["specimens"].push_back({{"id", dry.specimen_id},
                              {"dry_mass_g", dry.mass_g},
                              {"u_dry_mass_g", dry.u_mass_g},
                              {"dry_mass_method", dry.method},
                              {"dry_mass_equilibrated", dry.equilibrated}});
  }
  const auto& s = eq.summary;
  j["steps"] = {{"total", s.num_steps},
                {"equilibrated", s.num_equilibrated},
                {"extrapolated", s.num_extrapolated},
                {"not_equilibrated", s.num_not_equilibrated}};
  j["equilibria"] = nlohmann::ordered_json::array();
  for (const auto& p : eq.points) {
    j["equilibria"].push_back({{"dataset", p.dataset_id},
                               {"specimen", p.specimen_id},
                               {"step", p.step_index + 1},
                               {"atmosphere", p.step_label},
                               {"branch", ingest::BranchName(p.branch)},
                               {"cycle", p.cycle},
                               {"temperature_C", physics::KelvinToCelsius(p.temperature_K)},
                               {"rh_percent", p.rh_fraction * kPercent},
                               {"u_rh_percent", p.u_rh_fraction * kPercent},
                               {"rh_source", p.rh_source},
                               {"mass_g", p.mass_g},
                               {"u_mass_extrapolation_g", p.u_mass_extrapolation_g},
                               {"u_mass_drift_g", p.u_mass_drift_g},
                               {"time_to_equilibrium_h", p.time_to_equilibrium_s / kSecondsPerHour},
                               {"status", Status(p)},
                               {"flags", p.flags},
                               {"file", p.where.file},
                               {"line", p.where.line}});
  }
  j["isotherm_points"] = nlohmann::ordered_json::array();
  for (const auto& p : reduced.points) {
    j["isotherm_points"].push_back({{"dataset", p.dataset_id},
                                    {"step", p.step_index + 1},
                                    {"atmosphere", p.step_label},
                                    {"branch", ingest::BranchName(p.branch)},
                                    {"cycle", p.cycle},
                                    {"rh_percent", p.rh_fraction * kPercent},
                                    {"moisture_kg_per_kg", p.moisture_kg_per_kg},
                                    {"u_moisture_kg_per_kg", p.u_moisture_kg_per_kg},
                                    {"num_specimens", p.num_specimens},
                                    {"equilibrated", p.equilibrated},
                                    {"extrapolated", p.extrapolated}});
  }
  j["excluded_specimen_points"] = reduced.summary.num_excluded;
  j["retention_points"] = reduced.retention.size();
  j["warnings"] = nlohmann::ordered_json::array();
  for (const auto& w : AllWarnings(in, eq, reduced)) {
    j["warnings"].push_back({{"file", w.where.file},
                             {"line", w.where.line},
                             {"column", w.where.column},
                             {"message", w.message},
                             {"expected", w.expected}});
  }
  return j;
}

int Check(const CheckArguments& args) {
  // The same stages in the same order as `make` (so `check` refuses what `make` refuses and
  // lists the same inputs).
  const PreparedJob prepared = PrepareJob(args.job_file, {}, {});
  const ingest::IngestResult& ingested = prepared.ingested;
  const equilibrate::EquilibriumSet& equilibria = prepared.equilibria;
  const reduce::ReducedIsotherms& reduced = prepared.reduced;
  if (args.json) {
    std::fputs((Json(ingested, equilibria, reduced).dump(2) + "\n").c_str(), stdout);
  } else {
    PrintText(ingested, equilibria, reduced);
  }
  return static_cast<int>(ExitCode::kOk);
}

}  // namespace

void AddCheckCommand(CLI::App& app, int& exit_code) {
  auto args = std::make_shared<CheckArguments>();
  CLI::App* command = app.add_subcommand(
      "check",
      "validate a job file and its data (ingest, equilibria, moisture contents); "
      "writes nothing");
  command->add_option("job", args->job_file, "job file (TOML)")->required();
  command->add_flag("--json", args->json, "print the findings as JSON");
  command->callback([args, &exit_code] { exit_code = Check(*args); });
}

}  // namespace sorbtrace::run
