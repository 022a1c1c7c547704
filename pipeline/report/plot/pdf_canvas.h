// The Canvas of a PDF page (internal): libharu calls on one page with the document's
// embedded regular and bold fonts.
#pragma once

#include <hpdf.h>

#include <string>
#include <vector>

#include "pipeline/report/plot/canvas.h"

namespace sorbtrace::report::internal::plot {

class PdfCanvas : public Canvas {
 public:
  PdfCanvas(HPDF_Page page, HPDF_Font regular, HPDF_Font bold);

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
  HPDF_Page page_;
  HPDF_Font regular_;
  HPDF_Font bold_;
};

}  // namespace sorbtrace::report::internal::plot
