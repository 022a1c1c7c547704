// results.json and the CSV companions are written from the Sheet alone: a Sheet assembled by
// hand, with no stage result behind it, is serialised with every printed text and every
// full-precision value of its record where the writers put them.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "pipeline/report/results_json.h"
#include "pipeline/report/sheet.h"

namespace sorbtrace::report::internal {
namespace {

std::vector<std::string> Lines(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

// A combined point of two specimens at the third step of a desiccator series, numbered 7 in
// its file, in the second cycle: 5.0 % moisture with u = 0.10 % (k = 2: U = 0.20 %) at
// 50 % RH with u = 1.0 % RH.
CombinedPointRecord HandMadePoint(const DisplayRules& rules) {
  CombinedPointRecord record;
  reduce::IsothermPoint& p = record.point;
  p.dataset_id = "bench-A";
  p.specimen_ids = {"S1", "S2"};
  p.num_specimens = 2;
  p.step_index = 2;
  p.step_label = "Mg(NO3)2";
  p.cycle = 1;
  p.temperature_K = 296.15;
  p.rh_fraction = 0.5;
  p.u_rh_fraction = 0.01;
  p.expanded_u_rh_fraction = 0.02;
  p.moisture_kg_per_kg = 0.05;
  p.u_moisture_kg_per_kg = 0.001;
  p.expanded_u_moisture_kg_per_kg = 0.002;
  p.coverage_factor = 2.0;
  p.equilibrated = true;
  record.rh = PointRhQuantity(p, rules);
  record.moisture = PointMoistureQuantity(p, rules);
  record.step_in_file = "7";
  return record;
}

// The sheet: one headline value with its own coverage factor, one printed table, a record
// with the job, one input file, settings, the issue facts and one isotherm point.
Sheet HandMadeSheet() {
  Sheet sheet;
  sheet.moisture_unit = "%";
  // A reference moisture with k = 3.3 (Student t, nu_eff = 3: t_0.975 = 3.18; the value
  // here is invented): U = 3.3 x 0.01667 % = 0.055 %, two significant digits and the value
  // rounded to the same decimal (JCGM 100:2008, 7.2.6).
  DisplayRules own = sheet.rules;
  own.coverage_factor = 3.3;
  Quantity q = MoistureQuantity("moisture_23C_50RH_adsorption", "Moisture content at 23 °C",
                                0.00773, 0.0001667, own);
  q.text = WithOwnCoverage(q, sheet.rules.coverage_factor);
  sheet.headline.push_back(q);
  Section section;
  section.key = "summary";
  section.number = 1;
  section.title = "Summary";
  TableBlock table;
  table.name = "summary_results";
  table.columns = {{"Quantity", 0.6, false}, {"Value ± U", 0.4, false}};
  table.rows.push_back({{q.label, ""}, {q.text, q.key}});
  section.blocks.emplace_back(table);
  sheet.sections.push_back(section);

  SheetRecord& record = sheet.record;
  record.software_version = "9.8.7";
  record.template_name = "full";
  record.template_title = "Moisture sorption datasheet";
  record.document_date = "2026-10-15";
  ingest::JobSpec job;
  job.job_id = "INV-0001";
  job.material_name = "invented board";
  record.job = job;
  ingest::InputFileRecord file;
  file.role = "job";
  file.path = "job.toml";
  file.sha256 = std::string(64, 'a');
  file.size_bytes = 123;
  record.input_files.push_back(file);
  record.settings = {{"fit", {{"loss", "squared"}}}};
  record.issue = {{"draft", true}};
  IsothermRecord isotherm;
  isotherm.points.push_back(HandMadePoint(sheet.rules));
  record.isotherm = isotherm;
  return sheet;
}

TEST(SheetWritersTest, ResultsJsonFromAHandMadeSheet) {
  const Sheet sheet = HandMadeSheet();
  const nlohmann::ordered_json json = BuildResultsJson(sheet, 3);
  EXPECT_EQ(json["software"]["version"], "9.8.7");
  EXPECT_EQ(json["report"]["template"], "full");
  EXPECT_EQ(json["report"]["document_date"], "2026-10-15");
  EXPECT_EQ(json["report"]["num_pages"], 3);
  EXPECT_EQ(json["job"]["job_id"], "INV-0001");
  EXPECT_EQ(json["job"]["material"], "invented board");
  EXPECT_EQ(json["issue"]["draft"], true);
  ASSERT_EQ(json["inputs"].size(), 1u);
  EXPECT_EQ(json["inputs"][0]["size_bytes"], 123);
  EXPECT_EQ(json["settings"]["fit"]["loss"], "squared");
  ASSERT_EQ(json["headline"].size(), 1u);
  const auto& headline = json["headline"][0];
  EXPECT_EQ(headline["text"], "0.773 ± 0.055 % (k = 3.3)");
  EXPECT_DOUBLE_EQ(headline["coverage_factor"].get<double>(), 3.3);
  EXPECT_DOUBLE_EQ(headline["value"].get<double>(), 0.00773);
  // The printed cell and the headline text are one string.
  const auto& cell = json["sheet"]["sections"][0]["tables"][0]["rows"][0][1];
  EXPECT_EQ(cell["text"], headline["text"]);
  EXPECT_EQ(cell["key"], headline["key"]);
  const auto& point = json["isotherm"]["points"][0];
  EXPECT_EQ(point["dataset_id"], "bench-A");
  EXPECT_EQ(point["cycle"], 1);
  EXPECT_DOUBLE_EQ(point["moisture"]["value"].get<double>(), 0.05);
  EXPECT_DOUBLE_EQ(point["moisture"]["standard_uncertainty"].get<double>(), 0.001);
  EXPECT_EQ(point["moisture"]["text"], "5.00 ± 0.20 %");
  EXPECT_EQ(point["rh"]["text"], "50.0 ± 2.0 %");
  // No stage result of these kinds: empty objects, as for a run without them.
  EXPECT_TRUE(json["equilibria"].empty());
  EXPECT_TRUE(json["fits"].empty());
  EXPECT_TRUE(json["pores"].empty());
}

TEST(SheetWritersTest, CsvCompanionsFromAHandMadeSheet) {
  const auto files = BuildCsvFiles(HandMadeSheet());
  ASSERT_EQ(files.size(), 3u);  // no conformity.csv without a specification
  EXPECT_EQ(files[0].first, "equilibrium_table.csv");
  const std::vector<std::string> table = Lines(files[0].second);
  ASSERT_EQ(table.size(), 2u);  // header and the one combined point
  // The step as numbered in its file, the second cycle as 2, SI values in shortest form.
  EXPECT_EQ(table[1],
            "combined,bench-A,S1+S2,7,Mg(NO3)2,adsorption,2,296.15,0.5,0.01,0.05,0.001,0.002,2,0,"
            "2,,,0,yes,no,,50.0 ± 2.0 %,5.00 ± 0.20 %");
  EXPECT_EQ(Lines(files[1].second).size(), 1u) << "fit_parameters.csv: header only";
  EXPECT_EQ(Lines(files[2].second).size(), 1u) << "pore_distribution.csv: header only";
}

}  // namespace
}  // namespace sorbtrace::report::internal
