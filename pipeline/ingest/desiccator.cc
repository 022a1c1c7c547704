// Reader of desiccator weighing files: one line per weighing, specimens interleaved.
#include <algorithm>
#include <cstddef>
#include <limits>
#include <map>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "fmt/format.h"
#include "pipeline/ingest/csv_reader.h"
#include "pipeline/ingest/date_time.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/ingest/plausibility.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::ingest {
namespace {

using internal::ColumnRole;
using internal::CsvReader;

// Fewer weighings than this cannot show whether a step reached constant mass.
constexpr std::size_t kMinWeighingsPerStep = 2;

enum class AtmosphereKind { kSalt, kDesiccant, kOven, kStatedRh };

struct Atmosphere {
  AtmosphereKind kind = AtmosphereKind::kSalt;
  std::string salt;          // canonical, for kSalt
  double rh_fraction = 0.0;  // kStatedRh and kDesiccant (0)
  bool operator==(const Atmosphere&) const = default;
};

struct SpecimenState {
  bool has_row = false;
  int step_number = 0;
  std::size_t step = 0;  // index into the steps vector of the current step
  int num_steps = 0;
  double last_time_s = 0.0;
  std::int64_t last_line = 0;
  int num_weighings = 0;
  internal::UtcOffsetTracker offsets;       // plausibility rule R3
  internal::ConstancyTracker mass;          // plausibility rule R5
  SourceLocation second_step_mass;          // mass cell of the first weighing of step 2
  std::optional<std::size_t> masses_index;  // into the gathered masses
};

std::string KnownSaltList() {
  std::string list;
  for (const auto& salt : physics::KnownSalts()) {
    if (!list.empty()) list += ", ";
    list += salt;
  }
  return list;
}

Atmosphere ParseAtmosphere(const CsvReader& reader, std::size_t index) {
  const std::string_view text = reader.Text(index);
  const int column = reader.Column(index);
  Atmosphere atmosphere;
  if (text == "desiccant") {
    atmosphere.kind = AtmosphereKind::kDesiccant;
    return atmosphere;
  }
  if (text == "oven") {
    atmosphere.kind = AtmosphereKind::kOven;
    return atmosphere;
  }
  if (text.substr(0, 3) == "rh:") {
    const std::string_view number = text.substr(3);
    double percent = 0.0;
    if (number.empty() || number.back() != '%' ||
        internal::ParseNumber(number.substr(0, number.size() - 1), reader.decimal_point(),
                              &percent) != internal::NumberStatus::kOk) {
      reader.Fail(column, "atmosphere '" + std::string(text) + "' is not a stated humidity",
                  "rh:<number>% such as rh:50%");
    }
    if (!(percent >= 0.0 && percent <= physics::kPercent)) {
      reader.Fail(column, "stated humidity '" + std::string(text) + "' is outside 0..100 %",
                  "a relative humidity within 0..100 %");
    }
    if (internal::StatedRhLooksLikeFraction(percent)) {  // plausibility rule R2
      reader.Fail(column,
                  "stated humidity '" + std::string(text) +
                      "' is a fraction written as percent? (no sorption step is held at 0..1 % "
                      "RH)",
                  fmt::format("a humidity in percent, rh:{:g}% if {:g} is the fraction; a dry "
                              "atmosphere as desiccant or rh:0%",
                              percent * physics::kPercent, percent));
    }
    atmosphere.kind = AtmosphereKind::kStatedRh;
    atmosphere.rh_fraction = percent / physics::kPercent;
    return atmosphere;
  }
  try {
    atmosphere.salt = physics::CanonicalSaltName(text);
  } catch (const std::invalid_argument&) {
    reader.Fail(column, "unknown atmosphere '" + std::string(text) + "'",
                "a saturated salt (" + KnownSaltList() + "), desiccant, oven or rh:<number>%");
  }
  atmosphere.kind = AtmosphereKind::kSalt;
  return atmosphere;
}

std::string FormatTemperature_C(double temperature_K) {
  return fmt::format("{:g} degC", physics::KelvinToCelsius(temperature_K));
}

}  // namespace

DesiccatorSeries ReadDesiccatorSeries(const JobSpec& job, const DataSetSpec& dataset) {
  return internal::ReadDesiccatorSeries(job, dataset, nullptr);
}

