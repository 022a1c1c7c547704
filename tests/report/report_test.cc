// ComposeReport on the invented fixture: every page rendered and inked, every headline value
// printed exactly as recorded in results.json, byte-identical output, both templates, the
// JSON schema and the CSV companions.
#include "pipeline/report/report.h"

#include <gtest/gtest.h>

#include <map>
#include <nlohmann/json.hpp>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "pipeline/report/document.h"
#include "pipeline/report/results_json.h"
#include "tests/report/pdf_tools.h"
#include "tests/report/report_fixture.h"

namespace sorbtrace::report::internal {
namespace {

using testing::CollapseSpaces;
using testing::FixtureOptions;
using testing::FullTemplate;
using testing::MakeReportFixture;
using testing::PdfText;
using testing::RenderPages;
using testing::WriteTempFile;

// One full composition shared by the tests below (composition is pure).
const ReportArtifacts& FullReport() {
  static const testing::ReportFixture fixture = MakeReportFixture();
  static const ReportArtifacts artifacts =
      ComposeReport(fixture.Inputs(), FullTemplate(), FixtureOptions());
  return artifacts;
}

TEST(ComposeReportTest, FullSheetPagesAreRenderedAndInked) {
  const ReportArtifacts& a = FullReport();
  // Eight sections flowing on the pages (a section starts a page only when it does not fit).
  ASSERT_GE(a.num_pages, 5);
  EXPECT_LT(a.pdf.size(), 500u * 1024u) << "size target of the datasheet";
  EXPECT_EQ(a.pdf.rfind("%PDF-", 0), 0u);
  const auto pdf = WriteTempFile("full.pdf", a.pdf);
  const auto pages = RenderPages(pdf, 40);
  ASSERT_EQ(static_cast<int>(pages.size()), a.num_pages);
  for (size_t i = 0; i < pages.size(); ++i) {
    const auto& p = pages[i];
    // A4 at 40 dpi is 331 x 468 pixels.
    EXPECT_EQ(p.width, 331);
    EXPECT_EQ(p.height, 468);
    // The content area (below the header, above the footer) carries ink on every page.
    EXPECT_GT(p.InkFraction(20, 60, p.width - 20, p.height - 50, 230), 0.005) << "page " << i + 1;
    // The bottom margin (18 mm = 28 pixels at 40 dpi) below the footer stays white.
    EXPECT_EQ(p.InkFraction(0, p.height - 27, p.width, p.height, 230), 0.0) << "page " << i + 1;
  }
  // Page 2 is the isotherm: its upper figure area is well inked (frame, points, band).
  EXPECT_GT(pages[1].InkFraction(40, 70, 300, 260, 250), 0.05);
}

TEST(ComposeReportTest, HeadlineValuesArePrintedExactlyAsInTheJson) {
  const ReportArtifacts& a = FullReport();
  const auto json = nlohmann::ordered_json::parse(a.results_json);
  const std::string text = CollapseSpaces(PdfText(WriteTempFile("full_text.pdf", a.pdf)));
  ASSERT_GE(json["headline"].size(), 8u);
  for (const auto& q : json["headline"]) {
    const std::string printed = q["text"].get<std::string>();
    EXPECT_NE(text.find(CollapseSpaces(printed)), std::string::npos) << q["key"] << ": " << printed;
  }
  // The moisture content at 23 °C / 50 % RH of the fixture: GAB (X_m 0.00951, C 13.6,
  // K 0.8213) gives 0.014596 kg/kg = 1.4596 % by the GAB equation (worked by hand), and
  // U = 2 x (3.5 % of it) = 0.102 %.
  const auto& first = json["headline"][0];
  EXPECT_EQ(first["key"], "moisture_23C_50RH_adsorption");
  EXPECT_EQ(first["text"], "1.46 ± 0.10 %");
  EXPECT_EQ(first["unit"], "kg/kg");
  EXPECT_NEAR(first["value"].get<double>(), 0.014596, 1e-6);
  EXPECT_NE(text.find("page 1 of " + std::to_string(a.num_pages)), std::string::npos);
  EXPECT_NE(text.find("Results apply to the specimens tested."), std::string::npos);
  for (const auto& input : json["inputs"]) {
    EXPECT_NE(text.find(input["sha256"].get<std::string>()), std::string::npos);
  }
}

TEST(ComposeReportTest, ResultsJsonSchema) {
  const auto json = nlohmann::ordered_json::parse(FullReport().results_json);
  std::vector<std::string> keys;
  for (auto it = json.begin(); it != json.end(); ++it) keys.push_back(it.key());
  EXPECT_EQ(keys, (std::vector<std::string>{
                      "schema", "software", "report", "job", "issue", "inputs", "settings",
                      "headline", "hygroscopicity_class", "conformity", "best_model", "cautions",
                      "standing_statements", "equilibria", "isotherm", "fits", "pores", "sheet"}));
  // The sheet's sections in the template's order, numbered from 1.
  ASSERT_FALSE(json["sheet"]["sections"].empty());
  EXPECT_EQ(json["sheet"]["sections"][0]["number"], 1);
  EXPECT_EQ(json["sheet"]["sections"][0]["key"], "summary");
  EXPECT_EQ(json["inputs"].size(), 4u);
  EXPECT_EQ(json["inputs"][0]["role"], "job");
  EXPECT_EQ(json["isotherm"]["points"].size(), 11u);
  EXPECT_EQ(json["fits"]["models"].size(), 5u);
  EXPECT_EQ(json["fits"]["models"][0]["covariance"].size(), 3u);
  EXPECT_EQ(json["fits"]["models"][0]["notable_correlations"][0], "X_m–C: r = -0.962");
  EXPECT_EQ(json["fits"]["ranking"][0]["order"][0]["model"], "gab");
  EXPECT_EQ(json["pores"]["distributions"].size(), 2u);
  EXPECT_EQ(json["hygroscopicity_class"], "hygroscopic");
  EXPECT_EQ(json["settings"]["equilibrium"]["min_weighings"], 3);
  EXPECT_EQ(json["software"]["version"], "0.1.0-test");
  // Every isotherm point records value, unit, uncertainties and the printed text.
  const auto& m = json["isotherm"]["points"][0]["moisture"];
  for (const char* key : {"value", "unit", "standard_uncertainty", "coverage_factor",
                          "expanded_uncertainty", "text"}) {
    EXPECT_TRUE(m.contains(key)) << key;
  }
}

TEST(ComposeReportTest, CsvCompanions) {
  const ReportArtifacts& a = FullReport();
  ASSERT_EQ(a.csv_files.size(), 3u);
  EXPECT_EQ(a.csv_files[0].first, "equilibrium_table.csv");
  EXPECT_EQ(a.csv_files[1].first, "fit_parameters.csv");
  EXPECT_EQ(a.csv_files[2].first, "pore_distribution.csv");
  auto lines = [](const std::string& s) { return std::count(s.begin(), s.end(), '\n'); };
  EXPECT_EQ(lines(a.csv_files[0].second), 1 + 33 + 11);  // header, specimen points, combined
  EXPECT_EQ(lines(a.csv_files[1].second), 1 + 3 + 2 + 2 + 3 + 2);
  EXPECT_EQ(lines(a.csv_files[2].second), 1 + 120 + 10);
  // Values are in shortest round-trip form: the dry basis moisture re-reads exactly.
  EXPECT_NE(a.csv_files[1].second.find(",X_m,kg/kg,0.00951,"), std::string::npos);
}

// The equilibrium table's columns carry their unit in the name and hold SI values: the
// fixture's 23 degC (296.15 K, 0 degC = 273.15 K exactly, SI Brochure 9th ed. 2019) stays in
// kelvin, RH as a fraction, time in seconds (4 days = 345600 s). Steps carry the number the
// desiccator file gives them (its `step` column; here 10 + the step's order, so that it
// differs from the order), cycles are numbered from 1 as on the sheet, and the coverage factor
// of each expanded uncertainty is stated beside it (JCGM 100:2008, 7.2.3). The volumetric
// content of a combined point is u x rho_dry / rho_w with the fixture's 720 kg/m3 bulk density
// and 997.5 kg/m3 water.
TEST(ComposeReportTest, EquilibriumTableColumnsNumberingAndUnits) {
  testing::ReportFixture fixture = MakeReportFixture();
  for (ingest::DesiccatorStep& step : fixture.ingested.desiccator_series.front().steps) {
    step.step_number = 10 + step.step_index;
  }
  const std::string csv =
      ComposeReport(fixture.Inputs(), FullTemplate(), FixtureOptions()).csv_files[0].second;
  const std::string header =
      "record,dataset,specimen,step,atmosphere,branch,cycle,temperature_K,rh_fraction,"
      "u_rh_fraction,moisture_kg_per_kg,u_moisture_kg_per_kg,expanded_u_moisture_kg_per_kg,"
      "coverage_factor,between_specimen_sd_kg_per_kg,num_specimens,volumetric_m3_per_m3,"
      "u_volumetric_m3_per_m3,time_to_equilibrium_s,equilibrated,extrapolated,flags,"
      "rh_as_printed,moisture_as_printed\n";
  ASSERT_EQ(csv.substr(0, header.size()), header);
  const reduce::SpecimenPoint& sp = fixture.reduced.specimen_points.front();
  const reduce::IsothermPoint& ip = fixture.reduced.points.front();
  ASSERT_EQ(sp.step_index, 0);
  ASSERT_EQ(ip.step_index, 0);
  std::vector<std::vector<std::string>> rows;
  std::istringstream lines(csv.substr(header.size()));
  for (std::string line; std::getline(lines, line);) {
    std::vector<std::string> cells;
    std::istringstream fields(line);
    for (std::string cell; std::getline(fields, cell, ',');) cells.push_back(cell);
    ASSERT_GE(cells.size(), 19u) << line;
    rows.push_back(cells);
  }
  ASSERT_EQ(rows.size(), fixture.reduced.specimen_points.size() + fixture.reduced.points.size());
  const std::vector<std::string>& first = rows.front();
  EXPECT_EQ(first[0], "specimen");
  EXPECT_EQ(first[2], sp.specimen_id);
  EXPECT_EQ(first[3], "10");
  EXPECT_EQ(first[6], "1");  // the first cycle
  EXPECT_EQ(first[7], "296.15");
  EXPECT_DOUBLE_EQ(std::stod(first[8]), sp.rh_fraction);
  EXPECT_LT(std::stod(first[8]), 1.0);
  EXPECT_DOUBLE_EQ(std::stod(first[12]), std::stod(first[13]) * sp.u_moisture_kg_per_kg);
  EXPECT_EQ(first[16], "");  // volumetric content belongs to the combined points
  EXPECT_EQ(first[18], "345600");
  const std::vector<std::string>& combined = rows[fixture.reduced.specimen_points.size()];
  EXPECT_EQ(combined[0], "combined");
  EXPECT_EQ(combined[2], "P7-A+P7-B+P7-C") << "the specimens joined by '+'";
  EXPECT_EQ(combined[3], "10");
  EXPECT_EQ(combined[6], "1");
  EXPECT_NEAR(std::stod(combined[13]), ip.expanded_u_moisture_kg_per_kg / ip.u_moisture_kg_per_kg,
              1e-12);
  EXPECT_EQ(combined[15], std::to_string(ip.num_specimens));
  EXPECT_NEAR(std::stod(combined[16]), ip.moisture_kg_per_kg * 720.0 / 997.5, 1e-15);
  EXPECT_NEAR(std::stod(combined[17]), ip.u_moisture_kg_per_kg * 720.0 / 997.5, 1e-15);
  EXPECT_EQ(rows.back()[3], std::to_string(10 + fixture.reduced.points.back().step_index));
}

TEST(ComposeReportTest, ByteIdenticalAcrossCompositions) {
  const testing::ReportFixture fixture = MakeReportFixture();
  const ReportArtifacts again = ComposeReport(fixture.Inputs(), FullTemplate(), FixtureOptions());
  EXPECT_TRUE(again.pdf == FullReport().pdf);
  EXPECT_EQ(again.results_json, FullReport().results_json);
  EXPECT_EQ(again.csv_files, FullReport().csv_files);
  // The date is the one given, never the clock's.
  EXPECT_NE(again.pdf.find("/CreationDate (D:20261015000000Z"), std::string::npos);
  ReportOptions other = FixtureOptions();
  other.document_date = "2026-10-16";
  const ReportArtifacts later = ComposeReport(fixture.Inputs(), FullTemplate(), other);
  EXPECT_FALSE(later.pdf == again.pdf);
}

TEST(ComposeReportTest, SummaryTemplateIsOnePage) {
  const testing::ReportFixture fixture = MakeReportFixture();
  const Template t = LoadTemplate(SORBTRACE_SOURCE_DIR "/templates/summary.toml");
  const ReportArtifacts a = ComposeReport(fixture.Inputs(), t, FixtureOptions());
  EXPECT_EQ(a.num_pages, 1);
  const auto pdf = WriteTempFile("summary.pdf", a.pdf);
  const auto pages = RenderPages(pdf, 40);
  ASSERT_EQ(pages.size(), 1u);
  EXPECT_GT(pages[0].InkFraction(20, 60, pages[0].width - 20, pages[0].height - 50, 230), 0.01);
  // Nothing spills into the bottom margin (16 mm = 25 pixels at 40 dpi) below the footer.
  EXPECT_EQ(pages[0].InkFraction(0, pages[0].height - 24, pages[0].width, pages[0].height, 230),
            0.0);
  const std::string text = CollapseSpaces(PdfText(pdf));
  EXPECT_NE(text.find("Moisture sorption summary"), std::string::npos);
  EXPECT_NE(text.find("1.46 ± 0.10 %"), std::string::npos);
  EXPECT_NE(text.find("page 1 of 1"), std::string::npos);
}

TEST(ComposeReportTest, LetterPagesAndKilogramUnits) {
  const testing::ReportFixture fixture = MakeReportFixture();
  Template t = FullTemplate();
  t.page_size = PageSize::kLetter;
  t.moisture_in_percent = false;
  const ReportArtifacts a = ComposeReport(fixture.Inputs(), t, FixtureOptions());
  const auto pages = RenderPages(WriteTempFile("letter.pdf", a.pdf), 40);
  ASSERT_FALSE(pages.empty());
  EXPECT_EQ(pages[0].width, 340);   // 8.5 in x 40 dpi
  EXPECT_EQ(pages[0].height, 440);  // 11 in x 40 dpi
  const auto json = nlohmann::ordered_json::parse(a.results_json);
  EXPECT_EQ(json["headline"][0]["text"], "0.0146 ± 0.0010 kg/kg");
}

TEST(ComposeReportTest, EmptyInputsStillGiveADocument) {
  // A run stage that stops early (or a stage that produced nothing) must not crash the sheet.
  const ReportInputs nothing;
  const ReportArtifacts a = ComposeReport(nothing, FullTemplate(), FixtureOptions());
  EXPECT_GE(a.num_pages, 1);
  EXPECT_EQ(a.pdf.rfind("%PDF-", 0), 0u);
  const auto json = nlohmann::ordered_json::parse(a.results_json);
  EXPECT_TRUE(json["headline"].empty());
  const std::string text = CollapseSpaces(PdfText(WriteTempFile("empty.pdf", a.pdf)));
  EXPECT_NE(text.find("No measurement or fitting cautions were raised."), std::string::npos);
  // The sections of the template are there under their numbered headings, first to last.
  EXPECT_NE(text.find("1 Summary"), std::string::npos);
  EXPECT_NE(text.find("2 Sorption isotherm"), std::string::npos);
  EXPECT_NE(text.find("9 Cautions"), std::string::npos);  // after "8 Deviations from the method"
}

TEST(ComposeReportTest, SectionOrderFromTheTemplateAndHostileText) {
  testing::ReportFixture fixture = MakeReportFixture();
  // Invalid UTF-8 from an input file is printed as '?' and kept valid in the JSON.
  fixture.ingested.job.material_name = std::string("Plaster \xff\xfe batch");
  Template t = FullTemplate();
  t.sections = {"models", "summary"};
  const ReportArtifacts a = ComposeReport(fixture.Inputs(), t, FixtureOptions());
  EXPECT_EQ(a.num_pages, 2);  // no empty first page before "models"
  const std::string text = CollapseSpaces(PdfText(WriteTempFile("order.pdf", a.pdf)));
  EXPECT_LT(text.find("1 Model comparison"), text.find("2 Summary"));
  EXPECT_NE(text.find("Plaster ?? batch"), std::string::npos);
  const auto json = nlohmann::ordered_json::parse(a.results_json);
  EXPECT_EQ(json["job"]["material"], "Plaster \uFFFD\uFFFD batch");
}

TEST(CsvTextTest, OwaspCsvInjectionRuleAndRfc4180Quoting) {
  // OWASP "CSV Injection": =, +, -, @, tab and CR start a formula; prefix ' and quote.
  const std::pair<const char*, const char*> cases[] = {
      {"P1", "P1"},
      {"=1+2", "\"'=1+2\""},
      {"+SUM(A1)", "\"'+SUM(A1)\""},
      {"-2+3", "\"'-2+3\""},
      {"@cmd", "\"'@cmd\""},
      {"\tx", "\"'\tx\""},
      {"\rx", "\"'\rx\""},
      {"=A1,\"b\"", "\"'=A1,\"\"b\"\"\""},
      {"-0.5", "-0.5"},    // a number stays a number
      {"-1e-3", "-1e-3"},  // so does this one
      {"a,b", "\"a,b\""},  // RFC 4180
      {"say \"hi\"", "\"say \"\"hi\"\"\""},
      {"", ""},
  };
  for (const auto& [in, expected] : cases) EXPECT_EQ(CsvText(in), expected) << in;
}

TEST(ComposeReportTest, LongTokensArePrintedShortenedWithACaution) {
  for (const size_t size : {size_t{64} * 1024, size_t{1024} * 1024}) {
    testing::ReportFixture fixture = MakeReportFixture();
    const std::string token(size, 'Q');
    fixture.ingested.job.material_description = token;
    fixture.ingested.job.client = "word " + token + " word";
    fixture.ingested.job.job_id = token;
    std::string spaced;  // a long field of ordinary words
    while (spaced.size() < size) spaced += "lorem ipsum ";
    fixture.ingested.job.test_dates = spaced;
    const ReportArtifacts a = ComposeReport(fixture.Inputs(), FullTemplate(), FixtureOptions());
    // Bounded: the shortened fields and their four cautions may spill onto two more pages,
    // never one page per kilobyte of token.
    EXPECT_LE(a.num_pages, FullReport().num_pages + 2) << size;
    const std::string text = PdfText(WriteTempFile("long.pdf", a.pdf));
    EXPECT_NE(text.find("QQQ…"), std::string::npos);
    EXPECT_EQ(text.find(std::string(201, 'Q')), std::string::npos);
    EXPECT_NE(CollapseSpaces(text).find("The material description has " + std::to_string(size) +
                                        " characters, a word of " + std::to_string(size) +
                                        " characters; the datasheet prints it shortened"),
              std::string::npos);
    // job id, description, client, test dates (besides the fixture's draft warning)
    EXPECT_EQ(std::count_if(a.warnings.begin(), a.warnings.end(),
                            [](const Diagnostic& w) {
                              return w.message.find("prints it shortened") != std::string::npos;
                            }),
              4);
    const auto json = nlohmann::ordered_json::parse(a.results_json);
    EXPECT_EQ(json["job"]["material_description"], token);  // in full
  }
}

TEST(ComposeReportTest, SettingsArePrintedAsWritten) {
  testing::ReportFixture fixture = MakeReportFixture();
  fixture.settings["pores"] = {{"molecular_area_nm2", 0.106e-18 * 1e18}, {"grid_points", 400}};
  const ReportArtifacts a = ComposeReport(fixture.Inputs(), FullTemplate(), FixtureOptions());
  const std::string text = CollapseSpaces(PdfText(WriteTempFile("settings.pdf", a.pdf)));
  EXPECT_NE(text.find("pores.molecular_area_nm2 = 0.106 "), std::string::npos);
  EXPECT_NE(text.find("pores.grid_points = 400"), std::string::npos);
  EXPECT_EQ(text.find("0.10600000000000001"), std::string::npos);
  // results.json keeps the value field at full precision.
  const auto json = nlohmann::ordered_json::parse(a.results_json);
  EXPECT_EQ(json["settings"]["pores"]["molecular_area_nm2"].get<double>(), 0.106e-18 * 1e18);
}

TEST(DocumentTest, LibharuErrorsBecomeComputationErrorsNotCrashes) {
  // A line width below zero is refused by libharu (HPDF_PAGE_OUT_OF_RANGE, hpdf_error.h);
  // after that error HPDF_AddPage returns no page. The next page and the final save must
  // both report it as a ComputationError naming the libharu code.
  Document doc(FullTemplate(), FixtureOptions(), "R-1", "0.1.0-test", Letterhead{});
  doc.NewPage();
  doc.canvas().Line(10.0, 10.0, 20.0, 20.0, -1.0, plot::palette::kInk);
  try {
    doc.NewPage();
    FAIL() << "no error raised";
  } catch (const ComputationError& e) {
    EXPECT_NE(std::string(e.what()).find("libharu error 0x"), std::string::npos) << e.what();
  }
  EXPECT_THROW(doc.Finish(), ComputationError);
}

TEST(ComposeReportTest, MissingFontIsAnInputError) {
  const testing::ReportFixture fixture = MakeReportFixture();
  ReportOptions options = FixtureOptions();
  options.font_directory = "/nonexistent/fonts";
  EXPECT_THROW(ComposeReport(fixture.Inputs(), FullTemplate(), options), InputError);
}

// Headline labels a reader cannot misread (keys and labels name branch and temperature in °C).
// Two isotherms whose temperatures print alike (23.00 and 23.02 °C) still give unique keys and
// labels; a temperature that is not a whole degree prints with its decimal.
TEST(SheetLabelsTest, HeadlineKeysAndLabelsAreUniqueAndNameTheirTemperature) {
  testing::ReportFixture fx = MakeReportFixture();
  ASSERT_EQ(fx.pores.surface_areas.size(), 1u);
  pores::SurfaceArea alike = fx.pores.surface_areas.front();
  alike.temperature_K += 0.02;
  pores::SurfaceArea warmer = fx.pores.surface_areas.front();
  warmer.temperature_K += 0.4;
  fx.pores.surface_areas.push_back(alike);
  fx.pores.surface_areas.push_back(warmer);
  const Sheet sheet = BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions());
  std::set<std::string> keys, labels;
  for (const Quantity& q : sheet.headline) {
    EXPECT_TRUE(keys.insert(q.key).second) << q.key;
    EXPECT_TRUE(labels.insert(q.label).second) << q.label;
  }
  EXPECT_TRUE(keys.count("surface_area_gab_adsorption_23C"));
  EXPECT_TRUE(keys.count("surface_area_gab_adsorption_23C_2"));
  EXPECT_TRUE(keys.count("surface_area_gab_adsorption_23p4C"));
  EXPECT_TRUE(labels.count("Specific surface area (GAB monolayer, adsorption, 23 °C)"));
  EXPECT_TRUE(labels.count("Specific surface area (GAB monolayer, adsorption, 23 °C) [2]"));
  EXPECT_TRUE(labels.count("Specific surface area (GAB monolayer, adsorption, 23.4 °C)"));
  EXPECT_TRUE(keys.count("moisture_23C_50RH_adsorption"));
  EXPECT_TRUE(labels.count("Moisture content at 23 °C / 50 % RH (adsorption)"));
}

// A reference condition at 23 °C read from an isotherm measured at 25 °C (the pores stage's
// temperature_matches = false) is marked as not measured and names 25 °C: in its label, its
// key, one plain caution (which replaces the pores stage's note) and results.json.
TEST(SheetLabelsTest, AReferenceTemperatureThatWasNotMeasuredIsMarked) {
  testing::ReportFixture fx = MakeReportFixture();
  fx.fits.groups[0].temperature_K = 298.15;  // the adsorption isotherm, now at 25 °C
  for (pores::ReferenceMoisture& rm : fx.pores.reference_moisture) {
    rm.temperature_matches = false;
    rm.flags = {
        "fitted at 25.00 degC, reference 23.00 degC: not converted to the reference "
        "temperature"};
  }
  const Sheet sheet = BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions());
  std::map<std::string, std::string> label_of;
  for (const Quantity& q : sheet.headline) label_of[q.key] = q.label;
  EXPECT_EQ(label_of["moisture_25C_50RH_adsorption_ref_23C"],
            "Moisture content at 25 °C / 50 % RH (adsorption); reference temperature 23 °C not "
            "measured");
  EXPECT_EQ(label_of["moisture_25C_80RH_adsorption_ref_23C"],
            "Moisture content at 25 °C / 80 % RH (adsorption); reference temperature 23 °C not "
            "measured");
  EXPECT_EQ(label_of.count("moisture_23C_50RH_adsorption"), 0u);
  int marked = 0;
  for (const std::string& c : sheet.cautions) {
    EXPECT_NE(c.rfind("fitted at ", 0), 0u) << c;
    if (c.find("The reference temperature 23 °C was not measured") == 0) {
      ++marked;
      EXPECT_NE(c.find("measured at 25 °C"), std::string::npos) << c;
    }
  }
  EXPECT_EQ(marked, 1);
  const auto json = BuildResultsJson(sheet, 1);
  ASSERT_EQ(json["pores"]["reference_moisture"].size(), 2u);
  for (const auto& r : json["pores"]["reference_moisture"]) {
    EXPECT_DOUBLE_EQ(r["measured_temperature_K"].get<double>(), 298.15);
    EXPECT_DOUBLE_EQ(r["temperature_K"].get<double>(), 296.15);
  }
}

}  // namespace
}  // namespace sorbtrace::report::internal
