// LoadTemplate: reads templates/*.toml. Every key is known or rejected (naming the key, its
// line and column), every value is type-checked, so a misspelt setting never goes unnoticed.
#include <toml++/toml.h>

#include <algorithm>
#include <set>
#include <string>
#include <vector>

#include "pipeline/common/bounded_input.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/common/toml_reader.h"
#include "pipeline/report/report.h"

namespace sorbtrace::report {
namespace {

const std::vector<std::string>& KnownSections() {
  static const std::vector<std::string> kSections = {
      "summary",  "conformity", "isotherm", "models",     "pores",
      "kinetics", "equilibria", "method",   "deviations", "cautions"};
  return kSections;
}

std::string JoinQuoted(const std::vector<std::string>& items) {
  std::string out;
  for (size_t i = 0; i < items.size(); ++i) {
    if (i > 0) out += i + 1 == items.size() ? " or " : ", ";
    out += "\"" + items[i] + "\"";
  }
  return out;
}

// The shared TOML reader (pipeline/common/toml_reader.h) as the template's readers call it:
// a value is named by the key that holds it in the template.
class TemplateReader {
 public:
  TemplateReader(std::string file, const toml::table& root)
      : reader_(std::move(file)), root_(root) {}

  SourceLocation Where(const toml::source_region& region) const { return reader_.At(region); }

  // Throws for any key of `table` not in `allowed` (`table_name` bare, "" for the top level).
  void CheckKeys(const toml::table& table, const std::string& table_name,
                 const std::vector<std::string>& allowed) const {
    reader_.CheckKeys(table, TableDisplayName(table_name), allowed);
  }

  const toml::table* Table(const toml::table& parent, const std::string& name) const {
    return reader_.OptionalTable(parent, name);
  }

  std::string String(const toml::node& node, const std::string& key) const {
    return reader_.String(node, Name(node, key));
  }
  double Number(const toml::node& node, const std::string& key) const {
    return reader_.Number(node, Name(node, key));
  }
  long long Integer(const toml::node& node, const std::string& key) const {
    return reader_.Integer(node, Name(node, key));
  }
  bool Boolean(const toml::node& node, const std::string& key) const {
    return reader_.Bool(node, Name(node, key));
  }
  std::vector<std::string> StringArray(const toml::node& node, const std::string& key) const {
    return reader_.StringArray(node, Name(node, key));
  }

 private:
  TomlKeyName Name(const toml::node& node, const std::string& key) const {
    return TomlReader::NameOf(root_, node).value_or(TomlKeyName{"", key});
  }

