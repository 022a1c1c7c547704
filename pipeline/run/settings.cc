// Stage settings of a job file: [equilibrium], [fit], [pores] and [report] over the built-in
// defaults (each stage's Options) and the report template. Every key is one row of SettingKeys()
// (settings_table.h): the row reads, validates, records and documents the key. An unknown key,
// a wrong type or an out-of-range value is an InputError naming file, line, column and key.
#include <fmt/format.h>
#include <toml++/toml.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <map>
#include <string>
#include <type_traits>
#include <vector>

#include "fitters/registry.h"
#include "pipeline/common/bounded_input.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/common/toml_reader.h"
#include "pipeline/physics/physics.h"
#include "pipeline/run/run.h"
#include "pipeline/run/settings_table.h"

#ifndef SORBTRACE_TEMPLATE_DIR
#define SORBTRACE_TEMPLATE_DIR "templates"
#endif

namespace sorbtrace::run {
namespace internal {

// Reads typed values out of one table through the shared TOML reader
// (pipeline/common/toml_reader.h), remembering which keys were used so that leftovers can be
// reported as unknown.
class TableReader {
 public:
  TableReader(const toml::table* table, std::string name, std::string file)
      : table_(table), name_(std::move(name)), reader_(std::move(file)) {}

  bool Has(const std::string& key) const { return table_ != nullptr && table_->contains(key); }

  SourceLocation Where(const toml::node* node) const {
    if (node == nullptr) return {reader_.display(), 0, 0};
    return reader_.At(*node);
  }

  const toml::node* Node(const std::string& key) {
    if (std::find(used_.begin(), used_.end(), key) == used_.end()) used_.push_back(key);
    return table_ == nullptr ? nullptr : table_->get(key);
  }

  // Where `key` is written, else where the table starts, else the file alone.
  SourceLocation At(const std::string& key) const {
    if (table_ == nullptr) return {reader_.display(), 0, 0};
    if (const toml::node* node = table_->get(key)) return Where(node);
    return Where(table_);
  }

  // The written number of `key` (nullopt when absent), checked against [minimum, maximum].
  std::optional<double> Number(const std::string& key, double minimum, double maximum) {
    const toml::node* node = Node(key);
    if (node == nullptr) return std::nullopt;
    return reader_.Number(*node, Key(key), minimum, maximum);
  }

  std::optional<double> Integer(const std::string& key, double minimum, double maximum) {
    const toml::node* node = Node(key);
    if (node == nullptr) return std::nullopt;
    return static_cast<double>(reader_.Integer(*node, Key(key), static_cast<std::int64_t>(minimum),
                                               static_cast<std::int64_t>(maximum)));
  }

  std::optional<double> Bool(const std::string& key) {
    const toml::node* node = Node(key);
    if (node == nullptr) return std::nullopt;
    return reader_.Bool(*node, Key(key)) ? 1.0 : 0.0;
  }

  // A string that must be one of `choices`; returns its index.
  std::optional<double> Choice(const std::string& key, const std::vector<std::string>& choices) {
    const toml::node* node = Node(key);
    if (node == nullptr) return std::nullopt;
    const std::vector<std::string_view> views(choices.begin(), choices.end());
    return static_cast<double>(reader_.Choice(*node, Key(key), views));
  }

  // Every key of the table must have been read (the keys of the section, in table order).
  void RejectUnknownKeys() const {
    if (table_ != nullptr) reader_.CheckKeys(*table_, TableDisplayName(name_), used_);
  }

  std::string Name(const std::string& key) const { return name_ + "." + key; }
  static std::string Show(double value) { return TomlReader::Show(value); }

 private:
  TomlKeyName Key(const std::string& key) const { return {TableDisplayName(name_), key}; }

