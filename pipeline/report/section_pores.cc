// The pore-size section: density and cumulative distributions beside the stated
// assumptions, the derived quantities (pore volume, modes, surface areas, hysteresis,
// isosteric heat) and the assumptions of the Kelvin inversion.
#include <fmt/format.h>

#include <set>
#include <utility>

#include "pipeline/report/format.h"
#include "pipeline/report/sections.h"

namespace sorbtrace::report::internal {
namespace {

// 1 m3/kg = 1e6 mm3/g; 1 m = 1e9 nm.
constexpr double kMm3PerGPerM3PerKg = 1e6;
constexpr double kNmPerM = 1e9;
constexpr double kJPerKJ = 1000.0;

std::string DistributionLegend(const pores::PoreDistribution& pd) {
  return pd.method + (pd.model_name.empty() ? "" : " (" + pd.model_name + ")") + ", " +
         BranchLabel(pd.branch);
}

// Density (dV/dlog r) and cumulative volume against pore radius, one series per distribution.
std::pair<plot::Figure, plot::Figure> DistributionFigures(const pores::PoreAnalysis& pa) {
  plot::Figure density;
  density.x.label = "pore radius (nm)";
  density.x.scale = plot::Scale::kLog10;
  density.y.label = "dV/dlog r (mm³/g)";
  density.y.include_zero = true;
  plot::Figure cumulative = density;
  cumulative.y.label = "cumulative pore volume (mm³/g)";
  for (size_t d = 0; d < pa.distributions.size(); ++d) {
    const pores::PoreDistribution& pd = pa.distributions[d];
    const plot::Color color = plot::palette::Series(static_cast<int>(d));
    plot::Band band, cband;
    plot::Series s, cs;
    for (const pores::PoreDistributionPoint& p : pd.points) {
      const double r = p.radius_m * kNmPerM;
      band.x.push_back(r);
      band.low.push_back(p.dv_dlogr_low_m3_per_kg * kMm3PerGPerM3PerKg);
      band.high.push_back(p.dv_dlogr_high_m3_per_kg * kMm3PerGPerM3PerKg);
      s.x.push_back(r);
      s.y.push_back(p.dv_dlogr_m3_per_kg * kMm3PerGPerM3PerKg);
      cband.x.push_back(r);
      cband.low.push_back(p.cumulative_low_m3_per_kg * kMm3PerGPerM3PerKg);
      cband.high.push_back(p.cumulative_high_m3_per_kg * kMm3PerGPerM3PerKg);
      cs.x.push_back(r);
      cs.y.push_back(p.cumulative_volume_m3_per_kg * kMm3PerGPerM3PerKg);
    }
    band.fill = cband.fill = color.Tint(0.8);
    const bool stepwise = pd.method == "stepwise";
    s.marker.shape = cs.marker.shape =
        stepwise ? plot::MarkerShape::kSquare : plot::MarkerShape::kNone;
    s.marker.filled = cs.marker.filled = false;
    s.marker.color = cs.marker.color = color;
    s.marker.size_pt = cs.marker.size_pt = 3.6;
    s.line = cs.line = plot::LineStyle{
        color, 1.1, stepwise ? std::vector<double>{3.0, 2.0} : std::vector<double>{}};
    s.legend = cs.legend = DistributionLegend(pd);
    if (d == 0) band.legend = "band (fit uncertainty)";
    if (!stepwise) {
      density.bands.push_back(std::move(band));
      cumulative.bands.push_back(std::move(cband));
    }
    density.series.push_back(std::move(s));
    cumulative.series.push_back(std::move(cs));
  }
  return {std::move(density), std::move(cumulative)};
}

// The assumptions column beside the figures: one group per distribution.
std::vector<std::vector<std::string>> AssumptionNotes(const pores::PoreAnalysis& pa) {
  std::vector<std::vector<std::string>> notes;
  for (const pores::PoreDistribution& pd : pa.distributions) {
    notes.push_back(
        {fmt::format("{} ({}, {})", pd.method, BranchLabel(pd.branch),
                     TemperatureLabel(pd.temperature_K)),
         std::string("meniscus: ") +
             (pd.meniscus == physics::Meniscus::kHemispherical ? "hemispherical" : "cylindrical"),
         "film: " + pd.film_description,
         fmt::format("Kelvin-resolved radii {} to {} nm",
                     FormatSignificant(pd.resolved_radius_min_m * kNmPerM, 3),
                     FormatSignificant(pd.resolved_radius_max_m * kNmPerM, 3)),
         fmt::format("adsorbed below: {} mm³/g",
                     FormatSignificant(pd.adsorbed_volume_m3_per_kg * kMm3PerGPerM3PerKg, 3))});
  }
  return notes;
}

std::string HeatText(const SectionContext& ctx, const pores::IsostericHeat& q) {
  std::string text;
  for (const pores::IsostericHeatPoint& p : q.points) {
    text += (text.empty() ? "" : "\n") +
            fmt::format("at {} {}: q_st,net = {} kJ/mol",
                        FormatSignificant(p.moisture_kg_per_kg * ctx.moisture_scale(), 2),
                        ctx.sheet.moisture_unit,
                        FormatWithUncertainty(
                            p.net_heat_J_per_mol / kJPerKJ,
                            ctx.sheet.rules.coverage_factor * p.u_net_heat_J_per_mol / kJPerKJ,
                            ctx.sheet.rules.significant_digits));
  }
  return text;
}

TableBlock DerivedQuantities(const SectionContext& ctx, const pores::PoreAnalysis& pa) {
  TableBlock table;
  table.name = "pore_quantities";
  table.columns = {{"Quantity", 0.45, false}, {"Value ± U", 0.55, false}};
  for (const Quantity& q : ctx.sheet.headline) {
    if (q.key.rfind("pore_volume_", 0) == 0 || q.key.rfind("modal_radius_", 0) == 0 ||
        q.key.rfind("surface_area_", 0) == 0) {
      table.rows.push_back({{q.label, ""}, {q.text, q.key}});
    }
  }
  for (const pores::Hysteresis& h : pa.hysteresis) {
    if (!h.available) {
      table.rows.push_back({{"Hysteresis", ""}, {NotAvailable(h.reason), ""}});
      continue;
    }
    table.rows.push_back(
        {{"Largest hysteresis (" + TemperatureLabel(h.temperature_K) + ")", ""},
         {fmt::format("{} {} at {} % RH; significant from {} to {} % RH",
                      FormatSignificant(h.max_difference_kg_per_kg * ctx.moisture_scale(), 2),
                      ctx.sheet.moisture_unit, FormatFixed(h.rh_at_max_fraction * 100.0, 0),
                      FormatFixed(h.significant_rh_low_fraction * 100.0, 0),
                      FormatFixed(h.significant_rh_high_fraction * 100.0, 0)),
          ""}});
  }
  for (const pores::IsostericHeat& q : pa.isosteric_heat) {
    if (!q.available) {
      table.rows.push_back({{"Isosteric heat of sorption", ""}, {NotAvailable(q.reason), ""}});
      continue;
    }
    table.rows.push_back(
        {{"Isosteric heat (" + BranchLabel(q.branch) + ")", ""}, {HeatText(ctx, q), ""}});
  }
  return table;
}

}  // namespace

void BuildPoresSection(const SectionContext& ctx, Section& section) {
  if (ctx.inputs.pores == nullptr || ctx.inputs.pores->distributions.empty()) {
    section.blocks.emplace_back(
        ParagraphBlock{"No pore-size distribution was computed for this job."});
    return;
  }
  const pores::PoreAnalysis& pa = *ctx.inputs.pores;
  FigureBlock figures;
  figures.name = "pores";
  figures.description =
      "Pore-size distribution from the Kelvin equation: pore volume density dV/dlog r and "
      "cumulative pore volume against pore radius, with their uncertainty bands.";
  auto [density, cumulative] = DistributionFigures(pa);
  figures.panels = {std::move(density), std::move(cumulative)};
  figures.heights_pt = {210.0, 210.0};
  figures.gap_pt = 8.0;
  figures.arrangement = FigureArrangement::kBesideNotes;
  figures.notes_title = "Assumptions";
  figures.notes = AssumptionNotes(pa);
  section.blocks.emplace_back(std::move(figures));
  TableBlock table = DerivedQuantities(ctx, pa);
  if (!table.rows.empty()) section.blocks.emplace_back(std::move(table));
  std::vector<std::string> assumptions;  // every stated assumption, once
  std::set<std::string> seen;
  for (const pores::PoreDistribution& pd : pa.distributions) {
    for (const std::string& a : pd.assumptions) {
      if (seen.insert(a).second) assumptions.push_back(a);
    }
  }
  if (assumptions.empty()) return;
  section.blocks.emplace_back(
      SubheadingBlock{"Assumptions of the Kelvin inversion, as stated by the analysis"});
  section.blocks.emplace_back(BulletsBlock{assumptions, 7.5});
}

}  // namespace sorbtrace::report::internal
