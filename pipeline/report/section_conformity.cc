// Statements of conformity: each [[specification]] of the job evaluated on its headline value
// with pipeline/conform (ILAC-G8:09/2019 decision rules, JCGM 106:2012 conformance
// probability), the "Statement of conformity" section and the summary page's lines.
//
// Which headline a specification names: its results.json key (results_json.h). A key of a
// form this program issues (moisture at a reference condition of the template, a surface
// area, pore volume or modal radius of a branch and temperature, a best-model parameter, the
// Ph. Eur. 5.11 mass increase) that this sheet does not print gives "no statement: <reason>"
// (a temperature that was not measured, a classification that does not apply, a result this
// job did not produce), never a decision. Any other key is an InputError at the specification.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <regex>
#include <string>
#include <string_view>
#include <tuple>
#include <utility>
#include <vector>

#include "pipeline/common/bounded_input.h"
#include "pipeline/report/format.h"
#include "pipeline/report/sections.h"

namespace sorbtrace::report::internal {
namespace {

// A unit a specification may be written in: its SI unit (Quantity::unit) and the factor to
// it. 1 % = 0.01 kg/kg (mass percent, dry basis); 1 mm³/g = 1e-9 m³ / 1e-3 kg = 1e-6 m³/kg;
// 1 nm = 1e-9 m (SI prefixes, BIPM SI Brochure 9th ed., Table 7).
struct UnitAlias {
  std::string_view written;
  std::string_view si;
  double to_si;
  std::string_view printed;
};
constexpr UnitAlias kUnits[] = {
    {"%", "kg/kg", 0.01, "%"},
    {"kg/kg", "kg/kg", 1.0, "kg/kg"},
    {"m2/g", "m2/g", 1.0, "m²/g"},
    {"m²/g", "m2/g", 1.0, "m²/g"},
    {"mm3/g", "m3/kg", 1e-6, "mm³/g"},
    {"mm³/g", "m3/kg", 1e-6, "mm³/g"},
    {"m3/kg", "m3/kg", 1.0, "m³/kg"},
    {"nm", "m", 1e-9, "nm"},
    {"m", "m", 1.0, "m"},
};

// The forms of headline keys (results_json.h) and the SI unit of each ("" = the parameter's).
struct KeyForm {
  const char* pattern;
  const char* title;  // what the quantity is called (its parts follow in brackets)
  std::string_view si;
  int temperature_group;  // index of the temperature part ("23C", "23p4C", "m5C"); 0: none
  // The sheet lists every key of this form it can have (in its headline or, with the reason,
  // in Sheet::unavailable_headline): any other is not a result of this job.
  bool listed_by_sheet;
};
constexpr const char* kT = "(m?[0-9]+(?:p[0-9])?C)";
const std::vector<KeyForm>& KeyForms() {
  static const std::vector<KeyForm> kForms = {
      {"moisture_[^_]+_[0-9]+RH_(adsorption|desorption)(_ref_[^_]+)?", "Moisture content", "kg/kg",
       0, true},
      {"surface_area_(gab|bet)_(adsorption|desorption)_TEMP", "Specific surface area", "m2/g", 3,
       false},
      {"pore_volume_(model|stepwise)_(adsorption|desorption)_TEMP", "Kelvin-resolved pore volume",
       "m3/kg", 3, false},
      {"modal_radius_(model|stepwise)_(adsorption|desorption)_TEMP_[0-9]+", "Modal pore radius",
       "m", 3, false},
      {"best_(adsorption|desorption)_TEMP_[a-z0-9_]+", "Best-model parameter", "", 2, false},
      {"hygroscopicity_mass_increase", "Mass increase at 25 °C / 80 % RH (Ph. Eur. 5.11)", "%", 0,
       false},
  };
  return kForms;
}

std::string TemperatureKeyLabel(std::string key);

// The form `key` has, or nullptr; the temperature part in *temperature_key and a label for a
// person in *label ("Specific surface area (GAB, adsorption, 40 °C)").
const KeyForm* FormOf(const std::string& key, std::string* temperature_key, std::string* label) {
  for (const KeyForm& form : KeyForms()) {
    std::string pattern = form.pattern;
    const size_t at = pattern.find("TEMP");
    if (at != std::string::npos) pattern.replace(at, 4, kT);
    std::smatch match;
    if (std::regex_match(key, match, std::regex(pattern))) {
      if (form.temperature_group > 0) *temperature_key = match[form.temperature_group].str();
      std::string parts;
      for (size_t i = 1; i < match.size(); ++i) {
        std::string part = match[i].str();
        if (part.empty() || part.rfind("_ref_", 0) == 0) continue;
        if (static_cast<int>(i) == form.temperature_group) part = TemperatureKeyLabel(part);
        if (part == "gab" || part == "bet") {
          for (char& c : part) c = static_cast<char>(c - 'a' + 'A');
        }
        parts += (parts.empty() ? "" : ", ") + part;
      }
      *label = parts.empty() ? form.title : std::string(form.title) + " (" + parts + ")";
      return &form;
    }
  }
  return nullptr;
}

// "23p4C" -> "23.4 °C", "m5C" -> "-5 °C".
std::string TemperatureKeyLabel(std::string key) {
  key.pop_back();  // the "C"
  for (char& c : key) {
    if (c == 'p') c = '.';
    if (c == 'm') c = '-';
  }
  return key + " °C";
}

const Quantity* FindHeadline(const Sheet& sheet, const std::string& key) {
  for (const Quantity& q : sheet.headline) {
    if (q.key == key) return &q;
  }
  return nullptr;
}

std::string AvailableKeys(const Sheet& sheet) {
  std::string list;
  for (const Quantity& q : sheet.headline) list += (list.empty() ? "" : ", ") + q.key;
  for (const Sheet::Unavailable& u : sheet.unavailable_headline) {
    list += (list.empty() ? "" : ", ") + u.key + " (no statement possible: " + u.reason + ")";
  }
  return list.empty() ? "none: this sheet has no headline results" : list;
}

[[noreturn]] void UnknownQuantity(const ingest::Specification& spec, const Sheet& sheet,
                                  const std::string& why) {
  throw InputError(spec.quantity_where,
                   "quantity '" + Excerpt(spec.quantity) + "' in [[specification]] " + why,
                   "a headline key of this job's results: " + AvailableKeys(sheet));
}

// The specification's unit: its factor to the quantity's SI unit `si` and how it prints.
std::pair<double, std::string> ResolveUnit(const ingest::Specification& spec,
                                           const std::string& si) {
  std::string allowed;
  for (const UnitAlias& u : kUnits) {
    if (u.si != si) continue;
    if (u.written == spec.unit) return {u.to_si, std::string(u.printed)};
    allowed += (allowed.empty() ? "\"" : ", \"") + std::string(u.written) + "\"";
  }
  if (spec.unit == si) return {1.0, si == "1" ? "" : si};
  if (allowed.empty()) allowed = "\"" + si + "\"";
  throw InputError(spec.unit_where,
                   "unit '" + Excerpt(spec.unit) + "' does not fit quantity '" +
                       Excerpt(spec.quantity) + "' (" + si + ")",
                   "one of " + allowed);
}

std::string WithUnit(const std::string& number, const std::string& unit) {
  return unit.empty() ? number : number + " " + unit;
}

std::string LimitsText(const ingest::Specification& spec, const std::string& unit) {
  const conform::ToleranceInterval& t = spec.limits;
  if (!spec.class_at_most.empty()) {  // "class at most X": the class and the limit it sets
    return "class at most " + spec.class_at_most + " (Ph. Eur. 5.11: mass increase below " +
           WithUnit(FormatSetting(t.upper), unit) + ")";
  }
  if (std::isinf(t.lower)) return "at most " + WithUnit(FormatSetting(t.upper), unit);
  if (std::isinf(t.upper)) return "at least " + WithUnit(FormatSetting(t.lower), unit);
  return WithUnit(FormatSetting(t.lower) + " to " + FormatSetting(t.upper), unit);
}

// A probability as a percentage a person reads: three significant digits, "> 99.9 %" and
// "< 0.01 %" at the ends (more digits there claim more than the model of the distribution).
std::string ProbabilityText(double p) {
  if (!std::isfinite(p)) return "n/a";
  const double percent = p * 100.0;
  if (percent >= 99.95) return "> 99.9 %";
  if (percent < 0.01) return "< 0.01 %";
  return FormatSignificant(percent, 3) + " %";
}

// Digits of a guard band or acceptance limit: those of the value (common practice).
constexpr int kLimitDigits = 4;

std::string GuardBandText(const ConformityStatement& s) {
  const conform::Result& r = s.result;
  const conform::Options& o = s.specification.decision;
  if (o.rule == conform::DecisionRule::kSimpleAcceptance) {
    return "none (w = 0): the acceptance limits are the specification limits";
  }
  if (std::isnan(r.acceptance_lower)) {
    return "the guard bands leave no acceptance interval: no measured value can pass";
  }
  std::string limits;
  for (const double a : {r.acceptance_lower, r.acceptance_upper}) {
    if (std::isinf(a)) continue;
    limits +=
        (limits.empty() ? "" : " and ") + WithUnit(FormatSignificant(a, kLimitDigits), s.unit_text);
  }
  const std::string w = WithUnit(FormatSignificant(r.guard_band, 2), s.unit_text);
  const std::string from = o.rule == conform::DecisionRule::kGuardedAcceptance
                               ? fmt::format("{} U", FormatSetting(o.guard_band_multiplier))
                               : "from the required conformance probability";
  return fmt::format("w = {} ({}); acceptance limit {}", w, from, limits);
}

std::string ResultText(const ConformityStatement& s) {
  const conform::Options& o = s.specification.decision;
  const conform::Decision d = s.result.decision;
  std::string name = conform::DecisionName(d);
  switch (o.rule) {
    case conform::DecisionRule::kSimpleAcceptance:
      return name + (d == conform::Decision::kPass
                         ? ": the measured value meets the specification"
                         : ": the measured value lies outside the specification");
    case conform::DecisionRule::kGuardedAcceptance:
      if (d == conform::Decision::kPass) return name + ": inside the acceptance interval";
      if (d == conform::Decision::kInconclusive) {
        return name + ": within one guard band of a specification limit";
      }
      return name + (o.non_binary ? ": more than one guard band outside the specification"
                                  : ": outside the acceptance interval");
    case conform::DecisionRule::kConformanceProbability: {
      // The stated probability as the job wrote it (0.95 -> "95 %").
      const std::string p = FormatSetting(o.required_conformance_probability * 100.0) + " %";
      const std::string q =
          FormatSetting((1.0 - o.required_conformance_probability) * 100.0) + " %";
      if (d == conform::Decision::kPass) return name + ": conformance probability at least " + p;
      if (d == conform::Decision::kFail) return name + ": conformance probability at most " + q;
      return name + ": conformance probability between " + q + " and " + p;
    }
  }
  return name;
}

std::string RiskText(const conform::Result& r) {
  const std::string pfa = std::isnan(r.false_acceptance_probability_at_limit)
                              ? "no acceptance limit"
                              : ProbabilityText(r.false_acceptance_probability_at_limit);
  return fmt::format(
      "probability of false acceptance at the acceptance limit {}; conformance probability of "
      "this result {}",
      pfa, ProbabilityText(r.conformance_probability));
}

// Fills the decision of an available headline value.
void Decide(const Quantity& q, double to_si, int significant_digits, ConformityStatement& s) {
  conform::Measurement& m = s.measurement;
  m.value = q.value / to_si;
  m.standard_uncertainty = q.standard_uncertainty / to_si;
  m.coverage_factor = q.coverage_factor;
  // nu_eff below 1 counts as 1, as the coverage factor does (reduce::CoverageFactor).
  m.effective_degrees_of_freedom = std::max(1.0, q.degrees_of_freedom);
  s.result = conform::AssessConformity(m, s.specification.limits, s.specification.decision);
  s.rule_text = s.result.summary.rule;
  if (!s.result.summary.valid) {
    s.available = false;
    s.reason = s.result.summary.message;
    return;
  }
  const double U = s.result.expanded_uncertainty;
  s.value_text =
      U > 0.0 ? fmt::format(
                    "{} (U, k = {})",
                    WithUnit(FormatWithUncertainty(m.value, U, significant_digits), s.unit_text),
                    CoverageText(m.coverage_factor))
              : WithUnit(FormatWithUncertainty(m.value, 0.0, significant_digits), s.unit_text) +
                    " (no uncertainty stated)";
  s.guard_band_text = GuardBandText(s);
  s.result_text = ResultText(s);
  s.risk_text = RiskText(s.result);
}

// Why a key of a known form is not on this sheet (sets s.reason and s.quantity_label), or an
// InputError when the sheet lists every key of that form and this one is not among them.
void ExplainMissing(const ReportInputs& inputs, const Sheet& sheet, const KeyForm& form,
                    const std::string& temperature_key, ConformityStatement& s) {
  const ingest::Specification& spec = s.specification;
  for (const Sheet::Unavailable& u : sheet.unavailable_headline) {
    if (u.key != spec.quantity) continue;
    s.reason = u.reason;
    s.quantity_label = u.label;
    return;
  }
  if (form.listed_by_sheet) {
    // A moisture content at a condition the template does not list: a setting to correct.
    UnknownQuantity(spec, sheet,
                    "is not on this sheet (moisture contents are reported at the reference "
                    "conditions of the template)");
  }
  if (form.temperature_group == 0) {
    s.reason = "not determined in this job";
    return;
  }
  bool measured = false;
  for (double t_K : DistinctTemperatures(inputs)) {
    measured = measured || TemperatureKey(t_K) == temperature_key;
  }
  s.reason = measured ? "this job has no such result (the model or analysis was not made, or "
                        "did not pass its checks)"
                      : "not measured at " + TemperatureKeyLabel(temperature_key);
}

ConformityStatement Evaluate(const ReportInputs& inputs, const Sheet& sheet,
                             const ingest::Specification& spec) {
  ConformityStatement s;
  s.specification = spec;
  s.rule_text = conform::AssessConformity({}, {}, spec.decision).summary.rule;
  std::string temperature_key;
  const KeyForm* form = FormOf(spec.quantity, &temperature_key, &s.quantity_label);
  const Quantity* q = FindHeadline(sheet, spec.quantity);
  if (form == nullptr && q == nullptr) {
    UnknownQuantity(spec, sheet, "is not a result this program reports");
  }
  const std::string si = q != nullptr ? q->unit : std::string(form->si);
  double to_si = 1.0;
  s.unit_text = spec.unit;
  if (!si.empty()) std::tie(to_si, s.unit_text) = ResolveUnit(spec, si);
  s.limits_text = LimitsText(spec, s.unit_text);
  if (q != nullptr) {
    s.available = true;
    s.quantity_label = q->label;
    Decide(*q, to_si, sheet.rules.significant_digits, s);
  } else {
    ExplainMissing(inputs, sheet, *form, temperature_key, s);
  }
  if (!s.available) {
    s.value_text = "not available";
    s.guard_band_text = "—";
    s.risk_text = "—";
    s.result_text = "no statement: " + s.reason;
  }
  return s;
}

std::string Decision(const ConformityStatement& s) {
  return s.available ? conform::DecisionName(s.result.decision) : "no statement";
}

}  // namespace

void EvaluateSpecifications(const ReportInputs& inputs, Sheet& sheet) {
  if (inputs.ingested == nullptr) return;
  for (const ingest::Specification& spec : inputs.ingested->job.specifications) {
    sheet.conformity.push_back(Evaluate(inputs, sheet, spec));
  }
}

TableBlock ConformitySummaryTable(const Sheet& sheet) {
  TableBlock table;
  table.name = "summary_conformity";
  table.columns = {{"Specification", 0.60, false}, {"Statement of conformity", 0.40, false}};
  table.size_pt = 8.0;
  const int section = sheet.SectionNumber("conformity");
  for (const ConformityStatement& s : sheet.conformity) {
    std::string statement = Decision(s);
    if (!s.available) {
      statement = s.result_text;
    } else if (section > 0) {
      statement += fmt::format(" (section {})", section);
    } else {
      statement += " (" + s.rule_text + ")";
    }
    table.rows.push_back({{s.quantity_label + ": " + s.limits_text, ""}, {statement, ""}});
  }
  return table;
}

void BuildConformitySection(const SectionContext& ctx, Section& section) {
  const Sheet& sheet = ctx.sheet;
  for (size_t i = 0; i < sheet.conformity.size(); ++i) {
    const ConformityStatement& s = sheet.conformity[i];
    // The quantity goes in the facts, which wrap: a long label in the one-line subheading ran
    // off the page.
    section.blocks.emplace_back(SubheadingBlock{fmt::format("Specification {}", i + 1)});
    FactsBlock facts;
    facts.label_width_pt = 110.0;
    std::string limits = s.limits_text;
    if (!s.specification.document.empty()) {
      limits += " (" + PrintedField(s.specification.document) + ")";
    }
    facts.rows = {{"Quantity", s.quantity_label},
                  {"Specification", limits},
                  {"Measured value", s.value_text},
                  {"Decision rule", s.rule_text},
                  {"Guard band", s.guard_band_text},
                  {"Result", s.result_text},
                  {"Risk", s.risk_text}};
    section.blocks.emplace_back(std::move(facts));
  }
  ParagraphBlock note;
  note.muted = true;
  note.space_before_pt = 6.0;
  note.text =
      "The decision rule of each statement is the one agreed with the customer (ISO/IEC "
      "17025:2017, 7.1.3); a statement applies to the specimens tested and depends on the "
      "applicable specification or standard. Simple acceptance shares the risk: a value on a "
      "limit passes with a probability of false acceptance of 50 % (ILAC-G8:09/2019, 4.2.1). "
      "Guarded acceptance moves the acceptance limit inside the specification by the guard band "
      "w (ILAC-G8:09/2019, 4.2.2; with an inconclusive zone, 4.2.3). The conformance probability "
      "is the probability that the true value lies within the specification, given the measured "
      "value and its uncertainty (JCGM 106:2012); a Student t distribution is used where the "
      "uncertainty has few effective degrees of freedom.";
  section.blocks.emplace_back(std::move(note));
}

}  // namespace sorbtrace::report::internal
