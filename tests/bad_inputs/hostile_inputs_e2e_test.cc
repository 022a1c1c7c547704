// Hostile inputs too large to keep in the corpus, made at run time and run through the real
// binary: 100 KB dotted keys and table headers, thousands of nested arrays, a job file past
// 1 MiB, a 200 KB line, deeply nested and malformed results.json for `verify`, data files
// outside the job folder (by link too), 100,000-character cells, and a job whose work settings
// exceed the budget. Each must end with exit code 3, a message naming file:line:column (where a
// line exists) and what was expected, no output, and every file that was there byte-identical
// (limits: pipeline/common/bounded_input.h, README "Limits of inputs" and "Cost of a job").
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <regex>
#include <sstream>
#include <string>

#include "tests/common/e2e_support.h"

namespace sorbtrace {
namespace {

namespace fs = std::filesystem;

const fs::path kSource = fs::path(SORBTRACE_SOURCE_DIR);

using e2e::FirstError;
using e2e::Located;
using e2e::Outcome;
using e2e::ReadBytes;
using e2e::Snapshot;
using e2e::Sorbtrace;
using e2e::WriteBytes;

// A job folder with one desiccator data file (the corpus's plain case) under a fresh root;
// root/out is where `make` is pointed.
class HostileInputTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    root_ = e2e::FreshDir("hostile", info->name());
    job_dir_ = root_ / "in";
    const fs::path base =
        kSource / "tests" / "bad_inputs" / "corpus" / "job_fit_value_out_of_range";
    fs::create_directories(job_dir_);
    fs::copy_file(base / "weighings.csv", job_dir_ / "weighings.csv");
    const std::string job = ReadBytes(base / "job.toml");
    base_job_ = job.substr(0, job.find("[fit]"));  // 20 lines, ends with a blank line
  }
  void TearDown() override { fs::remove_all(root_); }

  // Runs `verb` (check, make or verify ARGS) and asserts a refusal: exit 3, a located message
  // in `file` with `substring` and "; expected ", nothing written, nothing changed.
  Located ExpectRefused(const std::string& arguments, const std::string& file, int line, int column,
                        const std::string& substring) {
    const auto before = Snapshot(root_);
    const Outcome run = Sorbtrace(job_dir_, arguments);
    SCOPED_TRACE(arguments);
    EXPECT_EQ(run.exit_code, 3) << run.output.substr(0, 2000);
    const Located error = FirstError(run.output);
    EXPECT_TRUE(error.found) << run.output.substr(0, 2000);
    EXPECT_EQ(fs::path(error.file).filename().string(), file) << error.whole_line;
    EXPECT_EQ(error.line, line) << error.whole_line;
    EXPECT_EQ(error.column, column) << error.whole_line;
    EXPECT_NE(error.text.find(substring), std::string::npos) << error.whole_line;
    EXPECT_NE(error.text.find("; expected "), std::string::npos) << error.whole_line;
    EXPECT_LT(run.output.size(), 2000u) << "the message quotes too much of the input";
    EXPECT_FALSE(fs::exists(root_ / "out")) << "output written for a refused input";
    EXPECT_FALSE(fs::exists(job_dir_ / "sorbtrace_output"));
    EXPECT_EQ(Snapshot(root_), before) << "a file changed or was added";
    return error;
  }

  // check and make both refuse the job the same way.
  void ExpectJobRefused(const std::string& file, int line, int column,
                        const std::string& substring) {
    ExpectRefused("check job.toml", file, line, column, substring);
    ExpectRefused("make job.toml -q --out '" + (root_ / "out").string() + "'", file, line, column,
                  substring);
  }

  void WriteJob(const std::string& text) { WriteBytes(job_dir_ / "job.toml", text); }

  fs::path root_;
  fs::path job_dir_;
  std::string base_job_;
};

std::string Repeat(const std::string& piece, int times) {
  std::string out;
  out.reserve(piece.size() * static_cast<size_t>(times));
  for (int i = 0; i < times; ++i) out += piece;
  return out;
}

