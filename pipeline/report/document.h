// The PDF document of the report stage (internal): libharu document with the embedded DejaVu
// fonts, pages with the sheet's running header and "page n of N" footer, and a flowing text
// cursor with paragraphs, key-value blocks and tables that continue on further pages.
#pragma once

#include <hpdf.h>

#include <filesystem>
#include <memory>
#include <string>
#include <vector>

#include "pipeline/report/plot/plot.h"
#include "pipeline/report/report.h"
#include "pipeline/report/sheet.h"

namespace sorbtrace::report {

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
  // When false, EnsureSpace never adds pages (the one-page summary).
  void set_allow_new_pages(bool allow) { allow_new_pages_ = allow; }

  // A numbered section heading, e.g. "2  Sorption isotherm".
  void Heading(const std::string& text);
  void Subheading(const std::string& text);
  // Wrapped text; returns the height used.
  double Paragraph(const std::string& text, double size_pt = 8.5, double indent_pt = 0.0,
                   plot::Color color = plot::palette::kInk, bool bold = false);
  void Bullets(const std::vector<std::string>& items, double size_pt = 8.5);
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
  void DrawHeader();
  void DrawWatermark();  // drafts: under the page's content
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
  std::vector<HPDF_Page> pages_;
  std::unique_ptr<plot::Canvas> canvas_;
  double page_width_ = 0.0;
  double page_height_ = 0.0;
  double left_ = 0.0, right_ = 0.0, bottom_ = 0.0, top_ = 0.0, cursor_ = 0.0;
  bool allow_new_pages_ = true;
  HPDF_STATUS first_error_ = HPDF_OK;
  HPDF_STATUS first_detail_ = 0;
};

}  // namespace sorbtrace::report
