#include "pipeline/report/plot/canvas.h"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cmath>

#include "pipeline/report/plot/text.h"

namespace sorbtrace::report::internal::plot {

// ---- Colours ---------------------------------------------------------------------------------
Color Color::Tint(double amount) const {
  return {r + (1.0 - r) * amount, g + (1.0 - g) * amount, b + (1.0 - b) * amount};
}

Color palette::Series(int index) {
  static constexpr std::array<Color, 5> kCycle = {kTeal, kOchre, kPlum, kMoss, kSlate};
  const int n = static_cast<int>(kCycle.size());
  return kCycle[static_cast<size_t>(((index % n) + n) % n)];
}

// ---- Canvas ----------------------------------------------------------------------------------
void Canvas::Text(double x, double y, std::string_view text, double size_pt, Align align, bool bold,
                  Color color) {
  const std::string clean = PrintableText(text);
  if (clean.empty()) return;
  double left = x;
  if (align != Align::kLeft) {
    const double width = TextWidth(clean, size_pt, bold);
    left = align == Align::kCenter ? x - width / 2.0 : x - width;
  }
  ShowText(left, y, clean, size_pt, bold, color, false);
}

void Canvas::VerticalText(double x, double y, std::string_view text, double size_pt, Color color) {
  const std::string clean = PrintableText(text);
  if (clean.empty()) return;
  const double width = TextWidth(clean, size_pt);
  ShowText(x, y - width / 2.0, clean, size_pt, false, color, true);
}

double Canvas::TextWidth(std::string_view text, double size_pt, bool bold) const {
  const std::string clean = PrintableText(text);
  if (clean.empty()) return 0.0;
  return MeasureText(clean, size_pt, bold);
}

std::vector<std::string> Canvas::Wrap(std::string_view raw_text, double size_pt, double width_pt,
                                      bool bold) const {
  // Words beyond kMaxPrintedWordChars are cut first: no quadratic work on a 1 MiB token.
  const std::string clipped = ClipLongWords(raw_text);
  const std::string_view text = clipped;
  std::vector<std::string> lines;
  size_t start = 0;
  while (start <= text.size()) {
    const size_t end = std::min(text.find('\n', start), text.size());
    const std::string_view paragraph = text.substr(start, end - start);
    std::string line;
    size_t pos = 0;
    bool any = false;
    while (pos < paragraph.size()) {
      size_t space = paragraph.find(' ', pos);
      if (space == std::string_view::npos) space = paragraph.size();
      std::string word(paragraph.substr(pos, space - pos));
      pos = space + 1;
      if (word.empty()) continue;
      if (TextWidth(word, size_pt, bold) > width_pt) {
        // A word wider than the column (a long path, a hash) is cut between characters.
        if (!line.empty()) lines.push_back(line);
        line.clear();
        std::string piece;
        size_t i = 0;
        while (i < word.size()) {
          size_t n = 1;
          while (i + n < word.size() && (static_cast<unsigned char>(word[i + n]) & 0xC0) == 0x80) {
            ++n;
          }
          const std::string next = piece + word.substr(i, n);
          if (!piece.empty() && TextWidth(next, size_pt, bold) > width_pt) {
            lines.push_back(piece);
            piece = word.substr(i, n);
          } else {
            piece = next;
          }
          i += n;
        }
        word = piece;  // the rest continues like an ordinary word
      }
      const std::string candidate = line.empty() ? word : fmt::format("{} {}", line, word);
      if (!line.empty() && TextWidth(candidate, size_pt, bold) > width_pt) {
        lines.push_back(line);
        line = word;
      } else {
        line = candidate;
      }
      any = true;
    }
    if (any || !paragraph.empty() || end < text.size()) lines.push_back(line);
    if (end >= text.size()) break;
    start = end + 1;
  }
  return lines;
}

void Canvas::Line(double x0, double y0, double x1, double y1, double width_pt, Color color) {
  SetStroke(color, width_pt);
  MoveTo(x0, y0);
  LineTo(x1, y1);
  Stroke();
}

void Canvas::StrokeRect(const Rect& rect, double width_pt, Color color) {
  SetStroke(color, width_pt);
  Rectangle(rect);
  Stroke();
}

void Canvas::FillRect(const Rect& rect, Color color) {
  SetFill(color);
  Rectangle(rect);
  Fill();
}

std::vector<int> DashPattern(const std::vector<double>& dash_pt) {
  constexpr size_t kMaxEntries = 8;  // libharu's limit (HPDF_Page_SetDash, hpdf_page_operator.c)
  std::vector<int> pattern;
  for (size_t i = 0; i < dash_pt.size() && i < kMaxEntries; ++i) {
    pattern.push_back(static_cast<int>(std::clamp(std::lround(dash_pt[i]), 1L, 100L)));
  }
  return pattern;
}

}  // namespace sorbtrace::report::internal::plot
