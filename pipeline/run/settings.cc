// Stage settings of a job file: [equilibrium], [fit], [pores] and [report] over the built-in
// defaults (each stage's Options) and the report template. Every key is checked: an unknown
// key, a wrong type or an out-of-range value is an InputError naming file, line, column, key.
#include <fmt/format.h>
#include <toml++/toml.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <map>
#include <set>
#include <string>
#include <vector>

#include "fitters/registry.h"
#include "pipeline/common/bounded_input.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/physics/physics.h"
#include "pipeline/run/run.h"

#ifndef SORBTRACE_TEMPLATE_DIR
#define SORBTRACE_TEMPLATE_DIR "templates"
#endif

namespace sorbtrace::run {
namespace {

constexpr double kPi = 3.14159265358979323846;

// Reads typed values out of one table, remembering which keys were used so that leftovers
// can be reported as unknown.
class TableReader {
 public:
  TableReader(const toml::table* table, std::string name, std::string file)
      : table_(table), name_(std::move(name)), file_(std::move(file)) {}

  bool Has(const std::string& key) const { return table_ != nullptr && table_->contains(key); }

  SourceLocation Where(const toml::node* node) const {
    if (node == nullptr) return {file_, 0, 0};
    return {file_, static_cast<int>(node->source().begin.line),
            static_cast<int>(node->source().begin.column)};
  }

  const toml::node* Node(const std::string& key) {
    used_.insert(key);
    return table_ == nullptr ? nullptr : table_->get(key);
  }

  // Where `key` is written, else where the table starts, else the file alone.
  SourceLocation At(const std::string& key) const {
    if (table_ == nullptr) return {file_, 0, 0};
    if (const toml::node* node = table_->get(key)) return Where(node);
    return Where(table_);
  }

  void Number(const std::string& key, double& target, double minimum, double maximum,
              double scale = 1.0, double offset = 0.0) {
    const toml::node* node = Node(key);
    if (node == nullptr) return;
    std::optional<double> value = node->value<double>();
    if (!value || !std::isfinite(*value)) {
      throw InputError(Where(node), Name(key) + " is not a number", "a finite number");
    }
    if (*value < minimum || *value > maximum) {
      throw InputError(Where(node), Name(key) + " = " + Show(*value) + " is out of range",
                       "a value from " + Show(minimum) + " to " + Show(maximum));
    }
    target = *value * scale + offset;
  }

  void Integer(const std::string& key, int& target, int minimum, int maximum) {
    const toml::node* node = Node(key);
    if (node == nullptr) return;
    std::optional<std::int64_t> value = node->value<std::int64_t>();
    if (!node->is_integer() || !value) {
      throw InputError(Where(node), Name(key) + " is not an integer", "a whole number");
    }
    if (*value < minimum || *value > maximum) {
      throw InputError(
          Where(node), Name(key) + " = " + std::to_string(*value) + " is out of range",
          "a whole number from " + std::to_string(minimum) + " to " + std::to_string(maximum));
    }
    target = static_cast<int>(*value);
  }

  void Seed(const std::string& key, std::uint64_t& target) {
    int value = 0;
    if (!Has(key)) {
      Node(key);
      return;
    }
    Integer(key, value, 0, 2147483647);
    target = static_cast<std::uint64_t>(value);
  }

  void Bool(const std::string& key, bool& target) {
    const toml::node* node = Node(key);
    if (node == nullptr) return;
    if (!node->is_boolean()) {
      throw InputError(Where(node), Name(key) + " is not a boolean", "true or false");
    }
    target = *node->value<bool>();
  }

  // A string that must be one of `choices`; returns the index.
  int Choice(const std::string& key, const std::vector<std::string>& choices, int current) {
    const toml::node* node = Node(key);
    if (node == nullptr) return current;
    std::optional<std::string> value = node->value<std::string>();
    std::string list;
    for (const auto& choice : choices) list += (list.empty() ? "\"" : ", \"") + choice + "\"";
    if (!value) throw InputError(Where(node), Name(key) + " is not a string", "one of " + list);
    for (size_t i = 0; i < choices.size(); ++i) {
      if (*value == choices[i]) return static_cast<int>(i);
    }
    throw InputError(Where(node), Name(key) + " = \"" + Excerpt(*value) + "\" is not known",
                     "one of " + list);
  }

