#include "pipeline/report/plot/plot.h"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <utility>

#include "pipeline/report/plot/text.h"

namespace sorbtrace::report::internal::plot {
namespace {

bool Usable(double value, Scale scale) {
  return std::isfinite(value) && (scale == Scale::kLinear || value > 0.0);
}

// Maps data values of one axis to page coordinates.
struct Mapping {
  Scale scale = Scale::kLinear;
  double min = 0.0;
  double max = 1.0;
  double page_low = 0.0;
  double page_high = 1.0;
  double operator()(double value) const {
    double t = 0.0;
    if (scale == Scale::kLog10) {
      t = (std::log10(value) - std::log10(min)) / (std::log10(max) - std::log10(min));
    } else {
      t = (value - min) / (max - min);
    }
    return page_low + t * (page_high - page_low);
  }
};

// Collects the extent of values (with error bars) for automatic ranges.
struct Extent {
  double low = std::numeric_limits<double>::infinity();
  double high = -std::numeric_limits<double>::infinity();
  void Add(double value, Scale scale) {
    if (!Usable(value, scale)) return;
    low = std::min(low, value);
    high = std::max(high, value);
  }
  bool empty() const { return !(low <= high); }
};

Ticks AxisTicks(const Axis& axis, Extent extent) {
  if (axis.scale == Scale::kLog10) {
    double low = axis.min.value_or(extent.empty() ? 1.0 : extent.low);
    double high = axis.max.value_or(extent.empty() ? 10.0 : extent.high);
    if (!(low > 0.0)) low = 1.0;
    if (!(high > low)) high = low * 10.0;
    if (axis.min.has_value() && axis.max.has_value()) return LogTicks(low, high, true);
    Ticks ticks = CloseLogTicks(low, high);
    if (axis.min || axis.max) {  // a fixed end stays where the caller put it
      ticks = LogTicks(axis.min.value_or(ticks.axis_min), axis.max.value_or(ticks.axis_max), true);
    }
    return ticks;
  }
  double low = extent.empty() ? 0.0 : extent.low;
  double high = extent.empty() ? 1.0 : extent.high;
  if (axis.include_zero) {
    low = std::min(low, 0.0);
    high = std::max(high, 0.0);
  }
  if (axis.min) low = *axis.min;
  if (axis.max) high = *axis.max;
  if (!(high > low)) {
    const double pad = low == 0.0 ? 1.0 : std::abs(low) * 0.1;
    low -= pad;
    high += pad;
  }
  if (axis.min && axis.max) return NiceLinearTicksWithin(low, high, axis.num_ticks);
  Ticks ticks = CloseLinearTicks(low, high, axis.num_ticks);
  // A fixed end stays where the caller put it.
  if (axis.min || axis.max) {
    const double fixed_low = axis.min.value_or(ticks.axis_min);
    const double fixed_high = axis.max.value_or(ticks.axis_max);
    Ticks within = NiceLinearTicksWithin(fixed_low, fixed_high, axis.num_ticks);
    return within;
  }
  return ticks;
}

std::string TickLabel(const Axis& axis, const Ticks& ticks, double value) {
  return axis.scale == Scale::kLog10 ? FormatLogTick(value)
                                     : FormatTick(value, ticks.fraction_digits);
}

// Minor ticks of a log axis: 2..9 times each decade inside the range.
std::vector<double> LogMinorTicks(double min, double max) {
  std::vector<double> out;
  const int first = static_cast<int>(std::floor(std::log10(min)));
  const int last = static_cast<int>(std::ceil(std::log10(max)));
  for (int decade = first; decade <= last; ++decade) {
    for (int m = 2; m <= 9; ++m) {
      const double value = m * std::pow(10.0, decade);
      if (value > min && value < max) out.push_back(value);
    }
  }
  return out;
}

void MarkerPath(Canvas& canvas, MarkerShape shape, double x, double y, double size) {
  const double h = size / 2.0;
  switch (shape) {
    case MarkerShape::kCircle:
      canvas.Circle(x, y, h);
      break;
    case MarkerShape::kSquare:
      // Same visual weight as the circle: a square of side 0.9 * size.
      canvas.Rectangle({x - 0.45 * size, y - 0.45 * size, 0.9 * size, 0.9 * size});
      break;
    case MarkerShape::kTriangleUp:
      canvas.MoveTo(x, y + 1.15 * h);
      canvas.LineTo(x + 1.05 * h, y - 0.75 * h);
      canvas.LineTo(x - 1.05 * h, y - 0.75 * h);
      canvas.ClosePath();
      break;
    case MarkerShape::kTriangleDown:
      canvas.MoveTo(x, y - 1.15 * h);
      canvas.LineTo(x + 1.05 * h, y + 0.75 * h);
      canvas.LineTo(x - 1.05 * h, y + 0.75 * h);
      canvas.ClosePath();
      break;
    case MarkerShape::kDiamond:
      canvas.MoveTo(x, y + 1.2 * h);
      canvas.LineTo(x + 1.0 * h, y);
      canvas.LineTo(x, y - 1.2 * h);
      canvas.LineTo(x - 1.0 * h, y);
      canvas.ClosePath();
      break;
    case MarkerShape::kNone:
      break;
  }
}

void DrawMarker(Canvas& canvas, const MarkerStyle& style, double x, double y) {
  if (style.shape == MarkerShape::kNone) return;
  canvas.SetDash({});
  canvas.SetStroke(style.color, 0.7);
  canvas.SetFill(style.filled ? style.color : Color{1.0, 1.0, 1.0});
  MarkerPath(canvas, style.shape, x, y, style.size_pt);
  canvas.FillStroke();
}

void DrawPolyline(Canvas& canvas, const std::vector<std::pair<double, double>>& points,
                  const LineStyle& style) {
  if (points.size() < 2) return;
  canvas.SetStroke(style.color, style.width_pt);
  canvas.SetDash(style.dash_pt);
  canvas.SetRoundJoin();
  canvas.MoveTo(points[0].first, points[0].second);
  for (size_t i = 1; i < points.size(); ++i) canvas.LineTo(points[i].first, points[i].second);
  canvas.Stroke();
  canvas.SetDash({});
}

struct LegendEntry {
  std::string text;
  const Series* series = nullptr;
  const Band* band = nullptr;
};

}  // namespace

// ---- Ticks -----------------------------------------------------------------------------------
double NiceNumber(double x, bool round) {
  if (!(x > 0.0) || !std::isfinite(x)) return 1.0;
  const double exponent = std::floor(std::log10(x));
  const double power = std::pow(10.0, exponent);
  const double fraction = x / power;  // in [1, 10)
  double nice = 10.0;
  // Heckbert (1990): rounding thresholds 1.5, 3, 7; ceiling thresholds 1, 2, 5.
  if (round) {
    if (fraction < 1.5) {
      nice = 1.0;
    } else if (fraction < 3.0) {
      nice = 2.0;
    } else if (fraction < 7.0) {
      nice = 5.0;
    }
  } else {
    if (fraction <= 1.0) {
      nice = 1.0;
    } else if (fraction <= 2.0) {
      nice = 2.0;
    } else if (fraction <= 5.0) {
      nice = 5.0;
    }
  }
  return nice * power;
}

namespace {
// Relative slack when dividing a range end by the step, so that 0.6 / 0.2 = 2.9999999999999996
// still counts as 3 whole steps.
constexpr double kStepSlack = 1e-9;

int FractionDigits(double step) {
  return std::max(0, -static_cast<int>(std::floor(std::log10(step) + kStepSlack)));
}

// Ticks k * step for integer k in [k_low, k_high], each rounded to the step's decimals.
std::vector<double> TickValues(double k_low, double k_high, double step, int digits) {
  std::vector<double> values;
  const double scale = std::pow(10.0, digits);
  for (double k = k_low; k <= k_high + 0.5 && values.size() < 200; k += 1.0) {
    double value = k * step;
    if (digits > 0 && digits < 15) value = std::round(value * scale) / scale;
    values.push_back(value == 0.0 ? 0.0 : value);  // no -0
  }
  return values;
}
}  // namespace

Ticks NiceLinearTicks(double data_min, double data_max, int num_ticks) {
  Ticks ticks;
  if (!(data_max > data_min)) data_max = data_min + 1.0;
  const int n = std::max(num_ticks, 2);
  const double range = NiceNumber(data_max - data_min, false);
  const double step = NiceNumber(range / (n - 1), true);
  const double k_low = std::floor(data_min / step + kStepSlack);
  const double k_high = std::ceil(data_max / step - kStepSlack);
  ticks.fraction_digits = FractionDigits(step);
  ticks.values = TickValues(k_low, k_high, step, ticks.fraction_digits);
  ticks.axis_min = ticks.values.front();
  ticks.axis_max = ticks.values.back();
  return ticks;
}

Ticks CloseLinearTicks(double data_min, double data_max, int num_ticks) {
  Ticks heckbert = NiceLinearTicks(data_min, data_max, num_ticks);
  if (!(data_max > data_min)) return heckbert;
  const int n = std::max(num_ticks, 2);
  for (int target = n; target <= 2 * n; ++target) {
    Ticks t = NiceLinearTicks(data_min, data_max, target);
    const double length = t.axis_max - t.axis_min;
    const double slack = length - (data_max - data_min);
    if (slack <= kMaxAxisSlack * length && t.values.size() <= 2 * static_cast<size_t>(n)) {
      return t;
    }
  }
  return heckbert;
}

Ticks CloseLogTicks(double data_min, double data_max) {
  if (!(data_min > 0.0)) data_min = 1.0;
  if (!(data_max > data_min)) data_max = data_min * 10.0;
  // The whole mantissas 1..10 of the decades holding each end.
  const double low_power = std::pow(10.0, std::floor(std::log10(data_min) + kStepSlack));
  const double high_power = std::pow(10.0, std::floor(std::log10(data_max) - kStepSlack));
  const double low = std::floor(data_min / low_power * (1.0 + kStepSlack)) * low_power;
  const double high = std::ceil(data_max / high_power * (1.0 - kStepSlack)) * high_power;
  return LogTicks(low, high, true);
}

Ticks NiceLinearTicksWithin(double axis_min, double axis_max, int num_ticks) {
  Ticks ticks;
  if (!(axis_max > axis_min)) axis_max = axis_min + 1.0;
  const int n = std::max(num_ticks, 2);
  const double range = NiceNumber(axis_max - axis_min, false);
  const double step = NiceNumber(range / (n - 1), true);
  const double k_low = std::ceil(axis_min / step - kStepSlack);
  const double k_high = std::floor(axis_max / step + kStepSlack);
  ticks.axis_min = axis_min;
  ticks.axis_max = axis_max;
  ticks.fraction_digits = FractionDigits(step);
  ticks.values = TickValues(k_low, k_high, step, ticks.fraction_digits);
  return ticks;
}

Ticks LogTicks(double data_min, double data_max, bool tight) {
  Ticks ticks;
  if (!(data_min > 0.0)) data_min = 1.0;
  if (!(data_max > data_min)) data_max = data_min * 10.0;
  const int first = static_cast<int>(std::floor(std::log10(data_min) + kStepSlack));
  const int last = static_cast<int>(std::ceil(std::log10(data_max) - kStepSlack));
  ticks.axis_min = tight ? data_min : std::pow(10.0, first);
  ticks.axis_max = tight ? data_max : std::pow(10.0, std::max(last, first + 1));
  const double decades = std::log10(ticks.axis_max / ticks.axis_min);
  std::vector<int> mantissas = {1};
  if (decades < 1.0) {
    mantissas = {1, 2, 3, 4, 5, 6, 7, 8, 9};
  } else if (decades < 3.0) {
    mantissas = {1, 2, 5};
  }
  for (int decade = first; decade <= last; ++decade) {
    for (int m : mantissas) {
      const double value = m * std::pow(10.0, decade);
      if (value >= ticks.axis_min * (1.0 - kStepSlack) &&
          value <= ticks.axis_max * (1.0 + kStepSlack)) {
        ticks.values.push_back(value);
      }
    }
  }
  ticks.fraction_digits = std::max(0, -first);
  return ticks;
}

std::string FormatTick(double value, int fraction_digits) {
  std::string text = fmt::format("{:.{}f}", value, std::clamp(fraction_digits, 0, 12));
  if (text.find_first_not_of("-0.") == std::string::npos && text.front() == '-') {
    text.erase(0, 1);  // "-0.0" -> "0.0"
  }
  return text;
}

std::string FormatLogTick(double value) {
  if (!(value > 0.0)) return "";
  const int exponent = static_cast<int>(std::floor(std::log10(value) + kStepSlack));
  const double mantissa = value / std::pow(10.0, exponent);
  const int m = static_cast<int>(std::lround(mantissa));
  if (exponent >= -3 && exponent <= 4) {
    return FormatTick(m * std::pow(10.0, exponent), std::max(0, -exponent));
  }
  const std::string power = "10" + Superscript(exponent);
  return m == 1 ? power : fmt::format("{}·{}", m, power);
}

// ---- Figures ---------------------------------------------------------------------------------
double CaptionHeight(const Canvas& canvas, const Figure& figure, double width_pt) {
  if (figure.caption.empty()) return 0.0;
  const auto lines = canvas.Wrap(figure.caption, figure.font_size_pt, width_pt);
  return static_cast<double>(lines.size()) * figure.font_size_pt * 1.3 + 4.0;
}

namespace {
// Extent of the data of the primary axes (series with error bars, bands).
void FigureExtents(const Figure& figure, Extent* x_extent, Extent* y_extent, Extent* r_extent) {
  const Scale y_right_scale = figure.y_right ? figure.y_right->scale : Scale::kLinear;
  for (const Series& s : figure.series) {
    Extent& ye = s.right_axis ? *r_extent : *y_extent;
    const Scale ys = s.right_axis ? y_right_scale : figure.y.scale;
    for (size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
      const double xe = i < s.x_error.size() ? s.x_error[i] : 0.0;
      const double yerr = i < s.y_error.size() ? s.y_error[i] : 0.0;
      if (!std::isfinite(s.x[i]) || !std::isfinite(s.y[i])) continue;
      x_extent->Add(s.x[i] - xe, figure.x.scale);
      x_extent->Add(s.x[i] + xe, figure.x.scale);
      x_extent->Add(s.x[i], figure.x.scale);
      ye.Add(s.y[i] - yerr, ys);
      ye.Add(s.y[i] + yerr, ys);
      ye.Add(s.y[i], ys);
    }
  }
  for (const Band& b : figure.bands) {
    for (size_t i = 0; i < b.x.size(); ++i) {
      x_extent->Add(b.x[i], figure.x.scale);
      if (i < b.low.size()) y_extent->Add(b.low[i], figure.y.scale);
      if (i < b.high.size()) y_extent->Add(b.high[i], figure.y.scale);
    }
  }
}

double YTickLabelWidth(const Canvas& canvas, const Figure& figure, const Ticks& y_ticks) {
  double width = 0.0;
  if (!figure.y.tick_labels) return width;
  for (double v : y_ticks.values) {
    width = std::max(width, canvas.TextWidth(TickLabel(figure.y, y_ticks, v), figure.font_size_pt));
  }
  return width;
}
}  // namespace

double AutomaticLeftPadding(const Canvas& canvas, const Figure& figure) {
  Extent x_extent, y_extent, r_extent;
  FigureExtents(figure, &x_extent, &y_extent, &r_extent);
  const Ticks y_ticks = AxisTicks(figure.y, y_extent);
  return YTickLabelWidth(canvas, figure, y_ticks) + 4.0 +
         (figure.y.label.empty() ? 0.0 : figure.font_size_pt * 1.5);
}

namespace {

// Phases 1 and 2 of DrawFigure: ranges, ticks and where the frame goes.
struct FigurePlan {
  Ticks x_ticks, y_ticks, r_ticks;
  Scale y_right_scale = Scale::kLinear;
  Rect frame;
  double left_pad = 0.0;
  double r_label_width = 0.0;
  double caption_height = 0.0;
  Mapping mx, my, mr;
};

FigurePlan PlanFigure(const Canvas& canvas, const Figure& figure, const Rect& outer) {
  const double fs = figure.font_size_pt;
  FigurePlan p;
  // 1. Ranges and ticks.
  Extent x_extent, y_extent, r_extent;
  p.y_right_scale = figure.y_right ? figure.y_right->scale : Scale::kLinear;
  FigureExtents(figure, &x_extent, &y_extent, &r_extent);
  p.x_ticks = AxisTicks(figure.x, x_extent);
  p.y_ticks = AxisTicks(figure.y, y_extent);
  if (figure.y_right) p.r_ticks = AxisTicks(*figure.y_right, r_extent);

  // 2. Frame inside the outer box, leaving room for labels.
  const double y_label_width = YTickLabelWidth(canvas, figure, p.y_ticks);
  if (figure.y_right) {
    for (double v : p.r_ticks.values) {
      p.r_label_width =
          std::max(p.r_label_width, canvas.TextWidth(TickLabel(*figure.y_right, p.r_ticks, v), fs));
    }
  }
  p.left_pad = figure.left_padding_pt > 0.0
                   ? figure.left_padding_pt
                   : y_label_width + 4.0 + (figure.y.label.empty() ? 0.0 : fs * 1.5);
  const double right_pad =
      figure.y_right ? p.r_label_width + 4.0 + (figure.y_right->label.empty() ? 0.0 : fs * 1.5)
                     : fs * 1.2;
  p.caption_height = CaptionHeight(canvas, figure, outer.width);
  const double bottom_pad = (figure.x.tick_labels ? fs * 1.45 : 2.0) +
                            (figure.x.label.empty() ? 0.0 : fs * 1.5) + p.caption_height;
  double top_pad = fs * 0.8;
  if (!figure.title.empty()) top_pad += fs * 1.7;
  if (figure.x_top) top_pad += fs * 1.45 + (figure.x_top->label.empty() ? 0.0 : fs * 1.4);
  p.frame = {outer.x + p.left_pad, outer.y + bottom_pad,
             std::max(10.0, outer.width - p.left_pad - right_pad),
             std::max(10.0, outer.height - bottom_pad - top_pad)};
  const Rect& f = p.frame;
  p.mx = {figure.x.scale, p.x_ticks.axis_min, p.x_ticks.axis_max, f.x, f.right()};
  p.my = {figure.y.scale, p.y_ticks.axis_min, p.y_ticks.axis_max, f.y, f.top()};
  p.mr = {p.y_right_scale, p.r_ticks.axis_min, p.r_ticks.axis_max, f.y, f.top()};
  return p;
}

// 3. Grid (beneath the data).
void DrawGrid(Canvas& canvas, const Figure& figure, const FigurePlan& p) {
  canvas.FillRect(p.frame, Color{1.0, 1.0, 1.0});
  if (figure.x.grid) {
    for (double v : p.x_ticks.values) {
      const double px = p.mx(v);
      canvas.Line(px, p.frame.y, px, p.frame.top(), 0.4, palette::kGrid);
    }
  }
  if (figure.y.grid) {
    for (double v : p.y_ticks.values) {
      const double py = p.my(v);
      canvas.Line(p.frame.x, py, p.frame.right(), py, 0.4, palette::kGrid);
    }
  }
}

void DrawBands(Canvas& canvas, const Figure& figure, const FigurePlan& p) {
  for (const Band& band : figure.bands) {
    std::vector<std::pair<double, double>> upper, lower;
    for (size_t i = 0; i < band.x.size() && i < band.low.size() && i < band.high.size(); ++i) {
      if (!Usable(band.x[i], figure.x.scale) || !Usable(band.low[i], figure.y.scale) ||
          !Usable(band.high[i], figure.y.scale)) {
        continue;
      }
      upper.emplace_back(p.mx(band.x[i]), p.my(band.high[i]));
      lower.emplace_back(p.mx(band.x[i]), p.my(band.low[i]));
    }
    if (upper.size() < 2) continue;
    canvas.SetFill(band.fill);
    canvas.MoveTo(upper[0].first, upper[0].second);
    for (size_t i = 1; i < upper.size(); ++i) canvas.LineTo(upper[i].first, upper[i].second);
    for (size_t i = lower.size(); i-- > 0;) canvas.LineTo(lower[i].first, lower[i].second);
    canvas.ClosePath();
    canvas.Fill();
  }
}

void DrawEventsAndRules(Canvas& canvas, const Figure& figure, const FigurePlan& p) {
  for (const EventLine& event : figure.events) {
    if (!Usable(event.x, figure.x.scale)) continue;
    canvas.SetDash({2.0, 2.0});
    canvas.Line(p.mx(event.x), p.frame.y, p.mx(event.x), p.frame.top(), event.width_pt,
                event.color);
    canvas.SetDash({});
  }
  for (double rule : figure.horizontal_rules) {
    if (!Usable(rule, figure.y.scale)) continue;
    canvas.Line(p.frame.x, p.my(rule), p.frame.right(), p.my(rule), 0.6, palette::kSlate);
  }
}

void DrawErrorBars(Canvas& canvas, const Figure& figure, const FigurePlan& p, const Series& s) {
  const Mapping& ym = s.right_axis ? p.mr : p.my;
  const Scale ys = s.right_axis ? p.y_right_scale : figure.y.scale;
  canvas.SetDash({});
  const double cap = s.marker.size_pt * 0.45;
  const Color c = s.marker.color;
  for (size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
    if (!Usable(s.x[i], figure.x.scale) || !Usable(s.y[i], ys)) continue;
    const double px = p.mx(s.x[i]);
    const double py = ym(s.y[i]);
    if (i < s.y_error.size() && s.y_error[i] > 0.0) {
      const double lo = s.y[i] - s.y_error[i];
      const double y0 = Usable(lo, ys) ? ym(lo) : p.frame.y;
      const double y1 = ym(s.y[i] + s.y_error[i]);
      canvas.Line(px, y0, px, y1, 0.6, c);
      canvas.Line(px - cap, y0, px + cap, y0, 0.6, c);
      canvas.Line(px - cap, y1, px + cap, y1, 0.6, c);
    }
    if (i < s.x_error.size() && s.x_error[i] > 0.0) {
      const double lo = s.x[i] - s.x_error[i];
      const double x0 = Usable(lo, figure.x.scale) ? p.mx(lo) : p.frame.x;
      const double x1 = p.mx(s.x[i] + s.x_error[i]);
      canvas.Line(x0, py, x1, py, 0.6, c);
      canvas.Line(x0, py - cap, x0, py + cap, 0.6, c);
      canvas.Line(x1, py - cap, x1, py + cap, 0.6, c);
    }
  }
}

// 4. Data, clipped to the frame; returns the page positions of the data (for the legend).
std::vector<std::pair<double, double>> DrawData(Canvas& canvas, const Figure& figure,
                                                const FigurePlan& p) {
  canvas.PushClip(p.frame);
  DrawBands(canvas, figure, p);
  DrawEventsAndRules(canvas, figure, p);
  std::vector<std::pair<double, double>> occupied;
  for (const Series& s : figure.series) {
    const Mapping& ym = s.right_axis ? p.mr : p.my;
    const Scale ys = s.right_axis ? p.y_right_scale : figure.y.scale;
    std::vector<std::pair<double, double>> points;
    for (size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
      if (!Usable(s.x[i], figure.x.scale) || !Usable(s.y[i], ys)) continue;
      points.emplace_back(p.mx(s.x[i]), ym(s.y[i]));
    }
    if (s.line) DrawPolyline(canvas, points, *s.line);
    occupied.insert(occupied.end(), points.begin(), points.end());
    // Error bars, then markers on top.
    if (!s.x_error.empty() || !s.y_error.empty()) DrawErrorBars(canvas, figure, p, s);
    if (s.marker.shape != MarkerShape::kNone) {
      if (s.marker_indices.empty()) {
        for (const auto& [px, py] : points) DrawMarker(canvas, s.marker, px, py);
      }
      for (size_t i : s.marker_indices) {
        if (i >= s.x.size() || i >= s.y.size()) continue;
        if (!Usable(s.x[i], figure.x.scale) || !Usable(s.y[i], ys)) continue;
        DrawMarker(canvas, s.marker, p.mx(s.x[i]), ym(s.y[i]));
      }
    }
  }
  for (const Band& band : figure.bands) {
    for (size_t i = 0; i < band.x.size() && i < band.high.size(); ++i) {
      if (Usable(band.x[i], figure.x.scale) && Usable(band.high[i], figure.y.scale)) {
        occupied.emplace_back(p.mx(band.x[i]), p.my(band.high[i]));
      }
    }
  }
  canvas.PopClip();
  return occupied;
}

constexpr double kTickLength_pt = 3.0;

// 5a. Frame, ticks and tick labels of the bottom, left and right axes.
void DrawFrameAndTicks(Canvas& canvas, const Figure& figure, const FigurePlan& p) {
  const double fs = figure.font_size_pt;
  const double tick = kTickLength_pt;
  const Rect& frame = p.frame;
  canvas.StrokeRect(frame, 0.7, palette::kInk);
  for (double v : p.x_ticks.values) {
    const double px = p.mx(v);
    canvas.Line(px, frame.y, px, frame.y + tick, 0.6, palette::kInk);
    if (!figure.x_top) canvas.Line(px, frame.top(), px, frame.top() - tick, 0.6, palette::kInk);
    if (figure.x.tick_labels) {
      canvas.Text(px, frame.y - fs - 2.0, TickLabel(figure.x, p.x_ticks, v), fs,
                  Canvas::Align::kCenter);
    }
  }
  for (double v : p.y_ticks.values) {
    const double py = p.my(v);
    canvas.Line(frame.x, py, frame.x + tick, py, 0.6, palette::kInk);
    if (!figure.y_right)
      canvas.Line(frame.right(), py, frame.right() - tick, py, 0.6, palette::kInk);
    if (figure.y.tick_labels) {
      canvas.Text(frame.x - 3.0, py - fs * 0.35, TickLabel(figure.y, p.y_ticks, v), fs,
                  Canvas::Align::kRight);
    }
  }
  if (figure.x.scale == Scale::kLog10) {
    for (double v : LogMinorTicks(p.x_ticks.axis_min, p.x_ticks.axis_max)) {
      canvas.Line(p.mx(v), frame.y, p.mx(v), frame.y + tick * 0.55, 0.4, palette::kInk);
    }
  }
  if (figure.y.scale == Scale::kLog10) {
    for (double v : LogMinorTicks(p.y_ticks.axis_min, p.y_ticks.axis_max)) {
      canvas.Line(frame.x, p.my(v), frame.x + tick * 0.55, p.my(v), 0.4, palette::kInk);
    }
  }
  if (figure.y_right) {
    for (double v : p.r_ticks.values) {
      const double py = p.mr(v);
      canvas.Line(frame.right(), py, frame.right() - tick, py, 0.6, palette::kInk);
      canvas.Text(frame.right() + 3.0, py - fs * 0.35, TickLabel(*figure.y_right, p.r_ticks, v),
                  fs);
    }
    if (!figure.y_right->label.empty()) {
      canvas.VerticalText(frame.right() + p.r_label_width + 4.0 + fs * 1.1,
                          frame.y + frame.height / 2.0, figure.y_right->label, fs);
    }
  }
}

struct TickCandidate {
  double value;
  int priority;
};

// Tick candidates of the secondary axis in secondary units, most wanted first: decades, then
// 5 and 2 times a decade (log), or every other nice tick (linear).
std::vector<TickCandidate> SecondaryCandidates(const SecondaryAxis& top, const Extent& extent,
                                               int* digits) {
  std::vector<TickCandidate> candidates;
  *digits = 0;
  if (top.scale == Scale::kLog10) {
    const int first = static_cast<int>(std::floor(std::log10(extent.low)));
    const int last = static_cast<int>(std::ceil(std::log10(extent.high)));
    for (int decade = first; decade <= last; ++decade) {
      const double p = std::pow(10.0, decade);
      candidates.push_back({p, 0});
      candidates.push_back({5.0 * p, 1});
      candidates.push_back({2.0 * p, 2});
    }
  } else {
    const Ticks t = NiceLinearTicksWithin(extent.low, extent.high, 8);
    *digits = t.fraction_digits;
    for (size_t i = 0; i < t.values.size(); ++i) {
      candidates.push_back({t.values[i], static_cast<int>(i % 2)});
    }
  }
  std::stable_sort(
      candidates.begin(), candidates.end(),
      [](const TickCandidate& a, const TickCandidate& b) { return a.priority < b.priority; });
  return candidates;
}

// 5b. Secondary (top) axis through its mapping.
void DrawSecondaryAxis(Canvas& canvas, const Figure& figure, const FigurePlan& p) {
  if (!figure.x_top || !figure.x_top->to_secondary || !figure.x_top->from_secondary) return;
  const double fs = figure.font_size_pt;
  const Rect& frame = p.frame;
  const SecondaryAxis& top = *figure.x_top;
  Extent s_extent;
  constexpr int kSamples = 256;
  for (int i = 0; i <= kSamples; ++i) {
    const double x = p.x_ticks.axis_min + (p.x_ticks.axis_max - p.x_ticks.axis_min) * i / kSamples;
    s_extent.Add(top.to_secondary(x), top.scale);
  }
  if (!s_extent.empty()) {
    int digits = 0;
    std::vector<std::pair<double, double>> accepted;  // (page x, half label width)
    for (const TickCandidate& c : SecondaryCandidates(top, s_extent, &digits)) {
      const double x = top.from_secondary(c.value);
      if (!std::isfinite(x) || x < p.x_ticks.axis_min || x > p.x_ticks.axis_max) continue;
      const double px = p.mx(x);
      const std::string label =
          top.scale == Scale::kLog10 ? FormatLogTick(c.value) : FormatTick(c.value, digits);
      const double half = canvas.TextWidth(label, fs) / 2.0;
      // Labels stay within the frame's width (none crowding the corners).
      bool fits = px - half >= frame.x + 2.0 && px + half <= frame.right() - 2.0;
      for (const auto& [ax, ah] : accepted) {
        if (std::abs(ax - px) < std::max(top.min_spacing_pt, ah + half + 4.0)) fits = false;
      }
      if (!fits) continue;
      accepted.emplace_back(px, half);
      canvas.Line(px, frame.top(), px, frame.top() - kTickLength_pt, 0.6, palette::kInk);
      canvas.Text(px, frame.top() + 4.0, label, fs, Canvas::Align::kCenter);
    }
  }
  if (!top.label.empty()) {
    canvas.Text(frame.x + frame.width / 2.0, frame.top() + fs * 1.45 + 2.0, top.label, fs,
                Canvas::Align::kCenter);
  }
}

// 5c. Axis labels, title, caption.
void DrawLabels(Canvas& canvas, const Figure& figure, const FigurePlan& p, const Rect& outer) {
  const double fs = figure.font_size_pt;
  const Rect& frame = p.frame;
  if (!figure.x.label.empty()) {
    const double base = frame.y - (figure.x.tick_labels ? fs * 1.45 : 2.0) - fs * 1.25;
    canvas.Text(frame.x + frame.width / 2.0, base, figure.x.label, fs, Canvas::Align::kCenter);
  }
  if (!figure.y.label.empty()) {
    canvas.VerticalText(frame.x - p.left_pad + fs * 1.05, frame.y + frame.height / 2.0,
                        figure.y.label, fs);
  }
  if (!figure.title.empty()) {
    canvas.Text(outer.x, outer.top() - fs * 1.2, figure.title, fs * 1.1, Canvas::Align::kLeft,
                true);
  }
  if (!figure.caption.empty()) {
    const auto lines = canvas.Wrap(figure.caption, fs, outer.width);
    double y = outer.y + p.caption_height - 4.0 - fs;
    for (const std::string& line : lines) {
      canvas.Text(outer.x, y, line, fs, Canvas::Align::kLeft, false, palette::kSlate);
      y -= fs * 1.3;
    }
  }
}

std::vector<LegendEntry> LegendEntries(const Figure& figure) {
  std::vector<LegendEntry> entries;
  if (!figure.legend) return entries;
  for (const Series& s : figure.series) {
    if (!s.legend.empty()) entries.push_back({s.legend, &s, nullptr});
  }
  for (const Band& b : figure.bands) {
    if (!b.legend.empty()) entries.push_back({b.legend, nullptr, &b});
  }
  return entries;
}

// The corner (0 top-left, 1 top-right, 2 bottom-right, 3 bottom-left) whose box covers the
// fewest data points, and how many it covers.
std::pair<int, int> EmptiestCorner(const std::array<Rect, 4>& corners,
                                   const std::vector<std::pair<double, double>>& occupied) {
  int best = 0;
  int best_count = std::numeric_limits<int>::max();
  for (int c = 0; c < 4; ++c) {
    const Rect& r = corners[static_cast<size_t>(c)];
    int count = 0;
    for (const auto& [px, py] : occupied) {
      if (px >= r.x - 3.0 && px <= r.right() + 3.0 && py >= r.y - 3.0 && py <= r.top() + 3.0) {
        ++count;
      }
    }
    if (count < best_count) {
      best = c;
      best_count = count;
    }
  }
  return {best, best_count};
}

// A legend taller than this share of its frame is set in more columns, up to kMaxLegendColumns
// (common practice: the legend must not hide the data it explains).
constexpr double kMaxLegendHeightShare = 0.45;
constexpr size_t kMaxLegendColumns = 3;

// 6. Legend in the emptiest corner.
void DrawLegend(Canvas& canvas, const Figure& figure, const FigurePlan& p,
                const std::vector<std::pair<double, double>>& occupied, FigureLayout* layout) {
  const std::vector<LegendEntry> entries = LegendEntries(figure);
  if (entries.empty()) return;
  const Rect& frame = p.frame;
  const double lfs = figure.font_size_pt * 0.95;
  const double row = lfs * 1.45;
  const double sample = 16.0;
  double text_width = 0.0;
  for (const LegendEntry& e : entries)
    text_width = std::max(text_width, canvas.TextWidth(e.text, lfs));
  // Entries in as many columns (at most kMaxLegendColumns, as the frame's width allows) as
  // keep the legend within kMaxLegendHeightShare of the frame's height.
  const double column_width = 6.0 + sample + 4.0 + text_width + 6.0;
  size_t columns = 1;
  const auto rows_in = [&entries](size_t n_columns) {
    const size_t rows = (entries.size() + n_columns - 1) / n_columns;  // ceiling
    return static_cast<double>(rows);
  };
  while (columns < kMaxLegendColumns &&
         4.0 + row * rows_in(columns) > kMaxLegendHeightShare * frame.height &&
         column_width * static_cast<double>(columns + 1) <= frame.width - 8.0) {
    ++columns;
  }
  const size_t per_column = (entries.size() + columns - 1) / columns;
  const double width = std::min(frame.width - 8.0, column_width * static_cast<double>(columns));
  const double height = std::min(frame.height - 8.0, 4.0 + row * static_cast<double>(per_column));
  const double inset = 5.0;
  const std::array<Rect, 4> corners = {
      Rect{frame.x + inset, frame.top() - inset - height, width, height},
      Rect{frame.right() - inset - width, frame.top() - inset - height, width, height},
      Rect{frame.right() - inset - width, frame.y + inset, width, height},
      Rect{frame.x + inset, frame.y + inset, width, height}};
  const auto [best, best_count] = EmptiestCorner(corners, occupied);
  const Rect box = corners[static_cast<size_t>(best)];
  layout->legend = box;
  layout->legend_corner = best;
  layout->legend_points_covered = best_count;
  canvas.FillRect(box, Color{1.0, 1.0, 1.0});
  canvas.StrokeRect(box, 0.4, palette::kSlate);
  for (size_t k = 0; k < entries.size(); ++k) {
    const LegendEntry& e = entries[k];
    const size_t column = k / per_column;  // entries fill a column, then the next
    const double sx = box.x + 6.0 + column_width * static_cast<double>(column);
    const double y = box.top() - 2.0 - row / 2.0 - row * static_cast<double>(k % per_column);
    if (e.band != nullptr) {
      canvas.FillRect({sx, y - lfs * 0.4, sample, lfs * 0.8}, e.band->fill);
    } else if (e.series != nullptr) {
      if (e.series->line) DrawPolyline(canvas, {{sx, y}, {sx + sample, y}}, *e.series->line);
      if (e.series->marker.shape != MarkerShape::kNone) {
        DrawMarker(canvas, e.series->marker, sx + sample / 2.0, y);
      }
    }
    canvas.Text(sx + sample + 4.0, y - lfs * 0.35, e.text, lfs);
  }
}

}  // namespace

FigureLayout DrawFigure(Canvas& canvas, const Figure& figure, const Rect& outer) {
  const FigurePlan plan = PlanFigure(canvas, figure, outer);
  FigureLayout layout;
  layout.frame = plan.frame;
  layout.x_axis_min = plan.x_ticks.axis_min;
  layout.x_axis_max = plan.x_ticks.axis_max;
  layout.y_axis_min = plan.y_ticks.axis_min;
  layout.y_axis_max = plan.y_ticks.axis_max;
  DrawGrid(canvas, figure, plan);
  const std::vector<std::pair<double, double>> occupied = DrawData(canvas, figure, plan);
  DrawFrameAndTicks(canvas, figure, plan);
  DrawSecondaryAxis(canvas, figure, plan);
  DrawLabels(canvas, figure, plan, outer);
  DrawLegend(canvas, figure, plan, occupied, &layout);
  return layout;
}

}  // namespace sorbtrace::report::internal::plot