DesiccatorSeries internal::ReadDesiccatorSeries(const JobSpec& job, const DataSetSpec& dataset,
                                                std::vector<SpecimenMasses>* masses) {
  const CsvFormat& format = dataset.format;
  const std::string display = dataset.file.string();
  CsvReader reader(dataset.file, display, format.delimiter, format.decimal_comma);
  reader.ReadHeader();
  const std::vector<ColumnRole> roles = {
      {"specimen", true, {{"specimen", ""}}, "", ""},
      {"step number", true, {{"step", ""}}, "", ""},
      {"atmosphere", true, {{"atmosphere", ""}}, "", ""},
      {"branch", true, {{"branch", ""}}, "", ""},
      {"time of weighing", true, {{"weighed_at", ""}}, "", ""},
      {"mass",
       true,
       {{"mass_g", "g"}, {"mass_mg", "mg"}, {"mass_ug", "ug"}, {"mass", ""}},
       format.mass_unit,
       "mass_unit"},
      {"temperature",
       false,
       {{"temperature_C", "C"}, {"temperature_K", "K"}, {"temperature", ""}},
       format.temperature_unit,
       "temperature_unit"},
      {"note", false, {{"note", ""}}, "", ""},
  };
  const auto columns = internal::MapHeader(reader, roles);
  const auto specimen_index = static_cast<std::size_t>(columns[0].index);
  const auto step_index = static_cast<std::size_t>(columns[1].index);
  const auto atmosphere_index = static_cast<std::size_t>(columns[2].index);
  const auto branch_index = static_cast<std::size_t>(columns[3].index);
  const auto time_index = static_cast<std::size_t>(columns[4].index);
  const auto mass_index = static_cast<std::size_t>(columns[5].index);
  const bool has_temperature = columns[6].index >= 0;
  const auto temperature_index = static_cast<std::size_t>(has_temperature ? columns[6].index : 0);
  const internal::UnitScale mass_scale = internal::MassUnitToGram(columns[5].unit);
  const internal::UnitScale temperature_scale =
      internal::TemperatureUnitToKelvin(has_temperature ? columns[6].unit : "K");
  const std::string expected_time =
      format.datetime_format == "iso8601"
          ? std::string("an ISO 8601 date-time such as 2026-09-01T08:30")
          : "a date-time written as " + format.datetime_format;

  std::map<std::string, SpecimenState, std::less<>> specimens;
  std::string declared;
  for (const SpecimenSpec& specimen : job.specimens) {
    specimens.emplace(specimen.id, SpecimenState{});
    if (!declared.empty()) declared += ", ";
    declared += specimen.id;
  }
  std::vector<DesiccatorStep> steps;
  std::vector<Atmosphere> step_atmospheres;
  std::vector<int> step_columns;  // column of the step number on the first line of each step
  double earliest_s = std::numeric_limits<double>::infinity();

  while (reader.Next()) {
    const std::string_view specimen_id = reader.Text(specimen_index);
    auto found = specimens.find(specimen_id);
    if (found == specimens.end()) {
      reader.Fail(reader.Column(specimen_index),
                  "specimen '" + std::string(specimen_id) + "' is not declared in the job file",
                  "a [[specimen]] id of the job (" + declared + ")");
    }
    SpecimenState& state = found->second;

    const std::string_view step_text = reader.Text(step_index);
    int step_number = 0;
    bool step_ok = !step_text.empty() && step_text.size() <= 6;
    for (char c : step_text) {
      if (c < '0' || c > '9') step_ok = false;
    }
    if (step_ok) step_number = std::stoi(std::string(step_text));
    if (!step_ok || step_number < 1) {
      reader.Fail(reader.Column(step_index),
                  "'" + std::string(step_text) + "' in column 'step' is not a step number",
                  "a whole number from 1");
    }

    const Atmosphere atmosphere = ParseAtmosphere(reader, atmosphere_index);
    Branch branch = Branch::kAdsorption;
    if (!internal::ParseBranch(reader.Text(branch_index), &branch)) {
      reader.Fail(reader.Column(branch_index),
                  "unknown branch '" + std::string(reader.Text(branch_index)) + "'",
                  "adsorption, desorption or drying");
    }
    const bool dry_atmosphere =
        atmosphere.kind == AtmosphereKind::kOven || atmosphere.kind == AtmosphereKind::kDesiccant ||
        (atmosphere.kind == AtmosphereKind::kStatedRh && atmosphere.rh_fraction == 0.0);
    if (dry_atmosphere != (branch == Branch::kDrying)) {
      if (branch == Branch::kDrying) {
        reader.Fail(
            reader.Column(branch_index),
            "branch 'drying' over atmosphere '" + std::string(reader.Text(atmosphere_index)) + "'",
            "drying only with oven, desiccant or rh:0%");
      }
      reader.Fail(reader.Column(branch_index),
                  "branch '" + std::string(reader.Text(branch_index)) + "' with atmosphere '" +
                      std::string(reader.Text(atmosphere_index)) + "'",
                  "branch drying for oven, desiccant and rh:0%");
    }

    double time_s = 0.0;
    std::string why;
    if (!internal::ParseDateTime(reader.Text(time_index), format.datetime_format, &time_s, &why)) {
      reader.Fail(reader.Column(time_index),
                  "'" + std::string(reader.Text(time_index)) +
                      "' in column 'weighed_at' is not a date-time: " + why,
                  expected_time);
    }

    const double mass_g = mass_scale.ToSi(reader.Number(mass_index, columns[5].name));
    if (!(mass_g > 0.0)) {
      reader.Fail(reader.Column(mass_index),
                  "mass " + std::string(reader.Text(mass_index)) + " in column '" +
                      columns[5].name + "' is not positive",
                  "a specimen mass above zero");
    }
    if (mass_g < internal::kMinPlausibleMass_g) {  // plausibility rule R4
      reader.Fail(reader.Column(mass_index),
                  "mass " + std::string(reader.Text(mass_index)) + " in column '" +
                      columns[5].name + "' is below 1 ng: no balance weighs it",
                  "a specimen mass of at least 1 ng (1e-9 g)");
    }
    double temperature_K = dataset.temperature_K;
    if (has_temperature) {
      temperature_K = temperature_scale.ToSi(reader.Number(temperature_index, columns[6].name));
      if (!(temperature_K >= kMinPlausibleTemperature_K &&
            temperature_K <= kMaxPlausibleTemperature_K)) {
        reader.Fail(reader.Column(temperature_index),
                    "temperature " + std::string(reader.Text(temperature_index)) + " in column '" +
                        columns[6].name + "' is implausible",
                    "a temperature within -50..150 degC (223.15..423.15 K)");
      }
    }
    if (atmosphere.kind == AtmosphereKind::kSalt) {
      const auto [low_K, high_K] = physics::SaltTemperatureRange_K(atmosphere.salt);
      if (!(temperature_K >= low_K && temperature_K <= high_K)) {
        const int column =
            has_temperature ? reader.Column(temperature_index) : reader.Column(atmosphere_index);
        reader.Fail(column,
                    "temperature " + FormatTemperature_C(temperature_K) + " is outside the " +
                        "table of " + atmosphere.salt + " (Greenspan 1977)" +
                        (has_temperature ? "" : " (nominal temperature of the dataset)"),
                    "a temperature within " + FormatTemperature_C(low_K) + ".." +
                        FormatTemperature_C(high_K) + " for " + atmosphere.salt);
      }
    }

    if (state.has_row) {
      if (step_number < state.step_number) {
        reader.Fail(reader.Column(step_index),
                    fmt::format("step {} of specimen {} resumes after step {} (line {})",
                                step_number, specimen_id, state.step_number, state.last_line),
                    "the steps of a specimen in increasing order");
      }
      if (time_s <= state.last_time_s) {
        reader.Fail(reader.Column(time_index),
                    fmt::format("{} of specimen {} is {} the previous weighing of that specimen "
                                "(line {})",
                                reader.Text(time_index), specimen_id,
                                time_s == state.last_time_s ? "the same time as" : "earlier than",
                                state.last_line),
                    "weighings of a specimen in strictly increasing time order");
      }
    }
    if (format.datetime_format == "iso8601") {  // plausibility rule R3
      const std::string problem =
          state.offsets.Add(internal::UtcOffsetOf(reader.Text(time_index)), reader.line());
      if (!problem.empty()) {
        reader.Fail(reader.Column(time_index),
                    fmt::format("weighings of specimen {}: {}", specimen_id, problem),
                    "one clock for the weighings of a specimen: every stamp with a UTC offset "
                    "(offsets within 1 h, a daylight-saving change) or none");
      }
    }
    if (state.num_weighings == 0) {
      state.mass.Start(mass_g);
    } else {
      state.mass.Add(mass_g);
    }
    ++state.num_weighings;
    if (state.has_row && step_number != state.step_number && state.num_steps == 1) {
      state.second_step_mass = reader.Where(reader.Column(mass_index));
    }
    if (masses != nullptr) {
      if (!state.masses_index) {
        state.masses_index = masses->size();
        internal::SpecimenMasses gathered;
        gathered.specimen_id = std::string(specimen_id);
        gathered.dataset_id = dataset.id;
        gathered.file = display;
        gathered.mass_column = columns[5].name;
        gathered.mass_field = columns[5].index;
        masses->push_back(std::move(gathered));
      }
      (*masses)[*state.masses_index].Add(mass_g, reader.Where(reader.Column(mass_index)));
    }
    if (!state.has_row || step_number != state.step_number) {
      DesiccatorStep step;
      step.specimen_id = std::string(specimen_id);
      step.step_index = state.num_steps++;
      step.step_number = step_number;
      step.atmosphere = std::string(reader.Text(atmosphere_index));
      if (atmosphere.kind == AtmosphereKind::kSalt) step.salt = atmosphere.salt;
      if (atmosphere.kind == AtmosphereKind::kStatedRh ||
          atmosphere.kind == AtmosphereKind::kDesiccant) {
        step.set_rh_fraction = atmosphere.rh_fraction;
      }
      step.branch = branch;
      step.first_line = static_cast<int>(reader.line());
      state.step = steps.size();
      state.step_number = step_number;
      steps.push_back(std::move(step));
      step_atmospheres.push_back(atmosphere);
      step_columns.push_back(reader.Column(step_index));
    } else {
      const DesiccatorStep& step = steps[state.step];
      if (!(step_atmospheres[state.step] == atmosphere)) {
        reader.Fail(reader.Column(atmosphere_index),
                    fmt::format("atmosphere '{}' differs from '{}' of step {} of specimen {} "
                                "(line {})",
                                reader.Text(atmosphere_index), step.atmosphere, step_number,
                                specimen_id, step.first_line),
                    "one atmosphere per step");
      }
      if (step.branch != branch) {
        reader.Fail(reader.Column(branch_index),
                    fmt::format("branch '{}' differs from '{}' of step {} of specimen {} (line {})",
                                reader.Text(branch_index), BranchName(step.branch), step_number,
                                specimen_id, step.first_line),
                    "one branch per step");
      }
    }
    DesiccatorStep& step = steps[state.step];
    step.weighings.push_back(Weighing{time_s, std::string(reader.Text(time_index)), mass_g,
                                      static_cast<int>(reader.line()), temperature_K});
    step.last_line = static_cast<int>(reader.line());
    state.has_row = true;
    state.last_time_s = time_s;
    state.last_line = reader.line();
    earliest_s = std::min(earliest_s, time_s);
  }
  if (steps.empty()) {
    reader.FailAt(
        reader.line() + 1, 1,
        "no weighings after the header (line " + std::to_string(reader.header_line()) + ")",
        "one line per weighing");
  }

  for (std::size_t i = 0; i < steps.size(); ++i) {
    DesiccatorStep& step = steps[i];
    if (step.weighings.size() < kMinWeighingsPerStep) {
      throw InputError(SourceLocation{display, step.first_line, step_columns[i]},
                       fmt::format("step {} of specimen {} has {} weighing", step.step_number,
                                   step.specimen_id, step.weighings.size()),
                       "at least 2 weighings per step to judge equilibrium");
    }
    double sum_K = 0.0;
    for (Weighing& weighing : step.weighings) {
      weighing.time_s -= earliest_s;
      sum_K += weighing.temperature_K;
    }
    step.temperature_K = sum_K / static_cast<double>(step.weighings.size());
  }
  // Plausibility rule R5: a specimen whose mass never changed over its steps is not weighed.
  for (const auto& [id, state] : specimens) {
    if (state.num_steps < 2 || !state.mass.constant) continue;
    throw InputError(
        state.second_step_mass,
        fmt::format("all {} weighings of specimen {} over {} steps read {:.7g} g: no uptake or "
                    "loss at any humidity (a frozen balance or a copied column)",
                    state.num_weighings, id, state.num_steps, state.mass.first),
        "masses that follow the humidity steps");
  }

  // Grouped by specimen in job order, then step order (already increasing per specimen).
  std::map<std::string, std::size_t, std::less<>> job_order;
  for (std::size_t i = 0; i < job.specimens.size(); ++i) job_order[job.specimens[i].id] = i;
  std::stable_sort(steps.begin(), steps.end(),
                   [&](const DesiccatorStep& a, const DesiccatorStep& b) {
                     return job_order[a.specimen_id] < job_order[b.specimen_id];
                   });

  DesiccatorSeries series;
  series.dataset_id = dataset.id;
  series.file = dataset.file_as_written.empty() ? display : dataset.file_as_written;
  series.steps = std::move(steps);
  return series;
}

}  // namespace sorbtrace::ingest
