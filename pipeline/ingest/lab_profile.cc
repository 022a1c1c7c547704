// LoadLabProfile: the laboratory profile named by [job] lab_profile (docs/input-formats.md,
// "Laboratory profile"). A small TOML file of strings:
//
//   [laboratory]      name, address (required), contact (optional)
//   [accreditation]   number, body (both, or no table: a laboratory without accreditation)
//   [[signatory]]     name, role (at least one: ISO/IEC 17025:2017, 7.8.2.1 o)
//   [[location]]      id, address (optional; none: the work is done at the lab's address)
//
// Every key is known or refused at its line and column; nothing is guessed.
#include <toml++/toml.h>

#include <algorithm>
#include <initializer_list>
#include <string>
#include <string_view>

#include "pipeline/common/bounded_input.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::ingest {
namespace {

class ProfileReader {
 public:
  explicit ProfileReader(std::string display) : display_(std::move(display)) {}

  SourceLocation At(const toml::source_region& region) const {
    return SourceLocation{display_, static_cast<int>(region.begin.line),
                          static_cast<int>(region.begin.column)};
  }

  [[noreturn]] void Fail(const toml::source_region& region, std::string message,
                         std::string expected) const {
    throw InputError(At(region), std::move(message), std::move(expected));
  }

  void CheckKeys(const toml::table& table, std::string_view section,
                 std::initializer_list<std::string_view> allowed) const {
    for (auto&& [key, value] : table) {
      if (std::find(allowed.begin(), allowed.end(), key.str()) != allowed.end()) continue;
      std::string list;
      for (std::string_view name : allowed) list += (list.empty() ? "" : ", ") + std::string(name);
      Fail(key.source(), "unknown key '" + Excerpt(key.str()) + "' in " + std::string(section),
           "one of: " + list);
    }
  }

  // A non-empty string; "" when absent and not required.
  std::string Text(const toml::table& table, std::string_view section, std::string_view key,
                   bool required) const {
    const toml::node* node = table.get(key);
    if (node == nullptr) {
      if (required) {
        Fail(table.source(), "missing key '" + std::string(key) + "' in " + std::string(section),
             std::string(key) + " (a non-empty string)");
      }
      return "";
    }
    if (!node->is_string()) {
      Fail(node->source(),
           "key '" + std::string(key) + "' in " + std::string(section) + " is not a string",
           "a quoted string");
    }
    std::string value = node->as_string()->get();
    if (value.find_first_not_of(" \t") == std::string::npos) {
      Fail(node->source(),
           "key '" + std::string(key) + "' in " + std::string(section) + " is empty",
           "a non-empty string");
    }
    return value;
  }

  const toml::table* OptionalTable(const toml::table& root, std::string_view name) const {
    const toml::node* node = root.get(name);
    if (node == nullptr) return nullptr;
    if (!node->is_table()) {
      Fail(node->source(), "'" + std::string(name) + "' is not a table",
           "a [" + std::string(name) + "] table");
    }
    return node->as_table();
  }

  // The tables of [[name]]; empty when absent.
  std::vector<const toml::table*> Entries(const toml::table& root, std::string_view name) const {
    std::vector<const toml::table*> out;
    const toml::node* node = root.get(name);
    if (node == nullptr) return out;
    if (!node->is_array_of_tables()) {
      Fail(node->source(), "'" + std::string(name) + "' is not an array of tables",
           "[[" + std::string(name) + "]] entries");
    }
    for (const toml::node& item : *node->as_array()) out.push_back(item.as_table());
    return out;
  }

  const std::string& display() const { return display_; }

 private:
  std::string display_;
};

void ReadLaboratory(const ProfileReader& in, const toml::table& root, LabProfile& profile) {
  const toml::table* lab = in.OptionalTable(root, "laboratory");
  if (lab == nullptr) {
    throw InputError(SourceLocation{in.display(), 1, 1}, "missing table [laboratory]",
                     "a [laboratory] table with name and address");
  }
  in.CheckKeys(*lab, "[laboratory]", {"name", "address", "contact"});
  profile.name = in.Text(*lab, "[laboratory]", "name", true);
  profile.address = in.Text(*lab, "[laboratory]", "address", true);
  profile.contact = in.Text(*lab, "[laboratory]", "contact", false);
}

void ReadAccreditation(const ProfileReader& in, const toml::table& root, LabProfile& profile) {
  const toml::table* table = in.OptionalTable(root, "accreditation");
  if (table == nullptr) return;
  in.CheckKeys(*table, "[accreditation]", {"number", "body"});
  profile.accreditation_number = in.Text(*table, "[accreditation]", "number", true);
  profile.accreditation_body = in.Text(*table, "[accreditation]", "body", true);
}

void ReadSignatories(const ProfileReader& in, const toml::table& root, LabProfile& profile) {
  for (const toml::table* table : in.Entries(root, "signatory")) {
    in.CheckKeys(*table, "[[signatory]]", {"name", "role"});
    profile.signatories.push_back({in.Text(*table, "[[signatory]]", "name", true),
                                   in.Text(*table, "[[signatory]]", "role", true)});
  }
  if (profile.signatories.empty()) {
    throw InputError(SourceLocation{in.display(), 1, 1}, "no [[signatory]] entries",
                     "at least one [[signatory]] with name and role (the person authorizing "
                     "the report, ISO/IEC 17025:2017, 7.8.2.1 o)");
  }
}

void ReadLocations(const ProfileReader& in, const toml::table& root, LabProfile& profile) {
  for (const toml::table* table : in.Entries(root, "location")) {
    in.CheckKeys(*table, "[[location]]", {"id", "address"});
    LabLocation location{in.Text(*table, "[[location]]", "id", true),
                         in.Text(*table, "[[location]]", "address", true)};
    for (const LabLocation& other : profile.locations) {
      if (other.id == location.id) {
        in.Fail(table->get("id")->source(),
                "location id '" + Excerpt(location.id) + "' is used twice", "a unique id");
      }
    }
    profile.locations.push_back(std::move(location));
  }
}

}  // namespace

LabProfile LoadLabProfile(const std::filesystem::path& file, const std::string& display) {
  RequireRegularFile(file, display, "a laboratory profile in TOML");
  const toml::table root = ParseTomlFile(file, "a laboratory profile in TOML");
  const ProfileReader in(display);
  in.CheckKeys(root, "the laboratory profile",
               {"laboratory", "accreditation", "signatory", "location"});
  LabProfile profile;
  profile.file = file;
  ReadLaboratory(in, root, profile);
  ReadAccreditation(in, root, profile);
  ReadSignatories(in, root, profile);
  ReadLocations(in, root, profile);
  return profile;
}

std::string_view SamplingByName(SamplingBy by) {
  switch (by) {
    case SamplingBy::kUnstated:
      return "";
    case SamplingBy::kLaboratory:
      return "laboratory";
    case SamplingBy::kCustomer:
      return "customer";
  }
  return "";
}

}  // namespace sorbtrace::ingest
