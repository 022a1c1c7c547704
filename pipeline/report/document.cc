#include "pipeline/report/document.h"

#include <fmt/format.h>

#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <string>

#include "pipeline/common/diagnostics.h"
#include "pipeline/report/internal/pdf_archival.h"
#include "pipeline/report/plot/pdf_canvas.h"
#include "pipeline/report/plot/text.h"

namespace sorbtrace::report::internal {
namespace {

using plot::Canvas;
using plot::Color;
namespace palette = plot::palette;

HPDF_REAL F(double value) { return static_cast<HPDF_REAL>(value); }

constexpr double kPointsPerMm = 72.0 / 25.4;  // PDF points are 1/72 inch
// ISO 216 A4 and ANSI letter, in points.
constexpr double kA4Width = 595.276, kA4Height = 841.890;
constexpr double kLetterWidth = 612.0, kLetterHeight = 792.0;
constexpr double kHeaderHeight = 34.0;  // running header band below the top margin
constexpr double kFooterHeight = 22.0;
// Logo height in the header band [pt] (this program's layout): the two lines of name and address
// beside it; at most kMaxLogoWidth_pt wide (a wide logo is scaled down to it).
constexpr double kLogoHeight_pt = 24.0;
constexpr double kMaxLogoWidth_pt = 96.0;
constexpr double kLogoGap_pt = 6.0;

// The sheet's accent: a deep teal rule, the same hue as the first data series.
constexpr Color kAccent = palette::kTeal;
constexpr Color kShade{0.945, 0.955, 0.96};  // zebra rows and table header

// "2026-10-12" or "2026-10-12T09:30:00Z" -> HPDF_Date; false if not of that form.
bool ParseDate(const std::string& text, HPDF_Date* date) {
  int year = 0, month = 0, day = 0, hour = 0, minute = 0, second = 0;
  if (text.size() < 10) return false;
  if (std::sscanf(text.c_str(), "%4d-%2d-%2d", &year, &month, &day) != 3) return false;
  if (text.size() >= 19 && (text[10] == 'T' || text[10] == ' ')) {
    if (std::sscanf(text.c_str() + 11, "%2d:%2d:%2d", &hour, &minute, &second) != 3) return false;
  }
  if (month < 1 || month > 12 || day < 1 || day > 31 || hour > 23 || minute > 59 || second > 59) {
    return false;
  }
  *date = HPDF_Date{};
  date->year = year;
  date->month = month;
  date->day = day;
  date->hour = hour;
  date->minutes = minute;
  date->seconds = second;
  date->ind = 'Z';
  return true;
}

}  // namespace

void Document::OnError(HPDF_STATUS error, HPDF_STATUS detail, void* user_data) {
  auto* self = static_cast<Document*>(user_data);
  if (self->first_error_ == HPDF_OK) {
    self->first_error_ = error;
    self->first_detail_ = detail;
  }
}

Document::Document(const Template& layout, const ReportOptions& options, std::string report_number,
                   std::string software_version, Letterhead letterhead)
    : layout_(layout),
      report_number_(std::move(report_number)),
      software_version_(std::move(software_version)),
      document_date_(options.document_date),
      letterhead_(std::move(letterhead)) {
  const std::filesystem::path regular = options.font_directory / "DejaVuSans.ttf";
  const std::filesystem::path bold = options.font_directory / "DejaVuSans-Bold.ttf";
  for (const auto& font : {regular, bold}) {
    if (!std::filesystem::exists(font)) {
      throw InputError(SourceLocation{font.string(), 0, 0}, "font file not found",
                       "the DejaVu TrueType fonts (Debian package fonts-dejavu-core)");
    }
  }
  pdf_ = HPDF_New(&Document::OnError, this);
  if (pdf_ == nullptr) throw ComputationError("PDF writer could not be created");
  try {
    SetUpDocument(regular, bold);
  } catch (...) {
    HPDF_Free(pdf_);  // the destructor does not run for a throwing constructor
    pdf_ = nullptr;
    throw;
  }
  if (layout_.page_size == PageSize::kLetter) {
    page_width_ = kLetterWidth;
    page_height_ = kLetterHeight;
  } else {
    page_width_ = kA4Width;
    page_height_ = kA4Height;
  }
}

void Document::SetUpDocument(const std::filesystem::path& regular,
                             const std::filesystem::path& bold) {
  HPDF_SetCompressionMode(pdf_, HPDF_COMP_ALL);
  HPDF_UseUTFEncodings(pdf_);
  HPDF_SetCurrentEncoder(pdf_, "UTF-8");
  // Embedded (subset of used glyphs) so the sheet prints the same everywhere.
  const char* regular_name = HPDF_LoadTTFontFromFile(pdf_, regular.c_str(), HPDF_TRUE);
  const char* bold_name = HPDF_LoadTTFontFromFile(pdf_, bold.c_str(), HPDF_TRUE);
  if (regular_name == nullptr || bold_name == nullptr) {
    throw InputError(SourceLocation{regular.string(), 0, 0}, "font file could not be loaded",
                     "a TrueType font");
  }
  regular_ = HPDF_GetFont(pdf_, regular_name, "UTF-8");
  bold_ = HPDF_GetFont(pdf_, bold_name, "UTF-8");
  if (regular_ == nullptr || bold_ == nullptr) {
    ThrowIfFailed("selecting the fonts");
    throw ComputationError("PDF writer failed while selecting the fonts");
  }

  // libharu's ToUnicode maps are invalid CID maps: replaced (pdf_archival.h says why).
  internal::RepairToUnicode(regular_);
  internal::RepairToUnicode(bold_);
  // Document information, XMP and file identifier: fixed, from the inputs only (no wall
  // clock); strings pass the same cleaning and length limits as the printed text.
  internal::DocumentIdentity identity;
  identity.title = plot::PrintableText(layout_.title);
  identity.author =
      plot::PrintableText(letterhead_.lab_name.empty() ? "sorbtrace" : letterhead_.lab_name);
  identity.subject = plot::PrintableText(report_number_);
  identity.creator = plot::PrintableText("sorbtrace " + software_version_);
  identity.producer = identity.creator + " (libharu " + HPDF_GetVersion() + ")";
  HPDF_Date date;
  if (ParseDate(document_date_, &date)) identity.date = date;
  internal::WriteDocumentIdentity(pdf_, identity);
  internal::AddOutputIntent(pdf_, SORBTRACE_ICC_PROFILE);
  ThrowIfFailed("writing the document information");
  LoadLogo();
}

void Document::LoadLogo() {
  if (letterhead_.logo_bytes.empty()) return;
  const auto* data = reinterpret_cast<const HPDF_BYTE*>(letterhead_.logo_bytes.data());
  const auto size = static_cast<HPDF_UINT>(letterhead_.logo_bytes.size());
  logo_ = letterhead_.logo_format == ingest::LabLogoFormat::kJpeg
              ? HPDF_LoadJpegImageFromMem(pdf_, data, size)
              : HPDF_LoadPngImageFromMem(pdf_, data, size);
  if (logo_ != nullptr && first_error_ == HPDF_OK) return;
  // The header checks of ingest::LoadLabLogo passed, the decoder did not: a damaged image.
  throw InputError(
      letterhead_.logo_where,
      fmt::format("the logo image could not be decoded (libharu error 0x{:04X})", first_error_),
      "an undamaged PNG (8-bit grey or RGB, no transparency) or JPEG file");
}

double Document::DrawLogo(double x, double y_top) {
  if (logo_ == nullptr || pages_.empty()) return 0.0;
  double height = kLogoHeight_pt;
  double width = height * letterhead_.logo_aspect;
  if (width > kMaxLogoWidth_pt) {
    width = kMaxLogoWidth_pt;
    height = width / letterhead_.logo_aspect;
  }
  HPDF_Page_DrawImage(pages_.back(), logo_, F(x), F(y_top - height), F(width), F(height));
  return width + kLogoGap_pt;
}

Document::~Document() {
  if (pdf_ != nullptr) HPDF_Free(pdf_);
}

void Document::ThrowIfFailed(const char* doing) const {
  if (first_error_ == HPDF_OK) return;
  // Every libharu error reaches OnError; none is ignored. A drawing call that failed leaves
  // the document in an error state in which HPDF_AddPage returns no page: stop here.
  throw ComputationError(
      fmt::format("PDF writer failed while {} (libharu error 0x{:04X}, detail {})", doing,
                  first_error_, first_detail_));
}

void Document::NewPage() {
  ThrowIfFailed("drawing the previous page");
  HPDF_Page page = HPDF_AddPage(pdf_);
  if (page == nullptr) {
    ThrowIfFailed("adding a page");
    throw ComputationError("PDF writer failed while adding a page");
  }
  HPDF_Page_SetWidth(page, F(page_width_));
  HPDF_Page_SetHeight(page, F(page_height_));
  pages_.push_back(page);
  canvas_ = std::make_unique<plot::PdfCanvas>(page, regular_, bold_);
  const double margin = layout_.margin_mm * kPointsPerMm;
  left_ = margin;
  right_ = page_width_ - margin;
  top_ = page_height_ - margin - kHeaderHeight;
  bottom_ = margin + kFooterHeight;
  cursor_ = top_;
  if (letterhead_.draft) DrawWatermark();
  DrawHeader();
}

// Large, light and under everything else drawn on the page (PDF/A-1 allows no transparency).
void Document::DrawWatermark() {
  constexpr double kSize_pt = 120.0;
  constexpr plot::Color kLight{0.84, 0.85, 0.88};
  canvas_->Text(page_width_ / 2.0, page_height_ / 2.0, kDraftWatermark, kSize_pt,
                Canvas::Align::kCenter, true, kLight);
}

void Document::NewPageIfUsed() {
  if (pages_.empty() || cursor_ < top_ - 0.5) NewPage();
}

void Document::DrawHeader() {
  Canvas& c = *canvas_;
  const double margin = layout_.margin_mm * kPointsPerMm;
  const double y_top = page_height_ - margin;
  // A short, thick accent bar at the left and a thin rule across: the sheet's mark.
  c.FillRect({left_, y_top - 3.0, 46.0, 3.0}, kAccent);
  c.Line(left_ + 46.0, y_top - 2.5, right_, y_top - 2.5, 0.4, palette::kSlate);
  const std::string lab =
      letterhead_.draft ? std::string(kDraftWatermark) + ": not for issue" : letterhead_.lab_name;
  // The logo below the rule, the laboratory's name and address beside it.
  const double text_left = left_ + DrawLogo(left_, y_top - 5.0);
  c.Text(text_left, y_top - 14.0, lab, 9.0, Canvas::Align::kLeft, true);
  if (!letterhead_.lab_address.empty()) {
    c.Text(text_left, y_top - 23.5, letterhead_.lab_address, 7.0, Canvas::Align::kLeft, false,
           palette::kSlate);
  }
  c.Text(right_, y_top - 14.0, layout_.title, 9.0, Canvas::Align::kRight, true, kAccent);
  std::string line = "Report " + report_number_;
  if (!document_date_.empty()) line += "  ·  issued " + document_date_.substr(0, 10);
  c.Text(right_, y_top - 23.5, line, 7.0, Canvas::Align::kRight, false, palette::kSlate);
}

void Document::EnsureSpace(double height_pt) {
  if (pages_.empty()) {
    NewPage();
    return;
  }
  if (cursor_ - height_pt >= bottom_) return;
  // Taller than a whole page: a new page would only leave this one blank.
  const bool page_empty = cursor_ >= top_ - 0.5;
  if (allow_new_pages_ && !page_empty) {
    NewPage();
  } else {
    overflowed_ = true;
  }
}

double HeightOfRange(const std::vector<double>& heights, size_t first, size_t count) {
  double sum = 0.0;
  for (size_t i = first; i < heights.size() && i < first + count; ++i) sum += heights[i];
  return sum;
}

namespace {

// Parts that must stay together at the start (or the end) of a block of n parts: all of a
// block too short to be split with kMinLinesAcrossBreak parts on each side.
size_t KeptTogether(size_t n) { return n < 2 * kMinLinesAcrossBreak ? n : kMinLinesAcrossBreak; }

}  // namespace

void Document::BreakBefore(const std::vector<double>& heights, size_t index, size_t first_on_page) {
  const size_t n = heights.size();
  const double room = cursor_ - bottom_;
  if (HeightOfRange(heights, index, n - index) <= room) return;  // the rest fits
  if (heights[index] > room) {
    EnsureSpace(heights[index]);
    return;
  }
  // The rest breaks somewhere: where the parts from here stop fitting.
  size_t fit_end = index;
  double used = 0.0;
  while (fit_end < n && used + heights[fit_end] <= room) used += heights[fit_end++];
  const size_t keep = KeptTogether(n);
  const bool widow = n - fit_end < keep;
  const bool leaves_enough = index - first_on_page >= keep;
  if (widow && index + keep >= n && leaves_enough) EnsureSpace(room + 1.0);
}

void Document::Heading(const std::string& text) {
  EnsureSpace(60.0);
  if (cursor_ < top_ - 1.0) Skip(8.0);
  Skip(12.0);
  canvas_->FillRect({left_, cursor_ - 2.0, 3.0, 12.0}, kAccent);
  canvas_->Text(left_ + 8.0, cursor_, text, 11.5, Canvas::Align::kLeft, true);
  Skip(10.0);
}

void Document::Subheading(const std::string& text) {
  EnsureSpace(30.0);
  Skip(12.0);
  canvas_->Text(left_, cursor_, text, 9.0, Canvas::Align::kLeft, true, kAccent);
  Skip(4.0);
}

double Document::ParagraphStartHeight(const std::string& text, double size_pt, double indent_pt,
                                      bool bold) const {
  const size_t lines = canvas_->Wrap(text, size_pt, width() - indent_pt, bold).size();
  return size_pt * 1.32 * static_cast<double>(KeptTogether(lines));
}

double Document::Paragraph(const std::string& text, double size_pt, double indent_pt, Color color,
                           bool bold) {
  const double leading = size_pt * 1.32;
  const auto lines = canvas_->Wrap(text, size_pt, width() - indent_pt, bold);
  const std::vector<double> heights(lines.size(), leading);
  size_t first_on_page = 0;
  double used = 0.0;
  for (size_t i = 0; i < lines.size(); ++i) {
    const size_t page = pages_.size();
    BreakBefore(heights, i, first_on_page);
    if (pages_.size() != page) first_on_page = i;
    Skip(leading);
    canvas_->Text(left_ + indent_pt, cursor_, lines[i], size_pt, Canvas::Align::kLeft, bold, color);
    used += leading;
  }
  return used;
}

std::vector<double> Document::BulletItemHeights(const std::vector<std::string>& items,
                                                double size_pt) const {
  const double leading = size_pt * 1.32;
  std::vector<double> heights;
  heights.reserve(items.size());
  for (const std::string& item : items) {
    const auto lines = canvas_->Wrap(item, size_pt, width() - 12.0);
    heights.push_back(leading * static_cast<double>(lines.size()) + 1.5);
  }
  return heights;
}

double Document::BulletsStartHeight(const std::vector<std::string>& items, double size_pt) const {
  return HeightOfRange(BulletItemHeights(items, size_pt), 0, KeptTogether(items.size()));
}

void Document::Bullets(const std::vector<std::string>& items, double size_pt, double trailing_pt) {
  const double leading = size_pt * 1.32;
  std::vector<double> heights = BulletItemHeights(items, size_pt);
  if (!heights.empty()) heights.back() += trailing_pt;
  size_t first_on_page = 0;
  for (size_t k = 0; k < items.size(); ++k) {
    const size_t page = pages_.size();
    BreakBefore(heights, k, first_on_page);  // an item is not split unless taller than a page
    if (pages_.size() != page) first_on_page = k;
    const auto lines = canvas_->Wrap(items[k], size_pt, width() - 12.0);
    for (size_t i = 0; i < lines.size(); ++i) {
      EnsureSpace(leading);
      Skip(leading);
      if (i == 0)
        canvas_->Text(left_ + 2.0, cursor_, "•", size_pt, Canvas::Align::kLeft, false, kAccent);
      canvas_->Text(left_ + 12.0, cursor_, lines[i], size_pt);
    }
    Skip(1.5);
  }
}

std::vector<double> Document::KeyValueRowHeights(
    const std::vector<std::pair<std::string, std::string>>& rows, double label_width_pt,
    double size_pt) const {
  const double leading = size_pt * 1.35;
  std::vector<double> heights;
  heights.reserve(rows.size());
  for (const auto& [label, value] : rows) {
    const size_t n = std::max(canvas_->Wrap(label, size_pt, label_width_pt - 6.0).size(),
                              canvas_->Wrap(value, size_pt, width() - label_width_pt).size());
    heights.push_back(leading * static_cast<double>(n) + 1.0);
  }
  return heights;
}

double Document::KeyValuesStartHeight(const std::vector<std::pair<std::string, std::string>>& rows,
                                      double label_width_pt, double size_pt) const {
  return HeightOfRange(KeyValueRowHeights(rows, label_width_pt, size_pt), 0,
                       KeptTogether(rows.size()));
}

void Document::KeyValues(const std::vector<std::pair<std::string, std::string>>& rows,
                         double label_width_pt, double size_pt) {
  const double leading = size_pt * 1.35;
  const std::vector<double> heights = KeyValueRowHeights(rows, label_width_pt, size_pt);
  size_t first_on_page = 0;
  for (size_t r = 0; r < rows.size(); ++r) {
    const auto& [label, value] = rows[r];
    const size_t page = pages_.size();
    BreakBefore(heights, r, first_on_page);
    if (pages_.size() != page) first_on_page = r;
    const auto label_lines = canvas_->Wrap(label, size_pt, label_width_pt - 6.0);
    const auto value_lines = canvas_->Wrap(value, size_pt, width() - label_width_pt);
    const size_t n = std::max(label_lines.size(), value_lines.size());
    for (size_t i = 0; i < n; ++i) {
      Skip(leading);
      if (i < label_lines.size()) {
        canvas_->Text(left_, cursor_, label_lines[i], size_pt, Canvas::Align::kLeft, false,
                      palette::kSlate);
      }
      if (i < value_lines.size())
        canvas_->Text(left_ + label_width_pt, cursor_, value_lines[i], size_pt);
    }
    Skip(1.0);
  }
}

double Document::TableRowHeight(const std::vector<TableColumn>& columns,
                                const std::vector<std::string>& cells, double size_pt,
                                bool bold) const {
  size_t lines = 1;
  for (size_t i = 0; i < columns.size() && i < cells.size(); ++i) {
    lines =
        std::max(lines, canvas_->Wrap(cells[i], size_pt, columns[i].width_pt - 6.0, bold).size());
  }
  return static_cast<double>(lines) * size_pt * 1.3 + 4.0;
}

void Document::TableRow(const std::vector<TableColumn>& columns,
                        const std::vector<std::string>& cells, double size_pt, bool bold,
                        bool shaded) {
  const double height = TableRowHeight(columns, cells, size_pt, bold);
  double total_width = 0.0;
  for (const TableColumn& c : columns) total_width += c.width_pt;
  if (shaded) canvas_->FillRect({left_, cursor_ - height, total_width, height}, kShade);
  double x = left_;
  for (size_t i = 0; i < columns.size(); ++i) {
    const std::string cell = i < cells.size() ? cells[i] : "";
    const auto lines = canvas_->Wrap(cell, size_pt, columns[i].width_pt - 6.0, bold);
    double y = cursor_ - 2.0 - size_pt;
    for (const std::string& line : lines) {
      if (columns[i].align_right) {
        canvas_->Text(x + columns[i].width_pt - 3.0, y, line, size_pt, Canvas::Align::kRight, bold);
      } else {
        canvas_->Text(x + 3.0, y, line, size_pt, Canvas::Align::kLeft, bold);
      }
      y -= size_pt * 1.3;
    }
    x += columns[i].width_pt;
  }
  cursor_ -= height;
  if (!shaded || bold) {
    canvas_->Line(left_, cursor_, left_ + total_width, cursor_, bold ? 0.7 : 0.25,
                  bold ? palette::kInk : palette::kGrid);
  }
}

namespace {
// Space above a table and the "(continued)" line of a continued table [pt].
constexpr double kTableSpaceAbove_pt = 4.0;
constexpr double kContinuedLine_pt = 12.0;
}  // namespace

double Document::TableStartHeight(const std::vector<TableColumn>& columns,
                                  const std::vector<std::vector<std::string>>& rows,
                                  double size_pt) const {
  std::vector<std::string> header;
  header.reserve(columns.size());
  for (const TableColumn& c : columns) header.push_back(c.header);
  double height = kTableSpaceAbove_pt + TableRowHeight(columns, header, size_pt, true);
  for (size_t r = 0; r < KeptTogether(rows.size()); ++r) {
    height += TableRowHeight(columns, rows[r], size_pt, false);
  }
  return height;
}

void Document::Table(const std::vector<TableColumn>& columns,
                     const std::vector<std::vector<std::string>>& rows, double size_pt) {
  std::vector<std::string> header;
  header.reserve(columns.size());
  for (const TableColumn& c : columns) header.push_back(c.header);
  EnsureSpace(TableStartHeight(columns, rows, size_pt));
  Skip(kTableSpaceAbove_pt);
  TableRow(columns, header, size_pt, true, true);
  std::vector<double> heights;
  heights.reserve(rows.size());
  for (const auto& row : rows) heights.push_back(TableRowHeight(columns, row, size_pt, false));
  size_t first_on_page = 0;
  for (size_t r = 0; r < rows.size(); ++r) {
    const size_t page = pages_.size();
    BreakBefore(heights, r, first_on_page);
    if (pages_.size() != page) {
      first_on_page = r;
      canvas_->Text(left_, cursor_ - 8.0, "(continued)", 7.0, Canvas::Align::kLeft, false,
                    palette::kSlate);
      Skip(kContinuedLine_pt);
      TableRow(columns, header, size_pt, true, true);
    }
    TableRow(columns, rows[r], size_pt, false, r % 2 == 1);
  }
}

std::string Document::Finish() {
  const int n = num_pages();
  const double margin = layout_.margin_mm * kPointsPerMm;
  for (int i = 0; i < n; ++i) {
    plot::PdfCanvas c(pages_[static_cast<size_t>(i)], regular_, bold_);
    const double y = margin + 8.0;
    c.Line(left_, y + 9.0, right_, y + 9.0, 0.4, palette::kSlate);
    c.Text(left_, y, "Results apply to the specimens tested.", 7.0, Canvas::Align::kLeft, false,
           palette::kSlate);
    c.Text(right_, y, fmt::format("Report {}  ·  page {} of {}", report_number_, i + 1, n), 7.0,
           Canvas::Align::kRight, false, palette::kSlate);
  }
  ThrowIfFailed("drawing the pages");
  if (HPDF_SaveToStream(pdf_) != HPDF_OK) {
    ThrowIfFailed("saving the document");
    throw ComputationError("PDF writer failed while saving the document");
  }
  std::string bytes(HPDF_GetStreamSize(pdf_), '\0');
  HPDF_ResetStream(pdf_);
  size_t read = 0;
  while (read < bytes.size()) {
    HPDF_UINT32 chunk = static_cast<HPDF_UINT32>(bytes.size() - read);
    const HPDF_STATUS status =
        HPDF_ReadFromStream(pdf_, reinterpret_cast<HPDF_BYTE*>(bytes.data() + read), &chunk);
    read += chunk;
    if (status == HPDF_STREAM_EOF || chunk == 0) break;
    if (status != HPDF_OK) throw ComputationError("PDF writer failed reading its stream");
  }
  bytes.resize(read);
  return bytes;
}

}  // namespace sorbtrace::report::internal
