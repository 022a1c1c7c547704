// The pore-size section: density and cumulative distributions beside the stated
// assumptions, the derived quantities (pore volume, modes, surface areas, hysteresis,
// isosteric heat) and the assumptions of the Kelvin inversion.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <iterator>
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
// Markers along a smooth model curve (enough to read its shape in greyscale).
constexpr size_t kMarkersPerCurve = 8;

// What a distribution's curves belong to, as in the legend: "stepwise, adsorption, 23 °C",
// "model (GAB), desorption, 23 °C".
std::string DistributionLegend(const pores::PoreDistribution& pd) {
  return pd.method + (pd.model_name.empty() ? "" : " (" + ShortModelName(pd.model_name) + ")") +
         ", " + BranchLabel(pd.branch) + ", " + TemperatureLabel(pd.temperature_K);
}

// A distribution's curves on the two panels, in display units (mm³/g against nm).
struct DistributionCurves {
  plot::Series density;
  plot::Series cumulative;
  plot::Band density_band;
  plot::Band cumulative_band;
};

// The model-based distribution: smooth curves on the radius grid, with their bands.
DistributionCurves ModelCurves(const pores::PoreDistribution& pd) {
  DistributionCurves c;
  for (const pores::PoreDistributionPoint& p : pd.points) {
    const double r = p.radius_m * kNmPerM;
    c.density_band.x.push_back(r);
    c.density_band.low.push_back(p.dv_dlogr_low_m3_per_kg * kMm3PerGPerM3PerKg);
    c.density_band.high.push_back(p.dv_dlogr_high_m3_per_kg * kMm3PerGPerM3PerKg);
    c.density.x.push_back(r);
    c.density.y.push_back(p.dv_dlogr_m3_per_kg * kMm3PerGPerM3PerKg);
    c.cumulative_band.x.push_back(r);
    c.cumulative_band.low.push_back(p.cumulative_low_m3_per_kg * kMm3PerGPerM3PerKg);
    c.cumulative_band.high.push_back(p.cumulative_high_m3_per_kg * kMm3PerGPerM3PerKg);
    c.cumulative.x.push_back(r);
    c.cumulative.y.push_back(p.cumulative_volume_m3_per_kg * kMm3PerGPerM3PerKg);
  }
  // A few markers along the curve (its shape tells it apart from the others in greyscale).
  const size_t n = c.density.x.size();
  const size_t stride = std::max<size_t>(1, n / kMarkersPerCurve);
  for (size_t i = stride / 2; i < n; i += stride) c.density.marker_indices.push_back(i);
  c.cumulative.marker_indices = c.density.marker_indices;
  return c;
}