// Nesting levels (bounded_input.h): [fit] is level 1, a key's first part level 2, each further
// part one more; the 32nd dot reaches level 33 > 32.
TEST_F(HostileInputTest, HundredKilobyteDottedKeyIsRefusedAtTheDotPastTheLimit) {
  WriteJob(base_job_ + "[fit]\na" + Repeat(".a", 50000) + " = 1\n");  // 100 KB key
  // "a.a.a...": the k-th dot is at column 2k; the 31st dot makes level 2 + 31 = 33.
  ExpectJobRefused("job.toml", 22, 62, "nesting deeper than 32 levels");
}

TEST_F(HostileInputTest, HundredKilobyteTableHeaderIsRefused) {
  WriteJob(base_job_ + "[t" + Repeat(".t", 50000) + "]\nx = 1\n");
  // "[t.t...": the k-th dot at column 2k + 1 makes level 1 + k; k = 32 passes the limit.
  ExpectJobRefused("job.toml", 21, 65, "nesting deeper than 32 levels");
  WriteJob(base_job_ + "[[t" + Repeat(".t", 50000) + "]]\nx = 1\n");
  ExpectJobRefused("job.toml", 21, 66, "nesting deeper than 32 levels");
}

TEST_F(HostileInputTest, FiftyThousandNestedArraysAndInlineTablesAreRefused) {
  // models = [[[...: the key is level 2, the n-th '[' (column 9 + n) level 2 + n; the 31st
  // (column 40) reaches 33.
  WriteJob(base_job_ + "[fit]\nmodels = " + Repeat("[", 50000) + Repeat("]", 50000) + "\n");
  ExpectJobRefused("job.toml", 22, 40, "nesting deeper than 32 levels");
  // x = { a = { a = ...: each "{ a = " adds the table and its key, two levels; the key x is
  // level 2, the n-th '{' (column 5 + 6 (n - 1)) level 1 + 2n: the 16th (column 95) reaches 33.
  WriteJob(base_job_ + "[pores]\nx = " + Repeat("{ a = ", 30000) + "1" + Repeat(" }", 30000) +
           "\n");
  ExpectJobRefused("job.toml", 22, 95, "nesting deeper than 32 levels");
}

TEST_F(HostileInputTest, JobFilePastOneMebibyteIsRefusedWhereTheLimitIsPassed) {
  // 1 MiB = 1,048,576 bytes; 20 lines of the base job (333 bytes), then 64-byte comment lines.
  const std::string comment = "#" + std::string(62, '-') + "\n";
  std::string job = base_job_;
  while (job.size() <= (size_t{1} << 20) + 100) job += comment;
  WriteJob(job);
  int line = 1;
  size_t line_start = 0;
  for (size_t i = 0; i < (size_t{1} << 20); ++i) {
    if (job[i] == '\n') {
      ++line;
      line_start = i + 1;
    }
  }
  const int column = static_cast<int>((size_t{1} << 20) - line_start) + 1;
  ExpectJobRefused("job.toml", line, column, "goes on past 1048576 bytes");
}

TEST_F(HostileInputTest, LineLongerThan128KibibytesIsRefused) {
  // The [material] description on line 8 (after the blank line 7): 200,000 characters inside
  // a string.
  std::string job = base_job_;
  job.insert(job.find("\n[measurement]"), "\ndescription = \"" + std::string(200000, 'w') + "\"");
  WriteJob(job);
  // 131,072 bytes is the limit: the 131,073rd byte of line 8 is refused.
  ExpectJobRefused("job.toml", 8, 131073, "is longer than 131072 bytes");
}

TEST_F(HostileInputTest, TemplateWithDeepNestingIsRefusedInTheTemplate) {
  std::string job = base_job_;
  job.insert(job.find("\n\n[material]"), "\ntemplate = \"layout.toml\"");
  WriteJob(job);
  WriteBytes(job_dir_ / "layout.toml", "[layout]\nsections = " + Repeat("[", 5000) + "\n");
  // [layout] level 1, key level 2, the n-th '[' level 2 + n; n = 31 at column 12 + 30 = 42.
  ExpectJobRefused("layout.toml", 2, 42, "nesting deeper than 32 levels");
}

// ---- results.json for `verify` -----------------------------------------------------------

