// LoadJobSpec: the job file's own sections ([job], [material], [measurement], [[specimen]],
// [[dataset]], [retention]); tables of later stages are left to their owners.
#include <fmt/format.h>
#include <toml++/toml.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <initializer_list>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <system_error>

#include "pipeline/common/bounded_input.h"
#include "pipeline/common/files.h"
#include "pipeline/common/toml_reader.h"
#include "pipeline/ingest/csv_reader.h"
#include "pipeline/ingest/date_time.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/ingest/plausibility.h"
#include "pipeline/ingest/specification.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::ingest {
namespace {

// Tables of the job file read by later stages; ingest does not look inside them.
constexpr std::string_view kOtherStagesTables[] = {"equilibrium", "fit", "pores", "report"};

// The enum value whose job-file name is `name` (one of the names Choice() accepted).
MaterialClass MaterialClassFromName(std::string_view name) {
  for (const MaterialClass c :
       {MaterialClass::kPorousMineral, MaterialClass::kWoodOrFibre, MaterialClass::kPolymer,
        MaterialClass::kPharmaceuticalPowder, MaterialClass::kFood, MaterialClass::kOther}) {
    if (MaterialClassName(c) == name) return c;
  }
  return MaterialClass::kUnstated;
}

TestMethod TestMethodFromName(std::string_view name) {
  for (const TestMethod m : {TestMethod::kIso12571Desiccator, TestMethod::kIso12571ClimaticChamber,
                             TestMethod::kAstmC1498, TestMethod::kPhEur2939}) {
    if (TestMethodName(m) == name) return m;
  }
  return TestMethod::kUnstated;
}

// The shared TOML reader (pipeline/common/toml_reader.h) plus the job file's temperatures.
class JobFileReader : public TomlReader {
 public:
  using TomlReader::TomlReader;

