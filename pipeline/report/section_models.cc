// The model comparison section: every fitted model with its parameters, statistics, rank
// and flags (as numbered notes), and the equations.
#include <fmt/format.h>
#include <fmt/ranges.h>

#include <set>

#include "pipeline/report/format.h"
#include "pipeline/report/sections.h"

namespace sorbtrace::report::internal {
namespace {

// Surface areas that are no headline value (their fit fails its checks), marked as such.
void AddSurfaceAreaMarks(const SectionContext& ctx, Section& section) {
  if (ctx.inputs.pores == nullptr) return;
  for (const pores::SurfaceArea& sa : ctx.inputs.pores->surface_areas) {
    const std::string reason = SurfaceAreaNotHeadlineReason(ctx.inputs.fits, sa);
    if (reason.empty()) continue;
    const Quantity area = SurfaceAreaQuantity(sa, "", "", ctx.sheet.rules);
    section.blocks.emplace_back(ParagraphBlock{
        fmt::format("Surface area from the {} monolayer ({}): {}, not a reported result: {}.",
                    sa.model_name, BranchTemperatureLabel(sa.branch, sa.temperature_K),
                    WithOwnCoverage(area, ctx.sheet.rules.coverage_factor), reason),
        7.5});
  }
}

// Flags are long sentences: they go in numbered notes below the table, so the numeric
// columns keep a readable width.
void AddModelTable(const SectionContext& ctx, Section& section) {
  TableBlock table;
  table.name = "models";
  table.columns = {{"Model", 0.25, false}, {"Parameters ± U", 0.37, false},
                   {"RMSE", 0.095, true},  {"MRD", 0.065, true},
                   {"AICc", 0.07, true},   {"BIC", 0.07, true},
                   {"Rank", 0.08, true}};
  table.size_pt = 7.0;
  std::vector<std::string> notes;
  for (const ModelRow& row : ctx.sheet.models) {
    if (!row.evaluated) continue;  // said once, in plain words, below the table
    std::string parameters;
    if (!row.converged) {
      // A fit that did not converge has no result: its last iterate is not printed as one.
      parameters = "not converged: no parameters reported";
    } else if (!row.identifiable) {
      // No ± values and no correlations for parameters the data do not determine.
      parameters = "not identifiable from these data: " + row.not_identifiable_reason;
    } else {
      for (const Quantity& q : row.parameters) {
        parameters += (parameters.empty() ? "" : "\n") + q.label + " = " +
                      WithOwnCoverage(q, ctx.sheet.rules.coverage_factor);
      }
      for (const std::string& c : row.correlations) parameters += "\n" + c;
    }
    std::string model = row.model_title + "\n" + row.group_label;
    if (!row.flags.empty()) {
      std::string flags;
      for (const std::string& f : row.flags) flags += (flags.empty() ? "" : "; ") + f;
      notes.push_back(fmt::format("[{}] {}, {}: {}", notes.size() + 1, row.model_title,
                                  row.group_label, flags));
      model += fmt::format("\nsee note [{}]", notes.size());
    }
    const bool stats = row.converged;  // a failed fit has no statistics to compare
    table.rows.push_back({{model, ""},
                          {parameters, ""},
                          {stats ? row.rmse_text : "–", ""},
                          {stats ? row.mrd_text : "–", ""},
                          {stats ? row.aicc_text : "–", ""},
                          {stats ? row.bic_text : "–", ""},
                          {row.rank > 0 ? std::to_string(row.rank) : "–", ""}});
  }
  section.blocks.emplace_back(std::move(table));
  const int method = ctx.sheet.SectionNumber("method");
  if (!ctx.sheet.not_evaluated.empty()) {
    // Said once, in the method section; here only where to find it.
    section.blocks.emplace_back(ParagraphBlock{
        method > 0 ? fmt::format("Models the data cannot support (not enough points in their "
                                 "humidity range) were not evaluated: see section {}.",
                                 method)
                   : fmt::format("Not evaluated: {}", fmt::join(ctx.sheet.not_evaluated, " ")),
        7.5});
  }
  AddSurfaceAreaMarks(ctx, section);
  if (notes.empty()) return;
  section.blocks.emplace_back(SubheadingBlock{"Flags"});
  for (const std::string& note : notes) {
    section.blocks.emplace_back(ParagraphBlock{note, 7.0, 0.0, true});
  }
}

}  // namespace

void BuildModelsSection(const SectionContext& ctx, Section& section) {
  section.blocks.emplace_back(ParagraphBlock{
      fmt::format("Parameters with expanded uncertainty U ({}); correlations with "
                  "|r| > 0.95 are listed below the parameters. RMSE in {}; MRD: mean "
                  "relative deviation; rank by AICc within each branch, among the fits "
                  "identifiable from these data.",
                  CoverageStatement(ctx.sheet.rules.coverage_factor), ctx.sheet.moisture_unit),
      8.0, 0.0, true});
  AddModelTable(ctx, section);
  if (ctx.inputs.fits == nullptr) return;
  section.blocks.emplace_back(SubheadingBlock{"Equations"});
  std::set<std::string> shown;
  for (const fit::ModelFit& mf : ctx.inputs.fits->fits) {
    if (!shown.insert(mf.model_name).second) continue;
    std::string text =
        (mf.info.title.empty() ? mf.model_name : mf.info.title) + ":  " + mf.info.equation;
    if (!mf.info.source.empty()) text += "  (" + mf.info.source + ")";
    section.blocks.emplace_back(ParagraphBlock{text, 7.5});
  }
}

}  // namespace sorbtrace::report::internal
