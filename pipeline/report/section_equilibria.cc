// The equilibrium table: one row per combined point (data set, step, branch, temperature,
// RH and moisture content with U, spread, time to equilibrium, flags).
#include <fmt/format.h>

#include <algorithm>

#include "pipeline/physics/physics.h"
#include "pipeline/report/format.h"
#include "pipeline/report/sections.h"

namespace sorbtrace::report::internal {
namespace {

using physics::kSecondsPerHour;
using physics::kZeroCelsius_K;

std::string PointFlags(const reduce::IsothermPoint& p) {
  std::string flags;
  for (const std::string& f : p.flags) flags += (flags.empty() ? "" : "; ") + f;
  if (!p.equilibrated) {
    flags = fmt::format("not equilibrated{}{}", flags.empty() ? "" : "; ", flags);
  }
  if (p.extrapolated) flags = fmt::format("extrapolated{}{}", flags.empty() ? "" : "; ", flags);
  return flags.empty() ? "–" : flags;
}

std::vector<Cell> PointRow(const SectionContext& ctx, const reduce::IsothermPoint& p, size_t index,
                           bool with_cycle) {
  const Quantity rh = PointRhQuantity(p, ctx.sheet.rules);
  const Quantity moisture = PointMoistureQuantity(p, ctx.sheet.rules);
  const int digits = ctx.sheet.rules.significant_digits;
  const std::string k = CoverageText(p.coverage_factor);
  // k beside a point only where its two-digit value differs from the sheet's.
  const std::string own_k =
      k != CoverageText(ctx.sheet.rules.coverage_factor) ? " (k = " + k + ")" : std::string();
  const std::string key = fmt::format("point_{}", index);
  std::vector<Cell> row = {{p.dataset_id + " / " + p.step_label, ""}, {BranchLabel(p.branch), ""}};
  std::vector<Cell> rest = {
      {FormatFixed(p.temperature_K - kZeroCelsius_K, 1), ""},
      {std::to_string(p.num_specimens), ""},
      {FormatWithUncertainty(rh.display_value, rh.display_expanded_uncertainty, digits),
       key + "_rh"},
      {FormatWithUncertainty(moisture.display_value, moisture.display_expanded_uncertainty,
                             digits) +
           own_k,
       key + "_moisture"},
      // One specimen has no between-specimen spread (not a spread of 0).
      {p.num_specimens > 1
           ? FormatSignificant(p.between_specimen_sd_kg_per_kg * ctx.moisture_scale(), 2)
           : "–",
       ""},
      {FormatSignificant(p.time_to_equilibrium_s / kSecondsPerHour, 3), ""},
      {PointFlags(p), ""}};
  row.insert(row.end(), rest.begin(), rest.end());
  // Last, so that every other column keeps its place with or without cycles.
  if (with_cycle) row.push_back({std::to_string(p.cycle + 1), ""});
  return row;
}

}  // namespace

void BuildEquilibriaSection(const SectionContext& ctx, Section& section) {
  if (ctx.inputs.reduced == nullptr) return;
  section.blocks.emplace_back(
      ParagraphBlock{fmt::format("Combined specimens per step, {}. U: expanded uncertainty ({}); "
                                 "spread: between-specimen standard deviation; t_eq: time to "
                                 "equilibrium (longest specimen).",
                                 ctx.sheet.moisture_basis_text,
                                 CoverageStatement(ctx.sheet.rules.coverage_factor)),
                     8.0, 0.0, true});
  const auto& points = ctx.inputs.reduced->points;
  // A log with several adsorption/desorption cycles: each row says its cycle.
  const bool with_cycle = std::any_of(points.begin(), points.end(),
                                      [](const reduce::IsothermPoint& p) { return p.cycle > 0; });
  if (with_cycle) {
    section.blocks.emplace_back(ParagraphBlock{
        "Cycle: the adsorption/desorption cycle of the log (1 = first). " + CyclesSentence(ctx),
        8.0, 0.0, true});
  }
  const std::string mu = ctx.sheet.moisture_unit;
  TableBlock table;
  table.name = "equilibria";
  table.columns = {{"Data set / step", 0.19, false},
                   {"Branch", 0.10, false},
                   {"T (°C)", 0.065, true},
                   {"n", 0.035, true},
                   {"RH ± U (%)", 0.13, true},
                   {"Moisture ± U (" + mu + ")", 0.17, true},
                   {"Spread (" + mu + ")", 0.09, true},
                   {"t_eq (h)", 0.07, true},
                   {"Flags", 0.15, false}};
  if (with_cycle) {
    table.columns[0].width_fraction -= 0.03;
    table.columns.back().width_fraction -= 0.03;
    table.columns.push_back(ColumnSpec{"Cycle", 0.06, true});
  }
  table.size_pt = 7.0;
  for (size_t i = 0; i < points.size(); ++i) {
    table.rows.push_back(PointRow(ctx, points[i], i, with_cycle));
  }
  section.blocks.emplace_back(std::move(table));
}

}  // namespace sorbtrace::report::internal
