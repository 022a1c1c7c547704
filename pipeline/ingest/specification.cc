// ReadSpecifications: the [[specification]] tables of a job file (specification.h).
#include "pipeline/ingest/specification.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <initializer_list>
#include <limits>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "pipeline/common/bounded_input.h"
#include "pipeline/conform/conform.h"

namespace sorbtrace::ingest::internal {
namespace {

constexpr std::string_view kSection = "[[specification]]";

// The job-file names of the decision rules (conform.h).
constexpr std::string_view kSimple = "simple_acceptance";             // ILAC-G8:09/2019 §4.2.1
constexpr std::string_view kGuarded = "guarded_acceptance";           // ILAC-G8:09/2019 §4.2.2
constexpr std::string_view kProbability = "conformance_probability";  // JCGM 106:2012

// The keys of one table, and which rule each rule-specific key belongs to.
constexpr std::string_view kKeys[] = {"quantity",          "lower_limit",
                                      "upper_limit",       "unit",
                                      "decision_rule",     "guard_band_fraction_of_U",
                                      "inconclusive_zone", "required_conformance_probability",
                                      "document",          "at_most"};

// The class shorthand: quantity = "hygroscopicity_class", at_most = "<class>" stands for an
// upper limit on the headline mass increase (conform::HygroscopicityClasses).
constexpr std::string_view kClassQuantity = "hygroscopicity_class";
constexpr std::string_view kClassBasis = "hygroscopicity_mass_increase";

std::string KeyList() {
  std::string list;
  for (std::string_view key : kKeys) list += (list.empty() ? "" : ", ") + std::string(key);
  return list;
}

class TableReader {
 public:
  TableReader(const std::string& display, const toml::table& table)
      : display_(display), table_(table) {}

  SourceLocation At(const toml::source_region& region) const {
    return SourceLocation{display_, static_cast<int>(region.begin.line),
                          static_cast<int>(region.begin.column)};
  }
  SourceLocation At(std::string_view key) const {
    const toml::node* node = table_.get(key);
    return At(node != nullptr ? node->source() : table_.source());
  }
  [[noreturn]] void Fail(const SourceLocation& where, std::string message,
                         std::string expected) const {
    throw InputError(where, std::move(message), std::move(expected));
  }

  void CheckKeys() const {
    for (auto&& [key, value] : table_) {
      if (std::find(std::begin(kKeys), std::end(kKeys), key.str()) != std::end(kKeys)) continue;
      Fail(At(key.source()), "unknown key '" + Excerpt(key.str()) + "' in " + std::string(kSection),
           "one of: " + KeyList());
    }
  }

  std::optional<std::string> String(std::string_view key, bool required) const {
    const toml::node* node = table_.get(key);
    if (node == nullptr) {
      if (required) {
        Fail(At(table_.source()), fmt::format("missing key '{}' in {}", key, kSection),
             fmt::format("{} (a string)", key));
      }
      return std::nullopt;
    }
    if (!node->is_string()) {
      Fail(At(key), fmt::format("key '{}' in {} is not a string", key, kSection),
           "a quoted string");
    }
    return node->value<std::string>();
  }

  std::optional<double> Number(std::string_view key) const {
    const toml::node* node = table_.get(key);
    if (node == nullptr) return std::nullopt;
    if (!node->is_number()) {
      Fail(At(key), fmt::format("key '{}' in {} is not a number", key, kSection), "a number");
    }
    const double value = *node->value<double>();
    if (!std::isfinite(value)) {
      Fail(At(key), fmt::format("key '{}' in {} is not finite", key, kSection), "a finite number");
    }
    return value;
  }

  std::optional<bool> Bool(std::string_view key) const {
    const toml::node* node = table_.get(key);
    if (node == nullptr) return std::nullopt;
    if (!node->is_boolean()) {
      Fail(At(key), fmt::format("key '{}' in {} is not a boolean", key, kSection), "true or false");
    }
    return node->value<bool>();
  }

  bool Has(std::string_view key) const { return table_.get(key) != nullptr; }
  const toml::table& table() const { return table_; }

