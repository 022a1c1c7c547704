// The datasheet as a quality manager checks it before signing: for every demo job, the real
// binary's PDF (pdftotext, page by page) is checked against the items of ISO/IEC 17025:2017,
// 7.8.2.1 a-p that apply to a sorption test report (item wording paraphrased from memory; the
// clause numbers are those of the 2017 edition), with the expected text read from the job file
// and its laboratory profile by a line scan of its own (not through sorbtrace's readers):
//   a title                         b laboratory name and address   c location of the work
//   d report identified on every page, page x of y, end of report marked
//   e customer name and contact     f method identified (with its edition)
//   g item description, identification and condition
//   h date of receipt (and of sampling where given)    i date(s) of the test
//   j date of issue                 k sampling plan / who sampled (7.8.2.2: item as received)
//   l results relate only to the items tested          m results with units
//   n deviations from the method (their own section)   o person(s) authorizing the report
//   p results from external providers: not applicable (sorbtrace computes every result)
// plus 7.8.8 (an amended report names the report it supersedes) and the draft rule of this
// program: without a laboratory profile every page says DRAFT, with one no page does.
#include <gtest/gtest.h>

#include <algorithm>
#include <filesystem>
#include <map>
#include <nlohmann/json.hpp>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

#include "tests/common/e2e_support.h"
#include "tests/report/pdf_tools.h"