  void RejectUnknownKeys() const {
    if (table_ == nullptr) return;
    for (const auto& [key, node] : *table_) {
      if (used_.count(std::string(key.str())) == 0) {
        const SourceLocation where =
            key.source().begin.line > 0
                ? SourceLocation{file_, static_cast<int>(key.source().begin.line),
                                 static_cast<int>(key.source().begin.column)}
                : Where(&node);
        throw InputError(where, "unknown key " + Name(std::string(key.str())),
                         "one of the documented keys of [" + name_ + "] (README, job file)");
      }
    }
  }

  std::string Name(const std::string& key) const { return name_ + "." + key; }
  static std::string Show(double value) {
    char buffer[32];
    std::snprintf(buffer, sizeof buffer, "%g", value);
    return buffer;
  }

 private:
  const toml::table* table_;
  std::string name_;
  std::string file_;
  std::set<std::string> used_;
};

const toml::table* SubTable(const toml::table& root, const std::string& name,
                            const std::string& file) {
  const toml::node* node = root.get(name);
  if (node == nullptr) return nullptr;
  if (!node->is_table()) {
    throw InputError(SourceLocation{file, static_cast<int>(node->source().begin.line),
                                    static_cast<int>(node->source().begin.column)},
                     "[" + name + "] is not a table", "a [" + name + "] section");
  }
  return node->as_table();
}

// Upper bounds of the work settings (README, stage settings): what a laboratory uses with room
// to spare (common practice: 1000-2000 bootstrap or Monte Carlo draws give percentiles of a
// 95 % interval to about 1 % (JCGM 101:2008, 7.2); plots and distributions are smooth at a
// few hundred grid points). Within them the whole job is bounded by kMaxWorkUnits below.
constexpr int kMaxResamples = 10000;
constexpr int kMaxBandPoints = 1000;
constexpr int kMaxPoreGridPoints = 2000;
constexpr int kMaxTailPoints = 1000;

std::string ModelList() {
  std::string list;
  for (const std::string& name : fitters::ModelNames()) {
    list += (list.empty() ? "" : ", ") + name;
  }
  return list;
}

// Two keys of one table that must satisfy low < high; the error points at the key written in
// the job (the higher one when both are).
void RequireBelow(const TableReader& in, const std::string& low_key, double low,
                  const std::string& high_key, double high) {
  if (low < high) return;
  const std::string& at = in.Has(high_key) || !in.Has(low_key) ? high_key : low_key;
  throw InputError(in.At(at),
                   in.Name(low_key) + " = " + TableReader::Show(low) + " is not below " +
                       in.Name(high_key) + " = " + TableReader::Show(high),
                   low_key + " < " + high_key);
}

void ReadEquilibrium(TableReader& in, JobSettings& s) {
  auto& e = s.equilibrate;
  in.Number("mass_change_limit_percent", e.mass_change_limit_fraction, 1e-6, 10.0, 0.01);
  in.Number("min_weighing_interval_h", e.min_weighing_interval_s, 0.0, 1000.0, 3600.0);
  in.Integer("min_weighings", e.min_weighings, 2, 100);
  in.Number("weighing_interval_tolerance_h", e.weighing_interval_tolerance_s, 0.0, 100.0, 3600.0);
  in.Number("rate_limit_percent_per_min", e.rate_limit_fraction_per_min, 1e-8, 1.0, 0.01);
  in.Number("rate_window_min", e.rate_window_s, 0.5, 10000.0, 60.0);
  in.Bool("extrapolate_unfinished_steps", e.extrapolate_unfinished_steps);
  in.Integer("exponential_terms", e.exponential_terms, 1, 2);
  in.Number("tail_fraction", e.tail_fraction, 0.05, 1.0);
  in.Number("max_tau_to_tail_ratio", e.max_tau_to_tail_ratio, 0.1, 1000.0);
  // EquilibrateOptions needs 5 block means in a tail; 1000 is a full tail of a day-long step
  // at 90 s blocks.
  in.Integer("min_tail_points", e.min_tail_points, 5, kMaxTailPoints);
  in.Bool("include_not_equilibrated", s.reduce.include_not_equilibrated);
  // Below 0.1 s a block holds less than the fastest balance logs one row per (common practice).
  in.Number("log_block_s", s.ingest.log_block_s, 0.1, 3600.0);
  in.Number("log_gap_warning_min", s.ingest.log_gap_warning_s, 0.01, 1e6, 60.0);
}

void ReadFit(TableReader& in, JobSettings& s) {
  auto& f = s.fit;
  if (const toml::node* node = in.Node("models")) {
    const toml::array* array = node->as_array();
    if (array == nullptr || array->empty()) {
      throw InputError(in.Where(node), in.Name("models") + " is not a list of model names",
                       "e.g. models = [\"gab\", \"bet\"]");
    }
    f.models.clear();
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
      if (std::find(f.models.begin(), f.models.end(), *name) != f.models.end()) {
        throw InputError(in.Where(&element),
                         in.Name("models") + ": \"" + *name + "\" is listed twice",
                         "each model once");
      }
      f.models.push_back(*name);
    }
  }
  in.Number("bet_rh_min_percent", f.bet_rh_min_fraction, 0.0, 100.0, 0.01);
  in.Number("bet_rh_max_percent", f.bet_rh_max_fraction, 0.0, 100.0, 0.01);
  RequireBelow(in, "bet_rh_min_percent", f.bet_rh_min_fraction * 100.0, "bet_rh_max_percent",
               f.bet_rh_max_fraction * 100.0);
  f.loss = static_cast<fitters::LossKind>(
      in.Choice("loss", {"squared", "huber", "soft_l1", "cauchy"}, static_cast<int>(f.loss)));
  in.Number("loss_scale", f.loss_scale, 1e-6, 1e6);
  in.Bool("errors_in_variables", f.errors_in_variables);
  f.weights = static_cast<fitters::WeightConvention>(
      in.Choice("weights", {"relative", "absolute"}, static_cast<int>(f.weights)));
  in.Integer("bootstrap_resamples", f.bootstrap_resamples, 0, kMaxResamples);
  in.Number("refit_tolerance_se", f.refit_tolerance_se, 0.0, 1.0);
  f.bootstrap_kind = static_cast<fitters::ResampleKind>(
      in.Choice("bootstrap", {"residual", "case"}, static_cast<int>(f.bootstrap_kind)));
  in.Integer("monte_carlo_draws", f.monte_carlo_draws, 0, kMaxResamples);
  in.Seed("seed", f.seed);
  in.Integer("band_points", f.band_grid_points, 2, kMaxBandPoints);
  in.Number("band_rh_min_percent", f.band_rh_min_fraction, 0.0, 100.0, 0.01);
  in.Number("band_rh_max_percent", f.band_rh_max_fraction, 0.0, 100.0, 0.01);
  RequireBelow(in, "band_rh_min_percent", f.band_rh_min_fraction * 100.0, "band_rh_max_percent",
               f.band_rh_max_fraction * 100.0);
  in.Number("confidence_level", f.confidence_level, 0.5, 0.9999);
  in.Bool("include_retention_points", f.include_retention_points);
}

void ReadPores(TableReader& in, JobSettings& s) {
  auto& p = s.pores;
  p.geometry = static_cast<pores::PoreGeometry>(
      in.Choice("geometry", {"open_cylinder", "closed_cylinder"}, static_cast<int>(p.geometry)));
  p.film = static_cast<pores::FilmModel>(in.Choice(
      "film", {"none", "constant", "fitted_layers", "badmann", "table"}, static_cast<int>(p.film)));
  in.Number("film_thickness_nm", p.constant_film_thickness_m, 0.0, 1000.0, 1e-9);
  in.Number("monolayer_thickness_nm", p.monolayer_thickness_m, 0.01, 10.0, 1e-9);
  if (const toml::node* node = in.Node("film_table")) {
    const toml::array* rows = node->as_array();
    if (rows == nullptr || rows->size() < 2) {
      throw InputError(in.Where(node), in.Name("film_table") + " is not a table of rows",
                       "film_table = [[rh_percent, thickness_nm], ...] with at least 2 rows");
    }
    p.film_table.clear();
    for (const auto& row : *rows) {
      const toml::array* pair = row.as_array();
      std::optional<double> rh =
          pair && pair->size() == 2 ? (*pair)[0].value<double>() : std::nullopt;
      std::optional<double> t =
          pair && pair->size() == 2 ? (*pair)[1].value<double>() : std::nullopt;
      if (!rh || !t || *rh <= 0 || *rh >= 100 || *t < 0) {
        throw InputError(in.Where(&row), in.Name("film_table") + " row is invalid",
                         "[rh_percent (0..100), thickness_nm (>= 0)]");
      }
      p.film_table.emplace_back(*rh / 100.0, *t * 1e-9);
    }
  }
  double contact_angle_deg = p.contact_angle_rad * 180.0 / kPi;
  in.Number("contact_angle_deg", contact_angle_deg, 0.0, 89.0);
  p.contact_angle_rad = contact_angle_deg * kPi / 180.0;
  in.Number("min_radius_nm", p.min_radius_m, 0.1, 1e6, 1e-9);
  in.Number("max_radius_nm", p.max_radius_m, 0.0, 1e7, 1e-9);
  if (p.max_radius_m != 0.0) {  // 0: up to the radius of the highest measured RH
    RequireBelow(in, "min_radius_nm", p.min_radius_m * 1e9, "max_radius_nm", p.max_radius_m * 1e9);
  }
  in.Integer("grid_points", p.grid_points, 10, kMaxPoreGridPoints);
  in.Integer("band_draws", p.band_draws, 0, kMaxResamples);
  in.Seed("seed", p.seed);
  if (const toml::node* node = in.Node("model")) {
    std::optional<std::string> model = node->value<std::string>();
    if (!model) {
      throw InputError(in.Where(node), in.Name("model") + " is not a string",
                       "\"best\" or a model name such as \"durner2\"");
    }
    p.source_model = *model;
    const auto& fitted = s.fit.models;
    if (p.source_model != "best" &&
        std::find(fitted.begin(), fitted.end(), p.source_model) == fitted.end()) {
      std::string list = "\"best\"";
      for (const auto& name : fitted) list += ", \"" + name + "\"";
      throw InputError(in.Where(node),
                       in.Name("model") + " = \"" + Excerpt(p.source_model) +
                           "\" is not a model of [fit] models",
                       "one of " + list);
    }
  }
  in.Bool("stepwise", p.stepwise);
  in.Number("molecular_area_nm2", p.molecular_area_m2, 0.01, 10.0, 1e-18);
  // A film at least as thick as the smallest pore leaves no core for the Kelvin equation.
  if (p.film == pores::FilmModel::kConstant && p.constant_film_thickness_m >= p.min_radius_m) {
    throw InputError(in.At(in.Has("film_thickness_nm") ? "film_thickness_nm" : "min_radius_nm"),
                     in.Name("film_thickness_nm") + " = " +
                         TableReader::Show(p.constant_film_thickness_m * 1e9) + " is not below " +
                         in.Name("min_radius_nm") + " = " + TableReader::Show(p.min_radius_m * 1e9),
                     "a film thinner than the smallest pore radius");
  }
  if (p.film == pores::FilmModel::kUserTable && p.film_table.empty()) {
    throw InputError(in.At("film"), in.Name("film") + " = \"table\" without a film_table",
                     "film_table = [[rh_percent, thickness_nm], ...] in [pores]");
  }
}

void ReadReferenceConditions(TableReader& in, std::vector<pores::ReferenceCondition>& target) {
  const toml::node* node = in.Node("reference_conditions");
  if (node == nullptr) return;
  const toml::array* array = node->as_array();
  if (array == nullptr || array->empty()) {
    throw InputError(in.Where(node), in.Name("reference_conditions") + " is not a list",
                     "reference_conditions = [{ temperature_C = 23, rh_percent = 50 }, ...]");
  }
  target.clear();
  for (const auto& element : *array) {
    const toml::table* row = element.as_table();
    TableReader reader(row, in.Name("reference_conditions"), "");
    std::optional<double> t = row ? (*row)["temperature_C"].value<double>() : std::nullopt;
    std::optional<double> rh = row ? (*row)["rh_percent"].value<double>() : std::nullopt;
    if (!row || row->size() != 2 || !t || !rh || *rh <= 0.0 || *rh >= 100.0 || *t < -50.0 ||
        *t > 100.0) {
      throw InputError(in.Where(&element), in.Name("reference_conditions") + " entry is invalid",
                       "{ temperature_C = -50..100, rh_percent = 0..100 (exclusive) }");
    }
    target.push_back({physics::CelsiusToKelvin(*t), *rh / 100.0});
  }
}

// `template = "..."` names a file (relative to the job file) rather than templates/<name>.toml.
bool IsTemplatePath(const std::string& name_or_path) {
  return name_or_path.find('/') != std::string::npos || name_or_path.ends_with(".toml");
}

nlohmann::ordered_json Effective(const JobSettings& s) {
  nlohmann::ordered_json j;
  const auto& e = s.equilibrate;
  j["equilibrium"] = {{"mass_change_limit_percent", e.mass_change_limit_fraction * 100.0},
                      {"min_weighing_interval_h", e.min_weighing_interval_s / 3600.0},
                      {"min_weighings", e.min_weighings},
                      {"weighing_interval_tolerance_h", e.weighing_interval_tolerance_s / 3600.0},
                      {"rate_limit_percent_per_min", e.rate_limit_fraction_per_min * 100.0},
                      {"rate_window_min", e.rate_window_s / 60.0},
                      {"extrapolate_unfinished_steps", e.extrapolate_unfinished_steps},
                      {"exponential_terms", e.exponential_terms},
                      {"tail_fraction", e.tail_fraction},
                      {"max_tau_to_tail_ratio", e.max_tau_to_tail_ratio},
                      {"min_tail_points", e.min_tail_points},
                      {"include_not_equilibrated", s.reduce.include_not_equilibrated},
                      {"log_block_s", s.ingest.log_block_s},
                      {"log_gap_warning_min", s.ingest.log_gap_warning_s / 60.0}};
  const auto& f = s.fit;
  static const char* kLoss[] = {"squared", "huber", "soft_l1", "cauchy"};
  static const char* kWeights[] = {"relative", "absolute"};
  static const char* kBootstrap[] = {"residual", "case", "monte_carlo"};
  j["fit"] = {{"models", f.models},
              {"bet_rh_min_percent", f.bet_rh_min_fraction * 100.0},
              {"bet_rh_max_percent", f.bet_rh_max_fraction * 100.0},
              {"loss", kLoss[static_cast<int>(f.loss)]},
              {"loss_scale", f.loss_scale},
              {"errors_in_variables", f.errors_in_variables},
              {"weights", kWeights[static_cast<int>(f.weights)]},
              {"bootstrap_resamples", f.bootstrap_resamples},
              {"bootstrap", kBootstrap[static_cast<int>(f.bootstrap_kind)]},
              {"refit_tolerance_se", f.refit_tolerance_se},
              {"monte_carlo_draws", f.monte_carlo_draws},
              {"seed", f.seed},
              {"band_points", f.band_grid_points},
              {"band_rh_min_percent", f.band_rh_min_fraction * 100.0},
              {"band_rh_max_percent", f.band_rh_max_fraction * 100.0},
              {"confidence_level", f.confidence_level},
              {"include_retention_points", f.include_retention_points}};
  const auto& p = s.pores;
  static const char* kGeometry[] = {"open_cylinder", "closed_cylinder"};
  static const char* kFilm[] = {"none", "constant", "fitted_layers", "badmann", "table"};
  nlohmann::ordered_json table = nlohmann::ordered_json::array();
  for (const auto& [rh, t] : p.film_table) table.push_back({rh * 100.0, t * 1e9});
  nlohmann::ordered_json references = nlohmann::ordered_json::array();
  for (const auto& c : p.reference_conditions) {
    references.push_back({{"temperature_C", physics::KelvinToCelsius(c.temperature_K)},
                          {"rh_percent", c.rh_fraction * 100.0}});
  }
  j["pores"] = {{"geometry", kGeometry[static_cast<int>(p.geometry)]},
                {"film", kFilm[static_cast<int>(p.film)]},
                {"film_thickness_nm", p.constant_film_thickness_m * 1e9},
                {"monolayer_thickness_nm", p.monolayer_thickness_m * 1e9},
                {"film_table", table},
                {"contact_angle_deg", p.contact_angle_rad * 180.0 / kPi},
                {"min_radius_nm", p.min_radius_m * 1e9},
                {"max_radius_nm", p.max_radius_m * 1e9},
                {"grid_points", p.grid_points},
                {"band_draws", p.band_draws},
                {"seed", p.seed},
                {"model", p.source_model},
                {"stepwise", p.stepwise},
                {"molecular_area_nm2", p.molecular_area_m2 * 1e18},
                {"reference_conditions", references}};
  j["report"] = {{"coverage_factor", s.reduce.coverage_factor},
                 {"template", s.template_file.filename().string()}};
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

JobSettings LoadJobSettings(const std::filesystem::path& job_file, const ingest::JobSpec& job,
                            const std::filesystem::path& output_dir) {
  (void)output_dir;
  const std::string file = job_file.string();
  const toml::table root = ParseTomlFile(job_file, "a valid TOML job file");
  JobSettings settings;
  settings.template_file = ResolveTemplate(job.template_name, job_file.parent_path());
  const toml::node* template_node = root["job"]["template"].node();
  const SourceLocation template_where =
      template_node == nullptr
          ? SourceLocation{file, 0, 0}
          : SourceLocation{file, static_cast<int>(template_node->source().begin.line),
                           static_cast<int>(template_node->source().begin.column)};
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
  const report::Template layout = report::LoadTemplate(settings.template_file);
  if (!layout.reference_conditions.empty()) {
    settings.pores.reference_conditions = layout.reference_conditions;
  }

  TableReader equilibrium(SubTable(root, "equilibrium", file), "equilibrium", file);
  ReadEquilibrium(equilibrium, settings);
  equilibrium.RejectUnknownKeys();

  TableReader fit(SubTable(root, "fit", file), "fit", file);
  ReadFit(fit, settings);
  fit.RejectUnknownKeys();

  TableReader pores(SubTable(root, "pores", file), "pores", file);
  ReadPores(pores, settings);
  ReadReferenceConditions(pores, settings.pores.reference_conditions);
  pores.RejectUnknownKeys();

  TableReader report(SubTable(root, "report", file), "report", file);
  report.Number("coverage_factor", settings.reduce.coverage_factor, 1.0, 5.0);
  report.RejectUnknownKeys();

  for (const char* key : {"models", "bootstrap_resamples", "monte_carlo_draws", "band_points"}) {
    settings.work_keys[std::string("fit.") + key] =
        fit.Has(key) ? fit.At(key) : SourceLocation{file, 0, 0};
  }
  for (const char* key : {"grid_points", "band_draws"}) {
    settings.work_keys[std::string("pores.") + key] =
        pores.Has(key) ? pores.At(key) : SourceLocation{file, 0, 0};
  }

  // The pore-distribution band is drawn at the fit stage's confidence level.
  settings.pores.band_confidence_level = settings.fit.confidence_level;
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
