// The bad-input corpus (tests/bad_inputs/corpus/cases.tsv) run through the real binary.
// Every case folder holds one fault; it is copied to a fresh temporary folder, run with the
// verb of its table row, and must end with the documented exit code 3, a message naming
// file:line:column (docs/input-formats.md, "Messages") with the expectation text, no output
// folder, and inputs byte-identical to before. The good/ folder (corpus/good/) holds files as
// laboratories really produce them (CRLF, byte-order mark, quoted fields, decimal commas, day-first
// dates): each must pass `check` and give the same moisture contents as the plain file.
// tests/bad_inputs/regressions/<target>/ holds inputs found by the fuzz targets (fuzz/); each
// is replayed through the binary inside the same job the fuzz target wraps it in.
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <regex>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "tests/common/e2e_support.h"

namespace sorbtrace {
namespace {

namespace fs = std::filesystem;

const fs::path kBadInputs = fs::path(SORBTRACE_SOURCE_DIR) / "tests" / "bad_inputs";

using e2e::Case;
using e2e::CaseName;
using e2e::FirstError;
using e2e::Located;
using e2e::Outcome;
using e2e::ReadBytes;
using e2e::Snapshot;
using e2e::Sorbtrace;
using e2e::WriteBytes;

std::vector<Case> LoadCases() { return e2e::LoadCases(kBadInputs / "corpus" / "cases.tsv"); }

fs::path FreshDir(const std::string& name) { return e2e::FreshDir("bad_inputs", name); }

class BadInputTest : public ::testing::TestWithParam<Case> {};

TEST_P(BadInputTest, FailsWithALocatedMessageAndWritesNothing) {
  e2e::ExpectLocatedRefusal(GetParam(), kBadInputs / "corpus", "bad_inputs");
}

INSTANTIATE_TEST_SUITE_P(Corpus, BadInputTest, ::testing::ValuesIn(LoadCases()), CaseName);

TEST(BadInputCorpusTest, EveryFolderHasARowAndThereAreAtLeastFortyFaults) {
  std::set<std::string> in_table;
  for (const Case& c : LoadCases()) in_table.insert(c.name);
  std::set<std::string> folders;
  for (const auto& entry : fs::directory_iterator(kBadInputs / "corpus")) {
    const std::string name = entry.path().filename().string();
    if (entry.is_directory() && name != "good") folders.insert(name);
  }
  EXPECT_EQ(folders, in_table);
  EXPECT_GE(folders.size(), 40u);  // issue 8: at least 40 single-fault cases
}

// ---- good/: what laboratories really produce must read fine --------------------------------

std::vector<std::string> GoodCases() {
  std::vector<std::string> names;
  for (const auto& entry : fs::directory_iterator(kBadInputs / "corpus" / "good")) {
    if (entry.is_directory()) names.push_back(entry.path().filename().string());
  }
  std::sort(names.begin(), names.end());
  return names;
}

// (RH %, moisture kg/kg) of the isotherm points `check --json` reports for a copy of good/<name>.
std::vector<std::pair<double, double>> CheckedPoints(const std::string& name) {
  const fs::path root = FreshDir("good_" + name);
  fs::copy(kBadInputs / "corpus" / "good" / name, root / "in", fs::copy_options::recursive);
  const auto before = Snapshot(root / "in");
  const Outcome run = Sorbtrace(root / "in", "check job.toml --json", /*with_stderr=*/false);
  std::vector<std::pair<double, double>> points;
  EXPECT_EQ(run.exit_code, 0) << name << "\n" << run.output;
  EXPECT_EQ(Snapshot(root / "in"), before) << name << ": inputs changed";
  if (run.exit_code == 0) {
    const auto json = nlohmann::json::parse(run.output);
    for (const auto& p : json.at("isotherm_points")) {
      points.emplace_back(p.at("rh_percent").get<double>(),
                          p.at("moisture_kg_per_kg").get<double>());
    }
  }
  fs::remove_all(root);
  return points;
}

class GoodInputTest : public ::testing::TestWithParam<std::string> {};

TEST_P(GoodInputTest, PassesCheckWithoutErrorsAndLeavesInputsAlone) {
  const fs::path root = FreshDir("good_text_" + GetParam());
  fs::copy(kBadInputs / "corpus" / "good" / GetParam(), root / "in", fs::copy_options::recursive);
  const auto before = Snapshot(root / "in");
  const Outcome run = Sorbtrace(root / "in", "check job.toml");
  EXPECT_EQ(run.exit_code, 0) << run.output;
  EXPECT_EQ(run.output.find("error:"), std::string::npos) << run.output;
  EXPECT_EQ(Snapshot(root / "in"), before);
  EXPECT_FALSE(fs::exists(root / "in" / "sorbtrace_output"));
  fs::remove_all(root);
}

std::string GoodName(const ::testing::TestParamInfo<std::string>& param) { return param.param; }

INSTANTIATE_TEST_SUITE_P(Good, GoodInputTest, ::testing::ValuesIn(GoodCases()), GoodName);

TEST(GoodInputTest, EveryVariantOfThePlainFileGivesTheSameMoistureContents) {
  // good/plain: dry mass 24.0000 g (job file); last weighings 24.2400 g over MgCl2 and
  // 24.5110 g over NaCl. Moisture content by mass u = (m - m_dry) / m_dry (the mass-by-mass
  // moisture content of ISO 12571); both steps reach constant mass (< 0.1 % change, common
  // practice), so the last weighing is the equilibrium mass.
  // Tolerance: one balance digit (0.1 mg) over 24 g.
  const double kTolerance = 0.0001 / 24.0;
  const auto plain = CheckedPoints("plain");
  ASSERT_EQ(plain.size(), 2u);
  EXPECT_NEAR(plain[0].second, (24.2400 - 24.0) / 24.0, kTolerance);
  EXPECT_NEAR(plain[1].second, (24.5110 - 24.0) / 24.0, kTolerance);
  // Greenspan (1977), J. Res. NBS 81A(1) 89-96, fitted polynomials at 23 degC:
  // MgCl2 32.90 %, NaCl 75.37 % (the table truncates to 0.01 %).
  EXPECT_NEAR(plain[0].first, 32.90, 0.02);
  EXPECT_NEAR(plain[1].first, 75.37, 0.02);

  for (const char* variant :
       {"crlf_line_ends", "utf8_bom", "trailing_empty_lines", "no_final_line_end", "quoted_fields",
        "semicolon_decimal_comma", "day_first_datetime", "iso8601_seconds_and_offsets",
        "tab_delimited", "comments_and_blank_rows", "spaces_around_fields", "mass_unit_from_job",
        "milligram_column", "lowercase_salt_names"}) {
    const auto points = CheckedPoints(variant);
    ASSERT_EQ(points.size(), plain.size()) << variant;
    for (size_t i = 0; i < points.size(); ++i) {
      EXPECT_DOUBLE_EQ(points[i].first, plain[i].first) << variant << " point " << i;
      // 1e-9: the residual-approach correction of the equilibrate stage depends on the
      // weighing times, and iso8601_seconds_and_offsets weighs 15 s later (2.5e-10 kg/kg).
      EXPECT_NEAR(points[i].second, plain[i].second, 1e-9) << variant << " point " << i;
    }
  }
}

TEST(GoodInputTest, NegativeMoistureIsKeptWhenTheJobSaysItIsExpected) {
  // Dry mass 24.3500 g above the MgCl2 equilibrium mass 24.2400 g: u = -0.11 / 24.35.
  const auto points = CheckedPoints("negative_moisture_expected");
  ASSERT_EQ(points.size(), 2u);
  EXPECT_NEAR(points[0].second, (24.2400 - 24.35) / 24.35, 0.0001 / 24.35);
  EXPECT_LT(points[0].second, 0.0);
}

// ---- regressions/: inputs the fuzz targets found, replayed through the binary ----------------

// The job each fuzz target wraps its bytes in (fuzz/data_file_fuzzer.h and the targets).
constexpr const char* kFuzzJobHead =
    "[job]\nid = \"FUZZ\"\nissue_date = \"2026-12-01\"\n[material]\nname = \"fuzz\"\n"
    "[measurement]\n"
    "[[specimen]]\nid = \"P1\"\ndry_mass_g = 24.0\n[[specimen]]\nid = \"P2\"\ndry_mass_g = 30.0\n"
    "[[specimen]]\nid = \"P3\"\ndry_mass_g = 20.0\n[[specimen]]\nid = \"S1\"\ndry_mass_g = 10.0\n"
    "[[specimen]]\nid = \"S2\"\ndry_mass_g = 10.0\n[[specimen]]\nid = \"S3\"\ndry_mass_g = 10.0\n";
constexpr const char* kFuzzDesiccator =
    "specimen,step,atmosphere,branch,weighed_at,mass_g\n"
    "P1,1,NaCl,adsorption,2026-09-01T09:00,24.5\n"
    "P1,1,NaCl,adsorption,2026-09-03T09:00,24.6\n";

// Lays out the folder the fuzz target `target` builds around `bytes`; returns false for an
// unknown target folder.
bool LayOut(const std::string& target, const std::string& bytes, const fs::path& dir) {
  const std::string head = kFuzzJobHead;
  if (target == "desiccator_csv") {
    WriteBytes(dir / "data.csv", bytes);
    WriteBytes(dir / "job.toml", head +
                                     "[[dataset]]\nid = \"d\"\nmethod = \"desiccator\"\n"
                                     "file = \"data.csv\"\ntemperature_C = 23\n");
  } else if (target == "vapor_log_csv") {
    WriteBytes(dir / "data.csv", bytes);
    WriteBytes(dir / "job.toml",
               head +
                   "[[dataset]]\nid = \"v\"\nmethod = \"vapor_log\"\n"
                   "file = \"data.csv\"\ntemperature_C = 25\nspecimen = \"P2\"\n");
  } else if (target == "retention_csv") {
    WriteBytes(dir / "d.csv", kFuzzDesiccator);
    WriteBytes(dir / "data.csv", bytes);
    WriteBytes(dir / "job.toml", head +
                                     "[[dataset]]\nid = \"d\"\nmethod = \"desiccator\"\n"
                                     "file = \"d.csv\"\ntemperature_C = 23\n"
                                     "[retention]\nfile = \"data.csv\"\ntemperature_C = 20\n");
  } else if (target == "job_file") {
    WriteBytes(dir / "data.csv", kFuzzDesiccator);
    WriteBytes(dir / "job.toml", bytes);
  } else if (target == "template") {
    WriteBytes(dir / "d.csv", kFuzzDesiccator);
    WriteBytes(dir / "template.toml", bytes);
    WriteBytes(dir / "job.toml",
               "[job]\nid = \"FUZZ\"\nissue_date = \"2026-12-01\"\ntemplate = \"template.toml\"\n"
               "[material]\nname = \"fuzz\"\n[measurement]\n[[specimen]]\nid = \"P1\"\n"
               "dry_mass_g = 24.0\n[[dataset]]\nid = \"d\"\nmethod = \"desiccator\"\n"
               "file = \"d.csv\"\ntemperature_C = 23\n");
  } else {
    return false;
  }
  return true;
}

TEST(FuzzRegressionTest, EveryFindingEndsWithExitCode0Or3AndALocatedMessage) {
  const fs::path regressions = kBadInputs / "regressions";
  int replayed = 0;
  for (const auto& target_dir : fs::directory_iterator(regressions)) {
    if (!target_dir.is_directory()) continue;
    const std::string target = target_dir.path().filename().string();
    for (const auto& input : fs::directory_iterator(target_dir.path())) {
      if (!input.is_regular_file() || input.path().extension() == ".md") continue;
      const fs::path dir = FreshDir("regression_" + target + "_" + input.path().stem().string());
      ASSERT_TRUE(LayOut(target, ReadBytes(input.path()), dir)) << "unknown target " << target;
      const auto before = Snapshot(dir);
      const Outcome run = Sorbtrace(dir, "check job.toml");
      SCOPED_TRACE(target + "/" + input.path().filename().string());
      EXPECT_TRUE(run.exit_code == 0 || run.exit_code == 3) << run.exit_code << "\n" << run.output;
      if (run.exit_code == 3) {
        const Located error = FirstError(run.output);
        EXPECT_TRUE(error.found) << run.output;
        EXPECT_GT(error.line, 0) << "no line in the message:\n" << run.output;
        EXPECT_NE(error.text.find("; expected "), std::string::npos) << run.output;
      }
      EXPECT_EQ(Snapshot(dir), before);
      fs::remove_all(dir);
      ++replayed;
    }
  }
  EXPECT_GT(replayed, 0) << "tests/bad_inputs/regressions/ holds no inputs";
}

}  // namespace
}  // namespace sorbtrace
