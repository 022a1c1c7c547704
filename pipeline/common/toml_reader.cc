#include "pipeline/common/toml_reader.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "pipeline/common/bounded_input.h"

namespace sorbtrace {
namespace {

// "a, b, c" (unknown-key expectations list names bare).
template <typename Names>
std::string JoinBare(const Names& names) {
  std::string list;
  for (const auto& name : names) {
    if (!list.empty()) list += ", ";
    list += std::string_view(name);
  }
  return list;
}

// "\"a\", \"b\"" (values a string key accepts).
std::string JoinQuoted(std::span<const std::string_view> names) {
  std::string list;
  for (std::string_view name : names) {
    if (!list.empty()) list += ", ";
    list += "\"" + std::string(name) + "\"";
  }
  return list;
}

// Depth-first search for the key holding `target` (its value or an element of its array
// value). `path` is the dotted path of `table` ("" for the root), `display` its name as written.
std::optional<TomlKeyName> Search(const toml::table& table, const std::string& path,
                                  const std::string& display, const toml::node& target) {
  for (auto&& [key, value] : table) {
    const std::string child_path =
        path.empty() ? std::string(key.str()) : path + "." + std::string(key.str());
    if (&value == &target) return TomlKeyName{display, std::string(key.str())};
    if (const toml::table* sub = value.as_table()) {
      if (auto found = Search(*sub, child_path, "[" + child_path + "]", target)) return found;
    } else if (const toml::array* array = value.as_array()) {
      for (const toml::node& element : *array) {
        if (&element == &target) return TomlKeyName{display, std::string(key.str())};
        if (const toml::table* item = element.as_table()) {
          if (auto found = Search(*item, child_path, "[[" + child_path + "]]", target)) {
            return found;
          }
        }
      }
    }
  }
  return std::nullopt;
}

// " in [t] is out of range" (" at top level is out of range"), after "k = value".
std::string OutOfRangeIn(const TomlKeyName& name) {
  return (name.table.empty() ? std::string(" at top level") : " in " + name.table) +
         " is out of range";
}

}  // namespace

std::string TableDisplayName(std::string_view name) {
  return name.empty() ? std::string() : "[" + std::string(name) + "]";
}

std::string Describe(const TomlKeyName& name) {
  const std::string key = "key '" + name.key + "'";
  return name.table.empty() ? key + " at top level" : key + " in " + name.table;
}

std::string TomlReader::Show(double value) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%g", value);
  return buffer;
}

SourceLocation TomlReader::At(const toml::source_region& region) const {
  return SourceLocation{display_, static_cast<int>(region.begin.line),
                        static_cast<int>(region.begin.column)};
}

void TomlReader::Fail(const toml::source_region& region, std::string message,
                      std::string expected) const {
  throw InputError(At(region), std::move(message), std::move(expected));
}

void TomlReader::Fail(const toml::node& node, std::string message, std::string expected) const {
  Fail(node.source(), std::move(message), std::move(expected));
}

void TomlReader::CheckKeys(const toml::table& table, std::string_view table_name,
                           std::span<const std::string_view> allowed) const {
  for (auto&& [key, value] : table) {
    if (std::find(allowed.begin(), allowed.end(), key.str()) != allowed.end()) continue;
    // A key without a source (a table built, not parsed) is located at its value.
    const toml::source_region& where = key.source().begin.line > 0 ? key.source() : value.source();
    Fail(where, "unknown " + Describe({std::string(table_name), std::string(key.str())}),
         "one of: " + JoinBare(allowed));
  }
}

void TomlReader::CheckKeys(const toml::table& table, std::string_view table_name,
                           const std::vector<std::string>& allowed) const {
  const std::vector<std::string_view> views(allowed.begin(), allowed.end());
  CheckKeys(table, table_name, std::span<const std::string_view>(views));
}

const toml::table* TomlReader::OptionalTable(const toml::table& parent,
                                             std::string_view name) const {
  const toml::node* node = parent.get(name);
  if (node == nullptr) return nullptr;
  if (!node->is_table()) {
    Fail(*node, "'" + std::string(name) + "' is not a table",
         "a " + TableDisplayName(name) + " table");
  }
  return node->as_table();
}

const toml::table& TomlReader::Table(const toml::table& parent, std::string_view name) const {
  const toml::table* table = OptionalTable(parent, name);
  if (table == nullptr) {
    throw InputError(SourceLocation{display_, 1, 1}, "missing table " + TableDisplayName(name),
                     "a " + TableDisplayName(name) + " table in the file");
  }
  return *table;
}

std::string TomlReader::String(const toml::node& node, const TomlKeyName& name) const {
  if (!node.is_string()) Fail(node, Describe(name) + " is not a string", "a quoted string");
  return node.as_string()->get();
}

