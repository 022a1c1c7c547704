// The plot engine: nice tick values, tick labels, a demo figure rendered to PDF and checked
// with poppler (pdftoppm for ink, pdftotext for labels), legend placement.
#include "pipeline/report/plot/plot.h"

#include <gtest/gtest.h>
#include <hpdf.h>

#include <cmath>
#include <string>
#include <vector>

#include "pipeline/report/plot/pdf_canvas.h"
#include "pipeline/report/plot/text.h"
#include "tests/report/pdf_tools.h"

namespace sorbtrace::report::internal::plot {
namespace {

using report::testing::CollapseSpaces;
using report::testing::PdfText;
using report::testing::RenderPages;
using report::testing::WriteTempFile;

// Heckbert, "Nice numbers for graph labels", Graphics Gems (1990): rounding thresholds
// 1.5 / 3 / 7, ceiling thresholds 1 / 2 / 5 on the fraction of the decade.
TEST(NiceNumberTest, RoundingFollowsHeckbertThresholds) {
  EXPECT_DOUBLE_EQ(NiceNumber(1.4, true), 1.0);
  EXPECT_DOUBLE_EQ(NiceNumber(1.6, true), 2.0);
  EXPECT_DOUBLE_EQ(NiceNumber(2.9, true), 2.0);
  EXPECT_DOUBLE_EQ(NiceNumber(3.1, true), 5.0);
  EXPECT_DOUBLE_EQ(NiceNumber(6.9, true), 5.0);
  EXPECT_DOUBLE_EQ(NiceNumber(7.1, true), 10.0);
  EXPECT_DOUBLE_EQ(NiceNumber(0.031, true), 0.05);
  EXPECT_DOUBLE_EQ(NiceNumber(420.0, true), 500.0);
}

TEST(NiceNumberTest, CeilingFollowsHeckbertThresholds) {
  EXPECT_DOUBLE_EQ(NiceNumber(1.0, false), 1.0);
  EXPECT_DOUBLE_EQ(NiceNumber(1.01, false), 2.0);
  EXPECT_DOUBLE_EQ(NiceNumber(2.0, false), 2.0);
  EXPECT_DOUBLE_EQ(NiceNumber(2.5, false), 5.0);
  EXPECT_DOUBLE_EQ(NiceNumber(5.5, false), 10.0);
  EXPECT_DOUBLE_EQ(NiceNumber(0.097, false), 0.1);
}

// Loose labelling worked by hand with Heckbert's algorithm: range 0..0.97, 5 ticks:
// nicenum(0.97, ceil) = 1, step = nicenum(1 / 4, round) = 0.2, so 0, 0.2, ..., 1.0.
TEST(NiceTicksTest, LooseLabellingOfAFractionRange) {
  const Ticks t = NiceLinearTicks(0.0, 0.97, 5);
  ASSERT_EQ(t.values.size(), 6u);
  EXPECT_DOUBLE_EQ(t.axis_min, 0.0);
  EXPECT_DOUBLE_EQ(t.axis_max, 1.0);
  EXPECT_EQ(t.fraction_digits, 1);
  std::vector<std::string> labels;
  for (double v : t.values) labels.push_back(FormatTick(v, t.fraction_digits));
  EXPECT_EQ(labels, (std::vector<std::string>{"0.0", "0.2", "0.4", "0.6", "0.8", "1.0"}));
}

// Range 3.2..17.9 with 6 ticks: nicenum(14.7, ceil) = 20, step = nicenum(4, round) = 5,
// loose range 0..20 (Heckbert's procedure).
TEST(NiceTicksTest, LooseLabellingExtendsToWholeSteps) {
  const Ticks t = NiceLinearTicks(3.2, 17.9, 6);
  EXPECT_DOUBLE_EQ(t.axis_min, 0.0);
  EXPECT_DOUBLE_EQ(t.axis_max, 20.0);
  EXPECT_EQ(t.values, (std::vector<double>{0.0, 5.0, 10.0, 15.0, 20.0}));
  EXPECT_EQ(t.fraction_digits, 0);
}

TEST(NiceTicksTest, TightRangeKeepsTheEndsAndPrintsWithoutBinaryNoise) {
  // nicenum(0.6, ceil) = 1, step = nicenum(1 / 10, round) = 0.1.
  const Ticks t = NiceLinearTicksWithin(0.1, 0.7, 11);
  EXPECT_DOUBLE_EQ(t.axis_min, 0.1);
  EXPECT_DOUBLE_EQ(t.axis_max, 0.7);
  std::vector<std::string> labels;
  for (double v : t.values) labels.push_back(FormatTick(v, t.fraction_digits));
  EXPECT_EQ(labels, (std::vector<std::string>{"0.1", "0.2", "0.3", "0.4", "0.5", "0.6", "0.7"}));
  EXPECT_EQ(FormatTick(0.1 + 0.2, 1), "0.3");
  EXPECT_EQ(FormatTick(-1e-17, 2), "0.00");
}

TEST(NiceTicksTest, SymmetricRangeAboutZero) {
  const Ticks t = NiceLinearTicksWithin(-0.05, 0.05, 5);
  std::vector<std::string> labels;
  for (double v : t.values) labels.push_back(FormatTick(v, t.fraction_digits));
  EXPECT_EQ(labels, (std::vector<std::string>{"-0.04", "-0.02", "0.00", "0.02", "0.04"}));
}

TEST(LogTicksTest, DecadesAndIntermediateTicks) {
  const Ticks wide = LogTicks(2e-9, 3e-5, false);
  EXPECT_DOUBLE_EQ(wide.axis_min, 1e-9);
  EXPECT_NEAR(wide.axis_max, 1e-4, 1e-19);
  EXPECT_EQ(wide.values.size(), 6u);  // decades only over five decades
  const Ticks narrow = LogTicks(1.0, 100.0, false);
  std::vector<std::string> labels;
  for (double v : narrow.values) labels.push_back(FormatLogTick(v));
  EXPECT_EQ(labels, (std::vector<std::string>{"1", "2", "5", "10", "20", "50", "100"}));
  EXPECT_EQ(FormatLogTick(1e-6), "10⁻⁶");
  EXPECT_EQ(FormatLogTick(2e7), "2·10⁷");
  EXPECT_EQ(FormatLogTick(0.005), "0.005");
}

// Heckbert on 0..21 with 6 ticks: nicenum(21, ceil) = 50, step nicenum(10, round) = 10, axis
// 0..30 (30 % beyond the data). The close labelling takes the fewest ticks whose axis extends
// by at most 25 %: target 11 gives step nicenum(5, round) = 5, axis 0..25 (16 %).
TEST(NiceTicksTest, CloseLabellingLeavesNoHalfEmptyAxis) {
  EXPECT_DOUBLE_EQ(NiceLinearTicks(0.0, 21.0, 6).axis_max, 30.0);
  const Ticks t = CloseLinearTicks(0.0, 21.0, 6);
  EXPECT_DOUBLE_EQ(t.axis_min, 0.0);
  EXPECT_DOUBLE_EQ(t.axis_max, 25.0);
  EXPECT_EQ(t.values, (std::vector<double>{0.0, 5.0, 10.0, 15.0, 20.0, 25.0}));
  // Heckbert's own result where it is already close: 0..0.97 -> 0..1.0.
  EXPECT_DOUBLE_EQ(CloseLinearTicks(0.0, 0.97, 5).axis_max, 1.0);
  // Log: 1.3..21.4 nm ends at 1 and 30, not at the decades 1 and 100; ticks 1, 2, 5, 10, 20.
  const Ticks log = CloseLogTicks(1.3, 21.4);
  EXPECT_DOUBLE_EQ(log.axis_min, 1.0);
  EXPECT_DOUBLE_EQ(log.axis_max, 30.0);
  EXPECT_EQ(log.values, (std::vector<double>{1.0, 2.0, 5.0, 10.0, 20.0}));
  EXPECT_DOUBLE_EQ(CloseLogTicks(2e-9, 1e-8).axis_max, 1e-8);  // an exact decade stays
}

TEST(TextTest, SanitizeKeepsUnicodeAndReplacesInvalidBytes) {
  EXPECT_EQ(SanitizeUtf8("23 °C ± 0.2 K, m² µm αβ"), "23 °C ± 0.2 K, m² µm αβ");
  EXPECT_EQ(SanitizeUtf8(std::string("a\xff") + "b"), "a?b");
  EXPECT_EQ(SanitizeUtf8(std::string("\xc3")), "?");       // truncated sequence
  EXPECT_EQ(SanitizeUtf8(std::string("\xc0\xaf")), "??");  // overlong '/'
  EXPECT_EQ(SanitizeUtf8("tab\there"), "tab here");
  EXPECT_EQ(Superscript(-12), "⁻¹²");
}

// A libharu document with the DejaVu font for the engine tests.
class PlotDocument {
 public:
  PlotDocument() {
    pdf_ = HPDF_New(nullptr, nullptr);
    HPDF_SetCompressionMode(pdf_, HPDF_COMP_ALL);
    HPDF_UseUTFEncodings(pdf_);
    HPDF_SetCurrentEncoder(pdf_, "UTF-8");
    const char* regular =
        HPDF_LoadTTFontFromFile(pdf_, SORBTRACE_DEFAULT_FONT_DIR "/DejaVuSans.ttf", HPDF_TRUE);
    const char* bold =
        HPDF_LoadTTFontFromFile(pdf_, SORBTRACE_DEFAULT_FONT_DIR "/DejaVuSans-Bold.ttf", HPDF_TRUE);
    page_ = HPDF_AddPage(pdf_);
    HPDF_Page_SetWidth(page_, 595.276f);
    HPDF_Page_SetHeight(page_, 841.89f);
    canvas_ = std::make_unique<PdfCanvas>(page_, HPDF_GetFont(pdf_, regular, "UTF-8"),
                                          HPDF_GetFont(pdf_, bold, "UTF-8"));
  }
  ~PlotDocument() { HPDF_Free(pdf_); }
  Canvas& canvas() { return *canvas_; }
  std::string Save() {
    HPDF_SaveToStream(pdf_);
    std::string bytes(HPDF_GetStreamSize(pdf_), '\0');
    HPDF_ResetStream(pdf_);
    HPDF_UINT32 size = static_cast<HPDF_UINT32>(bytes.size());
    HPDF_ReadFromStream(pdf_, reinterpret_cast<HPDF_BYTE*>(bytes.data()), &size);
    bytes.resize(size);
    return bytes;
  }