  const toml::table* table_;
  std::string name_;
  TomlReader reader_;
  std::vector<std::string> used_;
};

namespace {

using physics::kMetresPerNanometre;
using physics::kPercent;
using physics::kSecondsPerHour;
using physics::kSecondsPerMinute;
using Eq = equilibrate::EquilibrateOptions;
using Fit = fit::FitStageOptions;
using Pores = pores::PoreOptions;

constexpr double kFractionPerPercent = 1.0 / kPercent;

// Upper bounds of the work settings (README, stage settings): what a laboratory uses with room
// to spare (common practice: 1000-2000 bootstrap or Monte Carlo draws give percentiles of a
// 95 % interval to about 1 % (JCGM 101:2008, 7.2); plots and distributions are smooth at a
// few hundred grid points). Within them the whole job is bounded by kMaxWorkUnits (run.h).
constexpr double kMaxResamples = 10000;
constexpr double kMaxBandPoints = 1000;
constexpr double kMaxPoreGridPoints = 2000;
// EquilibrateOptions needs 5 block means in a tail; 1000 is a full tail of a day-long step at
// 90 s blocks.
constexpr double kMaxTailPoints = 1000;
constexpr double kMaxSeed = 2147483647;  // 2^31 - 1: a seed any TOML reader holds exactly
// More threads than draws' worth of cores only add switching; 64 is above any workstation's
// core count a laboratory runs this on (common practice).
constexpr double kMaxThreads = 64;

// The member `kField` of the stage options `kStage` of JobSettings, as a double.
template <auto kStage, auto kField>
double GetField(const JobSettings& s) {
  const auto& value = s.*kStage.*kField;
  if constexpr (std::is_enum_v<std::remove_cvref_t<decltype(value)>>) {
    return static_cast<double>(static_cast<int>(value));
  } else {
    return static_cast<double>(value);
  }
}

template <auto kStage, auto kField>
void SetField(JobSettings& s, double v) {
  auto& target = s.*kStage.*kField;
  using T = std::remove_cvref_t<decltype(target)>;
  if constexpr (std::is_enum_v<T>) {
    target = static_cast<T>(static_cast<int>(v));
  } else if constexpr (std::is_same_v<T, bool>) {
    target = v != 0.0;
  } else {
    target = static_cast<T>(v);
  }
}

template <auto kStage, auto kField>
constexpr Accessor Field() {
  return {&GetField<kStage, kField>, &SetField<kStage, kField>};
}

constexpr auto kEquilibrate = &JobSettings::equilibrate;
constexpr auto kFit = &JobSettings::fit;
constexpr auto kPores = &JobSettings::pores;
constexpr auto kReduce = &JobSettings::reduce;
constexpr auto kIngest = &JobSettings::ingest;

std::string ModelList() {
  std::string list;
  for (const std::string& name : fitters::ModelNames()) {
    list += (list.empty() ? "" : ", ") + name;
  }
  return list;
}

void ReadModels(TableReader& in, JobSettings& s) {
  const toml::node* node = in.Node("models");
  if (node == nullptr) return;
  const toml::array* array = node->as_array();
  if (array == nullptr || array->empty()) {
    throw InputError(in.Where(node), in.Name("models") + " is not a list of model names",
                     "e.g. models = [\"gab\", \"bet\"]");
  }
  auto& models = s.fit.models;
  models.clear();
  for (const auto& element : *array) {
    std::optional<std::string> name = element.value<std::string>();
    if (!name) {
      throw InputError(in.Where(&element), in.Name("models") + " holds a non-string",
                       "model names as strings");
    }
    if (fitters::FindModel(*name) == nullptr) {
      throw InputError(in.Where(&element),
                       in.Name("models") + ": unknown model \"" + Excerpt(*name) + "\"",
                       "registry keys among " + ModelList());
    }
    if (std::find(models.begin(), models.end(), *name) != models.end()) {
      throw InputError(in.Where(&element),
                       in.Name("models") + ": \"" + *name + "\" is listed twice",
                       "each model once");
    }
    models.push_back(*name);
  }
}

nlohmann::ordered_json RecordModels(const JobSettings& s) { return s.fit.models; }

void ReadFilmTable(TableReader& in, JobSettings& s) {
  const toml::node* node = in.Node("film_table");
  if (node == nullptr) return;
  const toml::array* rows = node->as_array();
  if (rows == nullptr || rows->size() < 2) {
    throw InputError(in.Where(node), in.Name("film_table") + " is not a table of rows",
                     "film_table = [[rh_percent, thickness_nm], ...] with at least 2 rows");
  }
  auto& table = s.pores.film_table;
  table.clear();
  for (const auto& row : *rows) {
    const toml::array* pair = row.as_array();
    std::optional<double> rh =
        pair && pair->size() == 2 ? (*pair)[0].value<double>() : std::nullopt;
    std::optional<double> t = pair && pair->size() == 2 ? (*pair)[1].value<double>() : std::nullopt;
    if (!rh || !t || *rh <= 0 || *rh >= kPercent || *t < 0) {
      throw InputError(in.Where(&row), in.Name("film_table") + " row is invalid",
                       "[rh_percent (0..100), thickness_nm (>= 0)]");
    }
    table.emplace_back(*rh / kPercent, *t * kMetresPerNanometre);
  }
}

// A number of the record: rounded to 15 significant digits, which gives back the value as
// written for any value written with at most 15 digits (IEEE 754 double: 15 decimal digits
// survive a round trip).
double AsWritten(double value) {
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "%.15g", value);
  return std::strtod(buffer, nullptr);
}

nlohmann::ordered_json RecordFilmTable(const JobSettings& s) {
  nlohmann::ordered_json table = nlohmann::ordered_json::array();
  for (const auto& [rh, t] : s.pores.film_table) {
    table.push_back({AsWritten(rh * kPercent), AsWritten(t / kMetresPerNanometre)});
  }
  return table;
}

void ReadPoreModel(TableReader& in, JobSettings& s) {
  const toml::node* node = in.Node("model");
  if (node == nullptr) return;
  std::optional<std::string> model = node->value<std::string>();
  if (!model) {
    throw InputError(in.Where(node), in.Name("model") + " is not a string",
                     "\"best\" or a model name such as \"durner2\"");
  }
  s.pores.source_model = *model;
  const auto& fitted = s.fit.models;
  if (*model != "best" && std::find(fitted.begin(), fitted.end(), *model) == fitted.end()) {
    std::string list = "\"best\"";
    for (const auto& name : fitted) list += ", \"" + name + "\"";
    throw InputError(
        in.Where(node),
        in.Name("model") + " = \"" + Excerpt(*model) + "\" is not a model of [fit] models",
        "one of " + list);
  }
}

nlohmann::ordered_json RecordPoreModel(const JobSettings& s) { return s.pores.source_model; }

// Reference-condition limits: -50..100 degC is the range of the water correlations used
// (physics.h, IAPWS SR1-86 / R14-08); RH strictly between 0 and 100 %.
constexpr double kReferenceMin_C = -50.0;
constexpr double kReferenceMax_C = 100.0;

void ReadReferenceConditions(TableReader& in, JobSettings& s) {
  const toml::node* node = in.Node("reference_conditions");
  if (node == nullptr) return;
  const toml::array* array = node->as_array();
  if (array == nullptr || array->empty()) {
    throw InputError(in.Where(node), in.Name("reference_conditions") + " is not a list",
                     "reference_conditions = [{ temperature_C = 23, rh_percent = 50 }, ...]");
  }
  auto& target = s.pores.reference_conditions;
  target.clear();
  for (const auto& element : *array) {
    const toml::table* row = element.as_table();
    std::optional<double> t = row ? (*row)["temperature_C"].value<double>() : std::nullopt;
    std::optional<double> rh = row ? (*row)["rh_percent"].value<double>() : std::nullopt;
    if (!row || row->size() != 2 || !t || !rh || *rh <= 0.0 || *rh >= kPercent ||
        *t < kReferenceMin_C || *t > kReferenceMax_C) {
      throw InputError(in.Where(&element), in.Name("reference_conditions") + " entry is invalid",
                       "{ temperature_C = -50..100, rh_percent = 0..100 (exclusive) }");
    }
    target.push_back({physics::CelsiusToKelvin(*t), *rh / kPercent});
  }
}

nlohmann::ordered_json RecordReferenceConditions(const JobSettings& s) {
  nlohmann::ordered_json references = nlohmann::ordered_json::array();
  for (const auto& c : s.pores.reference_conditions) {
    references.push_back({{"temperature_C", AsWritten(physics::KelvinToCelsius(c.temperature_K))},
                          {"rh_percent", AsWritten(c.rh_fraction * kPercent)}});
  }
  return references;
}

std::vector<SettingKey> BuildSettingKeys() {
  using K = SettingKind;
  return {
      // [equilibrium]
      {.section = "equilibrium",
       .name = "mass_change_limit_percent",
       .factor = kFractionPerPercent,
       .min = 1e-6,
       .max = 10,
       .access = Field<kEquilibrate, &Eq::mass_change_limit_fraction>(),
       .doc = "desiccator constant-mass limit (ISO 12571)"},
      {.section = "equilibrium",
       .name = "min_weighing_interval_h",
       .factor = kSecondsPerHour,
       .min = 0,
       .max = 1000,
       .access = Field<kEquilibrate, &Eq::min_weighing_interval_s>(),
       .doc = "minimum time between the weighings compared"},
      {.section = "equilibrium",
       .name = "min_weighings",
       .kind = K::kInteger,
       .min = 2,
       .max = 100,
       .access = Field<kEquilibrate, &Eq::min_weighings>(),
       .stage_bound = kStageMin,
       .doc = "consecutive weighings that must agree"},
      {.section = "equilibrium",
       .name = "weighing_interval_tolerance_h",
       .factor = kSecondsPerHour,
       .min = 0,
       .max = 100,
       .access = Field<kEquilibrate, &Eq::weighing_interval_tolerance_s>(),
       .stage_bound = kStageMin,
       .doc = "slack on the 24 h spacing (a weighing at 09:01 after one at 09:03 the day before "
              "still counts); 0 = literal reading"},
      {.section = "equilibrium",
       .name = "rate_limit_percent_per_min",
       .factor = kFractionPerPercent,
       .min = 1e-8,
       .max = 1,
       .access = Field<kEquilibrate, &Eq::rate_limit_fraction_per_min>(),
       .doc = "vapour logs: dm/dt limit relative to dry mass (common practice)"},
      {.section = "equilibrium",
       .name = "rate_window_min",
       .factor = kSecondsPerMinute,
       .min = 0.5,
       .max = 10000,
       .access = Field<kEquilibrate, &Eq::rate_window_s>(),
       .doc = "window of the rate criterion"},
      {.section = "equilibrium",
       .name = "previous_weighing_starts_step",
       .kind = K::kBool,
       .access = Field<kEquilibrate, &Eq::previous_weighing_starts_step>(),
       .doc = "a desiccator step's approach to equilibrium is read from the specimen's last "
              "weighing of its previous step on (weighed, then moved on), when the step's first "
              "weighing is at least half a weighing interval later; false when specimens are "
              "stored or reconditioned between steps"},
      {.section = "equilibrium",
       .name = "extrapolate_unfinished_steps",
       .kind = K::kBool,
       .access = Field<kEquilibrate, &Eq::extrapolate_unfinished_steps>(),
       .doc = "fit an exponential to the tail of an unfinished step"},
      {.section = "equilibrium",
       .name = "exponential_terms",
       .kind = K::kInteger,
       .min = 1,
       .max = 2,
       .access = Field<kEquilibrate, &Eq::exponential_terms>(),
       .stage_bound = kStageMin | kStageMax,
       .doc = "kinetic models averaged: 1 = one exponential, Fickian sheet; 2 = also two"},
      {.section = "equilibrium",
       .name = "tail_fraction",
       .min = 0.05,
       .max = 1,
       .access = Field<kEquilibrate, &Eq::tail_fraction>(),
       .stage_bound = kStageMax,
       .doc = "fraction of a step used for the tail fit"},
      {.section = "equilibrium",
       .name = "max_tau_to_tail_ratio",
       .min = 0.1,
       .max = 1000,
       .access = Field<kEquilibrate, &Eq::max_tau_to_tail_ratio>(),
       .doc = "an extrapolation whose time constant exceeds this multiple of the tail length is "
              "rejected"},
      {.section = "equilibrium",
       .name = "min_tail_points",
       .kind = K::kInteger,
       .min = 5,
       .max = kMaxTailPoints,
       .access = Field<kEquilibrate, &Eq::min_tail_points>(),
       .stage_bound = kStageMin,
       .doc = "fewer block means in the tail: no extrapolation"},
      {.section = "equilibrium",
       .name = "include_not_equilibrated",
       .kind = K::kBool,
       .access = Field<kReduce, &reduce::ReduceOptions::include_not_equilibrated>(),
       .doc = "keep (flagged) points that never met the criterion"},
      // Below 0.1 s a block holds less than the fastest balance logs one row per (common
      // practice).
      {.section = "equilibrium",
       .name = "log_block_s",
       .min = 0.1,
       .max = 3600,
       .access = Field<kIngest, &ingest::IngestOptions::log_block_s>(),
       .doc = "width of the block means kept from a streamed log"},
      {.section = "equilibrium",
       .name = "log_gap_warning_min",
       .factor = kSecondsPerMinute,
       .min = 0.01,
       .max = 1e6,
       .access = Field<kIngest, &ingest::IngestOptions::log_gap_warning_s>(),
       .doc = "a gap in a log longer than this is a warning"},
      // [fit]
      {.section = "fit",
       .name = "models",
       .kind = K::kCustom,
       .work = true,
       .read = &ReadModels,
       .record = &RecordModels,
       .default_text = "all eight",
       .allowed_text = "registry keys, each once (work)",
       .doc = "registry keys: `gab`, `bet`, `vangenuchten`, `durner2`, `oswin`, `halsey`, "
              "`henderson`, `peleg` (also `bet_n`, `vangenuchten_free_m`, `durner3`)"},
      {.section = "fit",
       .name = "bet_rh_min_percent",
       .factor = kFractionPerPercent,
       .min = 0,
       .max = 100,
       .access = Field<kFit, &Fit::bet_rh_min_fraction>(),
       .stage_bound = kStageMin,
       .allowed_text = "0..100, below `bet_rh_max_percent`",
       .doc = "BET fitting range, lower end"},
      {.section = "fit",
       .name = "bet_rh_max_percent",
       .factor = kFractionPerPercent,
       .min = 0,
       .max = 100,
       .access = Field<kFit, &Fit::bet_rh_max_fraction>(),
       .stage_bound = kStageMax,
       .doc = "BET fitting range, upper end"},
      {.section = "fit",
       .name = "loss",
       .kind = K::kChoice,
       .access = Field<kFit, &Fit::loss>(),
       .choices = {"squared", "huber", "soft_l1", "cauchy"},
       .doc = "`\"squared\"` or a robust loss"},
      {.section = "fit",
       .name = "loss_scale",
       .min = 1e-6,
       .max = 1e6,
       .access = Field<kFit, &Fit::loss_scale>(),
       .doc = "robust-loss scale, in weighted-residual units"},
      {.section = "fit",
       .name = "errors_in_variables",
       .kind = K::kBool,
       .access = Field<kFit, &Fit::errors_in_variables>(),
       .doc = "fit the true RH of each point within its uncertainty (RH uncertainty enters the "
              "parameter uncertainties)"},
      {.section = "fit",
       .name = "weights",
       .kind = K::kChoice,
       .access = Field<kFit, &Fit::weights>(),
       .choices = {"relative", "absolute"},
       .doc = "`\"absolute\"`: the GUM uncertainties are absolute, covariance unscaled, "
              "chi-square check reported; `\"relative\"`: covariance scaled by SSR/(n−p)"},
      {.section = "fit",
       .name = "bootstrap_resamples",
       .kind = K::kInteger,
       .min = 0,
       .max = kMaxResamples,
       .access = Field<kFit, &Fit::bootstrap_resamples>(),
       .work = true,
       .stage_bound = kStageMin,
       .doc = "bootstrap refits"},
      {.section = "fit",
       .name = "bootstrap",
       .kind = K::kChoice,
       .access = Field<kFit, &Fit::bootstrap_kind>(),
       .choices = {"residual", "case"},
       .doc = "residual or case resampling"},
      {.section = "fit",
       .name = "refit_tolerance_se",
       .min = 0,
       .max = 1,
       .access = Field<kFit, &Fit::refit_tolerance_se>(),
       .stage_bound = kStageMin | kStageMax,
       .doc = "a bootstrap or Monte Carlo refit stops once its estimated distance to its optimum "
              "(undamped Gauss-Newton step) is below this many standard errors in every "
              "parameter; 0 = off"},
      {.section = "fit",
       .name = "monte_carlo_draws",
       .kind = K::kInteger,
       .min = 0,
       .max = kMaxResamples,
       .access = Field<kFit, &Fit::monte_carlo_draws>(),
       .work = true,
       .stage_bound = kStageMin,
       .doc = "JCGM 101 propagation of the input uncertainties"},
      {.section = "fit",
       .name = "seed",
       .kind = K::kSeed,
       .min = 0,
       .max = kMaxSeed,
       .access = Field<kFit, &Fit::seed>(),
       .doc = "seed of every random draw of the fits (results are a pure function of inputs and "
              "seed)"},
      {.section = "fit",
       .name = "threads",
       .kind = K::kInteger,
       .min = 0,
       .max = kMaxThreads,
       .access = Field<kFit, &Fit::threads>(),
       .stage_bound = kStageMin,
       .default_text = "0 (auto)",
       .doc = "threads of the bootstrap and Monte Carlo refits; 0 = the processor's cores, at "
              "most 2; results are identical for every value (each draw has its own random "
              "stream)"},
      {.section = "fit",
       .name = "band_points",
       .kind = K::kInteger,
       .min = 2,
       .max = kMaxBandPoints,
       .access = Field<kFit, &Fit::band_grid_points>(),
       .work = true,
       .doc = "grid of the curve bands"},
      {.section = "fit",
       .name = "band_rh_min_percent",
       .factor = kFractionPerPercent,
       .min = 0,
       .max = 100,
       .access = Field<kFit, &Fit::band_rh_min_fraction>(),
       .stage_bound = kStageMin,
       .allowed_text = "0..100, below `band_rh_max_percent`",
       .doc = "lower end of the curve bands"},
      {.section = "fit",
       .name = "band_rh_max_percent",
       .factor = kFractionPerPercent,
       .min = 0,
       .max = 100,
       .access = Field<kFit, &Fit::band_rh_max_fraction>(),
       .stage_bound = kStageMax,
       .doc = "upper end of the curve bands"},
      {.section = "fit",
       .name = "confidence_level",
       .min = 0.5,
       .max = 0.9999,
       .access = Field<kFit, &Fit::confidence_level>(),
       .doc = "parameter intervals and bands"},
      {.section = "fit",
       .name = "include_retention_points",
       .kind = K::kBool,
       .access = Field<kFit, &Fit::include_retention_points>(),
       .doc = "retention points join van Genuchten/Durner fits"},
      // [pores]
      {.section = "pores",
       .name = "geometry",
       .kind = K::kChoice,
       .access = Field<kPores, &Pores::geometry>(),
       .choices = {"open_cylinder", "closed_cylinder"},
       .doc = "fixes the meniscus per branch"},
      {.section = "pores",
       .name = "film",
       .kind = K::kChoice,
       .access = Field<kPores, &Pores::film>(),
       .choices = {"none", "constant", "fitted_layers", "badmann", "table"},
       .allowed_text = "`\"none\"`, `\"constant\"`, `\"fitted_layers\"`, `\"badmann\"`, "
                       "`\"table\"` (needs `film_table`)",
       .doc = "adsorbed-film model"},
      {.section = "pores",
       .name = "film_thickness_nm",
       .factor = kMetresPerNanometre,
       .min = 0,
       .max = 1000,
       .access = Field<kPores, &Pores::constant_film_thickness_m>(),
       .allowed_text = "0..1000, below `min_radius_nm`",
       .doc = "constant film"},
      {.section = "pores",
       .name = "monolayer_thickness_nm",
       .factor = kMetresPerNanometre,
       .min = 0.01,
       .max = 10,
       .access = Field<kPores, &Pores::monolayer_thickness_m>(),
       .doc = "one molecular layer, for `fitted_layers`"},
      {.section = "pores",
       .name = "film_table",
       .kind = K::kCustom,
       .read = &ReadFilmTable,
       .record = &RecordFilmTable,
       .default_text = "—",
       .allowed_text = "RH 0..100, thickness >= 0",
       .doc = "`[[rh_percent, thickness_nm], ...]` for `\"table\"`"},
      {.section = "pores",
       .name = "contact_angle_deg",
       .factor = physics::kRadiansPerDegree,
       .min = 0,
       .max = 89,
       .access = Field<kPores, &Pores::contact_angle_rad>(),
       .stage_bound = kStageMin,
       .doc = "wetting angle in the Kelvin equation"},
      {.section = "pores",
       .name = "min_radius_nm",
       .factor = kMetresPerNanometre,
       .min = 0.1,
       .max = 1e6,
       .access = Field<kPores, &Pores::min_radius_m>(),
       .doc = "Kelvin inversion, smallest radius"},
      {.section = "pores",
       .name = "max_radius_nm",
       .factor = kMetresPerNanometre,
       .min = 0,
       .max = 1e7,
       .access = Field<kPores, &Pores::max_radius_m>(),
       .default_text = "0 (auto)",
       .allowed_text = "0 or above `min_radius_nm`, up to 1e7",
       .doc = "Kelvin inversion, largest radius (0: that of the highest measured RH)"},
      {.section = "pores",
       .name = "grid_points",
       .kind = K::kInteger,
       .min = 10,
       .max = kMaxPoreGridPoints,
       .access = Field<kPores, &Pores::grid_points>(),
       .work = true,
       .stage_bound = kStageMin,
       .doc = "radius grid"},
      {.section = "pores",
       .name = "band_draws",
       .kind = K::kInteger,
       .min = 0,
       .max = kMaxResamples,
       .access = Field<kPores, &Pores::band_draws>(),
       .work = true,
       .stage_bound = kStageMin,
       .doc = "Monte Carlo band of the distribution"},
      {.section = "pores",
       .name = "seed",
       .kind = K::kSeed,
       .min = 0,
       .max = kMaxSeed,
       .access = Field<kPores, &Pores::seed>(),
       .doc = "seed of the band draws"},
      {.section = "pores",
       .name = "model",
       .kind = K::kCustom,
       .read = &ReadPoreModel,
       .record = &RecordPoreModel,
       .allowed_text = "`\"best\"` or one of `[fit] models`",
       .doc = "model used for the model-based distribution"},
      {.section = "pores",
       .name = "stepwise",
       .kind = K::kBool,
       .access = Field<kPores, &Pores::stepwise>(),
       .doc = "also the BJH-type stepwise method"},
      {.section = "pores",
       .name = "molecular_area_nm2",
       .factor = physics::kSquareMetresPerSquareNanometre,
       .min = 0.01,
       .max = 10,
       .access = Field<kPores, &Pores::molecular_area_m2>(),
       .doc = "water cross-section for the surface area"},
      {.section = "pores",
       .name = "reference_conditions",
       .kind = K::kCustom,
       .read = &ReadReferenceConditions,
       .record = &RecordReferenceConditions,
       .default_text = "from the template",
       .allowed_text = "-50..100 degC, 0 < RH < 100",
       .doc = "`[{ temperature_C = 23, rh_percent = 50 }, ...]`"},
      // [report]
      {.section = "report",
       .name = "coverage_factor",
       .min = 1,
       .max = 5,
       .access = Field<kReduce, &reduce::ReduceOptions::coverage_factor>(),
       .stage_bound = kStageMin | kStageMax,
       .doc = "k of the expanded uncertainties"},
  };
}

// Reads one key of `in` into `s` (nothing when it is not written).
void ReadSetting(const SettingKey& key, TableReader& in, JobSettings& s) {
  std::optional<double> written;
  switch (key.kind) {
    case SettingKind::kNumber:
      written = in.Number(key.name, key.min, key.max);
      break;
    case SettingKind::kInteger:
    case SettingKind::kSeed:
      written = in.Integer(key.name, key.min, key.max);
      break;
    case SettingKind::kBool:
      written = in.Bool(key.name);
      break;
    case SettingKind::kChoice:
      written = in.Choice(key.name, key.choices);
      break;
    case SettingKind::kCustom:
      key.read(in, s);
      return;
  }
  if (written) key.access.set(s, *written * key.factor);
}

// Two keys of one table that must satisfy low < high (written units); the error points at
// the key written in the job (the higher one when both are).
void RequireBelow(const TableReader& in, const std::string& low_key, double low,
                  const std::string& high_key, double high) {
  if (low < high) return;
  const std::string& at = in.Has(high_key) || !in.Has(low_key) ? high_key : low_key;
  throw InputError(in.At(at),
                   in.Name(low_key) + " = " + TableReader::Show(low) + " is not below " +
                       in.Name(high_key) + " = " + TableReader::Show(high),
                   low_key + " < " + high_key);
}

// Rules between keys of one section, after the section is read.
void CheckSection(const std::string& section, const TableReader& in, const JobSettings& s) {
  if (section == "fit") {
    const auto& f = s.fit;
    RequireBelow(in, "bet_rh_min_percent", f.bet_rh_min_fraction * kPercent, "bet_rh_max_percent",
                 f.bet_rh_max_fraction * kPercent);
    RequireBelow(in, "band_rh_min_percent", f.band_rh_min_fraction * kPercent,
                 "band_rh_max_percent", f.band_rh_max_fraction * kPercent);
  } else if (section == "pores") {
    const auto& p = s.pores;
    const double min_nm = p.min_radius_m / kMetresPerNanometre;
    if (p.max_radius_m != 0.0) {  // 0: up to the radius of the highest measured RH
      RequireBelow(in, "min_radius_nm", min_nm, "max_radius_nm",
                   p.max_radius_m / kMetresPerNanometre);
    }
    // A film at least as thick as the smallest pore leaves no core for the Kelvin equation.
    if (p.film == pores::FilmModel::kConstant && p.constant_film_thickness_m >= p.min_radius_m) {
      throw InputError(in.At(in.Has("film_thickness_nm") ? "film_thickness_nm" : "min_radius_nm"),
                       in.Name("film_thickness_nm") + " = " +
                           TableReader::Show(p.constant_film_thickness_m / kMetresPerNanometre) +
                           " is not below " + in.Name("min_radius_nm") + " = " +
                           TableReader::Show(min_nm),
                       "a film thinner than the smallest pore radius");
    }
    if (p.film == pores::FilmModel::kUserTable && p.film_table.empty()) {
      throw InputError(in.At("film"), in.Name("film") + " = \"table\" without a film_table",
                       "film_table = [[rh_percent, thickness_nm], ...] in [pores]");
    }
  }
}

// Reads every section of the table in order, records where the work settings are written.
void ReadAllSettings(const toml::table& root, const std::string& file, JobSettings& s) {
  const std::vector<SettingKey>& keys = SettingKeys();
  for (std::size_t first = 0; first < keys.size();) {
    const std::string section = keys[first].section;
    TableReader in(TomlReader(file).OptionalTable(root, section), section, file);
    std::size_t end = first;
    for (; end < keys.size() && section == keys[end].section; ++end) {
      ReadSetting(keys[end], in, s);
      if (keys[end].work) {
        s.work_keys[section + "." + keys[end].name] =
            in.Has(keys[end].name) ? in.At(keys[end].name) : SourceLocation{file, 0, 0};
      }
    }
    CheckSection(section, in, s);
    in.RejectUnknownKeys();
    first = end;
  }
}

// A number for the README: %g without the exponent's padding (1e-6, 1e6).
std::string ShowNumber(double value) {
  std::string text = TableReader::Show(value);
  for (const auto& [from, to] :
       {std::pair{"e-0", "e-"}, std::pair{"e+0", "e"}, std::pair{"e+", "e"}}) {
    if (const auto at = text.find(from); at != std::string::npos) {
      text.replace(at, std::string(from).size(), to);
    }
  }
  return text;
}

std::string DefaultText(const SettingKey& key, const JobSettings& defaults) {
  if (key.default_text != nullptr) return key.default_text;
  const nlohmann::ordered_json value = RecordSetting(key, defaults);
  if (value.is_string()) return "`\"" + value.get<std::string>() + "\"`";
  if (value.is_boolean()) return value.get<bool>() ? "true" : "false";
  if (value.is_number_float()) return ShowNumber(value.get<double>());
  return value.dump();
}

std::string AllowedText(const SettingKey& key) {
  if (key.allowed_text != nullptr) return key.allowed_text;
  std::string text;
  switch (key.kind) {
    case SettingKind::kBool:
      return "bool";
    case SettingKind::kChoice:
      for (const std::string& choice : key.choices) {
        text += (text.empty() ? "`\"" : ", `\"") + choice + "\"`";
      }
      return text;
    case SettingKind::kInteger:
    case SettingKind::kSeed:
      text = fmt::format("{}..{}", static_cast<std::int64_t>(key.min),
                         static_cast<std::int64_t>(key.max));
      return key.work ? text + " (work)" : text;
    default:
      text = ShowNumber(key.min) + ".." + ShowNumber(key.max);
      return key.work ? text + " (work)" : text;
  }
}

}  // namespace

const std::vector<SettingKey>& SettingKeys() {
  static const std::vector<SettingKey> keys = BuildSettingKeys();
  return keys;
}

nlohmann::ordered_json RecordSetting(const SettingKey& key, const JobSettings& s) {
  const double stored = key.kind == SettingKind::kCustom ? 0.0 : key.access.get(s);
  switch (key.kind) {
    case SettingKind::kNumber:
      return AsWritten(stored / key.factor);
    case SettingKind::kInteger:
      return static_cast<int>(stored);
    case SettingKind::kSeed:
      return static_cast<std::uint64_t>(stored);
    case SettingKind::kBool:
      return stored != 0.0;
    case SettingKind::kChoice: {
      const auto index = static_cast<std::size_t>(stored);
      return index < key.choices.size() ? key.choices[index] : std::string("?");
    }
    case SettingKind::kCustom:
      return key.record(s);
  }
  return nullptr;
}

std::string SettingsMarkdownTable() {
  const JobSettings defaults;
  std::string text =
      "| key | default | allowed | meaning |\n"
      "|---|---|---|---|\n";
  std::string section;
  for (const SettingKey& key : SettingKeys()) {
    const std::string name = section == key.section
                                 ? fmt::format("`{}`", key.name)
                                 : fmt::format("`[{}]` `{}`", key.section, key.name);
    section = key.section;
    text += fmt::format("| {} | {} | {} | {} |\n", name, DefaultText(key, defaults),
                        AllowedText(key), key.doc);
  }
  return text;
}

}  // namespace internal