double TomlReader::Number(const toml::node& node, const TomlKeyName& name) const {
  if (!node.is_number()) Fail(node, Describe(name) + " is not a number", "a number");
  const double value = *node.value<double>();
  if (!std::isfinite(value)) Fail(node, Describe(name) + " is not finite", "a finite number");
  return value;
}

double TomlReader::Number(const toml::node& node, const TomlKeyName& name, double minimum,
                          double maximum) const {
  const double value = Number(node, name);
  if (value < minimum || value > maximum) {
    Fail(node, name.key + " = " + Show(value) + OutOfRangeIn(name),
         "a value from " + Show(minimum) + " to " + Show(maximum));
  }
  return value;
}

std::int64_t TomlReader::Integer(const toml::node& node, const TomlKeyName& name) const {
  if (!node.is_integer()) Fail(node, Describe(name) + " is not an integer", "a whole number");
  return node.as_integer()->get();
}

std::int64_t TomlReader::Integer(const toml::node& node, const TomlKeyName& name,
                                 std::int64_t minimum, std::int64_t maximum) const {
  const std::int64_t value = Integer(node, name);
  if (value < minimum || value > maximum) {
    Fail(node, name.key + " = " + std::to_string(value) + OutOfRangeIn(name),
         "a whole number from " + std::to_string(minimum) + " to " + std::to_string(maximum));
  }
  return value;
}

bool TomlReader::Bool(const toml::node& node, const TomlKeyName& name) const {
  if (!node.is_boolean()) Fail(node, Describe(name) + " is not a boolean", "true or false");
  return node.as_boolean()->get();
}

std::vector<std::string> TomlReader::StringArray(const toml::node& node,
                                                 const TomlKeyName& name) const {
  const toml::array* array = node.as_array();
  const auto fail = [&](const toml::node& at) {
    Fail(at, Describe(name) + " is not an array of strings", "[\"...\", ...]");
  };
  if (array == nullptr) fail(node);
  std::vector<std::string> out;
  for (const toml::node& item : *array) {
    if (!item.is_string()) fail(item);
    out.push_back(item.as_string()->get());
  }
  return out;
}

std::size_t TomlReader::Choice(const toml::node& node, const TomlKeyName& name,
                               std::span<const std::string_view> choices) const {
  if (!node.is_string()) {
    Fail(node, Describe(name) + " is not a string", "one of " + JoinQuoted(choices));
  }
  const std::string& value = node.as_string()->get();
  const auto it = std::find(choices.begin(), choices.end(), value);
  if (it == choices.end()) {
    Fail(node, "'" + Excerpt(value) + "' is not a valid " + name.key,
         "one of " + JoinQuoted(choices));
  }
  return static_cast<std::size_t>(it - choices.begin());
}

void TomlReader::Missing(const toml::table& table, std::string_view table_name,
                         std::string_view key, std::string_view what) const {
  Fail(table, "missing " + Describe({std::string(table_name), std::string(key)}),
       std::string(key) + " (" + std::string(what) + ")");
}

std::optional<std::string> TomlReader::String(const toml::table& table, std::string_view table_name,
                                              std::string_view key, bool required) const {
  const toml::node* node = table.get(key);
  if (node == nullptr) {
    if (required) Missing(table, table_name, key, "a string");
    return std::nullopt;
  }
  return String(*node, {std::string(table_name), std::string(key)});
}

std::optional<double> TomlReader::Number(const toml::table& table, std::string_view table_name,
                                         std::string_view key, bool required) const {
  const toml::node* node = table.get(key);
  if (node == nullptr) {
    if (required) Missing(table, table_name, key, "a number");
    return std::nullopt;
  }
  return Number(*node, {std::string(table_name), std::string(key)});
}

std::optional<double> TomlReader::Positive(const toml::table& table, std::string_view table_name,
                                           std::string_view key, bool required) const {
  const auto value = Number(table, table_name, key, required);
  if (value && !(*value > 0.0)) {
    Fail(*table.get(key),
         Describe({std::string(table_name), std::string(key)}) + " must be positive",
         "a number above zero");
  }
  return value;
}

std::optional<bool> TomlReader::Bool(const toml::table& table, std::string_view table_name,
                                     std::string_view key) const {
  const toml::node* node = table.get(key);
  if (node == nullptr) return std::nullopt;
  return Bool(*node, {std::string(table_name), std::string(key)});
}

std::optional<std::string> TomlReader::Choice(
    const toml::table& table, std::string_view table_name, std::string_view key, bool required,
    std::initializer_list<std::string_view> allowed) const {
  const toml::node* node = table.get(key);
  if (node == nullptr) {
    if (required) Missing(table, table_name, key, "a string");
    return std::nullopt;
  }
  const std::span<const std::string_view> choices(allowed.begin(), allowed.size());
  return std::string(choices[Choice(*node, {std::string(table_name), std::string(key)}, choices)]);
}

std::optional<TomlKeyName> TomlReader::NameOf(const toml::table& root, const toml::node& node) {
  return Search(root, "", "", node);
}

}  // namespace sorbtrace