  TomlReader reader_;
  const toml::table& root_;
};

// [layout] outputs: which renderings of the sheet are written ("pdf", "html", each once,
// at least one).
void ReadOutputs(TemplateReader& reader, const toml::node& node, Template& layout) {
  const std::vector<std::string> outputs = reader.StringArray(node, "outputs");
  const std::vector<std::string> known = {"pdf", "html"};
  const toml::array& array = *node.as_array();
  layout.write_pdf = layout.write_html = false;
  for (size_t i = 0; i < outputs.size(); ++i) {
    bool& flag = outputs[i] == "pdf" ? layout.write_pdf : layout.write_html;
    if (std::find(known.begin(), known.end(), outputs[i]) == known.end() || flag) {
      throw InputError(reader.Where(array[i].source()),
                       "output \"" + outputs[i] + "\" is unknown or listed twice",
                       "each of " + JoinQuoted(known) + " at most once");
    }
    flag = true;
  }
  if (outputs.empty()) {
    throw InputError(reader.Where(node.source()), "no output is listed",
                     "at least one of " + JoinQuoted(known));
  }
}

// [template]
void ReadTemplateTable(TemplateReader& reader, const toml::table* t, Template& layout) {
  reader.CheckKeys(*t, "template", {"name", "title", "page_size", "margin_mm"});
  if (const toml::node* n = t->get("name")) layout.name = reader.String(*n, "name");
  if (const toml::node* n = t->get("title")) layout.title = reader.String(*n, "title");
  if (const toml::node* n = t->get("page_size")) {
    const std::string size = reader.String(*n, "page_size");
    if (size == "A4") {
      layout.page_size = PageSize::kA4;
    } else if (size == "letter") {
      layout.page_size = PageSize::kLetter;
    } else {
      throw InputError(reader.Where(n->source()), "page_size \"" + size + "\" is not supported",
                       "\"A4\" or \"letter\"");
    }
  }
  if (const toml::node* n = t->get("margin_mm")) {
    layout.margin_mm = reader.Number(*n, "margin_mm");
    // Below 10 mm printers clip; above 40 mm little is left for the figures (common practice).
    if (!(layout.margin_mm >= 10.0 && layout.margin_mm <= 40.0)) {
      throw InputError(reader.Where(n->source()),
                       "margin_mm " + std::to_string(layout.margin_mm) + " is out of range",
                       "a margin from 10 to 40 mm");
    }
  }
}

// [units]
void ReadUnitsTable(TemplateReader& reader, const toml::table* t, Template& layout) {
  reader.CheckKeys(*t, "units", {"moisture", "uncertainty_significant_digits"});
  if (const toml::node* n = t->get("moisture")) {
    const std::string unit = reader.String(*n, "moisture");
    if (unit == "percent") {
      layout.moisture_in_percent = true;
    } else if (unit == "kg/kg") {
      layout.moisture_in_percent = false;
    } else {
      throw InputError(reader.Where(n->source()), "moisture unit \"" + unit + "\" is not supported",
                       "\"percent\" or \"kg/kg\"");
    }
  }
  if (const toml::node* n = t->get("uncertainty_significant_digits")) {
    const long long digits = reader.Integer(*n, "uncertainty_significant_digits");
    // JCGM 100:2008, 7.2.6: "at most two significant digits"; one is allowed too.
    if (digits < 1 || digits > common::kUncertaintySignificantDigits) {
      throw InputError(
          reader.Where(n->source()),
          "uncertainty_significant_digits " + std::to_string(digits) + " is out of range",
          "1 or 2 (JCGM 100:2008, 7.2.6)");
    }
    layout.uncertainty_significant_digits = static_cast<int>(digits);
  }
}

// [layout]
void ReadLayoutTable(TemplateReader& reader, const toml::table* t, Template& layout) {
  reader.CheckKeys(*t, "layout", {"sections", "compact", "outputs"});
  if (const toml::node* n = t->get("sections")) {
    layout.sections = reader.StringArray(*n, "sections");
    const auto& known = KnownSections();
    std::set<std::string> seen;
    const toml::array& array = *n->as_array();
    for (size_t i = 0; i < layout.sections.size(); ++i) {
      const std::string& section = layout.sections[i];
      if (std::find(known.begin(), known.end(), section) == known.end()) {
        throw InputError(reader.Where(array[i].source()), "unknown section \"" + section + "\"",
                         "one of " + JoinQuoted(known));
      }
      if (!seen.insert(section).second) {
        throw InputError(reader.Where(array[i].source()),
                         "section \"" + section + "\" is listed twice", "each section once");
      }
    }
  }
  if (const toml::node* n = t->get("compact")) layout.compact = reader.Boolean(*n, "compact");
  if (const toml::node* n = t->get("outputs")) ReadOutputs(reader, *n, layout);
}

// [[reference]] entries.
void ReadReferences(TemplateReader& reader, const toml::node* n, Template& layout) {
  if (!n->is_array_of_tables()) {
    throw InputError(reader.Where(n->source()), "'reference' must be an array of tables",
                     "[[reference]] entries");
  }
  for (const toml::node& item : *n->as_array()) {
    const toml::table& t = *item.as_table();
    reader.CheckKeys(t, "reference", {"temperature_C", "rh_percent"});
    pores::ReferenceCondition condition;
    const toml::node* temperature = t.get("temperature_C");
    const toml::node* rh = t.get("rh_percent");
    if (temperature == nullptr || rh == nullptr) {
      throw InputError(reader.Where(t.source()), "[[reference]] needs temperature_C and rh_percent",
                       "temperature_C = 23.0 and rh_percent = 50.0");
    }
    const double temperature_C = reader.Number(*temperature, "temperature_C");
    const double rh_percent = reader.Number(*rh, "rh_percent");
    if (!(rh_percent > 0.0 && rh_percent < 100.0)) {
      throw InputError(reader.Where(rh->source()), "rh_percent is out of range",
                       "a relative humidity between 0 and 100 %");
    }
    // The physics correlations cover 0..100 degC (pipeline/physics/physics.h).
    if (!(temperature_C >= 0.0 && temperature_C <= 100.0)) {
      throw InputError(reader.Where(temperature->source()), "temperature_C is out of range",
                       "a temperature from 0 to 100 °C");
    }
    condition.temperature_K = temperature_C + physics::kZeroCelsius_K;
    condition.rh_fraction = rh_percent / 100.0;
    layout.reference_conditions.push_back(condition);
  }
}

}  // namespace

Template LoadTemplate(const std::filesystem::path& template_file) {
  const std::string file = template_file.string();
  const toml::table root = ParseTomlFile(template_file, "a report template in TOML");
  TemplateReader reader(file, root);
  Template layout;
  layout.source_file = template_file;
  layout.sections.clear();

  if (const toml::node* lab = root.get("lab")) {
    // Templates carry no laboratory: one template serves every laboratory, and an invented
    // identity must never reach an issued sheet.
    throw InputError(reader.Where(lab->source()),
                     "a template holds no [lab] table: the laboratory is named in its own profile",
                     "the [lab] table removed, and lab_profile = \"<profile file>\" in the job's "
                     "[job] table (docs/input-formats.md, \"Laboratory profile\")");
  }
  reader.CheckKeys(root, "", {"template", "units", "layout", "reference"});

  if (const toml::table* t = reader.Table(root, "template")) ReadTemplateTable(reader, t, layout);
  if (layout.name.empty()) layout.name = template_file.stem().string();

  if (const toml::table* t = reader.Table(root, "units")) ReadUnitsTable(reader, t, layout);

  if (const toml::table* t = reader.Table(root, "layout")) ReadLayoutTable(reader, t, layout);
  if (layout.sections.empty()) layout.sections = KnownSections();

  if (const toml::node* n = root.get("reference")) ReadReferences(reader, n, layout);
  return layout;
}

}  // namespace sorbtrace::report
