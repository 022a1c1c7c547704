// The drawing surface of the report stage (internal): colours, the palette, rectangles and
// the abstract Canvas that the plot engine and the page layout draw on.
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace sorbtrace::report::internal::plot {

// An RGB colour, components in [0, 1].
struct Color {
  double r = 0.0;
  double g = 0.0;
  double b = 0.0;
  // The colour mixed with white: amount 0 keeps it, 1 gives white (light tints for bands).
  Color Tint(double amount) const;
};

// The report's restrained palette (an identity of its own: ink blue-grey, teal, ochre,
// plum, moss). Distinct in hue and in lightness, so series stay apart in greyscale.
namespace palette {
inline constexpr Color kInk{0.13, 0.16, 0.20};
inline constexpr Color kTeal{0.05, 0.40, 0.45};
inline constexpr Color kOchre{0.72, 0.45, 0.10};
inline constexpr Color kPlum{0.45, 0.22, 0.42};
inline constexpr Color kMoss{0.35, 0.45, 0.18};
inline constexpr Color kSlate{0.40, 0.44, 0.50};
inline constexpr Color kGrid{0.86, 0.88, 0.90};
// The i-th series colour (cycles).
Color Series(int index);
}  // namespace palette

// A rectangle on the page [pt].
struct Rect {
  double x = 0.0;  // left
  double y = 0.0;  // bottom
  double width = 0.0;
  double height = 0.0;
  double right() const { return x + width; }
  double top() const { return y + height; }
};

// What every drawing call of the report writes to: a PDF page (PdfCanvas, libharu) or an SVG
// element of the HTML report (SvgCanvas). Coordinates are points (1/72 in), origin
// bottom-left, as on a PDF page. Text is UTF-8 (°, ±, ², µ and Greek print). The drawing
// model is PDF's: a current path built by MoveTo/LineTo/Circle/Rectangle, painted by Stroke,
// Fill or FillStroke with the current stroke and fill state, and a rectangular clip pushed
// and popped. Text, Line, StrokeRect and FillRect are built from these primitives, so both
// implementations receive the same calls in the same order.
class Canvas {
 public:
  virtual ~Canvas() = default;

  enum class Align { kLeft, kCenter, kRight };
  // Draws one line of text with its baseline at y.
  void Text(double x, double y, std::string_view text, double size_pt, Align align = Align::kLeft,
            bool bold = false, Color color = palette::kInk);
  // Text rotated by 90 degrees counter-clockwise, centred on (x, y) along its length.
  void VerticalText(double x, double y, std::string_view text, double size_pt,
                    Color color = palette::kInk);
  double TextWidth(std::string_view text, double size_pt, bool bold = false) const;
  // Splits text into lines no wider than width_pt (breaks at spaces; long words stay whole).
  std::vector<std::string> Wrap(std::string_view text, double size_pt, double width_pt,
                                bool bold = false) const;

  void Line(double x0, double y0, double x1, double y1, double width_pt, Color color);
  void StrokeRect(const Rect& rect, double width_pt, Color color);
  void FillRect(const Rect& rect, Color color);

  // ---- Primitives (what an implementation provides) ----
  // Width of already printable text (PrintableText) [pt].
  virtual double MeasureText(const std::string& clean, double size_pt, bool bold) const = 0;
  // Printable text with its baseline starting at (x, y), rotated by +90 degrees if vertical.
  virtual void ShowText(double x, double y, const std::string& clean, double size_pt, bool bold,
                        Color color, bool vertical) = 0;
  virtual void SetStroke(Color color, double width_pt) = 0;
  virtual void SetFill(Color color) = 0;
  // Dash pattern [pt] (at most 8 entries, each rounded to 1..100); empty: solid.
  virtual void SetDash(const std::vector<double>& dash_pt) = 0;
  virtual void SetRoundJoin() = 0;
  virtual void MoveTo(double x, double y) = 0;
  virtual void LineTo(double x, double y) = 0;
  virtual void ClosePath() = 0;
  virtual void Circle(double x, double y, double radius) = 0;
  virtual void Rectangle(const Rect& rect) = 0;
  virtual void Stroke() = 0;
  virtual void Fill() = 0;
  virtual void FillStroke() = 0;
  // Saves the graphics state and clips to rect; PopClip restores the state.
  virtual void PushClip(const Rect& rect) = 0;
  virtual void PopClip() = 0;
};

// The dash pattern as drawn: at most 8 entries, each a whole number of points in 1..100
// (the PDF canvas passes whole numbers to libharu; the SVG canvas draws the same).
std::vector<int> DashPattern(const std::vector<double>& dash_pt);

}  // namespace sorbtrace::report::internal::plot
