// Plot engine of the report stage: vector figures drawn through a Canvas (canvas.h: a PDF
// page through libharu, or an SVG element for the HTML report).
// Everything a datasheet figure needs and nothing more: axes with "nice" tick values
// (Heckbert, "Nice numbers for graph labels", Graphics Gems, 1990), linear and log10 scales,
// grid, a secondary axis whose ticks are computed through a mapping function (e.g. capillary
// pressure along a relative-humidity axis), an independent right-hand axis (e.g. RH beside a
// mass axis), markers of distinct shapes that survive greyscale printing, error bars in x
// and y, polylines, shaded bands, vertical event lines, a legend placed in the corner where
// it covers the fewest data points, and a caption. Drawing is clipped to the plot frame.
//
// Coordinates on the page are PDF points (1/72 in), origin bottom-left. Data coordinates are
// whatever the caller plots (already converted to display units, e.g. RH in %).
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "pipeline/report/plot/canvas.h"

namespace sorbtrace::report::internal::plot {

enum class Scale { kLinear, kLog10 };

// ---- Tick values --------------------------------------------------------------------------
// Heckbert's nice number: the "nice" value (1, 2, 5 or 10 times a power of ten) closest to x
// (round = true) or not smaller than x (round = false). x > 0.
double NiceNumber(double x, bool round);

struct Ticks {
  double axis_min = 0.0;  // the axis range (loose: extended to whole ticks)
  double axis_max = 1.0;
  std::vector<double> values;  // tick positions within [axis_min, axis_max]
  int fraction_digits = 0;     // decimals that print every tick exactly
};

// Heckbert's loose labelling of [data_min, data_max] with about num_ticks ticks.
Ticks NiceLinearTicks(double data_min, double data_max, int num_ticks);
// The axis of automatic figures: Heckbert's labelling with the fewest ticks, from num_ticks
// up to twice as many, whose range extends beyond the data by at most kMaxAxisSlack of its
// length (so an axis is never half empty: 0..21 gets 0..25 in steps of 5, not Heckbert's
// 0..30 in steps of 10); Heckbert's own labelling when none does.
inline constexpr double kMaxAxisSlack = 0.25;  // common practice for data graphics
Ticks CloseLinearTicks(double data_min, double data_max, int num_ticks);
// Same, but the range is kept as given (tight); ticks fall inside it.
Ticks NiceLinearTicksWithin(double axis_min, double axis_max, int num_ticks);
// Decades (and 2, 5 between them when the range spans fewer than three decades) for a log10
// axis; the range is widened to whole decades unless `tight`. Requires 0 < min < max.
Ticks LogTicks(double data_min, double data_max, bool tight);
// The log axis of automatic figures: the range widened only to the next whole mantissa
// (1.3..21 -> 1..30, not 1..100), ticks as LogTicks.
Ticks CloseLogTicks(double data_min, double data_max);

// A tick value printed with `fraction_digits` decimals, without "-0" and without binary
// noise (e.g. 0.30000000000000004 prints "0.3").
std::string FormatTick(double value, int fraction_digits);
// Log-axis tick label: 0.001 .. 10000 printed plainly ("0.1", "20"), else "10⁻⁵" style.
std::string FormatLogTick(double value);

// ---- Figure description ---------------------------------------------------------------------
enum class MarkerShape { kCircle, kSquare, kTriangleUp, kDiamond, kTriangleDown, kNone };

struct MarkerStyle {
  MarkerShape shape = MarkerShape::kCircle;
  bool filled = true;
  double size_pt = 4.6;  // width of the marker
  Color color = palette::kTeal;
};

struct LineStyle {
  Color color = palette::kTeal;
  double width_pt = 1.0;
  std::vector<double> dash_pt;  // empty: solid
};

struct Axis {
  std::string label;  // with its unit, e.g. "relative humidity (%)"
  Scale scale = Scale::kLinear;
  std::optional<double> min;  // fixed range; automatic (nice, loose) when unset
  std::optional<double> max;
  int num_ticks = 6;  // target for linear axes
  bool grid = true;
  bool tick_labels = true;
  bool include_zero = false;  // automatic linear ranges start at 0 when true
};

// A second scale for the bottom/top axis, drawn along the top: secondary = to_secondary(x).
// Ticks are chosen in secondary units (1-2-5 on log scales, nice numbers on linear) and
// placed through from_secondary; ticks closer than min_spacing_pt to a neighbour are dropped.
struct SecondaryAxis {
  std::string label;
  Scale scale = Scale::kLog10;
  std::function<double(double)> to_secondary;
  std::function<double(double)> from_secondary;
  double min_spacing_pt = 22.0;
};

// Points (with optional error bars) and/or a polyline through them.
struct Series {
  std::string legend;  // empty: not in the legend
  std::vector<double> x;
  std::vector<double> y;
  std::vector<double> x_error;  // half-widths (same size as x) or empty
  std::vector<double> y_error;
  MarkerStyle marker;  // shape kNone: no markers
  // Indices of the points that get a marker; empty: every point. A smooth curve of many
  // points marks a few of them so that the curve is told apart by its marker shape, not only
  // by its colour (the legend shows the marker with the line).
  std::vector<size_t> marker_indices;
  std::optional<LineStyle> line;
  bool right_axis = false;  // plotted against Figure::y_right
};

// A shaded band between two curves on a common x grid (drawn beneath everything else).
struct Band {
  std::string legend;
  std::vector<double> x;
  std::vector<double> low;
  std::vector<double> high;
  Color fill = palette::kTeal.Tint(0.8);
};

// A vertical line across the frame (e.g. where an equilibrium was detected).
struct EventLine {
  double x = 0.0;
  Color color = palette::kSlate;
  double width_pt = 0.5;
};

struct Figure {
  Axis x;
  Axis y;
  std::optional<Axis> y_right;  // independent right-hand axis for right_axis series
  std::optional<SecondaryAxis> x_top;
  std::vector<Band> bands;
  std::vector<Series> series;
  std::vector<EventLine> events;
  std::vector<double> horizontal_rules;  // y values of thin rules (e.g. 0 in residual plots)
  std::string title;                     // small bold line above the frame (optional)
  std::string caption;                   // wrapped below the axis label (optional)
  bool legend = true;
  double font_size_pt = 7.5;
  // Room left of the frame for tick labels and the y label [pt]; 0 = automatic. Stacked
  // panels sharing an x axis use the same value so their frames line up.
  double left_padding_pt = 0.0;
};

// The automatic left padding DrawFigure would use (for aligning stacked panels).
double AutomaticLeftPadding(const Canvas& canvas, const Figure& figure);

// Where things ended up, for tests and for stacking panels.
struct FigureLayout {
  Rect frame;               // the plot frame
  double x_axis_min = 0.0;  // the final axis ranges
  double x_axis_max = 1.0;
  double y_axis_min = 0.0;
  double y_axis_max = 1.0;
  Rect legend;             // zero size when no legend
  int legend_corner = -1;  // 0 top-left, 1 top-right, 2 bottom-right, 3 bottom-left
  int legend_points_covered = 0;
};

// Draws the figure inside `outer` (labels, legend and caption included), in six phases:
// ranges and ticks, frame placement, grid, clipped data, axes with their labels, legend.
FigureLayout DrawFigure(Canvas& canvas, const Figure& figure, const Rect& outer);

// Height a caption of `text` takes below a figure `width_pt` wide (for page layout).
double CaptionHeight(const Canvas& canvas, const Figure& figure, double width_pt);

}  // namespace sorbtrace::report::internal::plot