namespace {

// `template = "..."` names a file (relative to the job file) rather than templates/<name>.toml.
bool IsTemplatePath(const std::string& name_or_path) {
  return name_or_path.find('/') != std::string::npos || name_or_path.ends_with(".toml");
}

nlohmann::ordered_json Effective(const JobSettings& s) {
  nlohmann::ordered_json j;
  for (const internal::SettingKey& key : internal::SettingKeys()) {
    j[key.section][key.name] = internal::RecordSetting(key, s);
  }
  j["report"]["template"] = s.template_file.filename().string();
  return j;
}

}  // namespace

std::filesystem::path ResolveTemplate(const std::string& name_or_path,
                                      const std::filesystem::path& job_dir) {
  if (IsTemplatePath(name_or_path)) return (job_dir / name_or_path).lexically_normal();
  std::filesystem::path dir = SORBTRACE_TEMPLATE_DIR;
  if (const char* env = std::getenv("SORBTRACE_TEMPLATE_DIR"); env != nullptr && *env != '\0') {
    dir = env;
  }
  return dir / (name_or_path + ".toml");
}

namespace {

// The job's declared material class as the pore stage needs it (pores::MaterialClass): porous
// minerals have rigid pores a Kelvin analysis can size; wood and fibres, polymers,
// pharmaceutical powders and foods swell or take water into their structure (sorption by
// dissolution in the solid, not capillary condensation in fixed pores: Skaar, "Wood-Water
// Relations", 1988, ch. 3; Zografi & Kontny, Pharm. Res. 3 (1986) 187), so the pore section is
// omitted for them; "other" and an unstated class leave the section with its caution.
pores::MaterialClass PoreMaterialClassOf(ingest::MaterialClass material_class) {
  switch (material_class) {
    case ingest::MaterialClass::kPorousMineral:
      return pores::MaterialClass::kRigid;
    case ingest::MaterialClass::kWoodOrFibre:
    case ingest::MaterialClass::kPolymer:
    case ingest::MaterialClass::kPharmaceuticalPowder:
    case ingest::MaterialClass::kFood:
      return pores::MaterialClass::kSwelling;
    case ingest::MaterialClass::kUnstated:
    case ingest::MaterialClass::kOther:
      break;
  }
  return pores::MaterialClass::kNotStated;
}

}  // namespace