TEST_F(HostileInputTest, DeeplyNestedResultsJsonIsRefusedByVerify) {
  // 65 levels pass the limit of 64: the 65th '[' (column 65) or '{'.
  WriteBytes(job_dir_ / "results.json", Repeat("[", 1000000));
  ExpectRefused("verify results.json", "results.json", 1, 65, "nesting deeper than 64 levels");
  WriteBytes(job_dir_ / "results.json", "{\n" + Repeat("\"a\":{", 100000) + "\n");
  // Line 2: the n-th "{" at column 5n; the 64th on this line is level 65.
  ExpectRefused("verify results.json", "results.json", 2, 320, "nesting deeper than 64 levels");
  // Brackets inside strings do not count.
  WriteBytes(job_dir_ / "results.json",
             "{\"settings\": {\"job_file\": \"" + Repeat("[", 1000) + "\"},\n \"inputs\": 7}");
  ExpectRefused("verify results.json", "results.json", 0, 0, "inputs is missing or not a list");
}

TEST_F(HostileInputTest, MalformedResultsJsonIsRefusedWithItsPlace) {
  WriteBytes(job_dir_ / "results.json", "{\n  \"settings\": {\n    \"job_file\": tru\n");
  // nlohmann::json stops at the byte after "tru" (line 3, column 20).
  ExpectRefused("verify results.json", "results.json", 3, 20, "not valid JSON");
  // A number beyond a double (found by fuzz_results_json: it escaped as an exception).
  WriteBytes(job_dir_ / "results.json", "{\"inputs\": [],\n \"n\": [-0.0, 1e400]}");
  ExpectRefused("verify results.json", "results.json", 2, 14, "number overflow");
  WriteBytes(job_dir_ / "results.json", "[1, 2, 3]");
  ExpectRefused("verify results.json", "results.json", 0, 0, "not a JSON object");
  WriteBytes(job_dir_ / "results.json", "{\"settings\": {\"job_file\": 5}, \"inputs\": []}");
  ExpectRefused("verify results.json", "results.json", 0, 0, "settings.job_file");
  WriteBytes(job_dir_ / "results.json",
             "{\"settings\": {\"job_file\": \"job.toml\"}, \"inputs\": [{\"path\": [1]}]}");
  ExpectRefused("verify results.json", "results.json", 0, 0, "inputs[0].path is not a string");
}

TEST_F(HostileInputTest, ResultsJsonPastSixtyFourMebibytesIsRefused) {
  // 64 MiB of spaces after an opening brace: refused where the limit is passed (line 1).
  std::string text = "{" + std::string((size_t{64} << 20) + 10, ' ');
  WriteBytes(job_dir_ / "results.json", text);
  text.clear();
  ExpectRefused("verify results.json", "results.json", 1, (64 << 20) + 1,
                "goes on past 67108864 bytes");
}

// ---- data-path policy --------------------------------------------------------------------

TEST_F(HostileInputTest, DataFileReachedThroughALinkOutOfTheJobFolderIsRefused) {
  WriteBytes(root_ / "elsewhere" / "weighings.csv", ReadBytes(job_dir_ / "weighings.csv"));
  fs::create_directory_symlink(root_ / "elsewhere", job_dir_ / "linked");
  std::string job = base_job_;
  job.replace(job.find("\"weighings.csv\""), 15, "\"linked/weighings.csv\"");
  WriteJob(job);
  ExpectJobRefused("job.toml", 18, 8, "lies outside the job file's folder");
}

TEST_F(HostileInputTest, OutsideDataIsReadWhenTheJobAllowsItAndQuotedOnlyShortly) {
  // A foreign file whose first line is 200 characters: with the policy lifted it is read, and
  // the unknown-column message quotes at most 60 characters of it.
  const std::string secret = "SECRET" + std::string(194, 'z');
  WriteBytes(root_ / "elsewhere" / "notes.csv", secret + "\nmore\n");
  std::string job = base_job_;
  job.replace(job.find("\"weighings.csv\""), 15, "\"../elsewhere/notes.csv\"");
  job.insert(job.find("\n\n[material]"), "\nallow_data_outside_job_folder = true");
  WriteJob(job);
  const Located error = ExpectRefused("check job.toml", "notes.csv", 1, 1, "unknown column");
  EXPECT_NE(error.text.find("SECRET" + std::string(54, 'z') + "... (200 bytes)"), std::string::npos)
      << error.whole_line;
  EXPECT_EQ(error.text.find(std::string(55, 'z')), std::string::npos) << error.whole_line;

  // The same job with a valid file outside passes `check`.
  WriteBytes(root_ / "elsewhere" / "notes.csv", ReadBytes(job_dir_ / "weighings.csv"));
  const Outcome run = Sorbtrace(job_dir_, "check job.toml");
  EXPECT_EQ(run.exit_code, 0) << run.output;
}

