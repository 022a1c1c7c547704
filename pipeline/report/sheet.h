// The datasheet's content before layout (internal to the report stage): every number that is
// printed, as a Quantity holding the value in SI, its uncertainties, the display unit and the
// text exactly as printed. The PDF and the results JSON are both written from one Sheet, so
// they cannot disagree.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "pipeline/report/report.h"

namespace sorbtrace::report {

// One printed number.
struct Quantity {
  std::string key;                    // stable identifier, e.g. "moisture_23C_50RH"
  std::string label;                  // as printed, e.g. "Moisture content at 23 °C / 50 % RH"
  double value = 0.0;                 // in `unit`
  std::string unit;                   // SI or dimensionless unit of value, e.g. "kg/kg", "m2/g"
  double standard_uncertainty = 0.0;  // in `unit`; 0 = none stated
  double coverage_factor = 2.0;
  double expanded_uncertainty = 0.0;  // k * u
  double display_value = 0.0;         // in display_unit
  double display_expanded_uncertainty = 0.0;
  std::string display_unit;  // e.g. "%", "m²/g"
  std::string text;          // "1.23 ± 0.05 %", exactly as on the sheet
};

nlohmann::ordered_json QuantityJson(const Quantity& quantity);

// How values are shown: the template's rules.
struct DisplayRules {
  bool moisture_in_percent = true;
  int significant_digits = 2;
  double coverage_factor = 2.0;
};

// Builds a Quantity; display_scale converts unit -> display_unit.
Quantity MakeQuantity(std::string key, std::string label, double value, double standard_uncertainty,
                      std::string unit, double display_scale, std::string display_unit,
                      const DisplayRules& rules);
// A moisture content [kg/kg] shown in % or kg/kg per the rules.
Quantity MoistureQuantity(std::string key, std::string label, double value_kg_per_kg,
                          double u_kg_per_kg, const DisplayRules& rules);

// The coverage factor of an uncertainty: expanded / standard where both are set, else
// `fallback` (the sheet's k).
double CoverageFactorOf(double standard_uncertainty, double expanded_uncertainty, double fallback);

// The RH and moisture content of a combined point as printed: with the point's own expanded
// uncertainty (its coverage factor is expanded / standard; the rules' k when none is set).
Quantity PointRhQuantity(const reduce::IsothermPoint& point, const DisplayRules& rules);
Quantity PointMoistureQuantity(const reduce::IsothermPoint& point, const DisplayRules& rules);

// The GUM budget of one combined point (JCGM 100:2008, Eq. 10; the combination of reduce.h:
// u_c(mean)^2 = sum_i u(u_i)^2 / n^2 + s^2 / n over the n specimens of the step).
//  moisture: one line per input quantity of the specimen budgets, aggregated over the
//    specimens: standard_uncertainty = sqrt(sum_i (c_i u_i)^2) [kg/kg], sensitivity 1/n,
//    contribution = standard_uncertainty / n; then, for n > 1, the Type A line of the
//    between-specimen spread: standard_uncertainty s [kg/kg], sensitivity 1/sqrt(n),
//    contribution s / sqrt(n). The root sum of squares of the contributions is u_c(mean).
//  rh: one line per input quantity, the root mean square of the specimens' contributions
//    (one atmosphere for all specimens: fully correlated, not averaged down), sensitivity 1.
struct PointBudget {
  std::vector<std::string> specimen_ids;
  std::vector<reduce::BudgetLine> moisture;
  std::vector<reduce::BudgetLine> rh;
};
PointBudget CombinedPointBudget(const reduce::ReducedIsotherms& reduced,
                                const reduce::IsothermPoint& point);

// One row of the model comparison table.
struct ModelRow {
  int fit_index = 0;
  std::string model_title;
  std::string group_label;                // e.g. "adsorption, 23 °C"
  std::vector<Quantity> parameters;       // value ± U (k)
  std::vector<std::string> correlations;  // "X_m–C: r = −0.97"
  std::string rmse_text;                  // in the display moisture unit
  std::string mrd_text;                   // %
  std::string aicc_text;
  std::string bic_text;
  int rank = 0;
  bool converged = false;
  std::vector<std::string> flags;
};

// Longest free-text field of the job printed in full, in code points (common practice: a
// datasheet's description or client line fits a few lines). Longer fields, and words longer
// than plot::kMaxPrintedWordChars, are printed shortened with "…" and a caution.
inline constexpr size_t kMaxPrintedFieldChars = 600;

// A free-text field as printed: at most kMaxPrintedFieldChars code points, ending in "…"
// when cut (words are cut later by the canvas, plot::ClipLongWords).
std::string PrintedField(const std::string& text, size_t max_chars = kMaxPrintedFieldChars);

// The report number (the job id) as printed in the running header and footer: it shares a
// line with the lab name and the page count (common practice: report numbers are short).
inline constexpr size_t kMaxReportNumberChars = 40;

struct Sheet {
  // The template's sections in print order (the one-page summary: "summary" only); a
  // section's number is its place in this list, so cross-references follow the template.
  std::vector<std::string> section_keys;
  // 1-based number of section `key`; 0 when the sheet has no such section.
  int SectionNumber(const std::string& key) const;
  DisplayRules rules;
  std::string moisture_unit;        // "%" or "kg/kg"
  std::string moisture_axis_label;  // "moisture content (% dry basis)"
  std::vector<Quantity> headline;   // summary values in print order
  std::string hygroscopicity_class;
  std::string best_model_text;  // e.g. "GAB (adsorption, 23 °C)"
  std::vector<ModelRow> models;
  std::vector<std::string> cautions;           // data-specific cautions (flags, warnings)
  std::vector<std::string> standing_cautions;  // the fixed statements of section 8
  std::vector<Diagnostic> warnings;            // the report's own findings (run.log)
};

// The software version without a leading "sorbtrace " (the run stage may pass either form).
std::string PlainVersion(const std::string& software_version);

std::string BranchLabel(ingest::Branch branch);
std::string TemperatureLabel(double temperature_K);  // "23 °C"
std::string GroupLabel(const fit::FitGroup& group);  // "adsorption, 23 °C"

Sheet BuildSheet(const ReportInputs& inputs, const Template& layout);

}  // namespace sorbtrace::report
