// The PDF document of the report stage (internal): libharu document with the embedded DejaVu
// fonts, pages with the sheet's running header and "page n of N" footer, and a flowing text
// cursor with paragraphs, key-value blocks and tables that continue on further pages.
//
// Page breaks (common typesetting practice, e.g. the widow and orphan rules of TeX and CSS):
// a block that continues on a new page carries at least kMinLinesAcrossBreak lines, bullet
// items or table rows there and leaves at least as many before the break, so no page starts
// or ends with a lone line, bullet or row; a continued table repeats its header. A heading is
// kept with the start of its first block by the caller (RenderPdf).
#pragma once

#include <hpdf.h>

#include <filesystem>
#include <memory>
#include <string>
#include <vector>

#include "pipeline/report/plot/plot.h"
#include "pipeline/report/report.h"
#include "pipeline/report/sheet.h"

namespace sorbtrace::report::internal {

// Fewest lines, bullet items or table rows a block leaves on either side of a page break.
inline constexpr size_t kMinLinesAcrossBreak = 2;

// Height [pt] of `count` parts of given heights from `first` on (the page-break lookahead).
double HeightOfRange(const std::vector<double>& heights, size_t first, size_t count);

struct TableColumn {
  std::string header;
  double width_pt = 50.0;
  bool align_right = false;
};

class Document {
 public:
  // Loads the fonts from options.font_directory (InputError naming the file if missing). The
  // letterhead names the laboratory in the running header; a draft's pages carry the DRAFT
  // watermark.
  Document(const Template& layout, const ReportOptions& options, std::string report_number,
           std::string software_version, Letterhead letterhead);
  ~Document();
  Document(const Document&) = delete;
  Document& operator=(const Document&) = delete;

  void NewPage();
  // A new page unless the current one is still empty (below its running header).
  void NewPageIfUsed();
  int num_pages() const { return static_cast<int>(pages_.size()); }
  plot::Canvas& canvas() { return *canvas_; }

  // Content area of the current page [pt] and the flowing cursor (baseline of the next line).
  double left() const { return left_; }
  double right() const { return right_; }
  double width() const { return right_ - left_; }
  double bottom() const { return bottom_; }
  double top() const { return top_; }
  double cursor() const { return cursor_; }
  void set_cursor(double y) { cursor_ = y; }
  void Skip(double height_pt) { cursor_ -= height_pt; }
  // Starts a new page unless `height_pt` still fits above the bottom margin.
  void EnsureSpace(double height_pt);
  // Height left above the bottom margin on the current page [pt].
  double Remaining() const { return cursor_ - bottom_; }
  // When false, EnsureSpace never adds pages (the one-page summary); content that does not
  // fit then runs past the bottom margin and overflowed() turns true.
  void set_allow_new_pages(bool allow) { allow_new_pages_ = allow; }
  bool overflowed() const { return overflowed_; }
  // Height of the start of a block that must stay with a heading above it [pt]: the first
  // kMinLinesAcrossBreak lines / items / rows (with a table's header).
  double ParagraphStartHeight(const std::string& text, double size_pt, double indent_pt,
                              bool bold) const;
  double BulletsStartHeight(const std::vector<std::string>& items, double size_pt) const;
  double KeyValuesStartHeight(const std::vector<std::pair<std::string, std::string>>& rows,
                              double label_width_pt, double size_pt) const;
  double TableStartHeight(const std::vector<TableColumn>& columns,
                          const std::vector<std::vector<std::string>>& rows, double size_pt) const;

  // A numbered section heading, e.g. "2  Sorption isotherm".
  void Heading(const std::string& text);
  void Subheading(const std::string& text);
  // Wrapped text; returns the height used.
  double Paragraph(const std::string& text, double size_pt = 8.5, double indent_pt = 0.0,
                   plot::Color color = plot::palette::kInk, bool bold = false);
  // trailing_pt: the height of a short closing line drawn right after the list (the end-of-
  // report line), counted with the last item when the page breaks, so that the closing line
  // never stands alone on a page (it takes the last items with it; keep with previous, common
  // typesetting practice).
  void Bullets(const std::vector<std::string>& items, double size_pt = 8.5,
               double trailing_pt = 0.0);
  // Two columns: label (slate) and value (ink), wrapped.
  void KeyValues(const std::vector<std::pair<std::string, std::string>>& rows,
                 double label_width_pt, double size_pt = 8.5);
  // A table; rows that no longer fit continue on a new page under a repeated header.
  // Cells may contain '\n'; long cells are wrapped to the column width.
  void Table(const std::vector<TableColumn>& columns,
             const std::vector<std::vector<std::string>>& rows, double size_pt = 7.5);

  // Writes footers ("page n of N") and returns the PDF bytes.
  std::string Finish();

 private:
  // libharu's error handler: records the first error (a C callback must not throw).
  static void OnError(HPDF_STATUS error, HPDF_STATUS detail, void* user_data);
  // Throws ComputationError naming the first libharu error, if any, and what was being done.
  void ThrowIfFailed(const char* doing) const;
  // Fonts, encoder and document information (the constructor frees pdf_ if this throws).
  void SetUpDocument(const std::filesystem::path& regular, const std::filesystem::path& bold);
  void LoadLogo();  // letterhead_.logo_bytes into logo_; InputError at the profile's key
  double DrawLogo(double x, double y_top);  // its width [pt]; 0 without a logo
  void DrawHeader();
  void DrawWatermark();  // drafts: under the page's content
  // Before part `index` of a block whose parts have `heights`: a new page when the part does
  // not fit, or earlier when the break would leave fewer than kMinLinesAcrossBreak parts on
  // either side of it. `first_on_page` is the index of the block's first part on this page.
  void BreakBefore(const std::vector<double>& heights, size_t index, size_t first_on_page);
  std::vector<double> BulletItemHeights(const std::vector<std::string>& items,
                                        double size_pt) const;
  std::vector<double> KeyValueRowHeights(
      const std::vector<std::pair<std::string, std::string>>& rows, double label_width_pt,
      double size_pt) const;
  double TableRowHeight(const std::vector<TableColumn>& columns,
                        const std::vector<std::string>& cells, double size_pt, bool bold) const;
  void TableRow(const std::vector<TableColumn>& columns, const std::vector<std::string>& cells,
                double size_pt, bool bold, bool shaded);

  const Template& layout_;
  std::string report_number_;
  std::string software_version_;
  std::string document_date_;
  Letterhead letterhead_;
  HPDF_Doc pdf_ = nullptr;
  HPDF_Font regular_ = nullptr;
  HPDF_Font bold_ = nullptr;
  HPDF_Image logo_ = nullptr;  // the letterhead's logo, loaded once (SetUpDocument)
  std::vector<HPDF_Page> pages_;
  std::unique_ptr<plot::Canvas> canvas_;
  double page_width_ = 0.0;
  double page_height_ = 0.0;
  double left_ = 0.0, right_ = 0.0, bottom_ = 0.0, top_ = 0.0, cursor_ = 0.0;
  bool allow_new_pages_ = true;
  bool overflowed_ = false;
  HPDF_STATUS first_error_ = HPDF_OK;
  HPDF_STATUS first_detail_ = 0;
};

}  // namespace sorbtrace::report::internal
