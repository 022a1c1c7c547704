// The plausibility corpus (tests/bad_inputs/plausibility/cases.tsv) run through the real binary:
// well-formed files that describe nothing a balance or a sensor measured (issue 14, "nonsense
// accepted silently"; the rules are in pipeline/ingest/plausibility.h). Each case must end with
// exit code 3, a message naming file:line:column and what was expected, no output folder, and
// every file under the case's temporary root (the job folder and the output's parent)
// byte-identical. Warnings that change what a reader may trust must reach the datasheet's
// cautions (results.json "cautions", the PDF text) and run.log; the demo jobs and the lab
// variants that are right must raise none of these.
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <algorithm>
#include <cctype>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <functional>
#include <map>
#include <nlohmann/json.hpp>
#include <regex>
#include <sstream>
#include <string>
#include <utility>
#include <vector>

#include "tests/common/e2e_support.h"

namespace sorbtrace {
namespace {

namespace fs = std::filesystem;

const fs::path kSource = fs::path(SORBTRACE_SOURCE_DIR);
const fs::path kCorpus = kSource / "tests" / "bad_inputs" / "plausibility";

using e2e::Case;
using e2e::CaseName;
using e2e::Outcome;
using e2e::ReadBytes;
using e2e::Shell;
using e2e::Snapshot;
using e2e::Sorbtrace;
using e2e::WriteBytes;

std::vector<Case> LoadCases() { return e2e::LoadCases(kCorpus / "cases.tsv"); }

fs::path FreshDir(const std::string& name) { return e2e::FreshDir("plausibility", name); }

class PlausibilityTest : public ::testing::TestWithParam<Case> {};

TEST_P(PlausibilityTest, IsRefusedWithALocatedMessageAndWritesNothing) {
  e2e::ExpectLocatedRefusal(GetParam(), kCorpus, "plausibility");
}

INSTANTIATE_TEST_SUITE_P(Corpus, PlausibilityTest, ::testing::ValuesIn(LoadCases()), CaseName);

TEST(PlausibilityCorpusTest, EveryFolderHasARowAndEveryRuleMoreThanOneVariant) {
  std::map<std::string, int> rows;
  for (const Case& c : LoadCases()) ++rows[c.name];
  std::vector<std::string> folders;
  for (const auto& entry : fs::directory_iterator(kCorpus)) {
    if (entry.is_directory()) folders.push_back(entry.path().filename().string());
  }
  for (const std::string& folder : folders) EXPECT_TRUE(rows.count(folder)) << folder;
  EXPECT_EQ(rows.size(), folders.size());
  // Every class of rule has two or more variants (folder-name prefixes).
  const std::vector<std::pair<std::string, std::vector<std::string>>> classes = {
      {"R1 duplicate sources", {"duplicate_"}},
      {"R2 RH fractions", {"rh_fraction_", "vlog_set_rh_", "vlog_measured_rh_", "vlog_rh_unit_"}},
      {"R3 clocks", {"utc_offset"}},
      {"R4 smallest mass", {"subnormal_mass", "vlog_picogram_mass"}},
      {"R5 frozen instrument", {"frozen_"}},
      {"R6 scale and moisture", {"milligrams_", "grams_under_", "oven_file_", "moisture_"}},
      {"R7 uncertainty inputs", {"rh_sensor_", "temperature_uncertainty", "balance_"}},
  };
  for (const auto& [rule, prefixes] : classes) {
    const auto n = std::count_if(folders.begin(), folders.end(), [&](const std::string& f) {
      return std::any_of(prefixes.begin(), prefixes.end(),
                         [&](const std::string& p) { return f.rfind(p, 0) == 0; });
    });
    EXPECT_GE(n, 2) << rule;
  }
}

// ---- Warnings reach the datasheet --------------------------------------------------------------

// Copies the excipient demo (a vapour log, 25 degC, set points 0..80 %) to `dir` and lets
// `edit` change the fields of every data row of its log (elapsed, set, measured RH,
// temperature, mass as written).
void DemoWithEditedLog(const fs::path& dir,
                       const std::function<void(std::vector<std::string>*)>& edit) {
  fs::copy(kSource / "example_inputs" / "excipient_powder_25C", dir, fs::copy_options::recursive);
  const fs::path log = dir / "data" / "vapour_log_E1.csv";
  std::istringstream lines(ReadBytes(log));
  std::string result;
  std::string line;
  bool header_seen = false;
  while (std::getline(lines, line)) {
    if (line.empty() || line[0] == '#' || !header_seen) {
      if (!line.empty() && line[0] != '#') header_seen = true;
      result += line + "\n";
      continue;
    }
    std::vector<std::string> fields;
    std::stringstream stream(line);
    std::string field;
    while (std::getline(stream, field, ',')) fields.push_back(field);
    edit(&fields);
    for (size_t i = 0; i < fields.size(); ++i) result += (i > 0 ? "," : "") + fields[i];
    result += "\n";
  }
  WriteBytes(log, result);
}

// Runs `make` on the folder and returns (results.json cautions joined, datasheet text, run.log).
struct Issued {
  int exit_code = -1;
  std::string cautions;
  std::string pdf_text;
  std::string run_log;
};

Issued Make(const fs::path& dir) {
  Issued issued;
  const fs::path out = dir / "out";
  const Outcome run = Sorbtrace(dir, "make job.toml --out '" + out.string() + "' -q");
  issued.exit_code = run.exit_code;
  if (run.exit_code != 0) return issued;
  const nlohmann::json results = nlohmann::json::parse(ReadBytes(out / "results.json"));
  for (const auto& c : results.at("cautions")) {
    issued.cautions += c.get<std::string>() + "\n";
  }
  const Outcome text = Shell("pdftotext -q '" + (out / "datasheet.pdf").string() + "' -");
  // The PDF wraps long lines: compare with the line ends made spaces.
  issued.pdf_text = text.output;
  std::replace(issued.pdf_text.begin(), issued.pdf_text.end(), '\n', ' ');
  issued.run_log = ReadBytes(out / "run.log");
  return issued;
}

TEST(PlausibilityWarningTest, AFrozenBalanceStepIsACautionOnTheSheet) {
  const fs::path dir = FreshDir("warning_frozen_step");
  std::string first_mass;
  DemoWithEditedLog(dir / "in", [&](std::vector<std::string>* f) {
    if (std::stod((*f)[1]) != 20.0) return;  // the 20 % step repeats its first reading
    if (first_mass.empty()) first_mass = (*f)[4];
    (*f)[4] = first_mass;
  });
  const Issued issued = Make(dir / "in");
  ASSERT_EQ(issued.exit_code, 0);
  const std::string expected = "step 3 (set 20 %RH, lines 431-498): the mass reads";
  EXPECT_NE(issued.cautions.find(expected), std::string::npos) << issued.cautions;
  EXPECT_NE(issued.pdf_text.find("(set 20 %RH, lines 431-498)"), std::string::npos);
  EXPECT_NE(issued.pdf_text.find("a frozen balance?"), std::string::npos);
  EXPECT_NE(issued.run_log.find("warning: " + std::string("vapour log data/vapour_log_E1.csv, ") +
                                expected),
            std::string::npos)
      << issued.run_log;
  fs::remove_all(dir);
}

TEST(PlausibilityWarningTest, AnRhSensorStuckAtThePreviousStepIsACaution) {
  const fs::path dir = FreshDir("warning_frozen_rh");
  std::string last_at_30;
  DemoWithEditedLog(dir / "in", [&](std::vector<std::string>* f) {
    const double set = std::stod((*f)[1]);
    if (set == 30.0) last_at_30 = (*f)[2];
    if (set == 40.0) (*f)[2] = last_at_30;  // the sensor repeats the last 30 % reading
  });
  const Issued issued = Make(dir / "in");
  ASSERT_EQ(issued.exit_code, 0);
  EXPECT_NE(
      issued.cautions.find("step 5 (set 40 %RH, lines 567-633): the measured RH stays at "
                           "30.11 %, the last reading of the step before, throughout its 67 rows"),
      std::string::npos)
      << issued.cautions;
  EXPECT_NE(issued.pdf_text.find("(a frozen sensor?)"), std::string::npos);
  fs::remove_all(dir);
}

TEST(PlausibilityWarningTest, AThermometerThatNeverChangesIsACaution) {
  const fs::path dir = FreshDir("warning_frozen_temperature");
  DemoWithEditedLog(dir / "in", [](std::vector<std::string>* f) { (*f)[3] = "25.00"; });
  const Issued issued = Make(dir / "in");
  ASSERT_EQ(issued.exit_code, 0);
  EXPECT_NE(issued.cautions.find("the temperature reads 25 degC throughout all 1065 rows"),
            std::string::npos)
      << issued.cautions;
  // Input cautions come first: the one-page summary shows them before any fit flag.
  EXPECT_EQ(issued.cautions.rfind("vapour log data/vapour_log_E1.csv", 0), 0u) << issued.cautions;
  fs::remove_all(dir);
}

// ---- What is right must pass --------------------------------------------------------------------

// The phrases of every plausibility warning (pipeline/ingest/plausibility.h, R5).
bool HasPlausibilityWarning(const std::string& text) {
  for (const char* phrase : {"frozen balance", "frozen sensor", "the temperature reads"}) {
    if (text.find(phrase) != std::string::npos) return true;
  }
  return false;
}

TEST(PlausibilityGoodInputTest, EveryDemoJobPassesCheckWithoutAPlausibilityWarning) {
  int checked = 0;
  for (const auto& entry : fs::directory_iterator(kSource / "example_inputs")) {
    if (!fs::exists(entry.path() / "job.toml")) continue;
    const Outcome run = Sorbtrace(entry.path(), "check job.toml");
    EXPECT_EQ(run.exit_code, 0) << entry.path() << "\n" << run.output;
    EXPECT_FALSE(HasPlausibilityWarning(run.output)) << entry.path() << "\n" << run.output;
    ++checked;
  }
  EXPECT_GE(checked, 4);  // example_inputs/README.md: four scenarios
}

TEST(PlausibilityGoodInputTest, ADaylightSavingChangeAndLowStatedHumiditiesAreAccepted) {
  // Central European clocks go from +01:00 to +02:00 on 2026-03-29 (EU summer-time rule,
  // last Sunday of March); rh:0% is a dry step, rh:1.2% cannot be a fraction (> 1).
  const fs::path dir = FreshDir("good_daylight_saving");
  WriteBytes(dir / "weighings.csv",
             "specimen,step,atmosphere,branch,weighed_at,mass_g\n"
             "P1,1,rh:0%,drying,2026-03-26T09:00+01:00,24.0105\n"
             "P1,1,rh:0%,drying,2026-03-27T09:00+01:00,24.0012\n"
             "P1,1,rh:0%,drying,2026-03-28T09:00+01:00,24.0000\n"
             "P1,2,rh:1.2%,adsorption,2026-03-29T10:00+02:00,24.0090\n"
             "P1,2,rh:1.2%,adsorption,2026-03-30T10:00+02:00,24.0120\n"
             "P1,2,rh:1.2%,adsorption,2026-03-31T10:00+02:00,24.0121\n"
             "P1,3,MgCl2,adsorption,2026-04-01T10:00+02:00,24.2380\n"
             "P1,3,MgCl2,adsorption,2026-04-02T10:00+02:00,24.2398\n"
             "P1,3,MgCl2,adsorption,2026-04-03T10:00+02:00,24.2400\n");
  WriteBytes(dir / "job.toml",
             "[job]\nid = \"PLAUS-GOOD\"\nissue_date = \"2026-12-01\"\n[material]\n"
             "name = \"Test board TB-1 (fictional)\"\n[measurement]\n"
             "dry_mass_method = \"desiccant_step\"\n[[specimen]]\nid = \"P1\"\n"
             "[[dataset]]\nid = \"d\"\nmethod = \"desiccator\"\nfile = \"weighings.csv\"\n"
             "temperature_C = 23.0\n");
  const auto before = Snapshot(dir);
  const Outcome run = Sorbtrace(dir, "check job.toml");
  EXPECT_EQ(run.exit_code, 0) << run.output;
  EXPECT_EQ(run.output.find("error:"), std::string::npos) << run.output;
  EXPECT_EQ(Snapshot(dir), before);
  fs::remove_all(dir);
}

}  // namespace
}  // namespace sorbtrace
