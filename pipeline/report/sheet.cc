#include "pipeline/report/sheet.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <set>
#include <utility>

#include "pipeline/common/draw_statistics.h"
#include "pipeline/physics/physics.h"
#include "pipeline/report/format.h"
#include "pipeline/report/internal/reader_text.h"
#include "pipeline/report/plot/text.h"
#include "pipeline/report/sections.h"

namespace sorbtrace::report::internal {
namespace {

using physics::kZeroCelsius_K;
// A parameter correlation this close to +-1 makes the pair poorly determined (common practice
// in nonlinear regression reports).
constexpr double kNotableCorrelation = 0.95;

std::string PrettyUnit(const std::string& unit) {
  if (unit == "1" || unit.empty()) return "";
  std::string out = unit;
  const std::vector<std::pair<std::string, std::string>> replacements = {
      {"m2", "m²"}, {"m3", "m³"}, {"degC", "°C"}, {"^-1", "⁻¹"}, {"um", "µm"}};
  for (const auto& [from, to] : replacements) {
    size_t pos = 0;
    while ((pos = out.find(from, pos)) != std::string::npos) {
      out.replace(pos, from.size(), to);
      pos += to.size();
    }
  }
  return out;
}

std::string WithUnit(const std::string& number, const std::string& display_unit) {
  if (display_unit.empty()) return number;
  // A value in brackets with a power of ten keeps the unit after it.
  return number + " " + display_unit;
}

std::string KeyPart(const std::string& text) {
  std::string out;
  for (char c : text) {
    if ((c >= 'a' && c <= 'z') || (c >= '0' && c <= '9')) {
      out.push_back(c);
    } else if (c >= 'A' && c <= 'Z') {
      out.push_back(static_cast<char>(c - 'A' + 'a'));
    } else if (!out.empty() && out.back() != '_') {
      out.push_back('_');
    }
  }
  while (!out.empty() && out.back() == '_') out.pop_back();
  return out;
}

void AddUnique(std::vector<std::string>& list, std::set<std::string>& seen, std::string item) {
  if (item.empty()) return;
  if (seen.insert(item).second) list.push_back(std::move(item));
}

size_t CodePoints(const std::string& text) {
  size_t n = 0;
  for (char c : text) n += (static_cast<unsigned char>(c) & 0xC0) != 0x80 ? 1 : 0;
  return n;
}

size_t LongestWord(const std::string& text) {
  size_t longest = 0, current = 0;
  for (char c : text) {
    if (c == ' ' || c == '\t' || c == '\n' || c == '\r') {
      current = 0;
    } else if ((static_cast<unsigned char>(c) & 0xC0) != 0x80) {
      longest = std::max(longest, ++current);
    }
  }
  return longest;
}

// Cautions collected each once with their rank (CautionRank, sheet.h); Finish() orders
// Sheet::cautions by rank, keeping the order of collection within a rank.
struct CautionList {
  Sheet& sheet;
  std::set<std::string> seen;
  std::vector<CautionRank> ranks;  // parallel to sheet.cautions

