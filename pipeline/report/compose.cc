// ComposeReport: builds the Sheet (the one reader of the stage results) and every output the
// template asks for from it: the PDF and HTML renderings, results.json and the CSV companions.
#include <string>
#include <utility>

#include "pipeline/report/renderers.h"
#include "pipeline/report/report.h"
#include "pipeline/report/results_json.h"
#include "pipeline/report/sheet.h"

namespace sorbtrace::report {

ReportArtifacts ComposeReport(const ReportInputs& inputs, const Template& layout,
                              const ReportOptions& options) {
  const internal::Sheet sheet = internal::BuildSheet(inputs, layout, options);
  ReportArtifacts artifacts;
  artifacts.warnings = sheet.warnings;
  // The page count is recorded in results.json, so the PDF is laid out even when the
  // template writes only the HTML report.
  internal::RenderedPdf pdf = internal::RenderPdf(sheet, layout, options, inputs.software_version);
  artifacts.num_pages = pdf.num_pages;
  if (layout.write_pdf) artifacts.pdf = std::move(pdf.bytes);
  if (layout.write_html) artifacts.html = internal::RenderHtml(sheet, layout, options);
  artifacts.results_json =
      internal::BuildResultsJson(sheet, artifacts.num_pages)
          .dump(2, ' ', false, nlohmann::ordered_json::error_handler_t::replace) +
      "\n";
  artifacts.csv_files = internal::BuildCsvFiles(sheet);
  return artifacts;
}

}  // namespace sorbtrace::report
