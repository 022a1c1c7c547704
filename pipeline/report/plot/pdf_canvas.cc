#include "pipeline/report/plot/pdf_canvas.h"

namespace sorbtrace::report::internal::plot {
namespace {

HPDF_REAL F(double value) { return static_cast<HPDF_REAL>(value); }

}  // namespace

PdfCanvas::PdfCanvas(HPDF_Page page, HPDF_Font regular, HPDF_Font bold)
    : page_(page), regular_(regular), bold_(bold) {}

double PdfCanvas::MeasureText(const std::string& clean, double size_pt, bool bold) const {
  HPDF_Font font = bold ? bold_ : regular_;
  const HPDF_TextWidth width = HPDF_Font_TextWidth(
      font, reinterpret_cast<const HPDF_BYTE*>(clean.data()), static_cast<HPDF_UINT>(clean.size()));
  // Widths are in 1/1000 of the font size.
  return static_cast<double>(width.width) * size_pt / 1000.0;
}

void PdfCanvas::ShowText(double x, double y, const std::string& clean, double size_pt, bool bold,
                         Color color, bool vertical) {
  SetFill(color);
  HPDF_Page_BeginText(page_);
  HPDF_Page_SetFontAndSize(page_, bold ? bold_ : regular_, F(size_pt));
  if (vertical) {
    // Rotation by +90 degrees: [cos sin -sin cos] = [0 1 -1 0].
    HPDF_Page_SetTextMatrix(page_, 0, 1, -1, 0, F(x), F(y));
    HPDF_Page_ShowText(page_, clean.c_str());
  } else {
    HPDF_Page_TextOut(page_, F(x), F(y), clean.c_str());
  }
  HPDF_Page_EndText(page_);
}

void PdfCanvas::SetStroke(Color color, double width_pt) {
  HPDF_Page_SetRGBStroke(page_, F(color.r), F(color.g), F(color.b));
  HPDF_Page_SetLineWidth(page_, F(width_pt));
}

void PdfCanvas::SetFill(Color color) {
  HPDF_Page_SetRGBFill(page_, F(color.r), F(color.g), F(color.b));
}

void PdfCanvas::SetDash(const std::vector<double>& dash_pt) {
  const std::vector<int> pattern = DashPattern(dash_pt);
  if (pattern.empty()) {
    HPDF_Page_SetDash(page_, nullptr, 0, 0);
    return;
  }
  std::vector<HPDF_UINT16> units(pattern.begin(), pattern.end());
  HPDF_Page_SetDash(page_, units.data(), static_cast<HPDF_UINT>(units.size()), 0);
}

void PdfCanvas::SetRoundJoin() { HPDF_Page_SetLineJoin(page_, HPDF_ROUND_JOIN); }
void PdfCanvas::MoveTo(double x, double y) { HPDF_Page_MoveTo(page_, F(x), F(y)); }
void PdfCanvas::LineTo(double x, double y) { HPDF_Page_LineTo(page_, F(x), F(y)); }
void PdfCanvas::ClosePath() { HPDF_Page_ClosePath(page_); }
void PdfCanvas::Circle(double x, double y, double radius) {
  HPDF_Page_Circle(page_, F(x), F(y), F(radius));
}
void PdfCanvas::Rectangle(const Rect& rect) {
  HPDF_Page_Rectangle(page_, F(rect.x), F(rect.y), F(rect.width), F(rect.height));
}
void PdfCanvas::Stroke() { HPDF_Page_Stroke(page_); }
void PdfCanvas::Fill() { HPDF_Page_Fill(page_); }
void PdfCanvas::FillStroke() { HPDF_Page_FillStroke(page_); }

void PdfCanvas::PushClip(const Rect& rect) {
  HPDF_Page_GSave(page_);
  Rectangle(rect);
  HPDF_Page_Clip(page_);
  HPDF_Page_EndPath(page_);
}

void PdfCanvas::PopClip() { HPDF_Page_GRestore(page_); }

}  // namespace sorbtrace::report::internal::plot