// The stepwise distribution as what it is: bars over the radius range of their measured
// steps (pores::PoreStep::bar), the density a step outline, the cumulative volume straight
// in log r across each bar (the density is uniform over the bar) up to the distribution's
// total at the upper edge of the last bar; a marker at each bar's middle (its PoreDistribution
// point). A point alone would put the peak at the bar's middle and end the cumulative curve
// half a bar short of the total (the table's pore volume).
DistributionCurves StepwiseCurves(const pores::PoreDistribution& pd) {
  DistributionCurves c;
  const size_t nb = pd.points.size();
  std::vector<double> low(nb, 0.0), high(nb, 0.0);
  for (const pores::PoreStep& step : pd.steps) {
    if (step.bar < 0 || static_cast<size_t>(step.bar) >= nb) continue;
    const auto b = static_cast<size_t>(step.bar);
    low[b] = low[b] > 0.0 ? std::min(low[b], step.radius_low_m) : step.radius_low_m;
    high[b] = std::max(high[b], step.radius_high_m);
  }
  for (size_t b = 0; b < nb; ++b) {
    const pores::PoreDistributionPoint& p = pd.points[b];
    if (!(low[b] > 0.0 && high[b] > low[b])) {  // no step recorded: the point alone
      low[b] = high[b] = p.radius_m;
    }
    const double lo = low[b] * kNmPerM, mid = p.radius_m * kNmPerM, hi = high[b] * kNmPerM;
    const double density = p.dv_dlogr_m3_per_kg * kMm3PerGPerM3PerKg;
    // Volume of the bar: its density over its width in log10 r (stepwise.cc's bar volume).
    const double volume = density * std::log10(high[b] / low[b]);
    const double at_mid = p.cumulative_volume_m3_per_kg * kMm3PerGPerM3PerKg;
    if (b == 0) {
      c.density.x.push_back(lo);
      c.density.y.push_back(0.0);
    }
    c.density.x.insert(c.density.x.end(), {lo, mid, hi});
    c.density.y.insert(c.density.y.end(), {density, density, density});
    c.density.marker_indices.push_back(c.density.x.size() - 2);
    if (b + 1 == nb) {
      c.density.x.push_back(hi);
      c.density.y.push_back(0.0);
    }
    c.cumulative.x.insert(c.cumulative.x.end(), {lo, mid, hi});
    c.cumulative.y.insert(c.cumulative.y.end(),
                          {at_mid - 0.5 * volume, at_mid, at_mid + 0.5 * volume});
    c.cumulative.marker_indices.push_back(c.cumulative.x.size() - 2);
  }
  return c;
}

// Density (dV/dlog r) and cumulative volume against pore radius. Each (branch, temperature)
// has its colour and marker shape; the model-based curve is solid with filled markers, the
// stepwise outline dashed with open markers: eight curves stay apart in greyscale.
std::pair<plot::Figure, plot::Figure> DistributionFigures(const pores::PoreAnalysis& pa) {
  plot::Figure density;
  density.x.label = "pore radius (nm)";
  density.x.scale = plot::Scale::kLog10;
  density.y.label = "dV/dlog r (mm³/g)";
  density.y.include_zero = true;
  plot::Figure cumulative = density;
  cumulative.y.label = "cumulative pore volume (mm³/g)";
  cumulative.legend = false;  // the same curves as the panel above, whose legend names them
  static constexpr plot::MarkerShape kShapes[] = {
      plot::MarkerShape::kCircle, plot::MarkerShape::kSquare, plot::MarkerShape::kTriangleUp,
      plot::MarkerShape::kDiamond, plot::MarkerShape::kTriangleDown};
  std::vector<std::pair<int, long>> groups;  // (branch, temperature in mK) in order of appearance
  bool band_in_legend = false;
  for (const pores::PoreDistribution& pd : pa.distributions) {
    const std::pair<int, long> group{static_cast<int>(pd.branch),
                                     std::lround(pd.temperature_K * 1000.0)};
    size_t g = std::find(groups.begin(), groups.end(), group) - groups.begin();
    if (g == groups.size()) groups.push_back(group);
    const plot::Color color = plot::palette::Series(static_cast<int>(g));
    const bool stepwise = pd.method == "stepwise";
    DistributionCurves c = stepwise ? StepwiseCurves(pd) : ModelCurves(pd);
    for (plot::Series* s : {&c.density, &c.cumulative}) {
      s->marker = {kShapes[g % std::size(kShapes)], !stepwise, 4.0, color};
      s->line = plot::LineStyle{color, stepwise ? 0.9 : 1.2,
                                stepwise ? std::vector<double>{3.0, 2.0} : std::vector<double>{}};
      s->legend = DistributionLegend(pd);
    }
    if (!stepwise) {
      c.density_band.fill = c.cumulative_band.fill = color.Tint(0.8);
      if (!band_in_legend) c.density_band.legend = "band (fit uncertainty)";
      band_in_legend = true;
      density.bands.push_back(std::move(c.density_band));
      cumulative.bands.push_back(std::move(c.cumulative_band));
    }
    density.series.push_back(std::move(c.density));
    cumulative.series.push_back(std::move(c.cumulative));
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
