// The PDF renderer of the Sheet: lays out its numbered sections on pages (Document: page
// cursor, running header and footer, tables that continue on further pages) and draws its
// figures through the plot engine. Layout only: every text and number comes formatted from
// the Sheet.
#include <fmt/format.h>

#include <algorithm>
#include <memory>
#include <string>
#include <type_traits>
#include <variant>

#include "pipeline/report/document.h"
#include "pipeline/report/plot/plot.h"
#include "pipeline/report/renderers.h"
#include "pipeline/report/report.h"
#include "pipeline/report/sheet.h"

namespace sorbtrace::report::internal {
namespace {

using plot::Canvas;
namespace palette = plot::palette;

// Heights of a section heading and of a subheading as Document draws them [pt].
constexpr double kHeadingHeight_pt = 30.0;
constexpr double kSubheadingHeight_pt = 16.0;
// A paragraph of at most this many lines is a note kept with the block after it.
constexpr double kShortNoteLines = 3.0;
// Space above a fill-page figure [pt].
constexpr double kFillPageGap_pt = 8.0;
// Room the fill-page figure leaves for each kind of block after it [pt] (see FillPageFigure).
constexpr double kSubheadingAllowance_pt = 30.0;
constexpr double kSignaturesAllowance_pt = 72.0;
// A figure is drawn down to this fraction of its height rather than moved to the next page
// and leave the rest of this one empty (common practice: at 60 % the tick labels stay legible;
// a legend too tall for the frame takes more columns, plot.cc).
constexpr double kMinFigureScale = 0.6;
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
// A figure's height: its panels (which may shrink) and what does not scale (caption, gaps).
struct FigureHeight {
  double panels = 0.0;
  double fixed = 0.0;
  double Natural() const { return panels + fixed; }
  double Smallest() const { return panels * kMinFigureScale + fixed; }
};

FigureHeight StackedHeight(Document& doc, const FigureBlock& block) {
  FigureHeight height;
  for (double h : block.heights_pt) height.panels += h;
  if (block.caption_adds_height && !block.panels.empty()) {
    height.fixed += plot::CaptionHeight(doc.canvas(), block.panels.back(), doc.width());
  }
  if (block.heights_pt.size() > 1) {
    height.fixed += block.gap_pt * static_cast<double>(block.heights_pt.size() - 1);
  }
  return height;
}

FigureHeight BesideNotesHeight(const FigureBlock& block) {
  FigureHeight height;
  for (double h : block.heights_pt) height.panels += h;
  height.fixed = kNotesGap_pt;
  if (block.heights_pt.size() > 1) {
    height.fixed += block.gap_pt * static_cast<double>(block.heights_pt.size() - 1);
  }
  return height;
}

// The scale of a figure's panels here: 1 when it fits below the cursor, smaller (down to
// kMinFigureScale) when only that fits, else 1 on a new page.
double PlaceFigure(Document& doc, const FigureHeight& height) {
  const double room = doc.Remaining();
  if (height.Natural() <= room || height.Smallest() > room || height.panels <= 0.0) {
    doc.EnsureSpace(height.Natural());
    return 1.0;
  }
  return (room - height.fixed) / height.panels;
}

void StackedFigure(Document& doc, const FigureBlock& block) {
  const double scale = PlaceFigure(doc, StackedHeight(doc, block));
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
    double h = block.heights_pt[i] * scale;
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
  const double gap = kFillPageGap_pt;
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
  const double scale = PlaceFigure(doc, BesideNotesHeight(block));
  const double top = doc.cursor();  // after a page break, if there was one
  double total = 0.0;
  for (size_t i = 0; i < block.panels.size() && i < block.heights_pt.size(); ++i) {
    const double h = block.heights_pt[i] * scale;
    total += h;
    const double y = top - total - block.gap_pt * static_cast<double>(i);
    plot::DrawFigure(doc.canvas(), block.panels[i], {doc.left(), y, fig_width, h});
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

// Height of the start of block `index` that may not be separated from what precedes it
// [pt]: a table's header with its first rows, a figure whole, the first lines of a text; a
// subheading or a short note (at most kShortNoteLines lines) together with the block after it
// (one such link: a list of one-line paragraphs is not one unit).
double StartHeight(Document& doc, const Section& section, size_t index, bool link = true) {
  if (index >= section.blocks.size()) return 0.0;
  const Block& block = section.blocks[index];
  if (std::holds_alternative<SubheadingBlock>(block)) {
    return kSubheadingHeight_pt + StartHeight(doc, section, index + 1, link);
  }
  if (const auto* p = std::get_if<ParagraphBlock>(&block)) {
    const double leading = p->size_pt * 1.32;  // Document::Paragraph's leading
    const double whole =
        leading * static_cast<double>(
                      doc.canvas().Wrap(p->text, p->size_pt, doc.width() - p->indent_pt).size());
    if (link && whole <= leading * kShortNoteLines) {
      return p->space_before_pt + whole + StartHeight(doc, section, index + 1, false);
    }
    return p->space_before_pt +
           doc.ParagraphStartHeight(p->text, p->size_pt, p->indent_pt, p->bold);
  }
  if (const auto* l = std::get_if<BulletsBlock>(&block)) {
    return doc.BulletsStartHeight(l->items, l->size_pt);
  }
  if (const auto* f = std::get_if<FactsBlock>(&block)) {
    return doc.KeyValuesStartHeight(f->rows, f->label_width_pt, f->size_pt);
  }
  if (const auto* t = std::get_if<TableBlock>(&block)) {
    std::vector<TableColumn> columns;
    for (const ColumnSpec& c : t->columns) {
      columns.push_back({c.header, doc.width() * c.width_fraction, c.numeric});
    }
    std::vector<std::vector<std::string>> rows;
    for (size_t r = 0; r < t->rows.size() && r < kMinLinesAcrossBreak; ++r) {
      std::vector<std::string> texts;
      for (const Cell& cell : t->rows[r]) texts.push_back(cell.text);
      rows.push_back(std::move(texts));
    }
    return doc.TableStartHeight(columns, rows, t->size_pt);
  }
  if (const auto* g = std::get_if<FigureBlock>(&block)) {
    switch (g->arrangement) {
      case FigureArrangement::kStacked:
        return StackedHeight(doc, *g).Smallest();
      case FigureArrangement::kFillPage:
        return g->min_height_pt + kFillPageGap_pt;
      case FigureArrangement::kBesideNotes:
        return BesideNotesHeight(*g).Smallest();
    }
  }
  if (std::holds_alternative<SignaturesBlock>(block)) return kSignaturesAllowance_pt;
  return 0.0;
}

void DrawBlock(Document& doc, const Section& section, size_t index) {
  const Block& block = section.blocks[index];
  if (const auto* b = std::get_if<SubheadingBlock>(&block)) {
    doc.EnsureSpace(StartHeight(doc, section, index));  // kept with the block below it
    doc.Subheading(b->text);
  } else if (const auto* p = std::get_if<ParagraphBlock>(&block)) {
    // The space before a paragraph is given up where it alone would carry the paragraph to the
    // next page (space at a page break is discarded anyway; common typesetting practice): the
    // end-of-report line then stays with the text it closes.
    const double start = StartHeight(doc, section, index);
    const bool keep_space =
        !(start > doc.Remaining() && start - p->space_before_pt <= doc.Remaining());
    doc.EnsureSpace(keep_space ? start : start - p->space_before_pt);
    if (keep_space && p->space_before_pt > 0.0) doc.Skip(p->space_before_pt);
    doc.Paragraph(p->text, p->size_pt, p->indent_pt, p->muted ? palette::kSlate : palette::kInk,
                  p->bold);
  } else if (const auto* l = std::get_if<BulletsBlock>(&block)) {
    // A one-line paragraph that closes the section (the end-of-report line) goes with the
    // list's last items.
    const size_t next = index + 1;
    const auto* closing = next + 1 == section.blocks.size()
                              ? std::get_if<ParagraphBlock>(&section.blocks[next])
                              : nullptr;
    const double closing_pt = closing != nullptr && doc.canvas()
                                                            .Wrap(closing->text, closing->size_pt,
                                                                  doc.width() - closing->indent_pt)
                                                            .size() == 1
                                  ? StartHeight(doc, section, next)
                                  : 0.0;
    doc.Bullets(l->items, l->size_pt, closing_pt);
  } else if (const auto* f = std::get_if<FactsBlock>(&block)) {
    doc.KeyValues(f->rows, f->label_width_pt, f->size_pt);
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

// Sections follow one another on the page (no page left near-empty before a section): a
// section starts a new page only when its heading and the start of its first block (see
// StartHeight) do not fit below the previous one.
void StartSection(Document& doc, const Section& section) {
  doc.EnsureSpace(kHeadingHeight_pt + StartHeight(doc, section, 0));
  doc.Heading(section.Heading());
}

// How densely the one-page summary is set: text sizes and the smallest figure height as a
// fraction of the sheet's own. Tried in order until the content fits one page.
struct Density {
  double text = 1.0;
  double figure = 1.0;
};
// Down to 80 % of the text size (7.5 pt table text -> 6 pt, still legible on A4; common
// practice) and 60 % of the figure's smallest height.
constexpr Density kCompactDensities[] = {{1.0, 1.0}, {0.93, 1.0}, {0.87, 1.0}, {0.8, 1.0}};

// The section with its text and figures set at `density`.
// The section without its figure blocks (a one-page summary that cannot hold them).
Section WithoutFigures(const Section& section) {
  Section out = section;
  out.blocks.clear();
  for (const Block& block : section.blocks) {
    if (!std::holds_alternative<FigureBlock>(block)) out.blocks.push_back(block);
  }
  return out;
}

Section AtDensity(const Section& section, const Density& density) {
  Section out = section;
  for (Block& block : out.blocks) {
    if (auto* p = std::get_if<ParagraphBlock>(&block)) p->size_pt *= density.text;
    if (auto* l = std::get_if<BulletsBlock>(&block)) l->size_pt *= density.text;
    if (auto* t = std::get_if<TableBlock>(&block)) t->size_pt *= density.text;
    if (auto* f = std::get_if<FactsBlock>(&block)) f->size_pt *= density.text;
    if (auto* g = std::get_if<FigureBlock>(&block)) g->min_height_pt *= density.figure;
  }
  return out;
}

// Lays the sections out in a new document; `one_page`: no page is added (overflowed() says
// whether everything fitted).
std::unique_ptr<Document> LayOut(const std::vector<Section>& sections, const Template& layout,
                                 const ReportOptions& options, const std::string& report_number,
                                 const std::string& version, const Letterhead& letterhead,
                                 bool one_page) {
  auto doc = std::make_unique<Document>(layout, options, report_number, version, letterhead);
  doc->NewPage();
  doc->set_allow_new_pages(!one_page);
  for (const Section& section : sections) {
    StartSection(*doc, section);
    for (size_t i = 0; i < section.blocks.size(); ++i) DrawBlock(*doc, section, i);
  }
  // Content set past the bottom without a break (a block's last lines): overflowed too.
  if (one_page && doc->cursor() < doc->bottom()) doc->EnsureSpace(doc->Remaining() + 1.0);
  return doc;
}

}  // namespace

RenderedPdf RenderPdf(const Sheet& sheet, const Template& layout, const ReportOptions& options,
                      const std::string& software_version) {
  const std::string version = PlainVersion(software_version);
  std::unique_ptr<Document> doc;
  if (layout.compact) {
    // The one-page summary: the first density at which everything fits on the page; then,
    // without its figures (the words and numbers come first: the full sheet and the HTML
    // keep the figures), again from the first density.
    for (const bool with_figures : {true, false}) {
      for (const Density& density : kCompactDensities) {
        std::vector<Section> sections;
        for (const Section& section : sheet.sections) {
          sections.push_back(AtDensity(with_figures ? section : WithoutFigures(section), density));
        }
        doc =
            LayOut(sections, layout, options, sheet.report_number, version, sheet.letterhead, true);
        if (!doc->overflowed()) break;
        doc.reset();
      }
      if (doc != nullptr) break;
    }
  }
  // The full sheet, and a summary too long for one page even at the densest setting: it
  // continues on a second page rather than run past the footer.
  if (doc == nullptr) {
    doc = LayOut(sheet.sections, layout, options, sheet.report_number, version, sheet.letterhead,
                 false);
  }
  RenderedPdf out;
  out.num_pages = doc->num_pages();
  out.bytes = doc->Finish();
  return out;
}

}  // namespace sorbtrace::report::internal
