// The renderers of the Sheet (internal to the report stage): each reads only the Sheet.
#pragma once

#include <string>

#include "pipeline/report/sheet.h"

namespace sorbtrace::report::internal {

struct RenderedPdf {
  std::string bytes;
  int num_pages = 0;
};

// datasheet.pdf: the sections laid out on pages (datasheet.cc).
RenderedPdf RenderPdf(const Sheet& sheet, const Template& layout, const ReportOptions& options,
                      const std::string& software_version);

// datasheet.html: one self-contained file (inline CSS and SVG figures, no scripts, nothing
// fetched), the same sections, tables and figures as the PDF, every text identical
// (html.cc). Deterministic: no time stamp other than the sheet's own issue date.
std::string RenderHtml(const Sheet& sheet, const Template& layout, const ReportOptions& options);

}  // namespace sorbtrace::report::internal
