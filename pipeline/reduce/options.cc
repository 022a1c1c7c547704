// ReduceOptions from the [equilibrium] table of a job file.
#include <fmt/format.h>
#include <toml++/toml.h>

#include <cmath>

#include "pipeline/common/diagnostics.h"
#include "pipeline/reduce/reduce.h"

namespace sorbtrace::reduce {
namespace {

SourceLocation Where(const std::filesystem::path& file, const toml::source_region& region) {
  return SourceLocation{file.string(), static_cast<int>(region.begin.line),
                        static_cast<int>(region.begin.column)};
}

}  // namespace

ReduceOptions LoadReduceOptions(const std::filesystem::path& job_file) {
  ReduceOptions options;
  toml::table root;
  try {
    root = toml::parse_file(job_file.string());
  } catch (const toml::parse_error& error) {
    throw InputError(Where(job_file, error.source()), std::string(error.description()),
                     "a valid TOML job file");
  }
  const toml::table* table = root["equilibrium"].as_table();
  if (table == nullptr) return options;
  if (const toml::node* node = table->get("coverage_factor")) {
    if (!(node->is_floating_point() || node->is_integer())) {
      throw InputError(Where(job_file, node->source()),
                       "[equilibrium] coverage_factor is not a number", "a number such as 2");
    }
    options.coverage_factor = node->value<double>().value_or(options.coverage_factor);
  }
  if (const toml::node* node = table->get("include_not_equilibrated")) {
    if (!node->is_boolean()) {
      throw InputError(Where(job_file, node->source()),
                       "[equilibrium] include_not_equilibrated is not a boolean", "true or false");
    }
    options.include_not_equilibrated = node->value<bool>().value_or(false);
  }
  std::string error;
  if (!options.IsValid(&error)) {
    const toml::node* node = table->get("coverage_factor");
    throw InputError(Where(job_file, node != nullptr ? node->source() : table->source()),
                     "[equilibrium] " + error, "a coverage factor such as 2");
  }
  return options;
}

}  // namespace sorbtrace::reduce