JobSettings LoadJobSettings(const std::filesystem::path& job_file, const ingest::JobSpec& job,
                            const std::filesystem::path& output_dir) {
  (void)output_dir;
  const std::string file = job_file.string();
  // The tree LoadJobSpec parsed; the file is parsed again only for a spec read elsewhere.
  std::optional<toml::table> own_root;
  const toml::table& root =
      job.parsed != nullptr && job.parsed->file == job_file
          ? job.parsed->root
          : own_root.emplace(ParseTomlFile(job_file, "a valid TOML job file"));
  JobSettings settings;
  settings.template_file = ResolveTemplate(job.template_name, job_file.parent_path());
  const toml::node* template_node = root["job"]["template"].node();
  const SourceLocation template_where =
      template_node == nullptr ? SourceLocation{file, 0, 0} : TomlReader(file).At(*template_node);
  // A template given as a path follows the data-path policy; one given by name comes from
  // the installed templates/.
  if (IsTemplatePath(job.template_name) && !job.allow_data_outside_job_folder &&
      !LiesInsideFolder(job.template_name, job_file.parent_path())) {
    throw InputError(
        template_where,
        "report template '" + Excerpt(job.template_name) + "' lies outside the job file's folder",
        "a template name of templates/ (e.g. \"full\"), a template file inside the "
        "job file's folder tree, or allow_data_outside_job_folder = true in [job]");
  }
  if (!std::filesystem::is_regular_file(settings.template_file)) {
    // Located at the job's `template` key: that is the line to correct.
    throw InputError(template_where,
                     "report template '" + Excerpt(job.template_name) + "' not found (looked for " +
                         Excerpt(settings.template_file.string(), 200) + ")",
                     "a template name of templates/ (e.g. \"full\") or a template file, relative "
                     "to the job file");
  }
  // The template supplies the reference conditions unless the job overrides them.
  settings.layout = report::LoadTemplate(settings.template_file);
  if (!settings.layout.reference_conditions.empty()) {
    settings.pores.reference_conditions = settings.layout.reference_conditions;
  }

  internal::ReadAllSettings(root, file, settings);

  // The pore-distribution band is drawn at the fit stage's confidence level.
  settings.pores.band_confidence_level = settings.fit.confidence_level;
  settings.pores.material_class = PoreMaterialClassOf(job.material_class);
  std::string error;
  if (!settings.fit.IsValid(&error) || !settings.pores.IsValid(&error) ||
      !settings.equilibrate.IsValid(&error) || !settings.reduce.IsValid(&error)) {
    throw InputError(SourceLocation{file, 0, 0}, "inconsistent settings: " + error,
                     "settings that satisfy the documented ranges");
  }
  settings.effective = Effective(settings);
  return settings;
}

