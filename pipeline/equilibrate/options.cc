// EquilibrateOptions: validation and the [equilibrium] table of a job file.
#include <fmt/format.h>
#include <toml++/toml.h>

#include <array>
#include <cmath>
#include <string_view>

#include "pipeline/common/diagnostics.h"
#include "pipeline/equilibrate/equilibrate.h"

namespace sorbtrace::equilibrate {
namespace {

constexpr double kPercent = 100.0;
constexpr double kSecondsPerHour = 3600.0;
constexpr double kSecondsPerMinute = 60.0;

// Keys of [equilibrium] read here, and those read by the reduce stage from the same table.
constexpr std::array<std::string_view, 10> kEquilibrateKeys = {"mass_change_limit_percent",
                                                               "min_weighing_interval_h",
                                                               "min_weighings",
                                                               "rate_limit_percent_per_min",
                                                               "rate_window_min",
                                                               "extrapolate",
                                                               "exponential_terms",
                                                               "tail_fraction",
                                                               "max_tau_to_tail_ratio",
                                                               "min_tail_points"};
constexpr std::array<std::string_view, 2> kReduceKeys = {"include_not_equilibrated",
                                                         "coverage_factor"};

SourceLocation Where(const std::filesystem::path& file, const toml::source_region& region) {
  return SourceLocation{file.string(), static_cast<int>(region.begin.line),
                        static_cast<int>(region.begin.column)};
}

double Number(const toml::table& table, std::string_view key, double fallback,
              const std::filesystem::path& file) {
  const toml::node* node = table.get(key);
  if (node == nullptr) return fallback;
  if (auto value = node->value<double>();
      value && (node->is_floating_point() || node->is_integer())) {
    if (!std::isfinite(*value)) {
      throw InputError(Where(file, node->source()),
                       fmt::format("[equilibrium] {} is not finite", key), "a finite number");
    }
    return *value;
  }
  throw InputError(Where(file, node->source()),
                   fmt::format("[equilibrium] {} is not a number", key), "a number");
}

int Integer(const toml::table& table, std::string_view key, int fallback,
            const std::filesystem::path& file) {
  const toml::node* node = table.get(key);
  if (node == nullptr) return fallback;
  if (node->is_integer()) {
    const auto value = node->value<std::int64_t>().value_or(0);
    constexpr std::int64_t kLargest = 1000000;
    if (value >= -kLargest && value <= kLargest) return static_cast<int>(value);
  }
  throw InputError(Where(file, node->source()),
                   fmt::format("[equilibrium] {} is not a (small) integer", key), "an integer");
}

bool Boolean(const toml::table& table, std::string_view key, bool fallback,
             const std::filesystem::path& file) {
  const toml::node* node = table.get(key);
  if (node == nullptr) return fallback;
  if (node->is_boolean()) return node->value<bool>().value_or(fallback);
  throw InputError(Where(file, node->source()),
                   fmt::format("[equilibrium] {} is not a boolean", key), "true or false");
}

}  // namespace

bool EquilibrateOptions::IsValid(std::string* error) const {
  auto fail = [error](std::string message) {
    if (error != nullptr) *error = std::move(message);
    return false;
  };
  if (!(mass_change_limit_fraction > 0.0 && mass_change_limit_fraction < 1.0)) {
    return fail(fmt::format("mass change limit {} % must lie in (0, 100) %",
                            mass_change_limit_fraction * kPercent));
  }
  if (!(min_weighing_interval_s >= 0.0)) {
    return fail(fmt::format("minimum weighing interval {} h must be >= 0",
                            min_weighing_interval_s / kSecondsPerHour));
  }
  if (min_weighings < 2) {
    return fail(fmt::format("min_weighings {} must be at least 2", min_weighings));
  }
  if (!(rate_limit_fraction_per_min > 0.0)) {
    return fail(
        fmt::format("rate limit {} %/min must be > 0", rate_limit_fraction_per_min * kPercent));
  }
  if (!(rate_window_s > 0.0)) {
    return fail(fmt::format("rate window {} min must be > 0", rate_window_s / kSecondsPerMinute));
  }
  if (exponential_terms != 1 && exponential_terms != 2) {
    return fail(fmt::format("exponential_terms {} must be 1 or 2", exponential_terms));
  }
  if (!(tail_fraction > 0.0 && tail_fraction <= 1.0)) {
    return fail(fmt::format("tail_fraction {} must lie in (0, 1]", tail_fraction));
  }
  if (!(max_tau_to_tail_ratio > 0.0)) {
    return fail(fmt::format("max_tau_to_tail_ratio {} must be > 0", max_tau_to_tail_ratio));
  }
  if (min_tail_points < 5) {
    return fail(fmt::format("min_tail_points {} must be at least 5", min_tail_points));
  }
  return true;
}

EquilibrateOptions LoadEquilibrateOptions(const std::filesystem::path& job_file) {
  EquilibrateOptions options;
  toml::table root;
  try {
    root = toml::parse_file(job_file.string());
  } catch (const toml::parse_error& error) {
    throw InputError(Where(job_file, error.source()), std::string(error.description()),
                     "a valid TOML job file");
  }
  const toml::node* node = root.get("equilibrium");
  if (node == nullptr) return options;
  const toml::table* table = node->as_table();
  if (table == nullptr) {
    throw InputError(Where(job_file, node->source()), "[equilibrium] is not a table", "a table");
  }
  for (const auto& [key, value] : *table) {
    bool known = false;
    for (std::string_view k : kEquilibrateKeys) known = known || key.str() == k;
    for (std::string_view k : kReduceKeys) known = known || key.str() == k;
    if (!known) {
      std::string list;
      for (std::string_view k : kEquilibrateKeys)
        list += fmt::format("{}{}", list.empty() ? "" : ", ", k);
      for (std::string_view k : kReduceKeys) list += fmt::format(", {}", k);
      throw InputError(Where(job_file, value.source()),
                       fmt::format("unknown key '{}' in [equilibrium]", key.str()),
                       "one of " + list);
    }
  }
  const toml::table& t = *table;
  options.mass_change_limit_fraction =
      Number(t, "mass_change_limit_percent", options.mass_change_limit_fraction * kPercent,
             job_file) /
      kPercent;
  options.min_weighing_interval_s =
      Number(t, "min_weighing_interval_h", options.min_weighing_interval_s / kSecondsPerHour,
             job_file) *
      kSecondsPerHour;
  options.min_weighings = Integer(t, "min_weighings", options.min_weighings, job_file);
  options.rate_limit_fraction_per_min =
      Number(t, "rate_limit_percent_per_min", options.rate_limit_fraction_per_min * kPercent,
             job_file) /
      kPercent;
  options.rate_window_s =
      Number(t, "rate_window_min", options.rate_window_s / kSecondsPerMinute, job_file) *
      kSecondsPerMinute;
  options.extrapolate_unfinished_steps =
      Boolean(t, "extrapolate", options.extrapolate_unfinished_steps, job_file);
  options.exponential_terms = Integer(t, "exponential_terms", options.exponential_terms, job_file);
  options.tail_fraction = Number(t, "tail_fraction", options.tail_fraction, job_file);
  options.max_tau_to_tail_ratio =
      Number(t, "max_tau_to_tail_ratio", options.max_tau_to_tail_ratio, job_file);
  options.min_tail_points = Integer(t, "min_tail_points", options.min_tail_points, job_file);
  std::string error;
  if (!options.IsValid(&error)) {
    throw InputError(Where(job_file, table->source()), "[equilibrium]: " + error,
                     "valid equilibrium options");
  }
  return options;
}

}  // namespace sorbtrace::equilibrate
