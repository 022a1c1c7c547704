// The kinetics section: mass (and RH) against time for every mass log and desiccator
// series, with the detected equilibria or step starts marked.
#include <map>
#include <set>
#include <utility>

#include "pipeline/physics/physics.h"
#include "pipeline/report/sections.h"

namespace sorbtrace::report::internal {
namespace {

namespace palette = plot::palette;

using physics::kSecondsPerDay;
using physics::kSecondsPerHour;
constexpr double kPercentPerFraction = physics::kPercent;
constexpr double kFigureHeight_pt = 250.0;

FigureBlock OnePanel(std::string name, plot::Figure fig) {
  FigureBlock block;
  block.name = std::move(name);
  block.description = fig.title + ". " + fig.caption;
  block.panels = {std::move(fig)};
  block.heights_pt = {kFigureHeight_pt};
  block.space_after_pt = 10.0;
  return block;
}

const equilibrate::Trace* TraceOf(const SectionContext& ctx, const std::string& dataset_id) {
  const equilibrate::Trace* trace = nullptr;
  if (ctx.inputs.equilibria == nullptr) return trace;
  for (const equilibrate::Trace& t : ctx.inputs.equilibria->traces) {
    if (t.dataset_id == dataset_id) trace = &t;
  }
  return trace;
}

// Mass and RH of a vapour-sorption log against time, equilibria marked.
plot::Figure LogFigure(const SectionContext& ctx, const ingest::VaporLog& log) {
  plot::Figure fig;
  fig.title = "Mass and RH against time: " + log.dataset_id + ", specimen " + log.specimen_id;
  fig.x.label = "time (h)";
  fig.x.min = 0.0;
  fig.y.label = "mass (g)";
  fig.y_right = plot::Axis{};
  fig.y_right->label = "RH (%)";
  fig.y_right->min = 0.0;
  fig.y_right->max = 100.0;
  plot::Series mass, rh;
  mass.legend = "mass";
  mass.marker.shape = plot::MarkerShape::kNone;
  mass.line = plot::LineStyle{palette::kTeal, 1.0, {}};
  rh.legend = "measured RH (right axis)";
  rh.marker.shape = plot::MarkerShape::kNone;
  rh.line = plot::LineStyle{palette::kOchre, 0.8, {3.0, 1.5}};
  rh.right_axis = true;
  if (const equilibrate::Trace* trace = TraceOf(ctx, log.dataset_id)) {
    for (const equilibrate::TracePoint& p : trace->points) {
      mass.x.push_back(p.time_s / kSecondsPerHour);
      mass.y.push_back(p.mass_g);
      rh.x.push_back(p.time_s / kSecondsPerHour);
      rh.y.push_back(p.rh_fraction * kPercentPerFraction);
    }
    for (double t : trace->equilibrium_times_s) {
      fig.events.push_back({t / kSecondsPerHour, palette::kSlate.Tint(0.35), 0.5});
    }
  } else {
    for (const ingest::VaporLogStep& step : log.steps) {
      for (const ingest::LogBlock& b : step.blocks) {
        mass.x.push_back(b.time_s / kSecondsPerHour);
        mass.y.push_back(b.mass_g);
        rh.x.push_back(b.time_s / kSecondsPerHour);
        rh.y.push_back(b.rh_measured_fraction * kPercentPerFraction);
      }
    }
  }
  fig.series = {mass, rh};
  fig.caption = "Dashed vertical lines: where an equilibrium was detected (or extrapolated).";
  return fig;
}

// Mass against time per specimen of a desiccator series, steps separated.
plot::Figure SeriesFigure(const ingest::DesiccatorSeries& series) {
  plot::Figure fig;
  fig.title = "Mass against time per step and specimen: " + series.dataset_id;
  fig.x.label = "time since the first weighing (d)";
  fig.x.min = 0.0;
  fig.y.label = "mass (g)";
  std::map<std::string, int> specimen_index;
  std::set<double> step_starts;
  for (const ingest::DesiccatorStep& step : series.steps) {
    if (!specimen_index.count(step.specimen_id)) {
      const int i = static_cast<int>(specimen_index.size());
      specimen_index[step.specimen_id] = i;
    }
  }
  for (const ingest::DesiccatorStep& step : series.steps) {
    const int i = specimen_index[step.specimen_id];
    plot::Series s;
    s.marker.shape = static_cast<plot::MarkerShape>(i % 5);
    s.marker.color = palette::Series(i);
    s.marker.size_pt = 3.4;
    s.marker.filled = i % 2 == 0;
    s.line = plot::LineStyle{palette::Series(i), 0.7, {}};
    for (const ingest::Weighing& wgh : step.weighings) {
      s.x.push_back(wgh.time_s / kSecondsPerDay);
      s.y.push_back(wgh.mass_g);
    }
    if (!step.weighings.empty()) step_starts.insert(step.weighings.front().time_s / kSecondsPerDay);
    bool first = true;
    for (const plot::Series& other : fig.series)
      first = first && other.marker.color.r != s.marker.color.r;
    if (first) s.legend = "specimen " + step.specimen_id;
    fig.series.push_back(std::move(s));
  }
  for (double t : step_starts) fig.events.push_back({t, palette::kSlate.Tint(0.45), 0.5});
  fig.caption =
      "Each line joins the weighings of one specimen within one humidity step; "
      "dashed lines mark the start of a step.";
  return fig;
}

}  // namespace

void BuildKineticsSection(const SectionContext& ctx, Section& section) {
  if (ctx.inputs.ingested == nullptr) return;
  for (const ingest::VaporLog& log : ctx.inputs.ingested->vapor_logs) {
    section.blocks.emplace_back(OnePanel("kinetics_" + log.dataset_id, LogFigure(ctx, log)));
  }
  for (const ingest::DesiccatorSeries& series : ctx.inputs.ingested->desiccator_series) {
    section.blocks.emplace_back(OnePanel("kinetics_" + series.dataset_id, SeriesFigure(series)));
  }
}

}  // namespace sorbtrace::report::internal