  // A temperature in degC within the plausibility bound, returned in K.
  std::optional<double> Temperature_K(const toml::table& table, std::string_view section,
                                      std::string_view key, bool required) const {
    const auto value = Number(table, section, key, required);
    if (!value) return std::nullopt;
    const double temperature_K = physics::CelsiusToKelvin(*value);
    if (!(temperature_K >= internal::kMinPlausibleTemperature_K &&
          temperature_K <= internal::kMaxPlausibleTemperature_K)) {
      Fail(*table.get(key),
           Describe({std::string(section), std::string(key)}) + " is an implausible temperature",
           "a temperature in degC within -50..150");
    }
    return temperature_K;
  }
};

CsvFormat ReadFormat(const JobFileReader& in, const toml::table& table, std::string_view section) {
  CsvFormat format;
  if (const auto delimiter = in.Choice(table, section, "delimiter", false, {",", ";", "\t"})) {
    format.delimiter = (*delimiter)[0];
  }
  format.decimal_comma = in.Bool(table, section, "decimal_comma").value_or(false);
  if (format.decimal_comma && format.delimiter == ',') {
    in.Fail(*table.get("decimal_comma"), "decimal_comma = true with the ',' delimiter",
            "delimiter = \";\" (or \"\\t\") for files with decimal commas");
  }
  if (const auto pattern = in.String(table, section, "datetime_format", false)) {
    const std::string problem = internal::CheckDateTimeFormat(*pattern);
    if (!problem.empty()) {
      in.Fail(*table.get("datetime_format"),
              "datetime_format '" + Excerpt(*pattern) + "': " + problem,
              "\"iso8601\" or a pattern of %Y %m %d %H %M [%S] such as \"%d.%m.%Y %H:%M\"");
    }
    format.datetime_format = *pattern;
  }
  format.mass_unit = in.Choice(table, section, "mass_unit", false, {"g", "mg", "ug"}).value_or("");
  format.rh_unit =
      in.Choice(table, section, "rh_unit", false, {"percent", "fraction"}).value_or("");
  format.time_unit = in.Choice(table, section, "time_unit", false, {"s", "min", "h"}).value_or("");
  format.temperature_unit =
      in.Choice(table, section, "temperature_unit", false, {"C", "K"}).value_or("");
  return format;
}

// Resolves `file` relative to the job file and checks that it is a readable regular file.
// Data-path policy (LiesInsideFolder): a data file lies inside the job file's folder tree
// unless [job] allow_data_outside_job_folder = true; so a job cannot make sorbtrace read (and
// quote) any file the user can read.
void ResolveFile(const JobFileReader& in, const std::filesystem::path& job_dir, bool allow_outside,
                 const toml::table& table, std::string_view section, DataSetSpec* dataset) {
  namespace fs = std::filesystem;
  dataset->file_as_written = *in.String(table, section, "file", true);
  const fs::path written(dataset->file_as_written);
  dataset->file = (job_dir / written).lexically_normal();
  const toml::node& key = *table.get("file");
  const auto refuse_outside = [&] {
    in.Fail(
        key,
        "data file '" + Excerpt(dataset->file_as_written) + "' lies outside the job file's folder",
        "a path relative to the job file, inside its folder tree (or "
        "allow_data_outside_job_folder = true in [job] to read files elsewhere)");
  };
  // A path that leaves the folder as written is refused before anything is looked up there.
  const fs::path as_written = written.lexically_normal();
  if (!allow_outside && (written.is_absolute() || written.has_root_name() ||
                         (!as_written.empty() && *as_written.begin() == ".."))) {
    refuse_outside();
  }
  const std::string problem =
      dataset->file_as_written.empty() ? "not found" : RegularFileProblem(dataset->file);
  if (!problem.empty()) {
    in.Fail(key,
            "data file '" + Excerpt(dataset->file_as_written) + "' " + problem + " (looked for " +
                Excerpt(dataset->file.string(), 200) + ")",
            "an existing file, relative to the job file");
  }
  // Then where it really is, links resolved.
  if (!allow_outside && !LiesInsideFolder(written, job_dir)) refuse_outside();
}

// Plausibility rule R7 (plausibility.h): RH-sensor and temperature uncertainties within what
// the instruments can have; where the balance keys are, for the balance bound checked once the
// masses are read.
// An identifier the sheet prints and the files refer to (report number, dataset or specimen
// id): at least one visible character and no control characters (a line break in a report
// number would break the running header of every page and the CSV rows that quote it).
std::string ReadIdentifier(const JobFileReader& in, const toml::table& table,
                           std::string_view section, std::string_view what) {
  std::string id = *in.String(table, section, "id", true);
  const bool blank = id.find_first_not_of(" \t") == std::string::npos;
  const bool control = std::any_of(id.begin(), id.end(), [](char c) {
    const auto byte = static_cast<unsigned char>(c);
    return byte < 0x20 || byte == 0x7f;
  });
  if (blank || control) {
    in.Fail(*table.get("id"),
            std::string(what) + " '" + Excerpt(id) + "' is " +
                (blank ? "empty" : "not printable (control characters)"),
            "a non-empty " + std::string(what) + " of printable characters");
  }
  return id;
}

void CheckUncertaintyBounds(const JobFileReader& in, const toml::table& measurement, JobSpec* job) {
  const auto bound = [&](std::string_view key, double value, double limit, std::string_view unit) {
    if (value <= limit) return;
    in.Fail(*measurement.get(key),
            fmt::format("{} = {:g} {} is beyond what the instrument of a sorption test has", key,
                        value, unit),
            fmt::format("a standard uncertainty above 0 and at most {:g} {}", limit, unit));
  };
  bound("rh_sensor_standard_uncertainty_percent",
        job->rh_sensor_standard_uncertainty_fraction * physics::kPercent,
        internal::kMaxRhSensorUncertainty_percent, "%RH");
  bound("temperature_standard_uncertainty_K", job->temperature_standard_uncertainty_K,
        internal::kMaxTemperatureUncertainty_K, "K");
  const auto where = [&](std::string_view key) {
    const toml::node* node = measurement.get(key);
    if (node != nullptr) return in.At(*node);
    SourceLocation table = in.At(measurement);
    table.column = 0;
    return table;
  };
  job->balance_resolution_where = where("balance_resolution_g");
  job->balance_uncertainty_where = where("balance_standard_uncertainty_g");
}

// An optional ISO 8601 date; "" when absent.
std::string OptionalDate(const JobFileReader& in, const toml::table& table,
                         std::string_view section, std::string_view key) {
  std::string date = in.String(table, section, key, false).value_or("");
  if (!date.empty() && !internal::IsIsoDate(date)) {
    in.Fail(*table.get(key), std::string(key) + " '" + Excerpt(date) + "' is not a date",
            "an ISO 8601 date YYYY-MM-DD");
  }
  return date;
}

// [job] revision, supersedes, revision_reason: an amended report names the one it replaces
// (ISO/IEC 17025:2017, 7.8.8.2 and 7.8.8.3).
void ReadRevision(const JobFileReader& in, const toml::table& job_table, JobSpec* job) {
  if (const auto revision = in.Number(job_table, "[job]", "revision", false)) {
    if (!(*revision >= 0.0 && *revision <= 999.0 && *revision == std::floor(*revision))) {
      in.Fail(*job_table.get("revision"), "revision is not a whole number from 0 to 999",
              "0 for the original report, 1, 2, ... for amendments");
    }
    job->revision = static_cast<int>(*revision);
  }
  job->supersedes = in.String(job_table, "[job]", "supersedes", false).value_or("");
  job->revision_reason = in.String(job_table, "[job]", "revision_reason", false).value_or("");
  if (job->revision > 0 && job->supersedes.empty()) {
    in.Fail(*job_table.get("revision"),
            "revision " + std::to_string(job->revision) + " does not say which report it replaces",
            "supersedes = \"<number of the report replaced>\" in [job]");
  }
  for (const char* key : {"supersedes", "revision_reason"}) {
    if (job->revision == 0 && job_table.get(key) != nullptr) {
      in.Fail(*job_table.get(key), std::string(key) + " is given for an original report",
              "revision = 1 (or higher) in [job] for a report that replaces another");
    }
  }
}

// [job] lab_profile (read here: `check` validates it like every other input) and [job]
// location, which names one of its [[location]] entries.
void ReadLabProfile(const JobFileReader& in, const std::filesystem::path& job_dir,
                    const toml::table& job_table, JobSpec* job) {
  const auto written = in.String(job_table, "[job]", "lab_profile", false);
  const toml::node* location = job_table.get("location");
  if (!written) {
    if (location != nullptr) {
      in.Fail(*location, "location is given without a laboratory profile",
              "lab_profile = \"<profile file>\" in [job] (its [[location]] ids)");
    }
    return;
  }
  const toml::node& key = *job_table.get("lab_profile");
  const std::filesystem::path path = (job_dir / *written).lexically_normal();
  // The data-path policy of data files and templates (LiesInsideFolder).
  if (!job->allow_data_outside_job_folder && !LiesInsideFolder(*written, job_dir)) {
    in.Fail(key,
            "laboratory profile '" + Excerpt(*written) + "' lies outside the job file's folder",
            "a profile file inside the job file's folder tree (or "
            "allow_data_outside_job_folder = true in [job] for a profile kept elsewhere)");
  }
  const std::string problem = written->empty() ? "not found" : RegularFileProblem(path);
  if (!problem.empty()) {
    in.Fail(key,
            "laboratory profile '" + Excerpt(*written) + "' " + problem + " (looked for " +
                Excerpt(path.string(), 200) + ")",
            "an existing laboratory profile file, relative to the job file");
  }
  LabProfile profile = LoadLabProfile(path, path.string());
  profile.file_as_written = *written;
  LoadLabLogo(job_dir, *written, job->allow_data_outside_job_folder, profile);
  job->work_location = profile.address;
  if (location != nullptr) {
    const std::string id = *in.String(job_table, "[job]", "location", true);
    const auto found = std::find_if(profile.locations.begin(), profile.locations.end(),
                                    [&](const LabLocation& l) { return l.id == id; });
    if (found == profile.locations.end()) {
      std::string ids;
      for (const LabLocation& l : profile.locations)
        ids += (ids.empty() ? "\"" : ", \"") + l.id + "\"";
      in.Fail(
          *location,
          "location '" + Excerpt(id) + "' is not a [[location]] of the laboratory profile",
          ids.empty() ? "no location key (the profile lists no [[location]])" : "one of " + ids);
    }
    job->work_location = found->address;
  } else if (profile.locations.size() > 1) {
    in.Fail(key, "the laboratory profile lists several [[location]] entries",
            "location = \"<id>\" in [job]: where this work was done");
  } else if (profile.locations.size() == 1) {
    job->work_location = profile.locations.front().address;
  }
  job->lab_profile = std::move(profile);
}

// [sampling]: who took the item tested, to which plan (ISO/IEC 17025:2017, 7.8.2.1 i, 7.8.2.2,
// 7.8.5).
void ReadSampling(const JobFileReader& in, const toml::table& root, JobSpec* job) {
  if (root.get("sampling") == nullptr) return;
  const toml::table& table = in.Table(root, "sampling");
  constexpr std::string_view kSa = "[sampling]";
  in.CheckKeys(table, kSa, {"by", "plan", "date"});
  const std::string by =
      *in.Choice(table, kSa, "by", true,
                 {SamplingByName(SamplingBy::kLaboratory), SamplingByName(SamplingBy::kCustomer)});
  job->sampling.by = by == SamplingByName(SamplingBy::kLaboratory) ? SamplingBy::kLaboratory
                                                                   : SamplingBy::kCustomer;
  job->sampling.plan = in.String(table, kSa, "plan", false).value_or("");
  job->sampling.date = OptionalDate(in, table, kSa, "date");
  if (job->sampling.by == SamplingBy::kLaboratory && job->sampling.plan.empty()) {
    in.Fail(table, "sampling by the laboratory without a sampling plan",
            "plan = \"<reference of the sampling plan>\" in [sampling] (ISO/IEC 17025:2017, "
            "7.8.5)");
  }
}

}  // namespace

