// The section builders of the Sheet (internal to the report stage): one function per
// template section key, each filling a Section with blocks from the stage results. Only
// BuildSheet (sheet.cc) calls them; nothing here draws or lays out a page.
#pragma once

#include <string>
#include <vector>

#include "pipeline/report/sheet.h"

namespace sorbtrace::report::internal {

// What a builder reads: the stage results, the template, the options and the parts of the
// sheet built before the sections (quantities, model rows, cautions).
struct SectionContext {
  const ReportInputs& inputs;
  const Template& layout;
  const ReportOptions& options;
  const Sheet& sheet;
  // 1 kg/kg = 100 % (mass percent, dry basis).
  double moisture_scale() const { return sheet.rules.moisture_in_percent ? 100.0 : 1.0; }
};

// One builder per section key ("summary", "conformity", "isotherm", "models", "pores",
// "kinetics", "equilibria", "method", "deviations", "cautions"); compact: the one-page summary.
void BuildSummarySection(const SectionContext& ctx, bool compact, Section& section);
void BuildConformitySection(const SectionContext& ctx, Section& section);
void BuildIsothermSection(const SectionContext& ctx, Section& section);
void BuildModelsSection(const SectionContext& ctx, Section& section);
void BuildPoresSection(const SectionContext& ctx, Section& section);
void BuildKineticsSection(const SectionContext& ctx, Section& section);
void BuildEquilibriaSection(const SectionContext& ctx, Section& section);
void BuildMethodSection(const SectionContext& ctx, Section& section);
void BuildDeviationsSection(const SectionContext& ctx, Section& section);
void BuildCautionsSection(const SectionContext& ctx, Section& section);

// The isotherm figure (best fits with their bands, measured points with U, retention
// points; with_secondary: capillary pressure along the top).
plot::Figure IsothermFigure(const SectionContext& ctx, bool with_secondary);
// The distinct measurement temperatures of the reduced points [K], ascending.
std::vector<double> DistinctTemperatures(const ReportInputs& inputs);

// How the cycles of a log with several adsorption/desorption cycles were combined (one
// sentence per data set and branch, from the fit groups' cycle factors); "" without cycles.
std::string CyclesSentence(const SectionContext& ctx);

// A model's registry key as a short legend name: "gab" -> "GAB", "oswin" -> "Oswin".
std::string ShortModelName(std::string name);

// The job's [[specification]] tables evaluated on the sheet's headline (section_conformity.cc):
// fills sheet.conformity. A key that names no headline quantity a job can have (a typo, a
// reference condition the template does not list, a unit that does not fit the quantity) is an
// InputError at the specification's line in the job file, listing the keys of this sheet.
void EvaluateSpecifications(const ReportInputs& inputs, Sheet& sheet);
// The summary page's one line per specification (empty table when there is none).
TableBlock ConformitySummaryTable(const Sheet& sheet);

// "not available: <reason>", unless the reason says so already.
std::string NotAvailable(const std::string& reason);

}  // namespace sorbtrace::report::internal
