// The results JSON and the CSV companions (internal to the report stage).
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <utility>
#include <vector>

#include "pipeline/report/report.h"
#include "pipeline/report/sheet.h"

namespace sorbtrace::report {

// Top-level keys, in order: schema, software, report, job, inputs, settings, headline,
// hygroscopicity_class, best_model, cautions, standing_statements, equilibria, isotherm,
// fits, pores.
nlohmann::ordered_json BuildResultsJson(const ReportInputs& inputs, const Template& layout,
                                        const ReportOptions& options, const Sheet& sheet,
                                        int num_pages);

// One text cell of the CSV companions: RFC 4180 quoting, and OWASP CSV-injection
// neutralisation (a leading =, +, -, @, tab or CR gets a single quote in front and the cell
// is quoted; a plain number such as "-0.5" is left as it is).
std::string CsvText(const std::string& text);

// (file name, content): equilibrium_table.csv, fit_parameters.csv, pore_distribution.csv.
std::vector<std::pair<std::string, std::string>> BuildCsvFiles(const ReportInputs& inputs,
                                                               const Sheet& sheet);

}  // namespace sorbtrace::report