std::string_view MaterialClassName(MaterialClass material_class) {
  switch (material_class) {
    case MaterialClass::kUnstated:
      return "";
    case MaterialClass::kPorousMineral:
      return "porous_mineral";
    case MaterialClass::kWoodOrFibre:
      return "wood_or_fibre";
    case MaterialClass::kPolymer:
      return "polymer";
    case MaterialClass::kPharmaceuticalPowder:
      return "pharmaceutical_powder";
    case MaterialClass::kFood:
      return "food";
    case MaterialClass::kOther:
      return "other";
  }
  return "";
}

std::string_view TestMethodName(TestMethod method) {
  switch (method) {
    case TestMethod::kUnstated:
      return "";
    case TestMethod::kIso12571Desiccator:
      return "iso_12571_desiccator";
    case TestMethod::kIso12571ClimaticChamber:
      return "iso_12571_climatic_chamber";
    case TestMethod::kAstmC1498:
      return "astm_c1498";
    case TestMethod::kPhEur2939:
      return "ph_eur_2_9_39";
  }
  return "";
}

// ISO 12571:2021 "Hygrothermal performance of building materials and products - Determination
// of hygroscopic sorption properties" (desiccator and climatic-chamber methods); ASTM C1498-04a
// "Standard Test Method for Hygroscopic Sorption Isotherms of Building Materials";
// European Pharmacopoeia 2.9.39 "Water-solid interactions: determination of sorption-desorption
// isotherms and of water activity" (chapter number and title confirmed in the British
// Pharmacopoeia's Appendix IX M, which reproduces it as "Ph. Eur. method 2.9.39"; the edition of
// the Pharmacopoeia is not cited: unconfirmed).
std::string_view TestMethodCitation(TestMethod method) {
  switch (method) {
    case TestMethod::kUnstated:
      return "";
    case TestMethod::kIso12571Desiccator:
      return "ISO 12571:2021, desiccator method";
    case TestMethod::kIso12571ClimaticChamber:
      return "ISO 12571:2021, climatic-chamber method";
    case TestMethod::kAstmC1498:
      return "ASTM C1498-04a";
    case TestMethod::kPhEur2939:
      return "Ph. Eur. 2.9.39, water-solid interactions: sorption-desorption isotherms";
  }
  return "";
}

