// The HTML renderer of the Sheet: datasheet.html, one self-contained file — inline CSS and
// inline SVG figures (drawn by the same plot engine as the PDF, through plot::SvgCanvas),
// no script, no font or image fetched — with the same numbered sections, tables and figures
// as the PDF and every text taken from the Sheet, so every number reads as on the PDF.
// Tables are real HTML tables (header cells with scope), headings run h1 > h2 > h3, every
// figure has a title, and the colours are the PDF palette (ink on white 14:1, slate 5:1,
// above the 4.5:1 of WCAG 2.1, 1.4.3). The layout follows the screen (one column on a
// phone, tables scroll sideways inside their box) and prints on A4/letter.
#include <fmt/format.h>

#include <algorithm>
#include <string>
#include <variant>

#include "pipeline/report/document.h"
#include "pipeline/report/plot/svg_canvas.h"
#include "pipeline/report/renderers.h"

namespace sorbtrace::report::internal {
namespace {

using plot::XmlEscape;

// The style sheet: system sans-serif type, the PDF's palette, a readable measure.
constexpr const char* kStyle = R"css(
:root { --ink: #212933; --slate: #66707f; --accent: #0d6673; --rule: #dbe0e6; --shade: #f3f5f7; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--ink); background: #fff;
  font: 15px/1.45 "DejaVu Sans", Verdana, "Segoe UI", Arial, sans-serif; }
.sheet { max-width: 56rem; margin: 0 auto; padding: 1rem 1.25rem 2rem; }
header.masthead { display: flex; flex-wrap: wrap; justify-content: space-between; gap: 0.5rem 2rem;
  border-top: 4px solid var(--accent); padding-top: 0.6rem; margin-bottom: 1rem; }
header.masthead p { margin: 0; }
.letterhead { display: flex; align-items: center; gap: 0.6rem; }
img.logo { height: 2.4rem; width: auto; max-width: 9rem; }
.lab { font-weight: bold; }
.muted, .address, .report-line { color: var(--slate); font-size: 0.85rem; }
h1 { font-size: 1.3rem; margin: 0; color: var(--accent); }
h2 { font-size: 1.2rem; margin: 2rem 0 0.6rem; padding-left: 0.6rem; border-left: 4px solid var(--accent); }
h3 { font-size: 1rem; margin: 1.2rem 0 0.4rem; color: var(--accent); }
p { margin: 0.3rem 0; }
p.bold { font-weight: bold; }
p.indent { padding-left: 1rem; }
ul { margin: 0.3rem 0; padding-left: 1.3rem; }
li { margin: 0.15rem 0; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 0.2rem 1rem; margin: 0.4rem 0; }
dl.facts dt { color: var(--slate); }
dl.facts dd { margin: 0; }
.table-wrap { overflow-x: auto; margin: 0.4rem 0 0.8rem; }
table { border-collapse: collapse; width: 100%; font-size: 0.85rem; }
th, td { text-align: left; vertical-align: top; padding: 0.25rem 0.45rem; border-bottom: 1px solid var(--rule); }
thead th { background: var(--shade); border-bottom: 2px solid var(--accent); }
th.num, td.num { text-align: right; }
td { font-variant-numeric: tabular-nums; }
figure { margin: 0.8rem 0; }
figure .panels { display: flex; flex-direction: column; gap: 0.2rem; }
figure.beside { display: flex; flex-wrap: wrap; gap: 1rem; align-items: flex-start; }
figure.beside .panels { flex: 3 1 24rem; min-width: 0; }
figure.beside aside { flex: 1 1 10rem; font-size: 0.8rem; }
figure.beside aside h3 { margin: 0 0 0.3rem; color: var(--accent); font-size: 0.9rem; }
svg { display: block; width: 100%; height: auto; }
.signatures { display: flex; flex-wrap: wrap; gap: 1rem 2rem; margin-top: 1rem; }
.signature { flex: 1 1 12rem; border-top: 1px solid var(--slate); padding-top: 0.3rem; margin-top: 2rem; }
footer { margin-top: 2rem; padding-top: 0.5rem; border-top: 1px solid var(--rule); }
.watermark { position: fixed; top: 40%; left: 0; right: 0; text-align: center; z-index: -1;
  font-size: 8rem; font-weight: bold; color: #e6e6eb; transform: rotate(-30deg); pointer-events: none; }
@media (max-width: 40rem) {
  body { font-size: 14px; }
  .sheet { padding: 0.75rem; }
  dl.facts { grid-template-columns: 1fr; }
  dl.facts dd { margin-bottom: 0.3rem; }
}
@media print {
  body { font-size: 10pt; }
  .sheet { max-width: none; padding: 0; }
  .table-wrap { overflow: visible; }
  h2 { break-after: avoid; }
  figure, tr { break-inside: avoid; }
}
)css";

// Text as HTML: escaped, line breaks kept.
std::string Html(const std::string& text) {
  std::string out = XmlEscape(text);
  for (size_t pos = 0; (pos = out.find('\n', pos)) != std::string::npos; pos += 5) {
    out.replace(pos, 1, "<br>");
  }
  return out;
}

struct HtmlContext {
  const plot::Canvas& metrics;  // the PDF's fonts, for the figures' layout
  double width_pt = 0.0;        // the PDF's text width: figures drawn at the PDF's size
  int num_figures = 0;
};

std::string FactsHtml(const FactsBlock& facts) {
  std::string out = "<dl class=\"facts\">\n";
  for (const auto& [label, value] : facts.rows) {
    out += "<dt>" + Html(label) + "</dt><dd>" + Html(value) + "</dd>\n";
  }
  return out + "</dl>\n";
}

std::string TableHtml(const TableBlock& table) {
  std::string out =
      fmt::format("<div class=\"table-wrap\"><table data-table=\"{}\">\n", XmlEscape(table.name));
  // The PDF's column proportions, as a starting point the browser may widen.
  out += "<colgroup>";
  for (const ColumnSpec& c : table.columns) {
    out += fmt::format("<col style=\"width: {:.1f}%\">", 100.0 * c.width_fraction);
  }
  out += "</colgroup>\n<thead><tr>";
  for (const ColumnSpec& c : table.columns) {
    out += fmt::format("<th scope=\"col\"{}>{}</th>", c.numeric ? " class=\"num\"" : "",
                       Html(c.header));
  }
  out += "</tr></thead>\n<tbody>\n";
  for (const std::vector<Cell>& row : table.rows) {
    out += "<tr>";
    for (size_t i = 0; i < row.size(); ++i) {
      const bool numeric = i < table.columns.size() && table.columns[i].numeric;
      const std::string key =
          row[i].key.empty() ? "" : " data-key=\"" + XmlEscape(row[i].key) + "\"";
      out +=
          fmt::format("<td{}{}>{}</td>", numeric ? " class=\"num\"" : "", key, Html(row[i].text));
    }
    out += "</tr>\n";
  }
  return out + "</tbody>\n</table></div>\n";
}

// The panels of a figure as inline SVG, at the PDF's sizes; stacked panels share one left
// edge as on the PDF.
std::string PanelsHtml(HtmlContext& ctx, const FigureBlock& block, double width_pt) {
  std::vector<plot::Figure> panels = block.panels;
  if (panels.size() > 1 && block.arrangement == FigureArrangement::kStacked) {
    double pad = 0.0;
    for (const plot::Figure& f : panels) {
      pad = std::max(pad, plot::AutomaticLeftPadding(ctx.metrics, f));
    }
    for (plot::Figure& f : panels) f.left_padding_pt = pad;
  }
  const int figure = ++ctx.num_figures;
  std::string out = "<div class=\"panels\">\n";
  for (size_t i = 0; i < panels.size() && i < block.heights_pt.size(); ++i) {
    double h = block.heights_pt[i];
    if (i + 1 == panels.size() && block.caption_adds_height) {
      h += plot::CaptionHeight(ctx.metrics, panels[i], width_pt);
    }
    plot::SvgCanvas svg(ctx.metrics, width_pt, h, fmt::format("fig{}-{}", figure, i + 1));
    plot::DrawFigure(svg, panels[i], {0.0, 0.0, width_pt, h});
    const std::string title =
        panels[i].title.empty() ? block.description : panels[i].title + ". " + block.description;
    out += svg.Svg(title) + "\n";
  }
  return out + "</div>\n";
}

std::string FigureHtml(HtmlContext& ctx, const FigureBlock& block) {
  const bool beside = block.arrangement == FigureArrangement::kBesideNotes;
  std::string out = fmt::format(
      "<figure class=\"{}\" data-figure=\"{}\" role=\"group\" aria-label=\"{}\">\n",
      beside ? "beside" : "stacked", XmlEscape(block.name), XmlEscape(block.description));
  // The notes column of the PDF takes 160 pt beside the panels.
  out += PanelsHtml(ctx, block, beside ? ctx.width_pt - 160.0 : ctx.width_pt);
  if (beside) {
    out += "<aside><h3>" + Html(block.notes_title) + "</h3>\n";
    for (const std::vector<std::string>& group : block.notes) {
      if (group.empty()) continue;
      out += "<p><strong>" + Html(group.front()) + "</strong></p>\n<ul>";
      for (size_t i = 1; i < group.size(); ++i) out += "<li>" + Html(group[i]) + "</li>";
      out += "</ul>\n";
    }
    out += "</aside>\n";
  }
  return out + "</figure>\n";
}

std::string SignaturesHtml(const SignaturesBlock& block) {
  std::string out = "<p class=\"bold\">Approved for issue</p>\n<div class=\"signatures\">\n";
  for (const std::string& s : block.signatories) {
    out += "<div class=\"signature\">" + Html(s) +
           "<br><span class=\"muted\">signature and date</span></div>\n";
  }
  out += "</div>\n";
  if (!block.accreditation.empty()) {
    out += "<p class=\"muted\">" + Html(block.accreditation) + "</p>\n";
  }
  return out;
}

std::string ParagraphHtml(const ParagraphBlock& p) {
  std::string classes;
  if (p.muted) classes += " muted";
  if (p.bold) classes += " bold";
  if (p.indent_pt > 0.0) classes += " indent";
  return (classes.empty() ? "<p>" : "<p class=\"" + classes.substr(1) + "\">") + Html(p.text) +
         "</p>\n";
}

std::string BlockHtml(HtmlContext& ctx, const Block& block) {
  if (const auto* b = std::get_if<SubheadingBlock>(&block))
    return "<h3>" + Html(b->text) + "</h3>\n";
  if (const auto* p = std::get_if<ParagraphBlock>(&block)) return ParagraphHtml(*p);
  if (const auto* l = std::get_if<BulletsBlock>(&block)) {
    std::string out = "<ul>\n";
    for (const std::string& item : l->items) out += "<li>" + Html(item) + "</li>\n";
    return out + "</ul>\n";
  }
  if (const auto* f = std::get_if<FactsBlock>(&block)) return FactsHtml(*f);
  if (const auto* t = std::get_if<TableBlock>(&block)) return TableHtml(*t);
  if (const auto* g = std::get_if<FigureBlock>(&block)) return FigureHtml(ctx, *g);
  if (const auto* s = std::get_if<SignaturesBlock>(&block)) return SignaturesHtml(*s);
  return "";
}

// Base64 of RFC 4648 §4 (standard alphabet, "=" padding), for a data: URI (RFC 2397).
std::string Base64(const std::string& bytes) {
  static constexpr char kAlphabet[] =
      "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
  std::string out;
  out.reserve((bytes.size() + 2) / 3 * 4);
  for (size_t i = 0; i < bytes.size(); i += 3) {
    const size_t n = std::min<size_t>(3, bytes.size() - i);
    unsigned int group = 0;
    for (size_t j = 0; j < 3; ++j) {
      group = (group << 8) | (j < n ? static_cast<unsigned char>(bytes[i + j]) : 0u);
    }
    for (size_t j = 0; j < 4; ++j) {
      out += j <= n ? kAlphabet[(group >> (18 - 6 * j)) & 0x3F] : '=';
    }
  }
  return out;
}

// The laboratory's logo inlined (the page stays one self-contained file).
std::string LogoHtml(const Letterhead& letterhead) {
  if (letterhead.logo_bytes.empty()) return "";
  const char* type =
      letterhead.logo_format == ingest::LabLogoFormat::kJpeg ? "image/jpeg" : "image/png";
  return fmt::format("<img class=\"logo\" src=\"data:{};base64,{}\" alt=\"Logo of {}\">", type,
                     Base64(letterhead.logo_bytes), Html(letterhead.lab_name));
}

std::string Masthead(const Sheet& sheet, const Template& layout, const ReportOptions& options) {
  std::string line = "Report " + sheet.report_number;
  if (!options.document_date.empty()) line += "  ·  issued " + options.document_date.substr(0, 10);
  return fmt::format(
      "<header class=\"masthead\">\n<div class=\"letterhead\">{}<div><p class=\"lab\">{}</p>"
      "<p class=\"address\">{}</p></div></div>\n"
      "<div><h1>{}</h1><p class=\"report-line\">{}</p></div>\n</header>\n",
      LogoHtml(sheet.letterhead),
      Html(sheet.letterhead.draft ? std::string(kDraftWatermark) + ": not for issue"
                                  : sheet.letterhead.lab_name),
      Html(sheet.letterhead.lab_address), Html(layout.title), Html(line));
}

// A draft's watermark: fixed to the viewport, so a browser repeats it on every printed page.
std::string Watermark(const Sheet& sheet) {
  if (!sheet.letterhead.draft) return "";
  return fmt::format("<div class=\"watermark\" aria-hidden=\"true\">{}</div>\n", kDraftWatermark);
}

}  // namespace

std::string RenderHtml(const Sheet& sheet, const Template& layout, const ReportOptions& options) {
  // The PDF document supplies the font metrics, so figures break and space as on the PDF.
  Document metrics(layout, options, sheet.report_number, "", sheet.letterhead);
  metrics.NewPage();
  HtmlContext ctx{metrics.canvas(), metrics.width()};
  std::string out = fmt::format(
      "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
      "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
      "<title>{} – report {}</title>\n<style>{}</style>\n</head>\n<body>\n<div class=\"sheet\">\n",
      Html(layout.title), Html(sheet.report_number), kStyle);
  out += Watermark(sheet) + Masthead(sheet, layout, options) + "<main>\n";
  for (const Section& section : sheet.sections) {
    out += fmt::format(
        "<section id=\"section-{0}\" aria-labelledby=\"heading-{0}\">\n"
        "<h2 id=\"heading-{0}\">{1}</h2>\n",
        XmlEscape(section.key), Html(section.Heading()));
    for (const Block& block : section.blocks) out += BlockHtml(ctx, block);
    out += "</section>\n";
  }
  out += "</main>\n<footer class=\"muted\">Results apply to the specimens tested.  ·  Report " +
         Html(sheet.report_number) + "</footer>\n</div>\n</body>\n</html>\n";
  return out;
}

}  // namespace sorbtrace::report::internal