namespace sorbtrace::report {
namespace {

namespace fs = std::filesystem;
using testing::CollapseSpaces;

using CommandRun = e2e::Outcome;
using e2e::ReadBytes;

// One `key = "value"` line of a TOML file with the table it stands in ("job", "signatory", ...;
// an array-of-tables entry counts from 0 in `index`). Only the plain string and integer lines
// the demo files use; enough to know what the sheet must show.
struct Entry {
  std::string table;
  int index = 0;
  std::string key;
  std::string value;
};

std::vector<Entry> ScanToml(const std::string& text) {
  std::vector<Entry> entries;
  std::map<std::string, int> counts;
  std::string table;
  int index = 0;
  static const std::regex header(R"(^\s*(\[\[?)([A-Za-z_]+)\]\]?\s*$)");
  static const std::regex pair(R"re(^\s*([A-Za-z_]+)\s*=\s*(?:"([^"]*)"|([0-9]+))\s*$)re");
  std::istringstream lines(text);
  std::string line;
  std::smatch m;
  while (std::getline(lines, line)) {
    if (std::regex_match(line, m, header)) {
      table = m[2];
      index = m[1] == "[[" ? counts[table]++ : 0;
    } else if (std::regex_match(line, m, pair)) {
      entries.push_back({table, index, m[1], m[2].matched ? m[2].str() : m[3].str()});
    }
  }
  return entries;
}

std::string Value(const std::vector<Entry>& entries, const std::string& table,
                  const std::string& key, int index = 0) {
  for (const Entry& e : entries) {
    if (e.table == table && e.key == key && e.index == index) return e.value;
  }
  return "";
}

int Count(const std::vector<Entry>& entries, const std::string& table) {
  int n = 0;
  for (const Entry& e : entries) n = e.table == table ? std::max(n, e.index + 1) : n;
  return n;
}

// The sheet's text, whole and per page, whitespace collapsed.
struct SheetText {
  std::string all;
  std::vector<std::string> pages;
};

SheetText ReadSheet(const fs::path& pdf) {
  SheetText text;
  const int n = e2e::PdfPageCount(pdf);
  for (int i = 1; i <= n; ++i) {
    text.pages.push_back(CollapseSpaces(e2e::PdfPageText(pdf, i)));
    text.all += text.pages.back() + " ";
  }
  return text;
}

class IssueChecklistE2eTest : public ::testing::Test {
 protected:
  void SetUp() override {
    // One folder per test: ctest runs the tests of this file as parallel processes.
    root_ = e2e::FreshTestDir("issue_checklist_e2e");
  }
  void TearDown() override { fs::remove_all(root_); }

  // A copy of a demo scenario (the demo folder itself is never written to).
  fs::path CopyScenario(const std::string& scenario, const std::string& as) {
    const fs::path dir = root_ / as;
    fs::copy(fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs" / scenario, dir,
             fs::copy_options::recursive);
    return dir;
  }

  CommandRun Make(const fs::path& job, const fs::path& out) {
    return e2e::Sorbtrace("make '" + job.string() + "' --out '" + out.string() + "'");
  }

  fs::path root_;
};

std::vector<std::string> DemoScenarios() {
  std::vector<std::string> names;
  for (const fs::path& job : e2e::DemoJobFiles()) {
    names.push_back(job.parent_path().filename().string());
  }
  return names;
}

// The edition each method key is cited with (ISO 12571:2021; ASTM C1498-04a; ISO 12570:2000 for
// oven drying). From the standards' catalogue entries, from memory.
std::string ExpectedCitation(const std::string& method_key) {
  if (method_key == "iso_12571_desiccator") return "ISO 12571:2021, desiccator method";
  if (method_key == "iso_12571_climatic_chamber") return "ISO 12571:2021, climatic-chamber method";
  if (method_key == "astm_c1498") return "ASTM C1498-04a";
  // European Pharmacopoeia 2.9.39 (title as the British Pharmacopoeia's Appendix IX M gives it).
  if (method_key == "ph_eur_2_9_39") return "Ph. Eur. 2.9.39, water-solid interactions";
  return "no standard method named";
}

void ExpectOnSheet(const std::string& sheet, const std::string& item, const std::string& text) {
  EXPECT_FALSE(text.empty()) << "7.8.2.1 " << item << ": the job states nothing to look for";
  EXPECT_NE(sheet.find(CollapseSpaces(text)), std::string::npos)
      << "7.8.2.1 " << item << ": \"" << text << "\" is not on the sheet";
}

TEST_F(IssueChecklistE2eTest, EveryDemoSheetCarriesTheItemsOfIso17025Clause7821) {
  const std::vector<std::string> scenarios = DemoScenarios();
  ASSERT_GE(scenarios.size(), 4u) << "the four demo scenarios of example_inputs/";
  for (const std::string& scenario : scenarios) {
    SCOPED_TRACE(scenario);
    const fs::path dir = CopyScenario(scenario, scenario);
    const std::vector<Entry> job = ScanToml(ReadBytes(dir / "job.toml"));
    const std::string profile_file = Value(job, "job", "lab_profile");
    ASSERT_FALSE(profile_file.empty()) << "every demo job names its laboratory profile";
    const std::vector<Entry> lab = ScanToml(ReadBytes(dir / profile_file));
    const fs::path out = root_ / (scenario + "_out");
    const CommandRun made = Make(dir / "job.toml", out);
    ASSERT_EQ(made.exit_code, 0) << made.output;
    EXPECT_EQ(made.output.find("no laboratory profile"), std::string::npos) << made.output;
    const SheetText sheet = ReadSheet(out / "datasheet.pdf");
    ASSERT_GE(sheet.pages.size(), 2u);
    const nlohmann::json results = nlohmann::json::parse(ReadBytes(out / "results.json"));

    // a) title
    ExpectOnSheet(sheet.all, "a", "Moisture sorption datasheet");
    // b) laboratory name and address
    ExpectOnSheet(sheet.all, "b", Value(lab, "laboratory", "name"));
    ExpectOnSheet(sheet.all, "b", Value(lab, "laboratory", "address"));
    // c) location of the work: the profile's [[location]] the job names
    const std::string location_id = Value(job, "job", "location");
    std::string location;
    for (int i = 0; i < Count(lab, "location"); ++i) {
      if (Value(lab, "location", "id", i) == location_id) {
        location = Value(lab, "location", "address", i);
      }
    }
    ExpectOnSheet(sheet.all, "c", "Location of testing " + location);
    // d) every page identified as part of the report, page x of y, the end marked
    const std::string id = Value(job, "job", "id");
    const std::string revision = Value(job, "job", "revision");
    const std::string number =
        id + (revision.empty() || revision == "0" ? "" : " rev. " + revision);
    const size_t n = sheet.pages.size();
    for (size_t p = 0; p < n; ++p) {
      SCOPED_TRACE("page " + std::to_string(p + 1));
      EXPECT_NE(sheet.pages[p].find("Report " + number), std::string::npos) << "7.8.2.1 d";
      EXPECT_NE(sheet.pages[p].find("page " + std::to_string(p + 1) + " of " + std::to_string(n)),
                std::string::npos)
          << "7.8.2.1 d";
      // l) the statement that the results relate only to the items tested, on every page
      EXPECT_NE(sheet.pages[p].find("Results apply to the specimens tested"), std::string::npos)
          << "7.8.2.1 l";
      // This program's draft rule: a sheet with a laboratory profile carries no DRAFT mark.
      EXPECT_EQ(sheet.pages[p].find("DRAFT"), std::string::npos);
    }
    EXPECT_NE(sheet.pages.back().find("End of report " + number), std::string::npos)
        << "7.8.2.1 d: the end of the report on its last page";
    // e) customer name and contact information
    ExpectOnSheet(sheet.all, "e", Value(job, "material", "client"));
    ExpectOnSheet(sheet.all, "e", Value(job, "material", "client_address"));
    ExpectOnSheet(sheet.all, "e", Value(job, "material", "client_contact"));
    // f) the method, cited with its edition; an oven dry mass cites ISO 12570
    ExpectOnSheet(sheet.all, "f", ExpectedCitation(Value(job, "job", "method")));
    if (Value(job, "measurement", "dry_mass_method") == "oven") {
      ExpectOnSheet(sheet.all, "f", "ISO 12570:2000");
    }
    // g) description, identification and condition of the item
    ExpectOnSheet(sheet.all, "g", Value(job, "material", "name"));
    ExpectOnSheet(sheet.all, "g", Value(job, "material", "condition"));
    for (int i = 0; i < Count(job, "specimen"); ++i) {
      ExpectOnSheet(sheet.all, "g", Value(job, "specimen", "id", i));
    }
    // h) date of receipt, and of sampling where the job gives it
    ExpectOnSheet(sheet.all, "h", "Item received " + Value(job, "material", "received_date"));
    if (!Value(job, "sampling", "date").empty()) {
      ExpectOnSheet(sheet.all, "h", "on " + Value(job, "sampling", "date"));
    }
    // i) dates of the test; j) date of issue
    ExpectOnSheet(sheet.all, "i", "Test dates " + Value(job, "job", "test_dates"));
    ExpectOnSheet(sheet.all, "j", "Issued " + Value(job, "job", "issue_date"));
    // k) sampling: the plan of a laboratory sampling; a customer's item as received (7.8.2.2)
    if (Value(job, "sampling", "by") == "laboratory") {
      ExpectOnSheet(sheet.all, "k", "by the laboratory");
      ExpectOnSheet(sheet.all, "k", "sampling plan " + Value(job, "sampling", "plan"));
    } else {
      ExpectOnSheet(sheet.all, "k", "the results apply to the item as received");
    }
    // m) results with units: the first headline value as results.json records it
    ASSERT_FALSE(results["headline"].empty());
    const std::string first = results["headline"][0]["text"];
    EXPECT_FALSE(results["headline"][0]["display_unit"].get<std::string>().empty());
    ExpectOnSheet(sheet.all, "m", first);
    // n) deviations from the method, in their own section, each as results.json lists it
    ExpectOnSheet(sheet.all, "n", "Deviations from the method");
    for (const auto& deviation : results["issue"]["deviations"]) {
      ExpectOnSheet(sheet.all, "n", deviation.get<std::string>());
    }
    // o) the persons authorizing the report
    ASSERT_GE(Count(lab, "signatory"), 1);
    for (int i = 0; i < Count(lab, "signatory"); ++i) {
      ExpectOnSheet(sheet.all, "o",
                    Value(lab, "signatory", "name", i) + ", " + Value(lab, "signatory", "role", i));
    }
    // p) not applicable: no result comes from an external provider.
    // 7.8.8: an amended report names the report it supersedes.
    if (!revision.empty() && revision != "0") {
      ExpectOnSheet(sheet.all, "7.8.8", "supersedes report " + Value(job, "job", "supersedes"));
    }
  }
}

// Without a laboratory profile the sheet is a draft: DRAFT on every PDF page (pdftotext of each
// page), the HTML's watermark, no signature block, a warning from `make`, exit code 0.
TEST_F(IssueChecklistE2eTest, WithoutALaboratoryProfileEveryPageSaysDraft) {
  const fs::path dir = CopyScenario("lime_plaster_desiccator", "draft");
  std::string text = ReadBytes(dir / "job.toml");
  for (const std::string key : {"lab_profile", "location"}) {
    const size_t at = text.find("\n" + key + " = ");
    ASSERT_NE(at, std::string::npos) << key;
    text.erase(at + 1, text.find('\n', at + 1) - at);
  }
  e2e::WriteBytes(dir / "job.toml", text);
  const CommandRun made = Make(dir / "job.toml", root_ / "draft_out");
  ASSERT_EQ(made.exit_code, 0) << made.output;
  EXPECT_NE(made.output.find("warning: the job names no laboratory profile"), std::string::npos)
      << made.output;
  const SheetText sheet = ReadSheet(root_ / "draft_out" / "datasheet.pdf");
  ASSERT_GE(sheet.pages.size(), 2u);
  for (size_t p = 0; p < sheet.pages.size(); ++p) {
    EXPECT_NE(sheet.pages[p].find("DRAFT"), std::string::npos) << "page " << p + 1;
  }
  EXPECT_EQ(sheet.all.find("Approved for issue"), std::string::npos) << "no signature block";
  const std::string html = ReadBytes(root_ / "draft_out" / "datasheet.html");
  EXPECT_NE(html.find("<div class=\"watermark\" aria-hidden=\"true\">DRAFT</div>"),
            std::string::npos);
  const nlohmann::json results = nlohmann::json::parse(ReadBytes(root_ / "draft_out/results.json"));
  EXPECT_TRUE(results["issue"]["draft"].get<bool>());
  EXPECT_TRUE(results["issue"]["laboratory"].is_null());

  // The same job with its profile: no page and no HTML carries the mark.
  const CommandRun issued =
      Make(fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs/lime_plaster_desiccator/job.toml",
           root_ / "issued_out");
  ASSERT_EQ(issued.exit_code, 0) << issued.output;
  const SheetText issued_sheet = ReadSheet(root_ / "issued_out" / "datasheet.pdf");
  for (const std::string& page : issued_sheet.pages) {
    EXPECT_EQ(page.find("DRAFT"), std::string::npos);
  }
  EXPECT_EQ(ReadBytes(root_ / "issued_out" / "datasheet.html").find("class=\"watermark\""),
            std::string::npos);
  const nlohmann::json issued_results =
      nlohmann::json::parse(ReadBytes(root_ / "issued_out/results.json"));
  EXPECT_FALSE(issued_results["issue"]["draft"].get<bool>());
  // The profile is a recorded input (verify checks its SHA-256).
  bool recorded = false;
  for (const auto& input : issued_results["inputs"]) {
    recorded = recorded || (input["role"] == "lab_profile" && input["path"] == "lab_profile.toml");
  }
  EXPECT_TRUE(recorded);
}

}  // namespace
}  // namespace sorbtrace::report