std::string_view BranchName(Branch branch) {
  switch (branch) {
    case Branch::kAdsorption:
      return "adsorption";
    case Branch::kDesorption:
      return "desorption";
    case Branch::kDrying:
      return "drying";
  }
  return "adsorption";
}

JobSpec LoadJobSpec(const std::filesystem::path& job_file) {
  const JobFileReader in(job_file.string());
  std::error_code ec;
  if (!std::filesystem::is_regular_file(job_file, ec)) {
    throw InputError(SourceLocation{in.display(), 0, 0}, "job file not found",
                     "an existing TOML job file");
  }
  auto parsed = std::make_shared<ParsedTomlFile>(
      ParsedTomlFile{job_file, ParseTomlFile(job_file, "a valid TOML job file")});
  const toml::table& root = parsed->root;

  JobSpec job;
  job.job_file = job_file;
  job.parsed = parsed;
  const std::filesystem::path job_dir = job_file.parent_path();

  for (auto&& [key, value] : root) {
    const std::string_view name = key.str();
    const bool ours = name == "job" || name == "material" || name == "measurement" ||
                      name == "specimen" || name == "dataset" || name == "retention" ||
                      name == "sampling" || name == "specification";
    const bool theirs = std::find(std::begin(kOtherStagesTables), std::end(kOtherStagesTables),
                                  name) != std::end(kOtherStagesTables);
    if (!ours && !theirs) {
      in.Fail(
          key.source(),
          "unknown top-level " + std::string(value.is_table() ? "table [" : "key '") +
              std::string(name) + (value.is_table() ? "]" : "'"),
          "tables [job], [material], [measurement], [[specimen]], [[dataset]], "
          "[retention], [sampling], [[specification]], [equilibrium], [fit], [pores], [report]");
    }
  }

  // [job]
  const toml::table& job_table = in.Table(root, "job");
  in.CheckKeys(job_table, "[job]",
               {"id", "issue_date", "template", "test_dates", "allow_data_outside_job_folder",
                "material_class", "method", "lab_profile", "location", "revision", "supersedes",
                "revision_reason"});
  job.job_id = ReadIdentifier(in, job_table, "[job]", "report number (id)");
  job.issue_date = *in.String(job_table, "[job]", "issue_date", true);
  if (!internal::IsIsoDate(job.issue_date)) {
    in.Fail(*job_table.get("issue_date"),
            "issue_date '" + Excerpt(job.issue_date) + "' is not a date",
            "an ISO 8601 date YYYY-MM-DD");
  }
  job.template_name = in.String(job_table, "[job]", "template", false).value_or("full");
  job.test_dates = in.String(job_table, "[job]", "test_dates", false).value_or("");
  job.allow_data_outside_job_folder =
      in.Bool(job_table, "[job]", "allow_data_outside_job_folder").value_or(false);
  if (const auto name = in.Choice(
          job_table, "[job]", "material_class", false,
          {MaterialClassName(MaterialClass::kPorousMineral),
           MaterialClassName(MaterialClass::kWoodOrFibre),
           MaterialClassName(MaterialClass::kPolymer),
           MaterialClassName(MaterialClass::kPharmaceuticalPowder),
           MaterialClassName(MaterialClass::kFood), MaterialClassName(MaterialClass::kOther)})) {
    job.material_class = MaterialClassFromName(*name);
  }
  if (const auto name = in.Choice(
          job_table, "[job]", "method", false,
          {TestMethodName(TestMethod::kIso12571Desiccator),
           TestMethodName(TestMethod::kIso12571ClimaticChamber),
           TestMethodName(TestMethod::kAstmC1498), TestMethodName(TestMethod::kPhEur2939)})) {
    job.test_method = TestMethodFromName(*name);
  }

  ReadRevision(in, job_table, &job);
  ReadLabProfile(in, job_dir, job_table, &job);

  // [material]
  const toml::table& material = in.Table(root, "material");
  in.CheckKeys(material, "[material]",
               {"name", "description", "client", "client_address", "client_contact",
                "received_date", "condition"});
  job.material_name = *in.String(material, "[material]", "name", true);
  job.material_description = in.String(material, "[material]", "description", false).value_or("");
  job.client = in.String(material, "[material]", "client", false).value_or("");
  job.client_address = in.String(material, "[material]", "client_address", false).value_or("");
  job.client_contact = in.String(material, "[material]", "client_contact", false).value_or("");
  job.received_date = OptionalDate(in, material, "[material]", "received_date");
  job.item_condition = in.String(material, "[material]", "condition", false).value_or("");
  ReadSampling(in, root, &job);

  // [measurement]
  const toml::table& measurement = in.Table(root, "measurement");
  constexpr std::string_view kM = "[measurement]";
  in.CheckKeys(measurement, kM,
               {"dry_mass_method", "drying_temperature_C", "balance_resolution_g",
                "balance_standard_uncertainty_g", "rh_sensor_standard_uncertainty_percent",
                "temperature_standard_uncertainty_K", "negative_moisture_expected"});
  const std::string method = in.Choice(measurement, kM, "dry_mass_method", false,
                                       {"oven", "desiccant_step", "final_drying_step"})
                                 .value_or("oven");
  job.dry_mass_method = method == "oven"             ? DryMassMethod::kOvenDrying
                        : method == "desiccant_step" ? DryMassMethod::kDesiccantStep
                                                     : DryMassMethod::kFinalDryingStep;
  job.drying_temperature_K = in.Temperature_K(measurement, kM, "drying_temperature_C", false)
                                 .value_or(job.drying_temperature_K);
  job.balance_resolution_g = in.Positive(measurement, kM, "balance_resolution_g", false)
                                 .value_or(job.balance_resolution_g);
  job.balance_standard_uncertainty_g =
      in.Positive(measurement, kM, "balance_standard_uncertainty_g", false)
          .value_or(job.balance_standard_uncertainty_g);
  if (const auto u =
          in.Positive(measurement, kM, "rh_sensor_standard_uncertainty_percent", false)) {
    job.rh_sensor_standard_uncertainty_fraction = *u / physics::kPercent;
  }
  job.temperature_standard_uncertainty_K =
      in.Positive(measurement, kM, "temperature_standard_uncertainty_K", false)
          .value_or(job.temperature_standard_uncertainty_K);
  CheckUncertaintyBounds(in, measurement, &job);
  job.negative_moisture_expected =
      in.Bool(measurement, kM, "negative_moisture_expected").value_or(false);

  // [[specimen]]
  const toml::node* specimens = root.get("specimen");
  if (specimens == nullptr || !specimens->is_array_of_tables() || specimens->as_array()->empty()) {
    throw InputError(specimens != nullptr ? in.At(*specimens) : SourceLocation{in.display(), 1, 1},
                     "no [[specimen]] entries", "one [[specimen]] table per specimen, with an id");
  }
  for (const toml::node& node : *specimens->as_array()) {
    const toml::table& table = *node.as_table();
    constexpr std::string_view kS = "[[specimen]]";
    in.CheckKeys(table, kS, {"id", "dry_mass_g", "bulk_density_kg_per_m3"});
    SpecimenSpec specimen;
    specimen.id = ReadIdentifier(in, table, kS, "specimen id");
    specimen.where = in.At(table);
    for (const SpecimenSpec& other : job.specimens) {
      if (other.id == specimen.id) {
        in.Fail(*table.get("id"),
                "specimen id '" + Excerpt(specimen.id) + "' is declared twice (also on line " +
                    std::to_string(other.where.line) + ")",
                "a unique id per specimen");
      }
    }
    specimen.dry_mass_g = in.Positive(table, kS, "dry_mass_g", false);
    specimen.bulk_density_kg_per_m3 = in.Positive(table, kS, "bulk_density_kg_per_m3", false);
    job.specimens.push_back(std::move(specimen));
  }

  // [[dataset]]
  const toml::node* datasets = root.get("dataset");
  if (datasets == nullptr || !datasets->is_array_of_tables() || datasets->as_array()->empty()) {
    throw InputError(datasets != nullptr ? in.At(*datasets) : SourceLocation{in.display(), 1, 1},
                     "no [[dataset]] entries", "one [[dataset]] table per data file");
  }
  for (const toml::node& node : *datasets->as_array()) {
    const toml::table& table = *node.as_table();
    constexpr std::string_view kD = "[[dataset]]";
    in.CheckKeys(table, kD,
                 {"id", "method", "file", "temperature_C", "specimen", "delimiter", "decimal_comma",
                  "datetime_format", "mass_unit", "rh_unit", "time_unit", "temperature_unit"});
    DataSetSpec dataset;
    dataset.where = in.At(table);
    dataset.id = ReadIdentifier(in, table, kD, "dataset id");
    for (const DataSetSpec& other : job.datasets) {
      if (other.id == dataset.id) {
        in.Fail(*table.get("id"),
                "dataset id '" + Excerpt(dataset.id) + "' is used twice (also on line " +
                    std::to_string(other.where.line) + ")",
                "a unique id per dataset");
      }
    }
    const std::string method_name =
        *in.Choice(table, kD, "method", true, {"desiccator", "vapor_log"});
    dataset.method = method_name == "desiccator" ? Method::kDesiccator : Method::kVaporLog;
    dataset.temperature_K = *in.Temperature_K(table, kD, "temperature_C", true);
    const auto specimen = in.String(table, kD, "specimen", dataset.method == Method::kVaporLog);
    if (specimen) {
      if (dataset.method == Method::kDesiccator) {
        in.Fail(*table.get("specimen"), "key 'specimen' in a desiccator dataset",
                "the specimen column of the desiccator file (specimen is for vapor_log only)");
      }
      const bool known = std::any_of(job.specimens.begin(), job.specimens.end(),
                                     [&](const SpecimenSpec& s) { return s.id == *specimen; });
      if (!known) {
        in.Fail(*table.get("specimen"), "specimen '" + Excerpt(*specimen) + "' is not declared",
                "the id of a [[specimen]] table");
      }
      dataset.specimen_id = *specimen;
    }
    dataset.format = ReadFormat(in, table, kD);
    ResolveFile(in, job_dir, job.allow_data_outside_job_folder, table, kD, &dataset);
    job.datasets.push_back(std::move(dataset));
  }

  // [retention]
  if (root.get("retention") != nullptr) {
    const toml::table& table = in.Table(root, "retention");
    constexpr std::string_view kR = "[retention]";
    in.CheckKeys(table, kR, {"file", "temperature_C", "delimiter", "decimal_comma"});
    DataSetSpec retention;
    retention.id = "retention";
    retention.where = in.At(table);
    // Default: 23 degC, the standard test temperature of ISO 12571.
    retention.temperature_K = in.Temperature_K(table, kR, "temperature_C", false)
                                  .value_or(physics::CelsiusToKelvin(23.0));
    retention.format = ReadFormat(in, table, kR);
    ResolveFile(in, job_dir, job.allow_data_outside_job_folder, table, kR, &retention);
    job.retention = std::move(retention);
  }
  job.specifications = internal::ReadSpecifications(root, in.display());
  return job;
}

}  // namespace sorbtrace::ingest