WorkEstimate EstimateWork(const JobSettings& settings, const reduce::ReducedIsotherms& reduced) {
  // Calibration on the reference machine (run.h, WorkEstimate; wood_fibre_board_23C_40C demo,
  // 22 points in 4 groups, 8 models): 9000 more Monte Carlo refits took 13 s, 5.7 us per
  // point and model-refit after the band's share, 80 units; 9000 more bootstrap refits took
  // 6.2 s (1.5 us per point, 20 units: the Monte Carlo figure bounds both). grid_points x
  // band_draws 400 x 1000 -> 2000 x 10000 took 1.5 s more, 19 ns per grid point and draw,
  // 0.3 units, rounded up to 0.5.
  constexpr double kUnitsPerPointRefit = 80.0;
  constexpr double kUnitsPerPoreGridDraw = 0.5;
  // Fit groups: one per branch and temperature cluster of data sets (pipeline/fit/grouping.h),
  // counted here per branch and data set (an upper bound: clusters may merge data sets);
  // retention points join every group (an upper bound too).
  std::map<std::pair<int, std::string>, double> group_points;
  for (const reduce::IsothermPoint& point : reduced.points) {
    group_points[{static_cast<int>(point.branch), point.dataset_id}] += 1.0;
  }
  const auto& f = settings.fit;
  const double refits = 1.0 + f.bootstrap_resamples + f.monte_carlo_draws;
  const double models = static_cast<double>(f.models.size());
  WorkEstimate estimate;
  for (const auto& [group, points] : group_points) {
    const double n = points + static_cast<double>(reduced.retention.size());
    estimate.fit_units += models * refits * (n * kUnitsPerPointRefit + f.band_grid_points);
  }
  const auto& p = settings.pores;
  estimate.pore_units = static_cast<double>(group_points.size()) * p.grid_points *
                        (1.0 + p.band_draws) * kUnitsPerPoreGridDraw;
  return estimate;
}