 private:
  const std::string& display_;
  const toml::table& table_;
};

// The limits: at least one, lower < upper.
conform::ToleranceInterval ReadLimits(const TableReader& in) {
  conform::ToleranceInterval limits;
  const auto lower = in.Number("lower_limit");
  const auto upper = in.Number("upper_limit");
  if (!lower && !upper) {
    in.Fail(in.At(in.table().source()), "a [[specification]] without a limit",
            "lower_limit, upper_limit or both (in the unit of key 'unit')");
  }
  if (lower) limits.lower = *lower;
  if (upper) limits.upper = *upper;
  if (lower && upper && !(*lower < *upper)) {
    in.Fail(in.At("upper_limit"),
            fmt::format("upper_limit {:g} is not above lower_limit {:g}", *upper, *lower),
            "lower_limit < upper_limit");
  }
  return limits;
}

// A rule-specific key given with another rule.
void RefuseForeignKey(const TableReader& in, std::string_view key, std::string_view rule,
                      std::string_view owner) {
  if (!in.Has(key)) return;
  in.Fail(in.At(key), fmt::format("key '{}' with decision_rule = \"{}\"", key, rule),
          fmt::format("'{}' only with decision_rule = \"{}\"", key, owner));
}

conform::Options ReadDecision(const TableReader& in) {
  const std::string rule = *in.String("decision_rule", true);
  conform::Options options;
  if (rule == kSimple) {
    options.rule = conform::DecisionRule::kSimpleAcceptance;
  } else if (rule == kGuarded) {
    options.rule = conform::DecisionRule::kGuardedAcceptance;
  } else if (rule == kProbability) {
    options.rule = conform::DecisionRule::kConformanceProbability;
  } else {
    in.Fail(in.At("decision_rule"), "'" + Excerpt(rule) + "' is not a valid decision_rule",
            fmt::format("one of \"{}\", \"{}\", \"{}\"", kSimple, kGuarded, kProbability));
  }
  if (rule != kGuarded) {
    RefuseForeignKey(in, "guard_band_fraction_of_U", rule, kGuarded);
    RefuseForeignKey(in, "inconclusive_zone", rule, kGuarded);
  }
  if (rule != kProbability)
    RefuseForeignKey(in, "required_conformance_probability", rule, kProbability);
  options.guard_band_multiplier =
      in.Number("guard_band_fraction_of_U").value_or(options.guard_band_multiplier);
  options.non_binary = in.Bool("inconclusive_zone").value_or(false);
  options.required_conformance_probability =
      in.Number("required_conformance_probability")
          .value_or(options.required_conformance_probability);
  std::string message;
  if (!options.IsValid(&message)) {
    const std::string_view key = options.rule == conform::DecisionRule::kGuardedAcceptance
                                     ? "guard_band_fraction_of_U"
                                     : "required_conformance_probability";
    in.Fail(in.At(key), message, "a value within the stated range");
  }
  return options;
}

// The classes a specification can name as its upper bound: those with a finite upper limit.
std::string ClassList() {
  std::string list;
  for (const conform::HygroscopicityClass& c : conform::HygroscopicityClasses()) {
    if (std::isinf(c.upper_percent)) continue;
    list += (list.empty() ? "\"" : ", \"") + std::string(c.name) + "\"";
  }
  return list;
}

// "class at most X": limits, unit and the headline key from the class table.
void ReadClassLimit(const TableReader& in, Specification& spec) {
  for (std::string_view key : {"lower_limit", "upper_limit", "unit"}) {
    if (!in.Has(key)) continue;
    in.Fail(in.At(key), fmt::format("key '{}' with quantity = \"{}\"", key, kClassQuantity),
            "only at_most = \"<class>\": the class sets the limit (Ph. Eur. 5.11)");
  }
  const std::string name = *in.String("at_most", true);
  spec.unit_where = in.At("at_most");
  const conform::HygroscopicityClass* c = conform::FindHygroscopicityClass(name);
  if (c == nullptr) {
    in.Fail(spec.unit_where, "'" + Excerpt(name) + "' is not a Ph. Eur. 5.11 hygroscopicity class",
            "one of " + ClassList());
  }
  if (std::isinf(c->upper_percent)) {
    in.Fail(spec.unit_where,
            "at_most = \"" + Excerpt(name) +
                "\" sets no limit: every mass increase is in that class or below",
            "one of " + ClassList());
  }
  spec.class_at_most = std::string(c->name);
  spec.quantity = std::string(kClassBasis);
  spec.limits.upper = c->upper_percent;
  spec.unit = "%";
}

Specification ReadOne(const std::string& display, const toml::table& table) {
  const TableReader in(display, table);
  in.CheckKeys();
  Specification spec;
  spec.where = in.At(table.source());
  spec.quantity = *in.String("quantity", true);
  spec.quantity_where = in.At("quantity");
  if (spec.quantity.empty()) {
    in.Fail(spec.quantity_where, "empty quantity",
            "the results.json headline key of the quantity, e.g. \"moisture_23C_80RH_adsorption\"");
  }
  if (spec.quantity == kClassQuantity) {
    ReadClassLimit(in, spec);
  } else {
    if (in.Has("at_most")) {
      in.Fail(in.At("at_most"), "key 'at_most' with quantity = \"" + Excerpt(spec.quantity) + "\"",
              fmt::format("'at_most' only with quantity = \"{}\" (a class name); limits of other "
                          "quantities are lower_limit and upper_limit",
                          kClassQuantity));
    }
    spec.limits = ReadLimits(in);
    spec.unit = *in.String("unit", true);
    spec.unit_where = in.At("unit");
    if (spec.unit.empty()) {
      in.Fail(spec.unit_where, "empty unit", "the unit of the limits, e.g. \"%\" or \"m2/g\"");
    }
  }
  spec.decision = ReadDecision(in);
  spec.document = in.String("document", false).value_or("");
  return spec;
}

}  // namespace

std::vector<Specification> ReadSpecifications(const toml::table& root, const std::string& display) {
  std::vector<Specification> specifications;
  const toml::node* node = root.get("specification");
  if (node == nullptr) return specifications;
  if (!node->is_array_of_tables()) {
    throw InputError(SourceLocation{display, static_cast<int>(node->source().begin.line),
                                    static_cast<int>(node->source().begin.column)},
                     "'specification' is not an array of tables",
                     "one [[specification]] table per limit");
  }
  for (const toml::node& entry : *node->as_array()) {
    specifications.push_back(ReadOne(display, *entry.as_table()));
  }
  return specifications;
}

}  // namespace sorbtrace::ingest::internal