// ---- long cells ----------------------------------------------------------------------------

TEST_F(HostileInputTest, HundredThousandCharacterCellsAreQuotedAsShortExcerpts) {
  WriteJob(base_job_);
  const std::string csv = ReadBytes(job_dir_ / "weighings.csv");
  const size_t second_line = csv.find('\n') + 1;
  // An unknown specimen id of 100,000 characters on line 2.
  WriteBytes(job_dir_ / "weighings.csv",
             csv.substr(0, second_line) + std::string(100000, 'X') + csv.substr(second_line + 2));
  Located error = ExpectRefused("check job.toml", "weighings.csv", 2, 1, "is not declared");
  EXPECT_NE(error.text.find(std::string(60, 'X') + "... (100000 bytes)"), std::string::npos)
      << error.whole_line.substr(0, 300);
  // A 100,000-character mass (digits then letters) in the last column of line 2.
  const size_t mass = csv.rfind(',', csv.find('\n', second_line)) + 1;
  const std::string long_mass = std::string(50000, '9') + std::string(50000, 'x');
  WriteBytes(job_dir_ / "weighings.csv",
             csv.substr(0, mass) + long_mass + csv.substr(csv.find('\n', second_line)));
  error = ExpectRefused("check job.toml", "weighings.csv", 2,
                        static_cast<int>(mass - second_line) + 1, "is not a number");
  EXPECT_NE(error.text.find("... (100000 bytes)"), std::string::npos)
      << error.whole_line.substr(0, 300);
  // A 100,000-character column name.
  WriteBytes(job_dir_ / "weighings.csv", csv.substr(0, second_line - 1) + ",\"" +
                                             std::string(100000, 'h') + "\"" +
                                             csv.substr(second_line - 1));
  error = ExpectRefused("check job.toml", "weighings.csv", 1, 51, "unknown column");
  EXPECT_NE(error.text.find("... (100000 bytes)"), std::string::npos)
      << error.whole_line.substr(0, 300);
}

// ---- cost of a job ---------------------------------------------------------------------------

TEST_F(HostileInputTest, EveryWorkSettingAtItsMaximumOnTheLargestDemoJobIsRefusedBeforeWork) {
  // The two-temperature vapour-log demo (4 fit groups): 11 models with 10,000 bootstrap and
  // 10,000 Monte Carlo refits each is far above the budget; check and make both refuse it at
  // the largest contribution (bootstrap_resamples, line 54 column 23), before any fitting.
  fs::copy(kSource / "example_inputs" / "wood_fibre_board_23C_40C", job_dir_,
           fs::copy_options::recursive | fs::copy_options::overwrite_existing);
  std::string job = ReadBytes(job_dir_ / "job.toml");
  ASSERT_EQ(job.find("[fit]"), std::string::npos);
  ASSERT_EQ(job.find("[pores]"), std::string::npos);
  job +=
      "\n[fit]\nmodels = [\"gab\", \"bet\", \"vangenuchten\", \"durner2\", \"oswin\", "
      "\"halsey\", \"henderson\", \"peleg\", \"bet_n\", \"vangenuchten_free_m\", \"durner3\"]\n"
      "bootstrap_resamples = 10000\nmonte_carlo_draws = 10000\nband_points = 1000\n"
      "[pores]\ngrid_points = 2000\nband_draws = 10000\n";
  WriteJob(job);
  int line = 1;
  for (size_t i = 0; i < job.find("bootstrap_resamples = 10000"); ++i) line += job[i] == '\n';
  ExpectJobRefused("job.toml", line, 23, "is above the budget");
}

}  // namespace
}  // namespace sorbtrace
