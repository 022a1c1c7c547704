// The results JSON and the CSV companions (internal to the report stage).
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <utility>
#include <vector>

#include "pipeline/report/sheet.h"

namespace sorbtrace::report::internal {

// Both writers read the Sheet only: its printed cells and quantities and its record of the
// full-precision values (sheet.h, SheetRecord); neither sees a stage result.

// Top-level keys, in order: schema, software, report, job, issue (IssueJson), inputs, settings,
// headline, hygroscopicity_class, conformity (one statement per [[specification]], possibly
// none), best_model, cautions, standing_statements, equilibria, isotherm, fits, pores, sheet.
// "headline" keys are unique within a job and name what a value belongs to, temperature in
// °C ("23C", "23p4C"): moisture_23C_50RH_adsorption; a reference condition whose temperature
// was not measured is keyed by the temperature it was read at and the reference,
// moisture_25C_50RH_adsorption_ref_23C (its label: "... not measured at 23 °C; value at
// 25 °C"); surface_area_<model>_<branch>_<T>C, pore_volume_<method>_<branch>_<T>C,
// modal_radius_<method>_<branch>_<T>C_<n>, best_<branch>_<T>C_<model>_<parameter>,
// hygroscopicity_mass_increase. `sorbtrace batch` makes them the columns of summary.csv.
// A headline "text" is the value as printed, with " (k = 3.3)" where its own coverage factor
// differs from the sheet's. num_pages: the PDF's page count.
nlohmann::ordered_json BuildResultsJson(const Sheet& sheet, int num_pages);

// One text cell of the CSV companions: RFC 4180 quoting, and OWASP CSV-injection
// neutralisation (a leading =, +, -, @, tab or CR gets a single quote in front and the cell
// is quoted; a plain number such as "-0.5" is left as it is).
std::string CsvText(const std::string& text);

// (file name, content): equilibrium_table.csv, fit_parameters.csv, pore_distribution.csv, and
// conformity.csv when the job states a [[specification]] (columns: csv.cc and
// docs/input-formats.md, "Output CSV files").
std::vector<std::pair<std::string, std::string>> BuildCsvFiles(const Sheet& sheet);

}  // namespace sorbtrace::report::internal