void CheckWorkBudget(const JobSettings& settings, const reduce::ReducedIsotherms& reduced) {
  const WorkEstimate estimate = EstimateWork(settings, reduced);
  if (estimate.total() <= kMaxWorkUnits) return;
  // Point at the setting that contributes most among those the job writes.
  const auto& keys = settings.work_keys;
  const auto written = [&keys](const std::string& key) {
    const auto it = keys.find(key);
    return it != keys.end() && it->second.line > 0;
  };
  std::vector<std::string> order;
  if (estimate.pore_units > estimate.fit_units) {
    order = {"pores.band_draws",      "pores.grid_points", "fit.bootstrap_resamples",
             "fit.monte_carlo_draws", "fit.models",        "fit.band_points"};
  } else {
    const bool bootstrap_first = settings.fit.bootstrap_resamples >= settings.fit.monte_carlo_draws;
    order = {bootstrap_first ? "fit.bootstrap_resamples" : "fit.monte_carlo_draws",
             bootstrap_first ? "fit.monte_carlo_draws" : "fit.bootstrap_resamples",
             "fit.models",
             "fit.band_points",
             "pores.band_draws",
             "pores.grid_points"};
  }
  SourceLocation where;
  std::string key_named = "the job's data";
  for (const std::string& key : order) {
    if (written(key)) {
      where = keys.at(key);
      key_named = key;
      break;
    }
  }
  if (where.file.empty() && !keys.empty()) where = {keys.begin()->second.file, 0, 0};
  const std::string text = fmt::format(
      "estimated work {:.2g} units (fits {:.2g}, pore distributions {:.2g}) is above the budget "
      "of {:.2g} units of one job; {} is the largest contribution",
      estimate.total(), estimate.fit_units, estimate.pore_units, kMaxWorkUnits, key_named);
  throw InputError(where, text,
                   "fewer bootstrap_resamples or monte_carlo_draws, fewer models, or smaller "
                   "grid_points or band_draws (README, \"Cost of a job\")");
}

}  // namespace sorbtrace::run