  void Add(const std::string& text, CautionRank rank) {
    const size_t before = sheet.cautions.size();
    AddUnique(sheet.cautions, seen, text);
    if (sheet.cautions.size() > before) ranks.push_back(rank);
  }
  void AddAll(const std::vector<Diagnostic>& warnings, CautionRank rank) {
    for (const Diagnostic& w : warnings) Add(w.message, rank);
  }
  void Finish() {
    std::vector<size_t> order(sheet.cautions.size());
    for (size_t i = 0; i < order.size(); ++i) order[i] = i;
    std::stable_sort(order.begin(), order.end(),
                     [this](size_t a, size_t b) { return ranks[a] < ranks[b]; });
    std::vector<std::string> sorted;
    sorted.reserve(order.size());
    for (size_t i : order) sorted.push_back(std::move(sheet.cautions[i]));
    sheet.cautions = std::move(sorted);
    std::stable_sort(ranks.begin(), ranks.end());
  }
};

// A caution (and a run.log warning) for every free-text field of the job that the sheet
// prints shortened.
void CheckPrintedFields(const ingest::JobSpec& job, CautionList& cautions) {
  Sheet& sheet = cautions.sheet;
  std::vector<std::pair<std::string, std::string>> fields = {
      {"job id", job.job_id},
      {"material name", job.material_name},
      {"material description", job.material_description},
      {"client", job.client},
      {"test dates", job.test_dates}};
  for (const ingest::SpecimenSpec& s : job.specimens) fields.emplace_back("specimen id", s.id);
  for (const ingest::DataSetSpec& d : job.datasets) fields.emplace_back("data set id", d.id);
  for (const auto& [name, text] : fields) {
    const size_t length = CodePoints(text);
    const size_t word = LongestWord(text);
    const size_t limit = name == "job id" ? kMaxReportNumberChars : kMaxPrintedFieldChars;
    if (length <= limit && word <= plot::kMaxPrintedWordChars) continue;
    const std::string message = fmt::format(
        "The {} has {} characters{}; the datasheet prints it shortened, ending in \"…\" "
        "(results.json holds it in full)",
        name, length,
        word > plot::kMaxPrintedWordChars ? fmt::format(", a word of {} characters", word) : "");
    cautions.Add(message + ".", CautionRank::kInformation);
    sheet.warnings.push_back({Severity::kWarning, SourceLocation{job.job_file.string(), 0, 0},
                              message,
                              fmt::format("at most {} characters, words of at most {}", limit,
                                          plot::kMaxPrintedWordChars)});
  }
}

}  // namespace

std::string PrintedField(const std::string& text, size_t max_chars) {
  if (CodePoints(text) <= max_chars) return text;
  size_t n = 0, i = 0;
  for (; i < text.size(); ++i) {
    if ((static_cast<unsigned char>(text[i]) & 0xC0) != 0x80 && n++ == max_chars) {
      break;
    }
  }
  return text.substr(0, i) + "…";
}

nlohmann::ordered_json QuantityJson(const Quantity& q) {
  nlohmann::ordered_json j;
  j["key"] = q.key;
  j["label"] = q.label;
  j["value"] = q.value;
  j["unit"] = q.unit;
  j["standard_uncertainty"] = q.standard_uncertainty;
  j["coverage_factor"] = q.coverage_factor;
  j["expanded_uncertainty"] = q.expanded_uncertainty;
  j["display_unit"] = q.display_unit;
  j["text"] = q.text;
  return j;
}

Quantity MakeQuantity(std::string key, std::string label, double value, double standard_uncertainty,
                      std::string unit, double display_scale, std::string display_unit,
                      const DisplayRules& rules) {
  Quantity q;
  q.key = std::move(key);
  q.label = std::move(label);
  q.value = value;
  q.unit = std::move(unit);
  q.standard_uncertainty = std::isfinite(standard_uncertainty) ? standard_uncertainty : 0.0;
  q.coverage_factor = rules.coverage_factor;
  q.expanded_uncertainty = q.coverage_factor * q.standard_uncertainty;
  q.display_value = value * display_scale;
  q.display_expanded_uncertainty = q.expanded_uncertainty * display_scale;
  q.display_unit = std::move(display_unit);
  q.text = WithUnit(FormatWithUncertainty(q.display_value, q.display_expanded_uncertainty,
                                          rules.significant_digits),
                    q.display_unit);
  return q;
}

Quantity DrawnQuantity(std::string key, std::string label, double value,
                       double standard_uncertainty, double draws_coverage_factor, std::string unit,
                       double display_scale, std::string display_unit, DisplayRules rules) {
  rules.coverage_factor = CoverageFactorOfDraws(draws_coverage_factor, rules.coverage_factor);
  return MakeQuantity(std::move(key), std::move(label), value, standard_uncertainty,
                      std::move(unit), display_scale, std::move(display_unit), rules);
}

DisplayRules MonolayerRules(const pores::SurfaceArea& area, DisplayRules rules) {
  if (area.coverage_factor > 0.0) rules.coverage_factor = area.coverage_factor;
  return rules;
}

Quantity SurfaceAreaQuantity(const pores::SurfaceArea& area, std::string key, std::string label,
                             const DisplayRules& rules) {
  return MakeQuantity(std::move(key), std::move(label), area.area_m2_per_g, area.u_area_m2_per_g,
                      "m2/g", 1.0, "m²/g", MonolayerRules(area, rules));
}

Quantity MoistureQuantity(std::string key, std::string label, double value_kg_per_kg,
                          double u_kg_per_kg, const DisplayRules& rules) {
  // 1 kg/kg = 100 % (mass percent, dry basis).
  return MakeQuantity(std::move(key), std::move(label), value_kg_per_kg, u_kg_per_kg, "kg/kg",
                      rules.moisture_in_percent ? 100.0 : 1.0,
                      rules.moisture_in_percent ? "%" : "kg/kg", rules);
}

namespace {

DisplayRules WithPointCoverage(DisplayRules rules, double u, double expanded_u) {
  rules.coverage_factor = CoverageFactorOf(u, expanded_u, rules.coverage_factor);
  return rules;
}

// Adds (c u)^2 of `line` to the aggregate line of the same quantity (kept in first-seen order).
void Accumulate(std::vector<reduce::BudgetLine>& aggregate, const reduce::BudgetLine& line) {
  for (reduce::BudgetLine& a : aggregate) {
    if (a.quantity == line.quantity) {
      a.standard_uncertainty += line.contribution * line.contribution;
      return;
    }
  }
  reduce::BudgetLine a;
  a.quantity = line.quantity;
  a.standard_uncertainty = line.contribution * line.contribution;
  aggregate.push_back(a);
}

}  // namespace

double CoverageFactorOf(double standard_uncertainty, double expanded_uncertainty, double fallback) {
  return standard_uncertainty > 0.0 && expanded_uncertainty > 0.0
             ? expanded_uncertainty / standard_uncertainty
             : fallback;
}

std::string WithOwnCoverage(const Quantity& quantity, double sheet_coverage_factor) {
  const std::string k = CoverageText(quantity.coverage_factor);
  const bool own_k =
      quantity.standard_uncertainty > 0.0 && k != CoverageText(sheet_coverage_factor);
  return own_k ? quantity.text + " (k = " + k + ")" : quantity.text;
}

std::string CoverageStatement(double sheet_coverage_factor) {
  return "k = " + CoverageText(sheet_coverage_factor) +
         " unless another k is stated beside the value";
}

int Sheet::SectionNumber(const std::string& key) const {
  for (size_t i = 0; i < section_keys.size(); ++i) {
    if (section_keys[i] == key) return static_cast<int>(i) + 1;
  }
  return 0;
}

Quantity PointRhQuantity(const reduce::IsothermPoint& p, const DisplayRules& rules) {
  return MakeQuantity("rh", "RH", p.rh_fraction, p.u_rh_fraction, "1", 100.0, "%",
                      WithPointCoverage(rules, p.u_rh_fraction, p.expanded_u_rh_fraction));
}

Quantity PointMoistureQuantity(const reduce::IsothermPoint& p, const DisplayRules& rules) {
  return MoistureQuantity(
      "moisture", "moisture content", p.moisture_kg_per_kg, p.u_moisture_kg_per_kg,
      WithPointCoverage(rules, p.u_moisture_kg_per_kg, p.expanded_u_moisture_kg_per_kg));
}

PointBudget CombinedPointBudget(const reduce::ReducedIsotherms& reduced,
                                const reduce::IsothermPoint& point) {
  PointBudget budget;
  // The moisture budget is the reduce stage's own (its combination rule lives there).
  budget.moisture = point.moisture_budget;
  for (const int index : point.specimen_point_indices) {
    const reduce::SpecimenPoint& sp = reduced.specimen_points[static_cast<std::size_t>(index)];
    budget.specimen_ids.push_back(sp.specimen_id);
    for (const reduce::BudgetLine& line : sp.rh_budget) Accumulate(budget.rh, line);
  }
  const double n = static_cast<double>(budget.specimen_ids.size());
  if (n == 0.0) return budget;
  for (reduce::BudgetLine& a : budget.rh) {
    a.standard_uncertainty = std::sqrt(a.standard_uncertainty / n);  // root mean square
    a.unit = "1";
    a.sensitivity = 1.0;
    a.contribution = a.standard_uncertainty;
  }
  return budget;
}

std::string PlainVersion(const std::string& software_version) {
  const std::string prefix = "sorbtrace ";
  if (software_version.rfind(prefix, 0) == 0) return software_version.substr(prefix.size());
  return software_version;
}

std::string BranchLabel(ingest::Branch branch) { return std::string(ingest::BranchName(branch)); }

std::string GroupLabel(const fit::FitGroup& group) {
  return BranchTemperatureLabel(group.branch, group.temperature_K);
}

namespace {
// 0.05 K: half the last digit of a temperature printed to one decimal.
bool WholeDegree(double celsius) { return std::abs(celsius - std::round(celsius)) < 0.05; }
}  // namespace

std::string TemperatureLabel(double temperature_K) {
  const double celsius = temperature_K - kZeroCelsius_K;
  return FormatFixed(celsius, WholeDegree(celsius) ? 0 : 1) + " °C";
}

std::string TemperatureKey(double temperature_K) {
  const double celsius = temperature_K - kZeroCelsius_K;
  std::string text = FormatFixed(celsius, WholeDegree(celsius) ? 0 : 1);
  for (char& c : text) {
    if (c == '.') c = 'p';
    if (c == '-') c = 'm';
  }
  return text + "C";
}

std::string BranchTemperatureLabel(ingest::Branch branch, double temperature_K) {
  return BranchLabel(branch) + ", " + TemperatureLabel(temperature_K);
}

std::string BranchTemperatureKey(ingest::Branch branch, double temperature_K) {
  return BranchLabel(branch) + "_" + TemperatureKey(temperature_K);
}

double MeasuredTemperature_K(const fit::IsothermFits* fits,
                             const pores::ReferenceMoisture& reference) {
  double measured_K = std::nan("");
  if (fits == nullptr || reference.model_name.empty()) return measured_K;
  const double wanted_K = reference.condition.temperature_K;
  for (size_t g = 0; g < fits->groups.size() && g < fits->best_fit_per_group.size(); ++g) {
    const int best = fits->best_fit_per_group[g];
    if (fits->groups[g].branch != reference.branch || best < 0 ||
        static_cast<size_t>(best) >= fits->fits.size() ||
        fits->fits[static_cast<size_t>(best)].model_name != reference.model_name) {
      continue;
    }
    const double t_K = fits->groups[g].temperature_K;
    if (std::isnan(measured_K) || std::abs(t_K - wanted_K) < std::abs(measured_K - wanted_K)) {
      measured_K = t_K;
    }
  }
  return measured_K;
}

std::string Section::Heading() const { return fmt::format("{}  {}", number, title); }

namespace {

std::string SectionTitle(const std::string& key) {
  static const std::vector<std::pair<std::string, std::string>> kTitles = {
      {"summary", "Summary"},
      {"conformity", "Statement of conformity"},
      {"isotherm", "Sorption isotherm"},
      {"models", "Model comparison"},
      {"pores", "Pore-size distribution"},
      {"kinetics", "Kinetics"},
      {"equilibria", "Equilibrium table"},
      {"method", "Method and traceability"},
      {"deviations", "Deviations from the method"},
      {"cautions", "Cautions"}};
  for (const auto& [k, title] : kTitles) {
    if (k == key) return title;
  }
  return key;
}

void BuildSection(const internal::SectionContext& ctx, Section& section) {
  if (section.key == "summary") {
    internal::BuildSummarySection(ctx, ctx.layout.compact, section);
  } else if (section.key == "conformity") {
    internal::BuildConformitySection(ctx, section);
  } else if (section.key == "isotherm") {
    internal::BuildIsothermSection(ctx, section);
  } else if (section.key == "models") {
    internal::BuildModelsSection(ctx, section);
  } else if (section.key == "pores") {
    internal::BuildPoresSection(ctx, section);
  } else if (section.key == "kinetics") {
    internal::BuildKineticsSection(ctx, section);
  } else if (section.key == "equilibria") {
    internal::BuildEquilibriaSection(ctx, section);
  } else if (section.key == "method") {
    internal::BuildMethodSection(ctx, section);
  } else if (section.key == "deviations") {
    internal::BuildDeviationsSection(ctx, section);
  } else if (section.key == "cautions") {
    internal::BuildCautionsSection(ctx, section);
  }
}

// The numbered sections of the template, each from its builder.
std::vector<Section> BuildSections(const ReportInputs& inputs, const Template& layout,
                                   const ReportOptions& options, const Sheet& sheet) {
  const internal::SectionContext ctx{inputs, layout, options, sheet};
  std::vector<Section> sections;
  for (size_t i = 0; i < sheet.section_keys.size(); ++i) {
    Section section;
    section.key = sheet.section_keys[i];
    section.number = static_cast<int>(i) + 1;
    section.title = SectionTitle(section.key);
    BuildSection(ctx, section);
    sections.push_back(std::move(section));
  }
  return sections;
}

}  // namespace

namespace {

void SetDisplayRules(const ReportInputs& inputs, const Template& layout, Sheet& sheet) {
  sheet.rules.moisture_in_percent = layout.moisture_in_percent;
  sheet.rules.significant_digits = layout.uncertainty_significant_digits;
  if (inputs.reduced != nullptr) sheet.rules.coverage_factor = inputs.reduced->coverage_factor;
  if (inputs.fits != nullptr && inputs.reduced == nullptr) {
    sheet.rules.coverage_factor = inputs.fits->coverage_factor;
  }
  sheet.section_keys = layout.compact ? std::vector<std::string>{"summary"} : layout.sections;
  // A job without specifications has no statement of conformity: no empty section.
  if (inputs.ingested == nullptr || inputs.ingested->job.specifications.empty()) {
    sheet.section_keys.erase(
        std::remove(sheet.section_keys.begin(), sheet.section_keys.end(), "conformity"),
        sheet.section_keys.end());
  }
  sheet.moisture_unit = sheet.rules.moisture_in_percent ? "%" : "kg/kg";
  sheet.moisture_axis_label = sheet.rules.moisture_in_percent
                                  ? "moisture content (mass %, dry basis)"
                                  : "moisture content (kg/kg, dry basis)";
  sheet.moisture_basis_text = sheet.rules.moisture_in_percent
                                  ? "moisture contents in mass % of the dry mass (dry basis)"
                                  : "moisture contents in kg of water per kg of dry mass (dry "
                                    "basis)";
}

// Input warnings rank with validity (a frozen sensor, a gap in a log): they change what every
// number below can be trusted for.
void AddInputCautions(const ReportInputs& inputs, CautionList& cautions) {
  if (inputs.ingested == nullptr) return;
  // DRAFT (no laboratory profile): the first thing a reader of the summary must know.
  if (!inputs.ingested->job.lab_profile) {
    cautions.Add(
        "DRAFT: this sheet names no issuing laboratory and carries no signatures; it is not a "
        "report for issue.",
        CautionRank::kNotForIssue);
  }
  cautions.AddAll(inputs.ingested->summary.warnings, CautionRank::kValidity);
  CheckPrintedFields(inputs.ingested->job, cautions);
}

bool WantedReference(const Template& layout, const pores::ReferenceCondition& condition) {
  // Closer than 0.05 K and 0.05 % RH: the same condition (both far below any reading).
  bool wanted = layout.reference_conditions.empty();
  for (const pores::ReferenceCondition& c : layout.reference_conditions) {
    if (std::abs(c.temperature_K - condition.temperature_K) < 0.05 &&
        std::abs(c.rh_fraction - condition.rh_fraction) < 5e-4) {
      wanted = true;
    }
  }
  return wanted;
}

// A reference moisture as headline: key, label and caution name the temperature the value
// was measured at. Whether that is the reference temperature is the pores stage's verdict
// (ReferenceMoisture::temperature_matches: within PoreOptions::temperature_tolerance_K,
// 0.5 K by default, the tolerance by which the pipeline counts two isotherms as one
// temperature), so the sheet and the pores stage cannot disagree. A value read at another
// temperature is labelled with the temperature it holds for and the reference marked "not
// measured", and its key names both ("moisture_25C_50RH_adsorption_ref_23C"): no reader can
// take it for the reference.
// The headline key of a reference moisture measured at its reference temperature.
std::string ReferenceMoistureKey(const pores::ReferenceMoisture& rm) {
  return fmt::format("moisture_{}_{}RH_{}", TemperatureKey(rm.condition.temperature_K),
                     FormatFixed(rm.condition.rh_fraction * 100.0, 0),
                     KeyPart(BranchLabel(rm.branch)));
}

void AddReferenceMoisture(const pores::ReferenceMoisture& rm, double measured_K,
                          CautionList& cautions) {
  Sheet& sheet = cautions.sheet;
  const std::string reference_t = TemperatureLabel(rm.condition.temperature_K);
  const std::string rh = FormatFixed(rm.condition.rh_fraction * 100.0, 0);
  const std::string branch = BranchLabel(rm.branch);
  std::string key = ReferenceMoistureKey(rm);
  std::string label = fmt::format("Moisture content at {} / {} % RH ({})", reference_t, rh, branch);
  if (!rm.temperature_matches) {
    const std::string measured_t = TemperatureLabel(measured_K);
    key = fmt::format("moisture_{}_{}RH_{}_ref_{}", TemperatureKey(measured_K), rh, KeyPart(branch),
                      TemperatureKey(rm.condition.temperature_K));
    // The label leads with the temperature the value holds for.
    label = fmt::format(
        "Moisture content at {} / {} % RH ({}); reference temperature {} not "
        "measured",
        measured_t, rh, branch, reference_t);
    cautions.Add(fmt::format("The reference temperature {} was not measured: moisture contents "
                             "given for it are read from the isotherm measured at {} and are "
                             "not converted to {}.",
                             reference_t, measured_t, reference_t),
                 CautionRank::kValidity);
    sheet.unavailable_headline.push_back(
        {ReferenceMoistureKey(rm),
         fmt::format("Moisture content at {} / {} % RH ({})", reference_t, rh, branch),
         fmt::format("not measured at {}; value at {}", reference_t, measured_t)});
  }
  // Its own coverage factor (ReferenceMoisture::coverage_factor, Student-t from nu_eff).
  DisplayRules rules = sheet.rules;
  rules.coverage_factor = rm.coverage_factor;
  sheet.headline.push_back(MoistureQuantity(std::move(key), std::move(label), rm.moisture_kg_per_kg,
                                            rm.u_moisture_kg_per_kg, rules));
  sheet.headline.back().degrees_of_freedom = rm.effective_dof;
}

// Headline: moisture at the reference conditions. A condition no isotherm could be read at
// (no fitted adsorption isotherm) gets no headline value, only its caution.
void AddReferenceMoistures(const pores::PoreAnalysis& pa, const fit::IsothermFits* fits,
                           const Template& layout, CautionList& cautions) {
  for (const pores::ReferenceMoisture& rm : pa.reference_moisture) {
    if (!WantedReference(layout, rm.condition)) continue;
    const double measured_K = MeasuredTemperature_K(fits, rm);
    if (!rm.model_name.empty() && (rm.temperature_matches || !std::isnan(measured_K))) {
      AddReferenceMoisture(rm, measured_K, cautions);
      // What the value is (pores::ReferenceMoisture::models_weighed; quantities.h ReadCurves).
      if (rm.models_weighed > 1) {
        cautions.Add(
            fmt::format("Moisture content at {} / {} % RH ({}): the average of {} fitted isotherm "
                        "models by their Akaike weights (best: {}); its uncertainty includes "
                        "their spread.",
                        TemperatureLabel(rm.condition.temperature_K),
                        FormatFixed(rm.condition.rh_fraction * 100.0, 0), BranchLabel(rm.branch),
                        rm.models_weighed, ShortModelName(rm.model_name)),
            CautionRank::kInformation);
      }
    } else {
      std::string reason;
      for (const std::string& f : rm.flags) reason += (reason.empty() ? "" : "; ") + f;
      cautions.sheet.unavailable_headline.push_back(
          {ReferenceMoistureKey(rm),
           fmt::format("Moisture content at {} / {} % RH ({})",
                       TemperatureLabel(rm.condition.temperature_K),
                       FormatFixed(rm.condition.rh_fraction * 100.0, 0), BranchLabel(rm.branch)),
           reason.empty() ? "no fitted isotherm to read it from" : reason});
    }
    for (const std::string& f : rm.flags) {
      // The pores stage's own note of the temperature mismatch ("fitted at ... degC, reference
      // ... degC: not converted ...") is replaced by the plain caution above.
      if (rm.temperature_matches || f.rfind("fitted at ", 0) != 0) {
        cautions.Add(f, CautionRank::kValidity);
      }
    }
  }
}

// Its basis in the label: the equilibrium uptake on dry mass, not the compendial 24 h increase
// of the sample as received (pores::Hygroscopicity).
constexpr const char* kHygroscopicityLabel =
    "Equilibrium moisture uptake at 25 °C / 80 % RH, on dry mass (basis of the Ph. Eur. 5.11 "
    "class)";

void AddSurfaceAreasAndClass(const pores::PoreAnalysis& pa, const fit::IsothermFits* fits,
                             CautionList& cautions) {
  Sheet& sheet = cautions.sheet;
  for (const pores::SurfaceArea& sa : pa.surface_areas) {
    // A fit that fails its own checks gives no headline value (the model section marks it).
    if (!SurfaceAreaNotHeadlineReason(fits, sa).empty()) continue;
    std::string model = sa.model_name;
    std::transform(model.begin(), model.end(), model.begin(),
                   [](char c) { return static_cast<char>(std::toupper(c)); });
    sheet.headline.push_back(
        SurfaceAreaQuantity(sa,
                            "surface_area_" + KeyPart(sa.model_name) + "_" +
                                BranchTemperatureKey(sa.branch, sa.temperature_K),
                            "Specific surface area (" + model + " monolayer, " +
                                BranchTemperatureLabel(sa.branch, sa.temperature_K) + ")",
                            sheet.rules));
  }
  if (pa.hygroscopicity.applicable) {
    sheet.hygroscopicity_class = pa.hygroscopicity.class_name;
    if (!sheet.hygroscopicity_relevant) {
      sheet.unavailable_headline.push_back(
          {"hygroscopicity_mass_increase", kHygroscopicityLabel,
           "the Ph. Eur. 5.11 class is printed for pharmaceutical powders only"});
      return;
    }
    sheet.headline.push_back(MakeQuantity("hygroscopicity_mass_increase", kHygroscopicityLabel,
                                          pa.hygroscopicity.mass_increase_percent,
                                          pa.hygroscopicity.u_mass_increase_percent, "%", 1.0, "%",
                                          sheet.rules));
    cautions.Add(
        "The hygroscopicity class applies the Ph. Eur. 5.11 limits (0.2 %, 2 % and 15 % mass "
        "increase) to the equilibrium uptake on dry mass at 25 °C / 80 % RH. The compendial test "
        "weighs the sample as received after 24 h at that condition: a sample that already "
        "holds water, or equilibrates slowly, gains less there and may fall in a lower class.",
        CautionRank::kInformation);
    if (pa.hygroscopicity.reason.find("class boundary") != std::string::npos) {
      cautions.Add(
          "A class limit lies within the expanded uncertainty of the uptake: the neighbouring "
          "class cannot be excluded.",
          CautionRank::kValidity);
    }
  } else {
    sheet.hygroscopicity_class = "not classified";
    sheet.unavailable_headline.push_back(
        {"hygroscopicity_mass_increase", kHygroscopicityLabel,
         pa.hygroscopicity.reason.empty() ? "not classified" : pa.hygroscopicity.reason});
    if (!pa.hygroscopicity.reason.empty()) {
      sheet.hygroscopicity_class += " (" + pa.hygroscopicity.reason + ")";
    }
  }
}

void AddPoreVolumes(const pores::PoreAnalysis& pa, Sheet& sheet) {
  for (const pores::PoreDistribution& pd : pa.distributions) {
    const std::string tag = pd.method + "_" + BranchTemperatureKey(pd.branch, pd.temperature_K);
    const std::string what = BranchTemperatureLabel(pd.branch, pd.temperature_K) + ", " + pd.method;
    // 1 m3/kg = 1e6 mm3/g; 1 m = 1e9 nm.
    sheet.headline.push_back(
        DrawnQuantity("pore_volume_" + tag, "Kelvin-resolved pore volume (" + what + ")",
                      pd.total_resolved_volume_m3_per_kg, pd.u_total_resolved_volume_m3_per_kg,
                      pd.k_total_resolved_volume, "m3/kg", 1e6, "mm³/g", sheet.rules));
    for (size_t m = 0; m < pd.modes.size(); ++m) {
      sheet.headline.push_back(DrawnQuantity(
          "modal_radius_" + tag + "_" + std::to_string(m + 1),
          "Modal pore radius " + std::to_string(m + 1) + " (" + what + ")", pd.modes[m].radius_m,
          pd.modes[m].u_radius_m, pd.modes[m].coverage_factor, "m", 1e9, "nm", sheet.rules));
    }
  }
}

std::vector<Quantity> ParameterQuantities(const fit::IsothermFits& fits, size_t i,
                                          const DisplayRules& rules) {
  const fit::ModelFit& mf = fits.fits[i];
  std::vector<Quantity> out;
  for (size_t k = 0; k < mf.result.estimates.size(); ++k) {
    const fitters::ParameterEstimate& e = mf.result.estimates[k];
    const double u = e.standard_error;
    DisplayRules param_rules = rules;
    param_rules.coverage_factor = k < mf.expanded_uncertainty.size() && u > 0.0
                                      ? mf.expanded_uncertainty[k] / u
                                      : fits.coverage_factor;
    out.push_back(MakeQuantity(
        "fit_" + std::to_string(i) + "_" + KeyPart(mf.model_name) + "_" + KeyPart(e.name), e.name,
        e.value, u, e.unit.empty() ? "1" : e.unit, 1.0, PrettyUnit(e.unit), param_rules));
    if (k < mf.effective_dof.size()) out.back().degrees_of_freedom = mf.effective_dof[k];
  }
  return out;
}

std::vector<std::string> NotableCorrelations(const fitters::FitResult& result) {
  std::vector<std::string> out;
  const Eigen::MatrixXd& r = result.correlation;
  const size_t p = result.estimates.size();
  for (Eigen::Index a = 0; a < r.rows(); ++a) {
    for (Eigen::Index b = a + 1; b < r.cols(); ++b) {
      if (std::abs(r(a, b)) > kNotableCorrelation && static_cast<size_t>(b) < p) {
        out.push_back(result.estimates[static_cast<size_t>(a)].name + "–" +
                      result.estimates[static_cast<size_t>(b)].name +
                      ": r = " + FormatFixed(r(a, b), 3));
      }
    }
  }
  return out;
}

ModelRow MakeModelRow(const fit::IsothermFits& fits, size_t i, const Sheet& sheet) {
  const fit::ModelFit& mf = fits.fits[i];
  ModelRow row;
  row.fit_index = static_cast<int>(i);
  row.model_title = mf.info.title.empty() ? mf.model_name : mf.info.title;
  if (mf.group_index >= 0 && static_cast<size_t>(mf.group_index) < fits.groups.size()) {
    row.group_label = GroupLabel(fits.groups[static_cast<size_t>(mf.group_index)]);
  }
  row.converged = mf.result.ok();
  row.evaluated = mf.design.supported;
  row.rank = mf.rank;
  row.parameters = ParameterQuantities(fits, i, sheet.rules);
  row.correlations = NotableCorrelations(mf.result);
  if (!row.evaluated) return row;  // not fitted, not a failure: Sheet::not_evaluated says why
  if (row.converged) {
    const fit::Identifiability identifiability = fit::IdentifiabilityOf(mf);
    row.identifiable = identifiability.identifiable;
    row.not_identifiable_reason = identifiability.reason;
    if (!row.identifiable) row.correlations.clear();  // no correlations of undetermined values
  }
  // No value is printed of a fit that did not converge or whose data do not determine it
  // (AddModelTable): their texts, also the CSV's "as printed" and results.json's "text", stay
  // empty; the value fields keep the last iterate for a reader who wants it.
  if (!row.converged || !row.identifiable) {
    for (Quantity& q : row.parameters) q.text.clear();
  }
  const fitters::FitStatistics& s = mf.result.statistics;
  const double scale = sheet.rules.moisture_in_percent ? 100.0 : 1.0;
  row.rmse_text = WithUnit(FormatSignificant(s.rmse * scale, 2), sheet.moisture_unit);
  row.mrd_text = FormatFixed(s.mean_relative_deviation_percent, 1) + " %";
  row.aicc_text = FormatFixed(s.aicc, 1);
  row.bic_text = FormatFixed(s.bic, 1);
  std::set<std::string> seen_flags;
  for (const std::string& f : mf.flags) AddUnique(row.flags, seen_flags, f);
  for (const std::string& f : mf.result.summary.flags) AddUnique(row.flags, seen_flags, f);
  for (const fit::ConsistencyCheck& c : mf.consistency) {
    if (!c.passed) AddUnique(row.flags, seen_flags, "fails " + c.criterion);
  }
  if (!row.converged) AddUnique(row.flags, seen_flags, "not converged");
  return row;
}

// The models the design could not support, one sentence per model and reason, naming the
// groups (fit::ModelDesign).
std::vector<std::string> NotEvaluatedSentences(const fit::IsothermFits& fits) {
  std::vector<std::pair<std::string, std::string>> reasons;  // (sentence head, groups)
  for (const fit::ModelFit& mf : fits.fits) {
    if (mf.design.supported) continue;
    const fit::ModelDesign& d = mf.design;
    const std::string range =
        d.restricted_range
            ? fmt::format(" between {} and {} % RH", FormatSetting(100.0 * d.rh_min_fraction),
                          FormatSetting(100.0 * d.rh_max_fraction))
            : "";
    const std::string head =
        fmt::format("{} not evaluated: {} point{}{}, at least {} needed for its {} parameters",
                    mf.info.title.empty() ? mf.model_name : mf.info.title, d.points,
                    d.points == 1 ? "" : "s", range, d.points_needed, d.num_parameters);
    std::string group;
    if (mf.group_index >= 0 && static_cast<size_t>(mf.group_index) < fits.groups.size()) {
      group = GroupLabel(fits.groups[static_cast<size_t>(mf.group_index)]);
    }
    auto it = std::find_if(reasons.begin(), reasons.end(),
                           [&](const auto& r) { return r.first == head; });
    if (it == reasons.end()) {
      reasons.emplace_back(head, group);
    } else if (!group.empty()) {
      it->second += (it->second.empty() ? "" : "; ") + group;
    }
  }
  std::vector<std::string> out;
  out.reserve(reasons.size());
  for (const auto& [head, groups] : reasons) {
    std::string sentence = head;
    if (!groups.empty()) sentence.append(" (").append(groups).append(")");
    out.push_back(sentence.append("."));
  }
  return out;
}

// The flags of a best model as sentences a client reads; the flags themselves stay in the
// model section's notes and in results.json.
void AddBestModelCautions(const fit::ModelFit& mf, const ModelRow& row, const Sheet& sheet,
                          CautionList& cautions) {
  const std::string what = row.model_title + " (" + row.group_label + ")";
  const int models_section = sheet.SectionNumber("models");
  const std::string see =
      models_section > 0 ? fmt::format(" (section {}, notes)", models_section) : "";
  const fitters::FitStatistics& s = mf.result.statistics;
  bool other = false;
  for (const std::string& f : row.flags) {
    if (f.rfind("chi-square check fails", 0) == 0) {
      cautions.Add(
          fmt::format(
              "The best-fitting model, {}, deviates from the measured points by more than their "
              "stated uncertainties (chi-square test, p = {}): values read from the curve may be "
              "less certain than stated.",
              what, FormatProbability(s.chi_square_p_value, common::kProbabilityDigits)),
          CautionRank::kValidity);
    } else if (f.rfind(fitters::kPhysicsFlagPrefix, 0) == 0) {
      cautions.Add(
          fmt::format(
              "The parameters of the best-fitting model, {}, lie outside the range in which its "
              "physical interpretation holds{}: they describe the curve, but its monolayer "
              "moisture content is indicative only and no surface area is reported from it.",
              what, see),
          CautionRank::kValidity);
    } else if (f.rfind("not ranked", 0) != 0) {
      other = true;
    }
  }
  if (other) {
    cautions.Add(fmt::format("The best-fitting model, {}, carries notes on its fit{}.", what,
                             see.empty() ? "" : see),
                 CautionRank::kInformation);
  }
}

// A group without a best model (fit::IsothermFits::no_best_fit_reason): no model describes its
// points within their uncertainties, or none could be ranked; said in the best-model line and,
// with the reason, in the cautions.
void AddGroupsWithoutBestModel(const fit::IsothermFits& fits, std::vector<std::string>& best_names,
                               CautionList& cautions) {
  for (size_t g = 0; g < fits.best_fit_per_group.size() && g < fits.groups.size(); ++g) {
    if (fits.best_fit_per_group[g] >= 0 || g >= fits.no_best_fit_reason.size() ||
        fits.no_best_fit_reason[g].empty()) {
      continue;
    }
    const std::string group =
        BranchTemperatureLabel(fits.groups[g].branch, fits.groups[g].temperature_K);
    bool misfit = false;  // a model was rejected by its goodness-of-fit check (fit_stage.h)
    for (const fit::ModelFit& mf : fits.fits) {
      misfit = misfit || (mf.group_index == static_cast<int>(g) && fit::IsIdentified(mf) &&
                          !fit::GoodnessOfFitOf(mf).passed);
    }
    best_names.push_back("none for " + group);
    const std::string lead =
        misfit ? fmt::format("No model describes the {} points within their uncertainties", group)
               : fmt::format("No model could be ranked for the {} points", group);
    cautions.Add(fmt::format("{}, so no best model, model parameters or model-based pore-size "
                             "distribution are given for them. {}.",
                             lead, fits.no_best_fit_reason[g]),
                 CautionRank::kValidity);
  }
}

// The best model of each group: its parameters join the headline, its flags the cautions.
void AddBestModels(const fit::IsothermFits& fits, CautionList& cautions) {
  Sheet& sheet = cautions.sheet;
  std::vector<std::string> best_names;
  for (size_t g = 0; g < fits.best_fit_per_group.size(); ++g) {
    const int best = fits.best_fit_per_group[g];
    if (best < 0 || static_cast<size_t>(best) >= fits.fits.size()) continue;
    const fit::ModelFit& mf = fits.fits[static_cast<size_t>(best)];
    const ModelRow& row = sheet.models[static_cast<size_t>(best)];
    best_names.push_back(row.model_title + " (" + row.group_label + ")");
    for (const Quantity& q : row.parameters) {
      Quantity h = q;
      h.key = "best_" + BranchTemperatureKey(fits.groups[g].branch, fits.groups[g].temperature_K) +
              "_" + KeyPart(mf.model_name) + "_" + KeyPart(q.label);
      h.label = row.model_title + " " + q.label + " (" + row.group_label + ")";
      sheet.headline.push_back(std::move(h));
    }
    AddBestModelCautions(mf, row, sheet, cautions);
  }
  AddGroupsWithoutBestModel(fits, best_names, cautions);
  for (size_t i = 0; i < best_names.size(); ++i) {
    sheet.best_model_text += (i > 0 ? "; " : "") + best_names[i];
  }
}

void AddMeasurementCautions(const ReportInputs& inputs, CautionList& cautions) {
  if (inputs.equilibria != nullptr) {
    const equilibrate::EquilibrateSummary& s = inputs.equilibria->summary;
    if (s.num_not_equilibrated > 0) {
      cautions.Add(fmt::format("{} of {} steps did not meet the equilibrium criterion.",
                               s.num_not_equilibrated, s.num_steps),
                   CautionRank::kDeviation);
    }
    if (s.num_extrapolated > 0) {
      cautions.Add(fmt::format("{} of {} steps were extrapolated to their asymptote (flagged in "
                               "the equilibrium table; the extra uncertainty is included).",
                               s.num_extrapolated, s.num_steps),
                   CautionRank::kDeviation);
    }
    cautions.AddAll(s.warnings, CautionRank::kDeviation);
  }
  if (inputs.reduced != nullptr) {
    cautions.AddAll(inputs.reduced->summary.warnings, CautionRank::kDeviation);
  }
}

std::vector<std::string> StandingCautions() {
  return {
      "The results describe the specimens tested, under the conditions stated on this sheet; "
      "they apply to those specimens only and are not a property of every batch of the "
      "material.",
      "This datasheet is not a substitute for design to local codes, the applicable standard "
      "and licensed professional practice, whether in building moisture design, mould-risk "
      "assessment or drug-product stability.",
      "Fitted curves and pore-size distributions describe the measured points; outside the "
      "measured humidity range they are extrapolations.",
      "Saturated salt solutions and drying ovens are hazards: handle salts, solutions and hot "
      "specimens according to their safety data sheets.",
  };
}

// A last guard: two headline values never share a key or a label (two isotherms whose
// temperatures print alike, e.g. 23.00 and 23.02 °C, would): the later one is numbered.
void MakeHeadlineUnique(Sheet& sheet) {
  std::set<std::string> keys;
  std::set<std::string> labels;
  for (Quantity& q : sheet.headline) {
    const std::string key = q.key;
    const std::string label = q.label;
    for (int n = 2; keys.count(q.key) > 0 || labels.count(q.label) > 0; ++n) {
      q.key = key + "_" + std::to_string(n);
      q.label = label + " [" + std::to_string(n) + "]";
    }
    keys.insert(q.key);
    labels.insert(q.label);
  }
}

// The issue facts: letterhead (a draft without a laboratory profile, said in run.log and by
// `make`), front matter, deviations from the method and the end-of-report line.
void AddFrontMatter(const ReportInputs& inputs, const ReportOptions& options, Sheet& sheet) {
  const ingest::JobSpec* job = inputs.ingested != nullptr ? &inputs.ingested->job : nullptr;
  sheet.letterhead = MakeLetterhead(job);
  sheet.front_matter = FrontMatter(inputs, options);
  sheet.deviations = MethodDeviations(inputs);
  sheet.end_marker = "End of report " + sheet.report_number;
  if (sheet.letterhead.draft) {
    sheet.warnings.push_back(
        {Severity::kWarning, SourceLocation{job != nullptr ? job->job_file.string() : "", 0, 0},
         "the job names no laboratory profile: the datasheet is a draft (DRAFT on every page, "
         "no laboratory, no signatures)",
         "lab_profile = \"<profile file>\" in [job] to issue it"});
  }
}

// Every text of a section as a person reads it (internal/reader_text.h): the one place the
// stages' wording for run.log becomes the sheet's.
void ToReaderText(Section& section) {
  using internal::ReaderText;
  for (Block& block : section.blocks) {
    if (auto* p = std::get_if<ParagraphBlock>(&block)) {
      p->text = ReaderText(p->text);
    } else if (auto* b = std::get_if<BulletsBlock>(&block)) {
      for (std::string& item : b->items) item = ReaderText(item);
    } else if (auto* f = std::get_if<FactsBlock>(&block)) {
      for (auto& row : f->rows) row.second = ReaderText(row.second);
    } else if (auto* t = std::get_if<TableBlock>(&block)) {
      for (auto& row : t->rows) {
        for (Cell& cell : row) cell.text = ReaderText(cell.text);
      }
    } else if (auto* g = std::get_if<FigureBlock>(&block)) {
      for (auto& notes : g->notes) {
        for (std::string& note : notes) note = ReaderText(note);
      }
      for (plot::Figure& panel : g->panels) panel.caption = ReaderText(panel.caption);
    }
  }
}

}  // namespace

bool HygroscopicityClassRelevant(ingest::MaterialClass material_class) {
  return material_class == ingest::MaterialClass::kPharmaceuticalPowder;
}

int SurfaceAreaFitIndex(const fit::IsothermFits& fits, const pores::SurfaceArea& area) {
  for (size_t i = 0; i < fits.fits.size(); ++i) {
    const fit::ModelFit& mf = fits.fits[i];
    if (mf.model_name != area.model_name || mf.group_index < 0 ||
        static_cast<size_t>(mf.group_index) >= fits.groups.size()) {
      continue;
    }
    const fit::FitGroup& g = fits.groups[static_cast<size_t>(mf.group_index)];
    if (g.branch == area.branch && g.temperature_K == area.temperature_K) {
      return static_cast<int>(i);
    }
  }
  return -1;
}

std::string SurfaceAreaNotHeadlineReason(const fit::IsothermFits* fits,
                                         const pores::SurfaceArea& area) {
  if (fits == nullptr) return std::string();
  const int index = SurfaceAreaFitIndex(*fits, area);
  if (index < 0) return std::string();  // no fit to judge it by (not from the fit stage)
  const fit::ModelFit& mf = fits->fits[static_cast<size_t>(index)];
  const fit::Identifiability identifiability = fit::IdentifiabilityOf(mf);
  if (!identifiability.identifiable) {
    return "the fit is not identifiable from these data: " + identifiability.reason;
  }
  std::string failed;
  for (const fit::ConsistencyCheck& c : mf.consistency) {
    if (!c.passed) failed += (failed.empty() ? "" : "; ") + c.criterion;
  }
  // The monolayer read as a physical quantity needs the model's physical interpretation.
  for (const std::string& f : mf.result.summary.flags) {
    if (f.rfind(fitters::kPhysicsFlagPrefix, 0) == 0) {
      failed += (failed.empty() ? "" : "; ") + f.substr(std::strlen(fitters::kPhysicsFlagPrefix));
    }
  }
  if (!failed.empty()) return "the fit fails " + failed;
  return std::string();
}

Sheet BuildSheet(const ReportInputs& inputs, const Template& layout, const ReportOptions& options) {
  Sheet sheet;
  SetDisplayRules(inputs, layout, sheet);
  sheet.hygroscopicity_relevant = inputs.ingested != nullptr &&
                                  HygroscopicityClassRelevant(inputs.ingested->job.material_class);
  CautionList cautions{sheet, {}, {}};
  AddInputCautions(inputs, cautions);
  if (inputs.pores != nullptr) {
    AddReferenceMoistures(*inputs.pores, inputs.fits, layout, cautions);
    AddSurfaceAreasAndClass(*inputs.pores, inputs.fits, cautions);
    AddPoreVolumes(*inputs.pores, sheet);
    // The pore section left out by material class is a decision of the method, not a fault.
    const std::string& omitted = inputs.pores->applicability.reason;
    for (const Diagnostic& w : inputs.pores->summary.warnings) {
      cautions.Add(w.message,
                   w.message == omitted ? CautionRank::kInformation : CautionRank::kDeviation);
    }
  }
  if (inputs.fits != nullptr) {
    for (size_t i = 0; i < inputs.fits->fits.size(); ++i) {
      sheet.models.push_back(MakeModelRow(*inputs.fits, i, sheet));
    }
    AddBestModels(*inputs.fits, cautions);
    // The fit stage's warnings (a model that failed to converge) stay in run.log: they do not
    // change a reported value; the model section lists each fit with its notes.
    sheet.not_evaluated = NotEvaluatedSentences(*inputs.fits);
  }
  MakeHeadlineUnique(sheet);
  for (Quantity& q : sheet.headline) q.text = WithOwnCoverage(q, sheet.rules.coverage_factor);
  internal::EvaluateSpecifications(inputs, sheet);
  AddMeasurementCautions(inputs, cautions);
  if (std::any_of(sheet.headline.begin(), sheet.headline.end(),
                  [](const Quantity& q) { return q.key.rfind("surface_area_", 0) == 0; })) {
    cautions.Add(
        "Surface areas are derived from the water-vapour monolayer: they are not comparable with "
        "a nitrogen BET surface area (ISO 9277), since water sorbs on specific sites and can "
        "enter structures nitrogen does not reach.",
        CautionRank::kInformation);
  }
  cautions.Finish();
  sheet.standing_cautions = StandingCautions();
  sheet.report_number = "draft";
  if (inputs.ingested != nullptr && !inputs.ingested->job.job_id.empty()) {
    sheet.report_number = PrintedField(inputs.ingested->job.job_id, kMaxReportNumberChars);
    // An amended report is identified as such on every page (ISO/IEC 17025:2017, 7.8.8.3).
    if (inputs.ingested->job.revision > 0) {
      sheet.report_number += fmt::format(" rev. {}", inputs.ingested->job.revision);
    }
  }
  AddFrontMatter(inputs, options, sheet);
  sheet.sections = BuildSections(inputs, layout, options, sheet);
  // The cautions keep the stages' wording in results.json; the sections print reader text.
  for (Section& section : sheet.sections) ToReaderText(section);
  // ISO/IEC 17025:2017, 7.8.2.1 a: the end of the report is clearly identified.
  if (!sheet.sections.empty()) {
    sheet.sections.back().blocks.emplace_back(
        ParagraphBlock{sheet.end_marker, 8.5, 0.0, false, true, 10.0});
  }
  sheet.record = BuildSheetRecord(inputs, layout, options, sheet);
  return sheet;
}

}  // namespace sorbtrace::report::internal
