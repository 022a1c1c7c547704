#include "pipeline/report/plot/svg_canvas.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <utility>

namespace sorbtrace::report::internal::plot {
namespace {

// Two decimals of a point (1/7200 in): finer than any screen or printer resolves.
std::string N(double value) {
  std::string text = fmt::format("{:.2f}", value);
  if (text == "-0.00") text = "0.00";
  return text;
}

int Channel(double component) {
  return static_cast<int>(std::lround(std::clamp(component, 0.0, 1.0) * 255.0));
}

}  // namespace

std::string XmlEscape(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (const char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '\'':
        out += "&apos;";
        break;
      case '"':
        out += "&quot;";
        break;
      default:
        // XML 1.0 §2.2: of the C0 controls only tab, line feed and carriage return.
        if (static_cast<unsigned char>(c) < 0x20 && c != '\t' && c != '\n' && c != '\r') break;
        out += c;
    }
  }
  return out;
}

std::string HexColor(Color color) {
  return fmt::format("#{:02x}{:02x}{:02x}", Channel(color.r), Channel(color.g), Channel(color.b));
}

SvgCanvas::SvgCanvas(const Canvas& metrics, double width_pt, double height_pt,
                     std::string id_prefix)
    : metrics_(metrics),
      width_pt_(width_pt),
      height_pt_(height_pt),
      id_prefix_(std::move(id_prefix)) {}

std::string SvgCanvas::Svg(const std::string& title) const {
  std::string out = fmt::format(
      "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 {} {}\" role=\"img\" "
      "aria-labelledby=\"{}-title\" font-family=\"'DejaVu Sans', Verdana, sans-serif\">"
      "<title id=\"{}-title\">{}</title>\n",
      N(width_pt_), N(height_pt_), id_prefix_, id_prefix_, XmlEscape(title));
  out += body_;
  for (int i = 0; i < static_cast<int>(saved_.size()); ++i) out += "</g>\n";
  return out + "</svg>";
}

double SvgCanvas::MeasureText(const std::string& clean, double size_pt, bool bold) const {
  return metrics_.MeasureText(clean, size_pt, bold);
}

void SvgCanvas::ShowText(double x, double y, const std::string& clean, double size_pt, bool bold,
                         Color color, bool vertical) {
  const std::string transform =
      vertical ? fmt::format(" transform=\"rotate(-90 {} {})\"", N(x), N(Y(y))) : "";
  body_ += fmt::format("<text x=\"{}\" y=\"{}\" font-size=\"{}\"{} fill=\"{}\"{}>{}</text>\n", N(x),
                       N(Y(y)), N(size_pt), bold ? " font-weight=\"bold\"" : "", HexColor(color),
                       transform, XmlEscape(clean));
}

void SvgCanvas::SetStroke(Color color, double width_pt) {
  state_.stroke = color;
  state_.stroke_width = width_pt;
}

void SvgCanvas::SetFill(Color color) { state_.fill = color; }

void SvgCanvas::SetDash(const std::vector<double>& dash_pt) {
  state_.dash.clear();
  for (int unit : DashPattern(dash_pt)) {
    state_.dash += (state_.dash.empty() ? "" : " ") + std::to_string(unit);
  }
}

void SvgCanvas::SetRoundJoin() { state_.round_join = true; }

void SvgCanvas::MoveTo(double x, double y) { path_ += "M" + N(x) + " " + N(Y(y)); }
void SvgCanvas::LineTo(double x, double y) { path_ += "L" + N(x) + " " + N(Y(y)); }
void SvgCanvas::ClosePath() { path_ += "Z"; }

void SvgCanvas::Circle(double x, double y, double radius) {
  // Two half-circle arcs: a closed subpath like PDF's circle operator.
  path_ +=
      fmt::format("M{} {}a{} {} 0 1 0 {} 0a{} {} 0 1 0 {} 0Z", N(x - radius), N(Y(y)), N(radius),
                  N(radius), N(2.0 * radius), N(radius), N(radius), N(-2.0 * radius));
}

void SvgCanvas::Rectangle(const Rect& rect) {
  path_ += fmt::format("M{} {}h{}v{}h{}Z", N(rect.x), N(Y(rect.top())), N(rect.width),
                       N(rect.height), N(-rect.width));
}

void SvgCanvas::Paint(bool fill, bool stroke) {
  if (path_.empty()) return;
  std::string attributes =
      fill ? fmt::format(" fill=\"{}\"", HexColor(state_.fill)) : std::string(" fill=\"none\"");
  if (stroke) {
    attributes += fmt::format(" stroke=\"{}\" stroke-width=\"{}\"", HexColor(state_.stroke),
                              N(state_.stroke_width));
    if (!state_.dash.empty()) attributes += " stroke-dasharray=\"" + state_.dash + "\"";
    if (state_.round_join) attributes += " stroke-linejoin=\"round\"";
  }
  body_ += "<path d=\"" + path_ + "\"" + attributes + "/>\n";
  path_.clear();
}

void SvgCanvas::Stroke() { Paint(false, true); }
void SvgCanvas::Fill() { Paint(true, false); }
void SvgCanvas::FillStroke() { Paint(true, true); }

void SvgCanvas::PushClip(const Rect& rect) {
  saved_.push_back(state_);
  const std::string id = fmt::format("{}-clip{}", id_prefix_, ++num_clips_);
  body_ += fmt::format(
      "<clipPath id=\"{}\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/></clipPath>\n"
      "<g clip-path=\"url(#{})\">\n",
      id, N(rect.x), N(Y(rect.top())), N(rect.width), N(rect.height), id);
}

void SvgCanvas::PopClip() {
  if (saved_.empty()) return;
  state_ = saved_.back();
  saved_.pop_back();
  body_ += "</g>\n";
}

}  // namespace sorbtrace::report::internal::plot
