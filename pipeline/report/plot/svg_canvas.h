// The Canvas of an SVG figure (internal): the same drawing calls as a PDF page, written as
// SVG elements for the HTML report. Text is measured with the PDF document's fonts (the
// `metrics` canvas), so line breaks, tick spacing and legend boxes fall where they fall on
// the PDF page; the browser draws the text in DejaVu Sans where installed, else in its own
// sans-serif. Output is deterministic: coordinates with two decimals, clip ids numbered from
// the figure's id.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "pipeline/report/plot/canvas.h"

namespace sorbtrace::report::internal::plot {

class SvgCanvas : public Canvas {
 public:
  // A drawing `width_pt` x `height_pt` points; ids of clip paths start with `id_prefix`.
  SvgCanvas(const Canvas& metrics, double width_pt, double height_pt, std::string id_prefix);

  // The <svg> element: viewBox in points, role="img", <title> (the figure's accessible name)
  // and the drawn elements.
  std::string Svg(const std::string& title) const;

  double MeasureText(const std::string& clean, double size_pt, bool bold) const override;
  void ShowText(double x, double y, const std::string& clean, double size_pt, bool bold,
                Color color, bool vertical) override;
  void SetStroke(Color color, double width_pt) override;
  void SetFill(Color color) override;
  void SetDash(const std::vector<double>& dash_pt) override;
  void SetRoundJoin() override;
  void MoveTo(double x, double y) override;
  void LineTo(double x, double y) override;
  void ClosePath() override;
  void Circle(double x, double y, double radius) override;
  void Rectangle(const Rect& rect) override;
  void Stroke() override;
  void Fill() override;
  void FillStroke() override;
  void PushClip(const Rect& rect) override;
  void PopClip() override;

 private:
  struct State {
    Color stroke = palette::kInk;
    double stroke_width = 1.0;
    Color fill = palette::kInk;
    std::string dash;  // stroke-dasharray or empty
    bool round_join = false;
  };
  // Page y (origin bottom-left) to SVG y (origin top-left).
  double Y(double y) const { return height_pt_ - y; }
  void Paint(bool fill, bool stroke);

  const Canvas& metrics_;
  double width_pt_;
  double height_pt_;
  std::string id_prefix_;
  std::string body_;
  std::string path_;  // the current path's "d"
  State state_;
  std::vector<State> saved_;
  int num_clips_ = 0;
};

// Text escaped for XML and HTML character data and attribute values: "&", "<", ">", "'" and
// '"' as entities; control characters other than tab, line feed and carriage return (not
// allowed in XML 1.0, §2.2) dropped. The one escape of the SVG figures, the HTML report and the
// PDF's XMP metadata.
std::string XmlEscape(std::string_view text);

// "#rrggbb" of a colour.
std::string HexColor(Color color);

}  // namespace sorbtrace::report::internal::plot
