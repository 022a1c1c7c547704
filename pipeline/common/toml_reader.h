// TomlReader: the one reader of TOML inputs (job files, their stage settings, report templates).
//
// Parsing goes through ParseTomlFile (bounded_input.h: size, nesting and line-length limits, a
// syntax error located at its line and column). TomlReader then reads the parsed tree with typed
// getters that throw InputError at the file:line:column of the offending key or value, in one
// wording for every TOML file sorbtrace reads:
//
//   unknown key 'k' in [t]            expected one of: a, b, c
//   missing key 'k' in [t]            expected k (a string)
//   key 'k' in [t] is not a string    expected a quoted string
//   key 'k' in [t] is not a number    expected a number        (also: is not finite, an integer,
//                                                                a boolean, an array of strings)
//   k = 12 in [t] is out of range     expected a value from 0 to 10 (a whole number from ...)
//   key 'k' in [t] must be positive   expected a number above zero
//   'x' is not a valid k              expected one of "a", "b"
//   't' is not a table                expected a [t] table
//
// where [t] is the table as written ("[job]", "[[dataset]]"); keys of the root table are "at
// top level". The getters return what is written; defaults and rules between keys stay with
// the code that reads each file.
#pragma once

#include <toml++/toml.h>

#include <cstdint>
#include <filesystem>
#include <initializer_list>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "pipeline/common/diagnostics.h"

namespace sorbtrace {

// A TOML file as parsed once (ParseTomlFile), shared by the readers of its tables: the job file
// is parsed by ingest::LoadJobSpec and its stage settings are read from the same tree.
struct ParsedTomlFile {
  std::filesystem::path file;
  toml::table root;
};

// A key as messages name it: the table as written ("[fit]", "[[dataset]]"; empty for the root
// table) and the key.
struct TomlKeyName {
  std::string table;
  std::string key;
};

// "key 'k' in [t]" ("key 'k' at top level" for the root table).
std::string Describe(const TomlKeyName& name);

// The table name as messages write it: "[name]" ("" for the root table).
std::string TableDisplayName(std::string_view name);

class TomlReader {
 public:
  // `display`: the file as messages name it.
  explicit TomlReader(std::string display) : display_(std::move(display)) {}

  const std::string& display() const { return display_; }

  // Where a region or node starts; a node without a source (built, not parsed) is the file alone.
  SourceLocation At(const toml::source_region& region) const;
  SourceLocation At(const toml::node& node) const { return At(node.source()); }

  [[noreturn]] void Fail(const toml::source_region& region, std::string message,
                         std::string expected) const;
  [[noreturn]] void Fail(const toml::node& node, std::string message, std::string expected) const;

  // Unknown-key detection: every key of `table` must be in `allowed` (listed in the message in
  // the order given). `table_name` as written: "[job]", "[[dataset]]", "" for the root table.
  void CheckKeys(const toml::table& table, std::string_view table_name,
                 std::span<const std::string_view> allowed) const;
  void CheckKeys(const toml::table& table, std::string_view table_name,
                 std::initializer_list<std::string_view> allowed) const {
    CheckKeys(table, table_name,
              std::span<const std::string_view>(allowed.begin(), allowed.size()));
  }
  void CheckKeys(const toml::table& table, std::string_view table_name,
                 const std::vector<std::string>& allowed) const;

  // The sub-table `name` of `parent`: Table() requires it (missing: located at the file's start),
  // OptionalTable() returns nullptr when it is absent; a value that is not a table is an error.
  const toml::table& Table(const toml::table& parent, std::string_view name) const;
  const toml::table* OptionalTable(const toml::table& parent, std::string_view name) const;

  // Typed reads of one value (`node`), named `name` in messages.
  std::string String(const toml::node& node, const TomlKeyName& name) const;
  double Number(const toml::node& node, const TomlKeyName& name) const;  // finite
  double Number(const toml::node& node, const TomlKeyName& name, double minimum,
                double maximum) const;
  std::int64_t Integer(const toml::node& node, const TomlKeyName& name) const;
  std::int64_t Integer(const toml::node& node, const TomlKeyName& name, std::int64_t minimum,
                       std::int64_t maximum) const;
  bool Bool(const toml::node& node, const TomlKeyName& name) const;
  std::vector<std::string> StringArray(const toml::node& node, const TomlKeyName& name) const;
  // The index in `choices` of the string written.
  std::size_t Choice(const toml::node& node, const TomlKeyName& name,
                     std::span<const std::string_view> choices) const;

  // Keyed reads from `table` (`table_name` as written): nullopt when the key is absent and not
  // `required`; a required key that is absent is "missing key 'k' in [t]".
  std::optional<std::string> String(const toml::table& table, std::string_view table_name,
                                    std::string_view key, bool required) const;
  std::optional<double> Number(const toml::table& table, std::string_view table_name,
                               std::string_view key, bool required) const;
  // A number that must be > 0.
  std::optional<double> Positive(const toml::table& table, std::string_view table_name,
                                 std::string_view key, bool required) const;
  std::optional<bool> Bool(const toml::table& table, std::string_view table_name,
                           std::string_view key) const;
  // A string that must be one of `allowed`.
  std::optional<std::string> Choice(const toml::table& table, std::string_view table_name,
                                    std::string_view key, bool required,
                                    std::initializer_list<std::string_view> allowed) const;

  [[noreturn]] void Missing(const toml::table& table, std::string_view table_name,
                            std::string_view key, std::string_view what) const;

  // The key whose value is `node` or holds it as an array element, searched from `root`
  // (nullopt when `node` is not below `root`); for messages about a node read on its own.
  static std::optional<TomlKeyName> NameOf(const toml::table& root, const toml::node& node);

  // %g of a number, as messages print written values and bounds.
  static std::string Show(double value);

 private:
  std::string display_;
};

}  // namespace sorbtrace
