// The summary section (the job's facts, the headline results, the cautions, the
// signatories; in the one-page summary also a small isotherm figure) and the cautions
// section.
#include <fmt/format.h>

#include <algorithm>
#include <map>
#include <string>
#include <utility>
#include <vector>

#include "pipeline/report/format.h"
#include "pipeline/report/sections.h"

namespace sorbtrace::report::internal {
namespace {

// Cautions listed on the summary page; longer lists are completed in results.json and in
// the cautions section (common practice: a summary page stays one page).
constexpr size_t kMaxSummaryCautions = 12;
constexpr size_t kMaxCompactSummaryCautions = 4;

// The one-page summary folds the front matter's detail rows into the row they belong to
// ("Client address" into "Client", ...): the same facts on fewer lines.
std::vector<std::pair<std::string, std::string>> FoldedFacts(
    const std::vector<std::pair<std::string, std::string>>& rows) {
  static const std::map<std::string, std::string> kInto = {
      {"Laboratory contact", "Laboratory"}, {"Location of testing", "Laboratory"},
      {"Client address", "Client"},         {"Client contact", "Client"},
      {"Description", "Material"},          {"Condition on receipt", "Item received"},
      {"Test dates", "Temperature"},        {"Issued", "Temperature"}};
  std::vector<std::pair<std::string, std::string>> folded;
  for (const auto& [label, text] : rows) {
    const auto into = kInto.find(label);
    const auto target = into == kInto.end()
                            ? folded.end()
                            : std::find_if(folded.begin(), folded.end(), [&into](const auto& row) {
                                return row.first == into->second;
                              });
    if (target == folded.end()) {
      folded.emplace_back(label, text);
    } else {
      target->second += "; " + (label == "Issued" ? "issued " + text : text);
    }
  }
  return folded;
}

// The front matter (sheet.front_matter) and where the deviations from the method are listed.
FactsBlock JobFacts(const SectionContext& ctx, bool compact) {
  FactsBlock facts;
  if (ctx.inputs.ingested == nullptr) return facts;
  facts.rows = compact ? FoldedFacts(ctx.sheet.front_matter) : ctx.sheet.front_matter;
  facts.label_width_pt = 132.0;  // "Deviations from the method" on one line at 8.5 pt
  const int section = ctx.sheet.SectionNumber("deviations");
  const size_t n = ctx.sheet.deviations.size();
  std::string deviations = n == 0 ? "none" : fmt::format("{} (", n);
  if (n > 0) {
    deviations += section > 0 ? fmt::format("listed in section {})", section)
                              : "listed in results.json, \"issue\")";
  }
  facts.rows.emplace_back("Deviations from the method", deviations);
  return facts;
}

// The headline results; the one-page summary prints each best model's parameters on one row.
TableBlock ResultsTable(const SectionContext& ctx, bool compact) {
  TableBlock table;
  table.name = "summary_results";
  table.columns = {{"Quantity", compact ? 0.45 : 0.60, false},
                   {"Value ± U", compact ? 0.55 : 0.40, false}};
  table.size_pt = compact ? 7.5 : 8.0;
  for (const Quantity& q : ctx.sheet.headline) {
    if (compact && q.key.rfind("best_", 0) == 0) continue;
    // The text carries the value's own k where it differs from the sheet's (WithOwnCoverage).
    table.rows.push_back({{q.label, ""}, {q.text, q.key}});
  }
  if (ctx.sheet.hygroscopicity_relevant) {  // pharmaceutical powders only (sheet.h)
    table.rows.push_back({{"Hygroscopicity class (Ph. Eur. 5.11 limits, on the uptake above)", ""},
                          {ctx.sheet.hygroscopicity_class, "hygroscopicity_class"}});
  }
  if (compact && ctx.inputs.fits != nullptr) {
    for (int best : ctx.inputs.fits->best_fit_per_group) {
      if (best < 0 || static_cast<size_t>(best) >= ctx.sheet.models.size()) continue;
      const ModelRow& row = ctx.sheet.models[static_cast<size_t>(best)];
      std::string text;
      for (const Quantity& q : row.parameters) {
        text += (text.empty() ? "" : ";  ") + q.label + " = " + q.text;
      }
      table.rows.push_back(
          {{"Best model, " + row.group_label + ": " + row.model_title, ""}, {text, ""}});
    }
  } else {
    table.rows.push_back(
        {{"Best model (lowest AICc)", ""},
         {ctx.sheet.best_model_text.empty() ? "none converged" : ctx.sheet.best_model_text,
          "best_model"}});
  }
  return table;
}

// Where the summary sends the reader for the conditions of use: the Cautions section as
// numbered by the template, or the standing cautions themselves when the sheet has none.
std::string ConditionsOfUse(const Sheet& sheet) {
  const int cautions = sheet.SectionNumber("cautions");
  if (cautions > 0) {
    return fmt::format("See section {} for the conditions of use of these results.", cautions);
  }
  std::string all;
  for (const std::string& c : sheet.standing_cautions) all += (all.empty() ? "" : " ") + c;
  return all;
}

BulletsBlock SummaryCautions(const Sheet& sheet, bool compact) {
  std::vector<std::string> cautions = sheet.cautions;
  const size_t limit = compact ? kMaxCompactSummaryCautions : kMaxSummaryCautions;
  if (cautions.size() > limit) {
    const size_t more = cautions.size() - (limit - 1);
    cautions.resize(limit - 1);
    cautions.push_back(fmt::format("… and {} further notes (results.json, \"cautions\").", more));
  }
  if (cautions.empty()) cautions.emplace_back("No measurement or fitting cautions were raised.");
  cautions.push_back(compact ? sheet.standing_cautions[0] + " " + sheet.standing_cautions[1]
                             : ConditionsOfUse(sheet));
  return {cautions, 8.0};
}

FigureBlock SummaryFigure(const SectionContext& ctx) {
  FigureBlock block;
  block.name = "summary_isotherm";
  block.description =
      "Sorption isotherm: measured moisture content against relative humidity with expanded "
      "uncertainties and the best fitted model of each branch with its confidence band.";
  plot::Figure fig = IsothermFigure(ctx, false);
  fig.font_size_pt = 7.0;
  block.panels = {std::move(fig)};
  block.heights_pt = {260.0};
  block.arrangement = FigureArrangement::kFillPage;
  return block;
}

}  // namespace

void BuildSummarySection(const SectionContext& ctx, bool compact, Section& section) {
  section.blocks.emplace_back(JobFacts(ctx, compact));
  // One line (a subheading does not wrap): the k and the basis of the values below; the
  // method section states both in full (CoverageStatement, Sheet::moisture_basis_text).
  section.blocks.emplace_back(SubheadingBlock{
      fmt::format("Results (expanded uncertainty U: k = {} unless stated; moisture on dry basis)",
                  CoverageText(ctx.sheet.rules.coverage_factor))});
  section.blocks.emplace_back(ResultsTable(ctx, compact));
  if (!ctx.sheet.conformity.empty()) {
    section.blocks.emplace_back(SubheadingBlock{"Statements of conformity"});
    section.blocks.emplace_back(ConformitySummaryTable(ctx.sheet));
  }
  if (compact) section.blocks.emplace_back(SummaryFigure(ctx));
  section.blocks.emplace_back(SubheadingBlock{"Cautions"});
  section.blocks.emplace_back(SummaryCautions(ctx.sheet, compact));
  if (!ctx.sheet.letterhead.signatories.empty()) {
    section.blocks.emplace_back(
        SignaturesBlock{ctx.sheet.letterhead.signatories, ctx.sheet.letterhead.accreditation});
  }
}

void BuildCautionsSection(const SectionContext& ctx, Section& section) {
  section.blocks.emplace_back(BulletsBlock{ctx.sheet.standing_cautions, 8.5});
  if (ctx.sheet.cautions.empty()) return;
  section.blocks.emplace_back(SubheadingBlock{"Notes on this data set"});
  section.blocks.emplace_back(BulletsBlock{ctx.sheet.cautions, 8.0});
}

}  // namespace sorbtrace::report::internal
