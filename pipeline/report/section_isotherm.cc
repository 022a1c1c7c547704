// The isotherm figures (used by the summary and the isotherm section) and the isotherm
// section: the isotherm with the best fits and a residual panel below it.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <iterator>
#include <map>
#include <set>
#include <tuple>
#include <utility>

#include "pipeline/physics/physics.h"
#include "pipeline/report/format.h"
#include "pipeline/report/sections.h"

namespace sorbtrace::report::internal {
namespace {

namespace palette = plot::palette;

constexpr double kPascalPerMegapascal = 1e6;
constexpr double kPercentPerFraction = 100.0;
// Temperatures closer than this are one measurement temperature [K] (common practice: a
// chamber holds its set point to a few tenths of a kelvin).
constexpr double kSameTemperature_K = 0.5;

// Marker per (branch, temperature index): shape and fill tell branches apart in greyscale.
plot::MarkerStyle BranchMarker(ingest::Branch branch, int temperature_index) {
  plot::MarkerStyle m;
  static constexpr plot::MarkerShape kShapes[] = {
      plot::MarkerShape::kCircle, plot::MarkerShape::kTriangleUp, plot::MarkerShape::kDiamond};
  m.shape = branch == ingest::Branch::kDesorption ? plot::MarkerShape::kSquare
                                                  : kShapes[temperature_index % 3];
  if (branch == ingest::Branch::kDesorption && temperature_index > 0) {
    m.shape = plot::MarkerShape::kTriangleDown;
  }
  m.filled = branch != ingest::Branch::kDesorption;
  m.color = branch == ingest::Branch::kDesorption ? palette::kOchre : palette::kTeal;
  if (temperature_index > 0) {
    m.color = branch == ingest::Branch::kDesorption ? palette::kPlum : palette::kMoss;
  }
  return m;
}

// Dash pattern of a fitted curve beyond the RH range of the points it was fitted to [pt].
const std::vector<double> kExtrapolatedDash_pt = {1.2, 1.8};

// The RH range [fraction] of the observations a fit used (its measured range).
struct FittedRange {
  double low = 0.0;
  double high = 1.0;
};
FittedRange FittedRhRange(const fit::FitGroup& group, const fit::ModelFit& mf) {
  FittedRange range{1.0, 0.0};
  for (int i : mf.used_observations) {
    if (i < 0 || static_cast<size_t>(i) >= group.observations.size()) continue;
    const double x = group.observations[static_cast<size_t>(i)].x[0];
    range.low = std::min(range.low, x);
    range.high = std::max(range.high, x);
  }
  if (range.low > range.high) return {0.0, 1.0};  // none recorded: no part is marked
  return range;
}

int TemperatureIndex(const std::vector<double>& temperatures, double temperature_K) {
  for (size_t i = 0; i < temperatures.size(); ++i) {
    if (std::abs(temperatures[i] - temperature_K) < kSameTemperature_K) {
      return static_cast<int>(i);
    }
  }
  return 0;
}

// The best model of each group: its confidence band and its curve.
void AddBestFits(const SectionContext& ctx, const std::vector<double>& temperatures,
                 plot::Figure& fig) {
  if (ctx.inputs.fits == nullptr) return;
  const double ms = ctx.moisture_scale();
  const fit::IsothermFits& fits = *ctx.inputs.fits;
  bool any_extrapolated = false;
  for (size_t g = 0; g < fits.best_fit_per_group.size() && g < fits.groups.size(); ++g) {
    const int best = fits.best_fit_per_group[g];
    if (best < 0 || static_cast<size_t>(best) >= fits.fits.size()) continue;
    const fit::ModelFit& mf = fits.fits[static_cast<size_t>(best)];
    if (mf.band.empty()) continue;
    const plot::MarkerStyle m = BranchMarker(
        fits.groups[g].branch, TemperatureIndex(temperatures, fits.groups[g].temperature_K));
    plot::Band band;
    for (const fitters::BandPoint& b : mf.band) {
      band.x.push_back(b.x * kPercentPerFraction);
      band.low.push_back(b.confidence_low * ms);
      band.high.push_back(b.confidence_high * ms);
    }
    band.fill = m.color.Tint(0.78);
    if (g == 0) band.legend = "confidence band of the fit";
    fig.bands.push_back(std::move(band));
    // The fitted range: solid (desorption dashed), beyond it dotted on both sides.
    const FittedRange range = FittedRhRange(fits.groups[g], mf);
    plot::Series fitted, below, above;
    // Grid indices of the first and last curve points inside the range; the parts beyond
    // share these end points, so the curve stays joined.
    const size_t n = mf.band.size();
    size_t first = 0, last = n - 1;
    while (first + 1 < n && mf.band[first].x < range.low) ++first;
    while (last > first && mf.band[last].x > range.high) --last;
    auto append = [&](plot::Series& s, size_t from, size_t to) {
      for (size_t i = from; i <= to; ++i) {
        s.x.push_back(mf.band[i].x * kPercentPerFraction);
        s.y.push_back(mf.band[i].y * ms);
      }
    };
    append(fitted, first, last);
    if (first > 0) append(below, 0, first);
    if (last + 1 < n) append(above, last, n - 1);
    fitted.marker.shape = below.marker.shape = above.marker.shape = plot::MarkerShape::kNone;
    fitted.line = plot::LineStyle{m.color, 1.1, {}};
    if (fits.groups[g].branch == ingest::Branch::kDesorption) fitted.line->dash_pt = {4.0, 2.0};
    below.line = above.line = plot::LineStyle{m.color, 0.9, kExtrapolatedDash_pt};
    fitted.legend = ShortModelName(mf.model_name) + " fit, " + GroupLabel(fits.groups[g]);
    any_extrapolated = any_extrapolated || !below.x.empty() || !above.x.empty();
    fig.series.push_back(std::move(fitted));
    if (!below.x.empty()) fig.series.push_back(std::move(below));
    if (!above.x.empty()) fig.series.push_back(std::move(above));
  }
  if (any_extrapolated) {
    plot::Series key;  // legend entry only
    key.legend = "fit extrapolated beyond the measured RH range";
    key.marker.shape = plot::MarkerShape::kNone;
    key.line = plot::LineStyle{palette::kSlate, 0.9, kExtrapolatedDash_pt};
    fig.series.push_back(std::move(key));
  }
}

// Measured points with expanded uncertainties, one series per branch and temperature, and
// the retention points.
void AddMeasuredPoints(const SectionContext& ctx, const std::vector<double>& temperatures,
                       plot::Figure& fig) {
  if (ctx.inputs.reduced == nullptr) return;
  const double ms = ctx.moisture_scale();
  const double k = ctx.sheet.rules.coverage_factor;
  const auto& points = ctx.inputs.reduced->points;
  const bool cycles = std::any_of(points.begin(), points.end(),
                                  [](const reduce::IsothermPoint& p) { return p.cycle > 0; });
  std::map<std::tuple<int, int, int>, plot::Series> groups;
  for (const reduce::IsothermPoint& p : points) {
    const int ti = TemperatureIndex(temperatures, p.temperature_K);
    plot::Series& s = groups[std::make_tuple(static_cast<int>(p.branch), ti, p.cycle)];
    if (s.x.empty()) {
      s.marker = BranchMarker(p.branch, ti);
      s.legend = BranchLabel(p.branch) + ", " + TemperatureLabel(p.temperature_K);
      if (cycles) {
        // Each later cycle its own shape (and the fill turned over), so cycles read apart.
        static constexpr plot::MarkerShape kCycleShapes[] = {
            plot::MarkerShape::kDiamond, plot::MarkerShape::kTriangleUp,
            plot::MarkerShape::kTriangleDown, plot::MarkerShape::kSquare};
        if (p.cycle > 0) {
          s.marker.shape = kCycleShapes[static_cast<size_t>(p.cycle - 1) % std::size(kCycleShapes)];
          s.marker.filled = !s.marker.filled;
        }
        s.legend += fmt::format(", cycle {}", p.cycle + 1);
      }
      s.legend += " (± U)";
    }
    s.x.push_back(p.rh_fraction * kPercentPerFraction);
    s.y.push_back(p.moisture_kg_per_kg * ms);
    s.x_error.push_back(p.expanded_u_rh_fraction > 0.0
                            ? p.expanded_u_rh_fraction * kPercentPerFraction
                            : k * p.u_rh_fraction * kPercentPerFraction);
    s.y_error.push_back(p.expanded_u_moisture_kg_per_kg > 0.0 ? p.expanded_u_moisture_kg_per_kg * ms
                                                              : k * p.u_moisture_kg_per_kg * ms);
  }
  for (auto& [key, s] : groups) fig.series.push_back(std::move(s));
  if (ctx.inputs.reduced->retention.empty()) return;
  plot::Series r;
  r.legend = "retention points (Kelvin-equivalent RH)";
  r.marker = {plot::MarkerShape::kDiamond, false, 4.6, palette::kPlum};
  for (const reduce::RetentionIsothermPoint& p : ctx.inputs.reduced->retention) {
    r.x.push_back(p.equivalent_rh_fraction * kPercentPerFraction);
    r.y.push_back(p.moisture_kg_per_kg * ms);
    r.y_error.push_back(k * p.u_moisture_kg_per_kg * ms);
  }
  fig.series.push_back(std::move(r));
}

// Capillary pressure of the pore water along the top (Kelvin equation).
plot::SecondaryAxis CapillaryPressureAxis(const std::vector<double>& temperatures) {
  // 23 °C when no point was measured (ISO 12571 reference temperature).
  const double temperature_K = temperatures.empty() ? 296.15 : temperatures.front();
  plot::SecondaryAxis top;
  top.label = fmt::format("capillary pressure (MPa) at {}, Kelvin equation",
                          TemperatureLabel(temperature_K));
  top.scale = plot::Scale::kLog10;
  top.to_secondary = [temperature_K](double rh_percent) {
    if (!(rh_percent > 0.0 && rh_percent < 100.0)) return std::nan("");
    return physics::CapillaryPressure_Pa(rh_percent / kPercentPerFraction, temperature_K) /
           kPascalPerMegapascal;
  };
  top.from_secondary = [temperature_K](double pressure_MPa) {
    return physics::RhFromCapillaryPressure(pressure_MPa * kPascalPerMegapascal, temperature_K) *
           kPercentPerFraction;
  };
  return top;
}

plot::Figure ResidualFigure(const SectionContext& ctx) {
  plot::Figure fig;
  fig.x.label = "relative humidity (%)";
  fig.x.min = 0.0;
  fig.x.max = 100.0;
  fig.y.label = "residual (" + ctx.sheet.moisture_unit + ")";
  fig.y.num_ticks = 5;
  fig.horizontal_rules = {0.0};
  fig.legend = false;
  const double ms = ctx.moisture_scale();
  if (ctx.inputs.fits == nullptr) return fig;
  const fit::IsothermFits& fits = *ctx.inputs.fits;
  const std::vector<double> temperatures = DistinctTemperatures(ctx.inputs);
  for (size_t g = 0; g < fits.best_fit_per_group.size() && g < fits.groups.size(); ++g) {
    const int best = fits.best_fit_per_group[g];
    if (best < 0 || static_cast<size_t>(best) >= fits.fits.size()) continue;
    const fit::ModelFit& mf = fits.fits[static_cast<size_t>(best)];
    const fit::FitGroup& group = fits.groups[g];
    plot::Series s;
    s.marker = BranchMarker(group.branch, TemperatureIndex(temperatures, group.temperature_K));
    s.marker.size_pt = 4.0;
    for (size_t i = 0;
         i < group.observations.size() && i < mf.result.residuals_at_observed_x.size(); ++i) {
      s.x.push_back(group.observations[i].x[0] * kPercentPerFraction);
      s.y.push_back(mf.result.residuals_at_observed_x[i] * ms);
    }
    fig.series.push_back(std::move(s));
  }
  // Symmetric range about zero so the sign of the residuals reads at a glance.
  double largest = 0.0;
  for (const plot::Series& s : fig.series) {
    for (double v : s.y) largest = std::max(largest, std::abs(v));
  }
  if (largest > 0.0) {
    const double limit = plot::NiceNumber(largest * 1.15, false);
    fig.y.min = -limit;
    fig.y.max = limit;
  }
  return fig;
}

}  // namespace

std::vector<double> DistinctTemperatures(const ReportInputs& inputs) {
  std::vector<double> out;
  if (inputs.reduced == nullptr) return out;
  for (const reduce::IsothermPoint& p : inputs.reduced->points) {
    bool found = false;
    for (double t : out) found = found || std::abs(t - p.temperature_K) < kSameTemperature_K;
    if (!found) out.push_back(p.temperature_K);
  }
  std::sort(out.begin(), out.end());
  return out;
}

plot::Figure IsothermFigure(const SectionContext& ctx, bool with_secondary) {
  plot::Figure fig;
  fig.x.label = "relative humidity (%)";
  fig.x.min = 0.0;
  fig.x.max = 100.0;
  fig.x.num_ticks = 6;
  fig.y.label = ctx.sheet.moisture_axis_label;
  fig.y.min = 0.0;  // moisture contents are not negative; a band dipping below 0 is clipped
  fig.y.num_ticks = 8;
  const std::vector<double> temperatures = DistinctTemperatures(ctx.inputs);
  AddBestFits(ctx, temperatures, fig);
  AddMeasuredPoints(ctx, temperatures, fig);
  if (with_secondary) fig.x_top = CapillaryPressureAxis(temperatures);
  return fig;
}

void BuildIsothermSection(const SectionContext& ctx, Section& section) {
  FigureBlock block;
  block.name = "isotherm";
  block.description =
      "Sorption isotherm: measured moisture content against relative humidity with expanded "
      "uncertainties, the best fitted model of each branch with its confidence band, and the "
      "residuals of the best fits below.";
  plot::Figure fig = IsothermFigure(ctx, true);
  fig.font_size_pt = 7.5;
  plot::Figure res = ResidualFigure(ctx);
  res.title = "Residuals of the best fits (measured − fitted, at the measured RH)";
  res.caption = fmt::format(
      "Points: combined specimens per step, bars: expanded uncertainty U ({} in the table "
      "of equilibria) in RH and "
      "moisture content. Curves: best model of each branch (lowest AICc) with its confidence "
      "band of the mean curve (delta method), dotted beyond the RH range of the points it was "
      "fitted to (extrapolated). Top axis: capillary pressure of the pore water "
      "in equilibrium with the RH (Kelvin equation).",
      CoverageStatement(ctx.sheet.rules.coverage_factor));
  const std::string cycles = CyclesSentence(ctx);
  if (!cycles.empty()) res.caption += " " + cycles;
  block.panels = {std::move(fig), std::move(res)};
  block.heights_pt = {400.0, 150.0};
  block.caption_adds_height = true;
  section.blocks.emplace_back(std::move(block));
}

std::string CyclesSentence(const SectionContext& ctx) {
  if (ctx.inputs.reduced == nullptr) return {};
  // Data sets with points from more than one cycle.
  std::map<std::string, std::set<int>> cycles;
  for (const reduce::IsothermPoint& p : ctx.inputs.reduced->points) {
    cycles[p.dataset_id].insert(p.cycle);
  }
  std::string text;
  for (const auto& [dataset, set] : cycles) {
    if (set.size() < 2) continue;
    std::string parts;
    if (ctx.inputs.fits != nullptr) {
      for (const fit::FitGroup& g : ctx.inputs.fits->groups) {
        for (const fit::SpecimenFactor& f : g.specimen_factors) {
          if (!f.is_cycle || f.dataset_id != dataset) continue;
          parts +=
              fmt::format("{}{}: {} % (ν = {})", parts.empty() ? "" : "; ", BranchLabel(g.branch),
                          FormatSignificant(f.relative_standard_uncertainty * 100.0,
                                            kUncertaintySignificantDigits),
                          FormatSignificant(f.degrees_of_freedom, 2));
          break;  // one factor per cycle, all with the same u
        }
      }
    }
    text += fmt::format(
        "{}The {} cycles of data set {} are fitted together as one isotherm per branch, not as "
        "independent replicates: what a cycle does not share with the others is a component "
        "common to every step of that cycle (one correlated factor per cycle, estimated from "
        "the steps measured in every cycle, as the specimen term), {}.",
        text.empty() ? "" : " ", set.size(), dataset,
        parts.empty() ? "none was found beyond the points' own uncertainties"
                      : "relative standard deviation " + parts);
  }
  return text;
}

std::string ShortModelName(std::string name) {
  if (name.size() <= 3) {
    for (char& c : name) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
  } else if (!name.empty()) {
    name[0] = static_cast<char>(std::toupper(static_cast<unsigned char>(name[0])));
  }
  return name;
}

std::string NotAvailable(const std::string& reason) {
  return reason.rfind("not available", 0) == 0 ? reason : "not available: " + reason;
}

}  // namespace sorbtrace::report::internal