 private:
  HPDF_Doc pdf_;
  HPDF_Page page_;
  std::unique_ptr<Canvas> canvas_;
};

// The demo figure: every element of the engine once.
Figure DemoFigure() {
  Figure fig;
  fig.title = "Demo: all elements";
  fig.x.label = "relative humidity (%)";
  fig.x.min = 0.0;
  fig.x.max = 100.0;
  fig.y.label = "moisture content (mass %)";
  fig.y.include_zero = true;
  fig.caption =
      "Bands, error bars in x and y, five marker shapes open and filled, a polyline, "
      "a secondary axis through a mapping, an event line and a legend.";
  Band band;
  band.legend = "band";
  Series curve;
  curve.legend = "curve";
  curve.marker.shape = MarkerShape::kNone;
  curve.line = LineStyle{palette::kTeal, 1.2, {}};
  for (int i = 0; i <= 50; ++i) {
    const double x = 2.0 * i;
    const double y = 8.0 * std::pow(x / 100.0, 2.5);
    band.x.push_back(x);
    band.low.push_back(0.9 * y);
    band.high.push_back(1.1 * y + 0.05);
    curve.x.push_back(x);
    curve.y.push_back(y);
  }
  fig.bands.push_back(band);
  fig.series.push_back(curve);
  const MarkerShape shapes[] = {MarkerShape::kCircle, MarkerShape::kSquare,
                                MarkerShape::kTriangleUp, MarkerShape::kDiamond,
                                MarkerShape::kTriangleDown};
  for (int s = 0; s < 5; ++s) {
    Series pts;
    pts.legend = "shape " + std::to_string(s) + (s % 2 == 0 ? " filled" : " open");
    pts.marker = {shapes[s], s % 2 == 0, 5.0, palette::Series(s)};
    for (int i = 0; i < 4; ++i) {
      const double x = 20.0 + 15.0 * i + 2.0 * s;
      pts.x.push_back(x);
      pts.y.push_back(8.0 * std::pow(x / 100.0, 2.5) + 0.2 * s);
      pts.x_error.push_back(1.5);
      pts.y_error.push_back(0.25);
    }
    fig.series.push_back(pts);
  }
  fig.events.push_back({50.0});
  SecondaryAxis top;
  top.label = "capillary pressure (MPa)";
  // p_c = -(rho_w R T / M_w) ln(RH): at 23 degC, rho_w R T / M_w = 136.2 MPa (IAPWS density,
  // CODATA R), inlined to keep the engine test free of the physics library.
  top.to_secondary = [](double rh) {
    return rh > 0 && rh < 100 ? -136.2 * std::log(rh / 100.0) : std::nan("");
  };
  top.from_secondary = [](double p) { return 100.0 * std::exp(-p / 136.2); };
  fig.x_top = top;
  return fig;
}

TEST(DrawFigureTest, DemoFigureRendersWithInkInsideTheFrameAndReadableLabels) {
  PlotDocument doc;
  const Rect outer{60.0, 420.0, 470.0, 360.0};
  const FigureLayout layout = DrawFigure(doc.canvas(), DemoFigure(), outer);
  const auto pdf = WriteTempFile("plot_demo.pdf", doc.Save());

  // The frame lies inside the outer box, with room for labels on every side.
  EXPECT_GT(layout.frame.x, outer.x + 10.0);
  EXPECT_GT(layout.frame.y, outer.y + 20.0);
  EXPECT_LT(layout.frame.right(), outer.right());
  EXPECT_LT(layout.frame.top(), outer.top() - 20.0);
  EXPECT_DOUBLE_EQ(layout.x_axis_min, 0.0);
  EXPECT_DOUBLE_EQ(layout.x_axis_max, 100.0);

  const int dpi = 40;
  const auto pages = RenderPages(pdf, dpi);
  ASSERT_EQ(pages.size(), 1u);
  const auto& page = pages[0];
  const double scale = dpi / 72.0;  // pixels per point
  auto px = [&](double x) { return static_cast<int>(x * scale); };
  auto py = [&](double y) { return static_cast<int>((841.89 - y) * scale); };
  const Rect& f = layout.frame;
  // Inside the frame: band, curve, markers.
  EXPECT_GT(page.InkFraction(px(f.x) + 2, py(f.top()) + 2, px(f.right()) - 2, py(f.y) - 2, 250),
            0.02);
  // The empty top of the page stays white.
  EXPECT_LT(page.InkFraction(0, 0, page.width, py(800.0), 250), 0.001);

  const std::string text = CollapseSpaces(PdfText(pdf));
  for (const char* expected :
       {"relative humidity (%)", "moisture content (mass %)", "capillary pressure (MPa)",
        "Demo: all elements", "shape 3 open", "100", "0", "20"}) {
    EXPECT_NE(text.find(expected), std::string::npos) << expected << " in: " << text;
  }
}

TEST(DrawFigureTest, LegendGoesToTheCornerWithFewestPoints) {
  PlotDocument doc;
  Figure fig;
  fig.x.min = 0.0;
  fig.x.max = 10.0;
  fig.y.min = 0.0;
  fig.y.max = 10.0;
  Series s;
  s.legend = "points crowding the upper left";
  // Points fill the top-left, top-right and bottom-left corners; the bottom right is empty.
  for (int i = 0; i < 10; ++i) {
    for (int j = 0; j < 10; ++j) {
      if (i >= 6 && j <= 3) continue;  // x >= 6 and y <= 3 left empty
      s.x.push_back(i + 0.5);
      s.y.push_back(j + 0.5);
    }
  }
  fig.series.push_back(s);
  const FigureLayout layout = DrawFigure(doc.canvas(), fig, {50.0, 400.0, 400.0, 300.0});
  EXPECT_EQ(layout.legend_corner, 2);  // bottom right
  EXPECT_EQ(layout.legend_points_covered, 0);
  EXPECT_GT(layout.legend.width, 10.0);
}

TEST(DrawFigureTest, LogAxisAndRightAxisRender) {
  PlotDocument doc;
  Figure fig;
  fig.x.label = "pore radius (nm)";
  fig.x.scale = Scale::kLog10;
  fig.y.label = "mass (g)";
  fig.y_right = Axis{};
  fig.y_right->label = "RH (%)";
  fig.y_right->min = 0.0;
  fig.y_right->max = 100.0;
  Series a, b;
  a.line = LineStyle{};
  b.line = LineStyle{palette::kOchre, 1.0, {3.0, 2.0}};
  b.right_axis = true;
  for (int i = 0; i < 40; ++i) {
    a.x.push_back(std::pow(10.0, 0.05 * i));
    a.y.push_back(5.0 + 0.01 * i);
    b.x.push_back(std::pow(10.0, 0.05 * i));
    b.y.push_back(2.0 * i);
  }
  fig.series = {a, b};
  const FigureLayout layout = DrawFigure(doc.canvas(), fig, {50.0, 400.0, 450.0, 300.0});
  // Data 1..10^1.95 = 89.1: the axis ends at the next whole mantissa, 90 (CloseLogTicks).
  EXPECT_DOUBLE_EQ(layout.x_axis_min, 1.0);
  EXPECT_DOUBLE_EQ(layout.x_axis_max, 90.0);
  const auto pdf = WriteTempFile("plot_log.pdf", doc.Save());
  const std::string text = CollapseSpaces(PdfText(pdf));
  EXPECT_NE(text.find("pore radius (nm)"), std::string::npos);
  EXPECT_NE(text.find("RH (%)"), std::string::npos);
}

}  // namespace
}  // namespace sorbtrace::report::internal::plot
