// Deviations from the method (ISO/IEC 17025:2017, 7.8.3.1 a: "deviations from, additions to,
// or exclusions from the method"): what the stage results record — steps that did not reach
// equilibrium, steps extrapolated to their asymptote, equilibrium settings that differ from
// the method's criteria, models the data could not support — each once, in plain sentences.
#include <fmt/format.h>

#include <cmath>
#include <string>
#include <vector>

#include "pipeline/physics/physics.h"
#include "pipeline/report/format.h"
#include "pipeline/report/sections.h"

namespace sorbtrace::report::internal {
namespace {

using Json = nlohmann::ordered_json;

// The recorded value of [section] key, or `fallback` when the run recorded none.
double RecordedNumber(const Json& settings, const char* section, const char* key, double fallback) {
  if (!settings.is_object() || !settings.contains(section) || !settings[section].is_object() ||
      !settings[section].contains(key) || !settings[section][key].is_number()) {
    return fallback;
  }
  return settings[section][key].get<double>();
}

bool RecordedBool(const Json& settings, const char* section, const char* key, bool fallback) {
  if (!settings.is_object() || !settings.contains(section) || !settings[section].is_object() ||
      !settings[section].contains(key) || !settings[section][key].is_boolean()) {
    return fallback;
  }
  return settings[section][key].get<bool>();
}

// "data set D, specimen S, step N (label, branch)": steps counted from 1 as in the data file.
std::string StepName(const equilibrate::EquilibriumPoint& p) {
  return fmt::format("data set {}, specimen {}, step {} ({}, {})", p.dataset_id, p.specimen_id,
                     p.step_index + 1, p.step_label, BranchLabel(p.branch));
}

void AddStepDeviations(const ReportInputs& inputs, std::vector<std::string>& out) {
  if (inputs.equilibria == nullptr) return;
  const bool kept =
      RecordedBool(inputs.effective_settings, "equilibrium", "include_not_equilibrated", false);
  for (const equilibrate::EquilibriumPoint& p : inputs.equilibria->points) {
    if (p.extrapolated) {
      out.push_back(
          fmt::format("{}: ended before the equilibrium criterion was met; its equilibrium mass is "
                      "extrapolated from the mass trend of the step, and the uncertainty of the "
                      "extrapolation is included.",
                      StepName(p)));
    } else if (!p.equilibrated) {
      const bool dry = p.branch == ingest::Branch::kDrying;
      out.push_back(
          fmt::format("{}: did not meet the equilibrium criterion; {}.", StepName(p),
                      dry ? "its mass is used as the dry reference, marked \"not at constant mass\""
                      : kept ? "kept in the isotherm, marked (include_not_equilibrated = true)"
                             : "excluded from the isotherm"));
    }
  }
}

// Constant mass (desiccator data sets) and, for mass logs, the rate criterion in place of
// constant mass. The method's values are the built-in defaults of equilibrate::
// EquilibrateOptions (ISO 12571 constant mass; see equilibrate.h for the source).
void AddCriterionDeviations(const ReportInputs& inputs, std::vector<std::string>& out) {
  if (inputs.ingested == nullptr) return;
  const ingest::JobSpec& job = inputs.ingested->job;
  bool desiccator = false;
  bool log = false;
  for (const ingest::DataSetSpec& d : job.datasets) {
    (d.method == ingest::Method::kDesiccator ? desiccator : log) = true;
  }
  const Json& settings = inputs.effective_settings;
  const equilibrate::EquilibrateOptions method;
  if (desiccator) {
    const double limit = method.mass_change_limit_fraction * physics::kPercent;
    const double interval = method.min_weighing_interval_s / physics::kSecondsPerHour;
    const double used_limit =
        RecordedNumber(settings, "equilibrium", "mass_change_limit_percent", limit);
    const double used_interval =
        RecordedNumber(settings, "equilibrium", "min_weighing_interval_h", interval);
    const double used_count = RecordedNumber(settings, "equilibrium", "min_weighings",
                                             static_cast<double>(method.min_weighings));
    if (used_limit != limit || used_interval != interval ||
        used_count != static_cast<double>(method.min_weighings)) {
      out.push_back(fmt::format(
          "Constant mass was judged by {} weighings at least {} h apart agreeing within {} %, "
          "where the method asks for {} weighings at least {} h apart within {} %.",
          FormatSetting(used_count), FormatSetting(used_interval), FormatSetting(used_limit),
          method.min_weighings, FormatSetting(interval), FormatSetting(limit)));
    }
  }
  const bool constant_mass_method =
      job.test_method == ingest::TestMethod::kIso12571Desiccator ||
      job.test_method == ingest::TestMethod::kIso12571ClimaticChamber ||
      job.test_method == ingest::TestMethod::kAstmC1498;
  if (log && constant_mass_method) {
    out.push_back(fmt::format(
        "The continuous mass logs were judged at equilibrium when the rate of mass change fell "
        "below {} %/min over {} min (common practice for vapour-sorption balances), not by the "
        "constant-mass criterion of {}.",
        FormatSetting(RecordedNumber(settings, "equilibrium", "rate_limit_percent_per_min",
                                     method.rate_limit_fraction_per_min * physics::kPercent)),
        FormatSetting(RecordedNumber(settings, "equilibrium", "rate_window_min",
                                     method.rate_window_s / physics::kSecondsPerMinute)),
        ingest::TestMethodCitation(job.test_method)));
  }
}

void AddModelDeviations(const ReportInputs& inputs, std::vector<std::string>& out) {
  if (inputs.fits == nullptr) return;
  const fit::IsothermFits& fits = *inputs.fits;
  for (const fit::ModelFit& mf : fits.fits) {
    if (mf.result.summary.termination != fitters::FitTermination::kTooFewPoints) continue;
    const std::string title = mf.info.title.empty() ? mf.model_name : mf.info.title;
    const std::string group =
        mf.group_index >= 0 && static_cast<size_t>(mf.group_index) < fits.groups.size()
            ? GroupLabel(fits.groups[static_cast<size_t>(mf.group_index)])
            : "";
    const size_t needed = mf.info.parameters.size() + 1;  // n > p points for p parameters
    out.push_back(
        fmt::format("{} not evaluated ({}): {} points in its humidity range, at least {} "
                    "needed.",
                    title, group, mf.used_observations.size(), needed));
  }
}

}  // namespace

std::vector<std::string> MethodDeviations(const ReportInputs& inputs) {
  std::vector<std::string> out;
  AddStepDeviations(inputs, out);
  AddCriterionDeviations(inputs, out);
  AddModelDeviations(inputs, out);
  return out;
}

void BuildDeviationsSection(const SectionContext& ctx, Section& section) {
  if (ctx.sheet.deviations.empty()) {
    section.blocks.emplace_back(ParagraphBlock{
        "None: every step met its equilibrium criterion, the method's criteria were applied "
        "as written, and every model of the job was evaluated.",
        8.5});
    return;
  }
  section.blocks.emplace_back(ParagraphBlock{
      "The following departures from the method apply to the results of this report:", 8.5});
  section.blocks.emplace_back(BulletsBlock{ctx.sheet.deviations, 8.0});
}

}  // namespace sorbtrace::report::internal
