// The PDF renderer of the Sheet: lays out its numbered sections on pages (Document: page
// cursor, running header and footer, tables that continue on further pages) and draws its
// figures through the plot engine. Layout only: every text and number comes formatted from
// the Sheet. ComposeReport builds the Sheet and every output the template asks for.
#include <fmt/format.h>

#include <algorithm>
#include <string>
#include <type_traits>
#include <variant>

#include "pipeline/report/document.h"
#include "pipeline/report/plot/plot.h"
#include "pipeline/report/renderers.h"
#include "pipeline/report/report.h"
#include "pipeline/report/results_json.h"
#include "pipeline/report/sheet.h"

namespace sorbtrace::report {
namespace {

using plot::Canvas;
namespace palette = plot::palette;

// Room kept free below a heading of the cautions section before it starts a page [pt].
constexpr double kCautionsSpace_pt = 200.0;
// Room the fill-page figure leaves for each kind of block after it [pt] (see FillPageFigure).
constexpr double kSubheadingAllowance_pt = 30.0;
constexpr double kSignaturesAllowance_pt = 72.0;
// The notes column beside kBesideNotes figures [pt].
constexpr double kNotesColumn_pt = 150.0;
constexpr double kNotesGap_pt = 10.0;

void DrawTable(Document& doc, const TableBlock& table) {
  std::vector<TableColumn> columns;
  for (const ColumnSpec& c : table.columns) {
    columns.push_back({c.header, doc.width() * c.width_fraction, c.numeric});
  }
  std::vector<std::vector<std::string>> rows;
  for (const std::vector<Cell>& row : table.rows) {
    std::vector<std::string> texts;
    texts.reserve(row.size());
    for (const Cell& cell : row) texts.push_back(cell.text);
    rows.push_back(std::move(texts));
  }
  doc.Table(columns, rows, table.size_pt);
}

// Panels one below the other over the full width, sharing one left edge.
void StackedFigure(Document& doc, const FigureBlock& block) {
  double total = 0.0;
  for (double h : block.heights_pt) total += h;
  doc.EnsureSpace(total);
  std::vector<plot::Figure> panels = block.panels;
  if (panels.size() > 1) {
    double pad = 0.0;
    for (const plot::Figure& f : panels) {
      pad = std::max(pad, plot::AutomaticLeftPadding(doc.canvas(), f));
    }
    for (plot::Figure& f : panels) f.left_padding_pt = pad;
  }
  for (size_t i = 0; i < panels.size() && i < block.heights_pt.size(); ++i) {
    const bool last = i + 1 == panels.size();
    double h = block.heights_pt[i];
    if (last && block.caption_adds_height) {
      h += plot::CaptionHeight(doc.canvas(), panels[i], doc.width());
    }
    plot::DrawFigure(doc.canvas(), panels[i], {doc.left(), doc.cursor() - h, doc.width(), h});
    doc.Skip(h + (last ? block.space_after_pt : block.gap_pt));
  }
}

// Height the blocks after a fill-page figure need: its own allowance per subheading and
// signature block, the wrapped lines of every bullet.
double ReservedBelow(Document& doc, const std::vector<Block>& following) {
  double reserved = 0.0;
  for (const Block& b : following) {
    if (std::holds_alternative<SubheadingBlock>(b)) reserved += kSubheadingAllowance_pt;
    if (const auto* bullets = std::get_if<BulletsBlock>(&b)) {
      const double leading = bullets->size_pt * 1.32;  // Document::Bullets' leading
      for (const std::string& item : bullets->items) {
        const auto lines = doc.canvas().Wrap(item, bullets->size_pt, doc.width() - 12.0);
        reserved += leading * static_cast<double>(lines.size()) + 1.5;
      }
    }
    if (std::holds_alternative<SignaturesBlock>(b)) reserved += kSignaturesAllowance_pt;
  }
  return reserved;
}

// One panel taking what the rest of the section leaves on the page.
void FillPageFigure(Document& doc, const FigureBlock& block, const std::vector<Block>& following) {
  if (block.panels.empty()) return;
  const double gap = 8.0;
  const double height =
      std::clamp(doc.cursor() - doc.bottom() - ReservedBelow(doc, following) - gap,
                 block.min_height_pt, block.max_height_pt);
  doc.EnsureSpace(height + gap);
  doc.Skip(gap);
  plot::DrawFigure(doc.canvas(), block.panels.front(),
                   {doc.left(), doc.cursor() - height, doc.width(), height});
  doc.Skip(height);
}

// The notes column beside the figures: wrapped, the first line of each group in bold, cut
// with a pointer to the text below when it would run past the figures.
void NotesColumn(Document& doc, const FigureBlock& block, double top, double bottom, double x) {
  Canvas& c = doc.canvas();
  double y = top - 12.0;
  c.Text(x, y, block.notes_title, 8.5, Canvas::Align::kLeft, true, palette::kTeal);
  y -= 12.0;
  bool full = false;
  for (const std::vector<std::string>& group : block.notes) {
    for (size_t i = 0; i < group.size() && !full; ++i) {
      for (const std::string& line : c.Wrap(group[i], 7.0, kNotesColumn_pt - 8.0)) {
        if (y < bottom) {
          full = true;
          break;
        }
        c.Text(x + (i == 0 ? 0.0 : 6.0), y, line, 7.0, Canvas::Align::kLeft, i == 0);
        y -= 8.8;
      }
    }
    y -= 6.0;
  }
  if (full) {
    c.Text(x, bottom - 8.8, "(continued below the table)", 7.0, Canvas::Align::kLeft, false,
           palette::kSlate);
  }
}

void FigureBesideNotes(Document& doc, const FigureBlock& block) {
  const double fig_width = doc.width() - kNotesColumn_pt - kNotesGap_pt;
  double total = 0.0;
  for (double h : block.heights_pt) total += h;
  const double top = doc.cursor();
  doc.EnsureSpace(total + kNotesGap_pt);
  double above = 0.0;
  for (size_t i = 0; i < block.panels.size() && i < block.heights_pt.size(); ++i) {
    above += block.heights_pt[i];
    const double y = top - above - block.gap_pt * static_cast<double>(i);
    plot::DrawFigure(doc.canvas(), block.panels[i],
                     {doc.left(), y, fig_width, block.heights_pt[i]});
  }
  NotesColumn(doc, block, top, top - total, doc.left() + fig_width + kNotesGap_pt);
  const double gaps = block.gap_pt * static_cast<double>(block.panels.size() - 1);
  doc.set_cursor(top - total - gaps);
}

void DrawSignatures(Document& doc, const SignaturesBlock& block) {
  if (block.signatories.empty()) return;
  const double height = 46.0;
  doc.EnsureSpace(height + 10.0);
  doc.Skip(14.0);
  const size_t n = block.signatories.size();
  const double column = doc.width() / static_cast<double>(std::max<size_t>(n, 2));
  Canvas& c = doc.canvas();
  c.Text(doc.left(), doc.cursor(), "Approved for issue", 8.0, Canvas::Align::kLeft, true);
  doc.Skip(26.0);
  for (size_t i = 0; i < n; ++i) {
    const double x = doc.left() + column * static_cast<double>(i);
    c.Line(x, doc.cursor(), x + column - 20.0, doc.cursor(), 0.5, palette::kSlate);
    c.Text(x, doc.cursor() - 9.0, block.signatories[i], 7.5);
    c.Text(x, doc.cursor() - 18.0, "signature and date", 6.5, Canvas::Align::kLeft, false,
           palette::kSlate);
  }
  doc.Skip(20.0);
  if (!block.accreditation.empty()) doc.Paragraph(block.accreditation, 7.0, 0.0, palette::kSlate);
}

void DrawBlock(Document& doc, const Section& section, size_t index) {
  const Block& block = section.blocks[index];
  if (const auto* b = std::get_if<SubheadingBlock>(&block)) {
    doc.Subheading(b->text);
  } else if (const auto* p = std::get_if<ParagraphBlock>(&block)) {
    if (p->space_before_pt > 0.0) doc.Skip(p->space_before_pt);
    doc.Paragraph(p->text, p->size_pt, p->indent_pt, p->muted ? palette::kSlate : palette::kInk,
                  p->bold);
  } else if (const auto* l = std::get_if<BulletsBlock>(&block)) {
    doc.Bullets(l->items, l->size_pt);
  } else if (const auto* f = std::get_if<FactsBlock>(&block)) {
    doc.KeyValues(f->rows, f->label_width_pt);
  } else if (const auto* t = std::get_if<TableBlock>(&block)) {
    DrawTable(doc, *t);
  } else if (const auto* g = std::get_if<FigureBlock>(&block)) {
    switch (g->arrangement) {
      case FigureArrangement::kStacked:
        StackedFigure(doc, *g);
        break;
      case FigureArrangement::kFillPage:
        FillPageFigure(
            doc, *g, {section.blocks.begin() + static_cast<long>(index) + 1, section.blocks.end()});
        break;
      case FigureArrangement::kBesideNotes:
        FigureBesideNotes(doc, *g);
        break;
    }
  } else if (const auto* s = std::get_if<SignaturesBlock>(&block)) {
    DrawSignatures(doc, *s);
  }
}

// The summary continues the first page, the cautions start a page only when short of room,
// every other section starts a page of its own.
void StartSection(Document& doc, const Section& section) {
  if (section.key == "cautions") {
    doc.EnsureSpace(kCautionsSpace_pt);
  } else if (section.key != "summary") {
    doc.NewPageIfUsed();
  }
  doc.Heading(section.Heading());
}

}  // namespace

RenderedPdf RenderPdf(const Sheet& sheet, const Template& layout, const ReportOptions& options,
                      const std::string& software_version) {
  Document doc(layout, options, sheet.report_number, PlainVersion(software_version),
               sheet.letterhead);
  doc.NewPage();
  if (layout.compact) doc.set_allow_new_pages(false);
  for (const Section& section : sheet.sections) {
    StartSection(doc, section);
    for (size_t i = 0; i < section.blocks.size(); ++i) DrawBlock(doc, section, i);
  }
  RenderedPdf out;
  out.num_pages = doc.num_pages();
  out.bytes = doc.Finish();
  return out;
}

ReportArtifacts ComposeReport(const ReportInputs& inputs, const Template& layout,
                              const ReportOptions& options) {
  const Sheet sheet = BuildSheet(inputs, layout, options);
  ReportArtifacts artifacts;
  artifacts.warnings = sheet.warnings;
  // The page count is recorded in results.json, so the PDF is laid out even when the
  // template writes only the HTML report.
  RenderedPdf pdf = RenderPdf(sheet, layout, options, inputs.software_version);
  artifacts.num_pages = pdf.num_pages;
  if (layout.write_pdf) artifacts.pdf = std::move(pdf.bytes);
  if (layout.write_html) artifacts.html = RenderHtml(sheet, layout, options);
  artifacts.results_json =
      BuildResultsJson(inputs, layout, options, sheet, artifacts.num_pages)
          .dump(2, ' ', false, nlohmann::ordered_json::error_handler_t::replace) +
      "\n";
  artifacts.csv_files = BuildCsvFiles(inputs, sheet);
  return artifacts;
}

}  // namespace sorbtrace::report
