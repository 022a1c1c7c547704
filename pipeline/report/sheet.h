// The datasheet's content before layout (internal to the report stage): every number that is
// printed, as a Quantity holding the value in SI, its uncertainties, the display unit and the
// text exactly as printed, and the document itself as numbered sections of blocks (text,
// tables of already formatted cells, figures as plot data). BuildSheet is the only code that
// reads the stage results; the renderers (PDF: datasheet.cc, HTML: html.cc, the results
// JSON and CSV companions) read the Sheet, so they cannot disagree.
//
// Adding a section: one builder function (sections.h) and its key in template.cc. Adding an
// output format: one renderer of Sheet::sections.
#pragma once

#include <limits>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <utility>
#include <variant>
#include <vector>

#include "pipeline/conform/conform.h"
#include "pipeline/report/plot/plot.h"
#include "pipeline/report/report.h"

namespace sorbtrace::report::internal {

// One printed number.
struct Quantity {
  std::string key;                    // unique identifier, e.g. "moisture_23C_50RH_adsorption"
  std::string label;                  // as printed, e.g. "Moisture content at 23 °C / 50 % RH"
  double value = 0.0;                 // in `unit`
  std::string unit;                   // SI or dimensionless unit of value, e.g. "kg/kg", "m2/g"
  double standard_uncertainty = 0.0;  // in `unit`; 0 = none stated
  double coverage_factor = 2.0;
  double expanded_uncertainty = 0.0;  // k * u
  double display_value = 0.0;         // in display_unit
  double display_expanded_uncertainty = 0.0;
  std::string display_unit;  // e.g. "%", "m²/g"
  std::string text;          // "1.23 ± 0.05 %", exactly as on the sheet (headline: with its
                             // own k where it differs from the sheet's, WithOwnCoverage)
  // Effective degrees of freedom of standard_uncertainty (JCGM 100:2008, G.4); infinity: the
  // coverage factor is that of a normal distribution. Read by the statements of conformity.
  double degrees_of_freedom = std::numeric_limits<double>::infinity();
};

nlohmann::ordered_json QuantityJson(const Quantity& quantity);

// How values are shown: the template's rules.
struct DisplayRules {
  bool moisture_in_percent = true;
  int significant_digits = common::kUncertaintySignificantDigits;
  double coverage_factor = 2.0;
};

// Builds a Quantity; display_scale converts unit -> display_unit.
Quantity MakeQuantity(std::string key, std::string label, double value, double standard_uncertainty,
                      std::string unit, double display_scale, std::string display_unit,
                      const DisplayRules& rules);
// A Quantity whose u comes from draws (DrawStatisticsOf): stated with k = the larger of the
// rules' k and the draws' own U95 / u (CoverageFactorOfDraws, pipeline/common/draw_statistics.h;
// draws_coverage_factor 0: the rules' k), so that "value +- U" is never narrower than the draws'
// coverage interval.
Quantity DrawnQuantity(std::string key, std::string label, double value,
                       double standard_uncertainty, double draws_coverage_factor, std::string unit,
                       double display_scale, std::string display_unit, DisplayRules rules);
// The rules of a monolayer and of the surface area derived from it: the monolayer
// parameter's k (pores::SurfaceArea::coverage_factor; the rules' k where that is 0).
DisplayRules MonolayerRules(const pores::SurfaceArea& area, DisplayRules rules);
// A specific surface area [m²/g] with MonolayerRules.
Quantity SurfaceAreaQuantity(const pores::SurfaceArea& area, std::string key, std::string label,
                             const DisplayRules& rules);
// A moisture content [kg/kg] shown in % or kg/kg per the rules.
Quantity MoistureQuantity(std::string key, std::string label, double value_kg_per_kg,
                          double u_kg_per_kg, const DisplayRules& rules);

// The coverage factor of an uncertainty: expanded / standard where both are set, else
// `fallback` (the sheet's k).
double CoverageFactorOf(double standard_uncertainty, double expanded_uncertainty, double fallback);

// A value's text followed by its own coverage factor where that differs, to the two printed
// digits (CoverageText), from the sheet's and an uncertainty is stated: "0.773 ± 0.055 %
// (k = 3.3)". BuildSheet gives every headline Quantity this text, so the summary, the HTML and
// results.json print one string.
std::string WithOwnCoverage(const Quantity& quantity, double sheet_coverage_factor);

// The coverage statement of a heading, a table's note or a caption over values that may carry
// their own k (WithOwnCoverage): "k = 2 unless another k is stated beside the value". A
// Student-t k from few effective degrees of freedom (JCGM 100:2008, G.4) differs from the
// sheet's; a heading that said only "k = 2" above "(k = 4.5)" would contradict its rows.
std::string CoverageStatement(double sheet_coverage_factor);

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
  // The design could not support the model (fit::ModelDesign): not fitted, no statistics.
  bool evaluated = true;
  // A converged fit whose parameters its data do not determine (fit::IsIdentified): printed as
  // "not identifiable from these data" with the reason, without uncertainties or correlations.
  bool identifiable = true;
  std::string not_identifiable_reason;  // plain words
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

// ---- The document: numbered sections of blocks ------------------------------------------------
// Sizes are the PDF's [pt]; the HTML renderer maps them to its own type scale.
struct SubheadingBlock {
  std::string text;
};
struct ParagraphBlock {
  std::string text;
  double size_pt = 8.5;
  double indent_pt = 0.0;
  bool muted = false;  // a note or an explanation (slate)
  bool bold = false;
  double space_before_pt = 0.0;
};
struct BulletsBlock {
  std::vector<std::string> items;
  double size_pt = 8.5;
};
// Label / value pairs (e.g. the job facts of the summary).
struct FactsBlock {
  std::vector<std::pair<std::string, std::string>> rows;
  double label_width_pt = 90.0;
  double size_pt = 8.5;
};
// One table cell: the text exactly as printed and, where the cell prints a Quantity of
// the sheet, that Quantity's key (results.json "headline"/"points" keys).
struct Cell {
  std::string text;
  std::string key;
};
struct ColumnSpec {
  std::string header;
  double width_fraction = 0.1;  // of the text width
  bool numeric = false;         // right-aligned
};
struct TableBlock {
  std::string name;  // stable identifier, e.g. "summary_results"
  std::vector<ColumnSpec> columns;
  std::vector<std::vector<Cell>> rows;
  double size_pt = 7.5;
};
enum class FigureArrangement {
  kStacked,      // panels one below the other, full width, one left edge
  kFillPage,     // one panel taking what the blocks after it leave on the page
  kBesideNotes,  // panels stacked on the left, notes in a column on the right
};
struct FigureBlock {
  std::string name;         // stable identifier, e.g. "isotherm"
  std::string description;  // accessible name of the figure (HTML title/aria-label)
  std::vector<plot::Figure> panels;
  std::vector<double> heights_pt;  // one per panel
  FigureArrangement arrangement = FigureArrangement::kStacked;
  bool caption_adds_height = false;  // the last panel's caption comes on top of its height
  double gap_pt = 6.0;               // between panels
  double space_after_pt = 0.0;
  // kFillPage: the panel's height range [pt].
  double min_height_pt = 110.0;
  double max_height_pt = 260.0;
  // kBesideNotes: a titled column of note groups (first item of each group in bold).
  std::string notes_title;
  std::vector<std::vector<std::string>> notes;
};
struct SignaturesBlock {
  std::vector<std::string> signatories;  // "Name, role"
  std::string accreditation;
};
using Block = std::variant<SubheadingBlock, ParagraphBlock, BulletsBlock, FactsBlock, TableBlock,
                           FigureBlock, SignaturesBlock>;

struct Section {
  std::string key;  // the template's section key, e.g. "cautions"
  int number = 0;   // its place in the template's section list
  std::string title;
  std::vector<Block> blocks;
  std::string Heading() const;  // "8  Cautions"
};

// One [[specification]] of the job evaluated on its headline value (section_conformity.cc):
// the value and limits in the specification's unit, the decision of pipeline/conform, and
// the texts as printed. A headline the sheet does not have gives no decision, only a reason.
struct ConformityStatement {
  ingest::Specification specification;
  std::string quantity_label;  // the headline label (the key when the headline is missing)
  bool available = false;      // false: "no statement: <reason>"
  std::string reason;
  std::string unit_text;             // the specification's unit as printed, e.g. "m²/g"
  conform::Measurement measurement;  // in the specification's unit
  conform::Result result;
  // As printed.
  std::string limits_text;  // "at most 2 %", "at least 150 m²/g", "150 to 250 m²/g"
  std::string value_text;   // "1.660 ± 0.038 % (k = 2)"
  std::string rule_text;    // conform's rule with its source
  std::string guard_band_text;
  std::string result_text;  // "pass", "fail", "inconclusive", "no statement: <reason>"
  std::string risk_text;
};

// The issuing laboratory as every page prints it (running header, signatures, PDF author):
// from the job's laboratory profile. Without a profile the sheet is a draft: DRAFT on every
// page (watermark), no laboratory named, no signature block.
struct Letterhead {
  bool draft = true;
  std::string lab_name;
  std::string lab_address;
  std::string accreditation;             // "Accredited by BODY, No. NUMBER"; "" if none
  std::vector<std::string> signatories;  // "Name, role"
  // The laboratory's logo (ingest::LabProfile, checked by ingest::LoadLabLogo): drawn at the
  // left of the PDF header, inlined in the HTML masthead as a data: URI. Empty: none.
  std::string logo_bytes;
  ingest::LabLogoFormat logo_format = ingest::LabLogoFormat::kNone;
  double logo_aspect = 1.0;   // width / height in pixels
  SourceLocation logo_where;  // the profile's logo key, for a message about the image
};
// The watermark printed on every page of a draft (PDF and HTML).
inline constexpr char kDraftWatermark[] = "DRAFT";

// ---- The record: the full-precision values beside the printed sheet -------------------------
// What results.json and the CSV companions write besides the printed cells. BuildSheet fills
// it (sheet_record.cc) from the stage results; the writers read nothing else. Where a stage's
// value type is written out field by field as the stage computed it, the record holds that
// plain value (one field list, in the stage's header); what the report derives from it (the
// quantities as printed with their own coverage factor, a combined point's budget, labels, the
// ranking, the step number of the input file) is computed here, once.

// The step of a data file as its own numbering gives it: the desiccator file's `step` column;
// a vapour log's steps counted from 1 in log order. A combined point whose specimens carry
// different numbers for the same step joins them with '+' in specimen order.
struct CombinedPointRecord {
  reduce::IsothermPoint point;
  Quantity rh;        // PointRhQuantity: the point's own k
  Quantity moisture;  // PointMoistureQuantity
  PointBudget budget;
  std::string step_in_file;
};
struct SpecimenPointRecord {
  reduce::SpecimenPoint point;
  // As printed: RH with the isotherm's k, the moisture content with the point's own k
  // (expanded / standard; the isotherm's k when none is set).
  Quantity rh;
  Quantity moisture;
  std::string step_in_file;
};
struct EquilibriaRecord {
  std::vector<equilibrate::EquilibriumPoint> points;
  std::vector<equilibrate::DryMass> dry_masses;
  equilibrate::EquilibrateSummary summary;
};
struct IsothermRecord {
  double coverage_factor = 2.0;
  std::vector<CombinedPointRecord> points;  // in the reduce stage's order
  std::vector<SpecimenPointRecord> specimen_points;
  std::vector<reduce::RetentionIsothermPoint> retention;
  reduce::ReduceSummary summary;
};
struct FitGroupRecord {
  fit::FitGroup group;
  std::string label;  // GroupLabel
};
// The converged fits of one group by AICc rank (fit stage ranks; 1 = best).
struct RankingRecord {
  int group_index = 0;
  int best_fit_index = -1;
  struct Entry {
    int rank = 0;
    size_t fit_index = 0;
  };
  std::vector<Entry> order;
};
struct FitsRecord {
  double coverage_factor = 2.0;
  std::vector<FitGroupRecord> groups;
  std::vector<fit::ModelFit> fits;  // Sheet::models[i] is fits[i] as printed
  std::vector<RankingRecord> ranking;
  fit::FitStageSummary summary;
};
struct DistributionRecord {
  pores::PoreDistribution distribution;
  Quantity total_resolved_volume;  // mm³/g
  std::vector<Quantity> modes;     // modal radii, nm
};
struct SurfaceAreaRecord {
  pores::SurfaceArea area;
  Quantity value;      // m²/g
  Quantity monolayer;  // moisture content
};
struct ReferenceMoistureRecord {
  pores::ReferenceMoisture reference;
  Quantity value;  // with its own k (Student-t from nu_eff, pores.h)
  // The temperature of the isotherm it was read from (MeasuredTemperature_K).
  double measured_temperature_K = std::numeric_limits<double>::quiet_NaN();
};
struct PoresRecord {
  std::vector<DistributionRecord> distributions;
  std::vector<SurfaceAreaRecord> surface_areas;
  std::vector<ReferenceMoistureRecord> reference_moisture;
  pores::Hygroscopicity hygroscopicity;
  Quantity mass_increase;  // when hygroscopicity.applicable
  std::vector<pores::Hysteresis> hysteresis;
  std::vector<pores::IsostericHeat> isosteric_heat;
  std::vector<Diagnostic> warnings;
};
struct SheetRecord {
  std::string software_version;  // without "sorbtrace " (PlainVersion)
  std::string template_name;
  std::string template_title;
  std::string document_date;
  std::optional<ingest::JobSpec> job;  // absent: no ingest result
  std::vector<ingest::InputFileRecord> input_files;
  // The run stage's record of every setting after overrides, written out as it came: the
  // report reads no key of it, so a structure of its own would only copy the run stage's.
  nlohmann::ordered_json settings = nlohmann::ordered_json::object();
  // results.json "issue" (IssueJson): built beside the front-matter rows it restates, from the
  // same job fields, so the printed facts and the machine-readable ones have one author.
  nlohmann::ordered_json issue = nlohmann::ordered_json::object();
  std::optional<EquilibriaRecord> equilibria;
  std::optional<IsothermRecord> isotherm;
  std::optional<FitsRecord> fits;
  std::optional<PoresRecord> pores;
};

struct Sheet {
  // The template's sections in print order (the one-page summary: "summary" only); a
  // section's number is its place in this list, so cross-references follow the template.
  std::vector<std::string> section_keys;
  // 1-based number of section `key`; 0 when the sheet has no such section.
  int SectionNumber(const std::string& key) const;
  DisplayRules rules;
  std::string moisture_unit;        // "%" or "kg/kg"
  std::string moisture_axis_label;  // "moisture content (% dry basis)"
  // The basis of every moisture content, said where a table of them starts: "moisture
  // contents in mass % of the dry mass (dry basis)".
  std::string moisture_basis_text;
  std::vector<Quantity> headline;  // summary values in print order
  // Headline keys a job may name that this sheet does not print, with the reason (e.g. a
  // reference condition at a temperature that was not measured).
  struct Unavailable {
    std::string key;
    std::string label;   // what the headline would be called
    std::string reason;  // e.g. "not measured at 23 °C; value at 25 °C"
  };
  std::vector<Unavailable> unavailable_headline;
  std::vector<ConformityStatement> conformity;  // one per [[specification]], in job order
  std::string hygroscopicity_class;
  // Whether the sheet prints the Ph. Eur. 5.11 class (HygroscopicityClassRelevant).
  bool hygroscopicity_relevant = false;
  std::string best_model_text;  // e.g. "GAB (adsorption, 23 °C)"
  std::vector<ModelRow> models;
  // One plain sentence per model the design could not support, e.g. "Brunauer-Emmett-Teller
  // (BET) not evaluated: 2 points between 5 and 35 % RH, at least 3 needed (adsorption,
  // 23 °C; desorption, 23 °C)" (fit::ModelDesign; results.json keeps the machine reason).
  std::vector<std::string> not_evaluated;
  // Data-specific cautions (flags, warnings), most important first (CautionRank, stable
  // within a rank): the summary page prints the first ones.
  std::vector<std::string> cautions;
  std::vector<std::string> standing_cautions;  // the fixed statements of section 8
  std::vector<Diagnostic> warnings;            // the report's own findings (run.log)
  std::string report_number;                   // the job id as printed (running header)
  Letterhead letterhead;
  // The facts of the front matter (ISO/IEC 17025:2017, 7.8.2.1): label / value as printed.
  std::vector<std::pair<std::string, std::string>> front_matter;
  // Deviations from the method, each a sentence (section "deviations"); empty: none.
  std::vector<std::string> deviations;
  std::string end_marker;         // "End of report HBPL-2026-0307", the last line of the sheet
  std::vector<Section> sections;  // the document, in print order
  SheetRecord record;             // the full-precision values (results.json, CSV)
};

// The software version without a leading "sorbtrace " (the run stage may pass either form).
std::string PlainVersion(const std::string& software_version);

// The branch as a word, ingest::BranchName (one rule, in ingest).
std::string BranchLabel(ingest::Branch branch);
// A temperature as a person reads it: "23 °C", or "23.4 °C" when it is not a whole degree
// (within 0.05 K, half the last printed digit).
std::string TemperatureLabel(double temperature_K);
std::string GroupLabel(const fit::FitGroup& group);  // "adsorption, 23 °C"

// The same as a results.json key part: "23C", "23p4C" (keys hold no "°" or ".").
std::string TemperatureKey(double temperature_K);
// What a headline result belongs to: "adsorption, 23 °C" / "adsorption_23C". Every headline
// label and key carries it, so a job with several temperatures has no two alike.
std::string BranchTemperatureLabel(ingest::Branch branch, double temperature_K);
std::string BranchTemperatureKey(ingest::Branch branch, double temperature_K);

// The temperature [K] of the isotherm the pores stage read a reference moisture from: the
// adsorption group whose best fit is the model named in `reference`, nearest the reference
// temperature (the pores stage's choice, pores/quantities.cc ReferenceMoistureFor). NaN when
// there is none.
double MeasuredTemperature_K(const fit::IsothermFits* fits,
                             const pores::ReferenceMoisture& reference);

// The letterhead of a job (a draft when it names no laboratory profile or `job` is null).
Letterhead MakeLetterhead(const ingest::JobSpec* job);
// The method as the sheet cites it, with its edition: the job's [job] method and the drying
// standard of an oven dry mass, e.g. "ISO 12571:2021, desiccator method; dry mass by oven
// drying at 105 °C (ISO 12570:2000)"; the procedure in words when the job names no method.
std::string MethodCitation(const ingest::IngestResult& ingested);
// The front-matter rows (laboratory, location, customer, item, sampling, method, report
// identity and revision), in print order.
std::vector<std::pair<std::string, std::string>> FrontMatter(const ReportInputs& inputs,
                                                             const ReportOptions& options);
// The deviations from the method the stage results record: steps not equilibrated (excluded
// or kept), extrapolated steps, equilibrium settings that differ from the method's criteria,
// models not evaluated. One sentence each, in that order.
std::vector<std::string> MethodDeviations(const ReportInputs& inputs);
// results.json "issue": the laboratory, customer, item, sampling, method, revision,
// deviations and whether the sheet is a draft.
nlohmann::ordered_json IssueJson(const ReportInputs& inputs, const Sheet& sheet);

// The fit a surface area was computed from (same model, branch and temperature), -1 if none.
int SurfaceAreaFitIndex(const fit::IsothermFits& fits, const pores::SurfaceArea& area);
// Why a surface area is not a headline value, empty when it is one: its fit must be identified
// (fit::IsIdentified) and, for BET, pass every Rouquerol criterion (ModelFit::consistency).
std::string SurfaceAreaNotHeadlineReason(const fit::IsothermFits* fits,
                                         const pores::SurfaceArea& area);

// The European Pharmacopoeia's hygroscopicity classes (Ph. Eur. 5.11) are defined for
// pharmaceutical substances: the sheet prints the class, and the uptake it is read from, only
// for [job] material_class = "pharmaceutical_powder" (excipients, active substances). Foods,
// building materials and other classes have no compendial hygroscopicity class (results.json
// still holds the pores stage's figure).
bool HygroscopicityClassRelevant(ingest::MaterialClass material_class);

// How much a caution matters to the reader, most important first; given where the caution is
// collected (BuildSheet) and the order of Sheet::cautions:
//  - kNotForIssue: the sheet itself may not be issued (DRAFT: no laboratory profile);
//  - kValidity: a result is not what it seems or may be wrong (input faults, a reference
//    temperature that was not measured, a best model that fails its checks, a class limit
//    within the uncertainty);
//  - kDeviation: the method was not followed as written (steps not equilibrated,
//    extrapolated or excluded; analyses not made);
//  - kInformation: how to read a result (bases, comparability, shortened fields).
enum class CautionRank { kNotForIssue, kValidity, kDeviation, kInformation };

// The record of the stage results (Sheet::record), for a sheet whose rules, model rows and
// front matter are built.
SheetRecord BuildSheetRecord(const ReportInputs& inputs, const Template& layout,
                             const ReportOptions& options, const Sheet& sheet);

// The whole sheet: quantities, cautions, the sections the template lists and the record.
Sheet BuildSheet(const ReportInputs& inputs, const Template& layout,
                 const ReportOptions& options = {});

}  // namespace sorbtrace::report::internal
