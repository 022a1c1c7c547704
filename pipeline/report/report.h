// Report stage: composes what the lab issues — the PDF datasheet (libharu, template-driven,
// vector plots with uncertainty bands, embedded DejaVu font), the same sheet as one
// self-contained HTML file (inline SVG figures and CSS), the results JSON (every number
// on the sheet, with units and uncertainties; what `sorbtrace verify` re-derives) and CSV
// tables. Pure: returns bytes; the run stage writes them atomically.
#pragma once

#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>
#include <utility>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/common/number_text.h"
#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/fit/fit_stage.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/pores/pores.h"
#include "pipeline/reduce/reduce.h"

namespace sorbtrace::report {

enum class PageSize { kA4, kLetter };

// A report template (templates/*.toml): layout, units, precision rules, sections and reference
// conditions. LoadTemplate rejects unknown keys naming the key. The laboratory's identity is
// not part of a template: it comes from the job's laboratory profile (ingest::LabProfile).
struct Template {
  std::string name;                                   // e.g. "full", "summary"
  std::string title = "Moisture sorption datasheet";  // printed at the top of every page
  PageSize page_size = PageSize::kA4;
  double margin_mm = 18.0;
  // Units and precision.
  bool moisture_in_percent = true;  // else kg/kg
  // Significant digits of a printed uncertainty: 1 or 2 (JCGM 100:2008, 7.2.6).
  int uncertainty_significant_digits = common::kUncertaintySignificantDigits;
  // Sections in order: "summary", "conformity", "isotherm", "models", "pores", "kinetics",
  // "equilibria", "method", "deviations", "cautions".
  std::vector<std::string> sections;
  // One-page layout: the summary, a small isotherm figure and the cautions share page 1;
  // further sections are left out (the summary template).
  bool compact = false;
  // Outputs written ([layout] outputs = ["pdf", "html"]): datasheet.pdf and/or
  // datasheet.html, both rendered from the same sheet. Default: the PDF only.
  bool write_pdf = true;
  bool write_html = false;
  std::vector<pores::ReferenceCondition> reference_conditions;
  std::filesystem::path source_file;
};

Template LoadTemplate(const std::filesystem::path& template_file);

// Everything the sheet shows. The run stage fills it.
struct ReportInputs {
  const ingest::IngestResult* ingested = nullptr;
  const equilibrate::EquilibriumSet* equilibria = nullptr;
  const reduce::ReducedIsotherms* reduced = nullptr;
  const fit::IsothermFits* fits = nullptr;
  const pores::PoreAnalysis* pores = nullptr;
  nlohmann::ordered_json effective_settings;  // all settings after overrides, recorded
  std::string software_version;
};

struct ReportOptions {
  std::filesystem::path font_directory = "/usr/share/fonts/truetype/dejavu";
  std::string document_date;  // ISO 8601; fixed (job issue date or SOURCE_DATE_EPOCH)
};

struct ReportArtifacts {
  std::string pdf;   // bytes of datasheet.pdf; empty when the template does not write it
  std::string html;  // datasheet.html (self-contained); empty when the template does not write it
  std::string results_json;                                    // results.json
  std::vector<std::pair<std::string, std::string>> csv_files;  // (file name, content)
  int num_pages = 0;
  std::vector<Diagnostic> warnings;  // e.g. a text field printed shortened
};

ReportArtifacts ComposeReport(const ReportInputs& inputs, const Template& layout,
                              const ReportOptions& options);

// Formats value +- uncertainty with the template's rule (uncertainty to N significant digits,
// value rounded to match), e.g. (0.0123456, 0.00123) -> "0.0123 ± 0.0012"; the rule lives in
// pipeline/common/number_text.h.
using common::FormatWithUncertainty;

}  // namespace sorbtrace::report
