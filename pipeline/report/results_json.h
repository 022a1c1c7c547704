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

// (file name, content): equilibrium_table.csv, fit_parameters.csv, pore_distribution.csv.
std::vector<std::pair<std::string, std::string>> BuildCsvFiles(const ReportInputs& inputs,
                                                               const Sheet& sheet);

}  // namespace sorbtrace::report
