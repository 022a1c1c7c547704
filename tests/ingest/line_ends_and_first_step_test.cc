// Two findings of the held-out runs, at their root in ingest:
//  - a data file whose line ends are CR only (classic Mac OS) is refused at line 1, naming the
//    line ends and what is expected (csv_reader.h), for every reader and also when the file is
//    longer than the line limit;
//  - the first step of a vapour log takes its branch from its own mass change, else from the
//    next set point (VaporLogStep::branch, ingest.h); cycles restart on the log's first branch.
// The logs are generated here: first-order approach to each step's equilibrium mass (as a
// balance log shows it; the form of tests/heldout/heldout_jobs.h), no noise.
#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "fmt/format.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::ingest {
namespace {

namespace fs = std::filesystem;

fs::path TestFile(const std::string& name, const std::string& bytes) {
  const fs::path dir =
      fs::temp_directory_path() / ("sorbtrace_line_ends_" + std::to_string(::getpid()));
  fs::create_directories(dir);
  const fs::path path = dir / name;
  std::ofstream(path, std::ios::binary) << bytes;
  return path;
}

DataSetSpec LogDataSet(const fs::path& file) {
  DataSetSpec dataset;
  dataset.id = "log";
  dataset.method = Method::kVaporLog;
  dataset.file = file;
  dataset.temperature_K = 296.15;
  dataset.specimen_id = "S1";
  return dataset;
}

const char* kLogHeader = "elapsed_s,set_rh_percent,measured_rh_percent,temperature_C,mass_g";

// Expects an InputError at file:1:column saying the line ends are CR only.
template <typename Read>
void ExpectCrOnlyRefused(const fs::path& file, int column, Read read) {
  try {
    read();
    ADD_FAILURE() << file << " was accepted";
  } catch (const InputError& error) {
    const Diagnostic& d = error.diagnostic();
    EXPECT_EQ(d.where.file, file.string());
    EXPECT_EQ(d.where.line, 1) << error.what();
    EXPECT_EQ(d.where.column, column) << error.what();
    EXPECT_EQ(d.message.rfind("line ends are CR only", 0), 0u) << error.what();
    EXPECT_NE(d.expected.find("LF or CRLF line ends"), std::string::npos) << error.what();
  }
}

TEST(LineEndsTest, CrOnlyFilesAreRefusedAtLineOne) {
  const std::string header = kLogHeader;
  const std::string rows = "0,0,1.0,23.0,0.2500\r60,0,1.0,23.0,0.2499\r120,0,1.0,23.0,0.2498\r";
  // The first CR ends the header: column = header length + 1.
  const fs::path log = TestFile("cr_only_log.csv", header + "\r" + rows);
  ExpectCrOnlyRefused(log, static_cast<int>(header.size()) + 1,
                      [&] { ReadVaporLog(LogDataSet(log), IngestOptions{}, nullptr); });
  // With a UTF-8 byte-order mark (3 bytes) and a comment line first.
  const std::string comment = "# balance export";
  const fs::path bom =
      TestFile("cr_only_bom.csv", "\xEF\xBB\xBF" + comment + "\r" + header + "\r" + rows);
  ExpectCrOnlyRefused(bom, static_cast<int>(comment.size()) + 4,
                      [&] { ReadVaporLog(LogDataSet(bom), IngestOptions{}, nullptr); });
  // A desiccator file goes through the same reader.
  const std::string weighings = "specimen,step,atmosphere,branch,weighed_at,mass_g";
  const fs::path desiccator = TestFile(
      "cr_only_desiccator.csv", weighings + "\rP1,1,NaCl,adsorption,2026-03-02T09:00,10.1000\r");
  JobSpec job;
  job.specimens.push_back(SpecimenSpec{"P1", 10.0, std::nullopt, {}});
  DataSetSpec dataset = LogDataSet(desiccator);
  dataset.method = Method::kDesiccator;
  ExpectCrOnlyRefused(desiccator, static_cast<int>(weighings.size()) + 1,
                      [&] { ReadDesiccatorSeries(job, dataset); });
}

// A CR-only log longer than the 1 MiB line limit (kMaxCsvLineBytes) is one endless line: the
// message still names the line ends, not the length.
TEST(LineEndsTest, LongCrOnlyFileNamesTheLineEnds) {
  std::string bytes = std::string(kLogHeader) + "\r";
  for (int i = 0; bytes.size() < (std::size_t{3} << 20); ++i) {
    bytes += fmt::format("{},0,1.0,23.0,0.2500\r", 60 * i);
  }
  const fs::path log = TestFile("cr_only_long.csv", bytes);
  ExpectCrOnlyRefused(log, static_cast<int>(std::string(kLogHeader).size()) + 1,
                      [&] { ReadVaporLog(LogDataSet(log), IngestOptions{}, nullptr); });
}

// The same file with CRLF or LF line ends is read (three rows, one drying step).
TEST(LineEndsTest, CrlfAndLfAreRead) {
  for (const std::string end : {"\r\n", "\n"}) {
    const fs::path log =
        TestFile("ok.csv", std::string(kLogHeader) + end + "0,0,1.0,23.0,0.2500" + end +
                               "60,0,1.0,23.0,0.2499" + end + "120,0,1.0,23.0,0.2498" + end);
    const VaporLog read = ReadVaporLog(LogDataSet(log), IngestOptions{}, nullptr);
    EXPECT_EQ(read.num_rows, 3);
    ASSERT_EQ(read.steps.size(), 1u);
    EXPECT_EQ(read.steps[0].branch, Branch::kDrying);
  }
}

// ---- The first step's branch ----------------------------------------------------------------

struct Step {
  double set_percent;
  double mass_eq_g;  // the mass this step approaches
};

// One reading a minute, 60 minutes a step, mass_eq + (start - mass_eq) exp(-t / 10 min).
std::string Log(double start_mass_g, const std::vector<Step>& steps) {
  std::string csv = std::string(kLogHeader) + "\n";
  double mass = start_mass_g;
  int t_min = 0;
  for (const Step& step : steps) {
    const double start = mass;
    for (int i = 1; i <= 60; ++i) {
      mass = step.mass_eq_g + (start - step.mass_eq_g) * std::exp(-i / 10.0);
      csv += fmt::format("{},{:.1f},{:.1f},23.0,{:.7f}\n", 60 * ++t_min, step.set_percent,
                         step.set_percent, mass);
    }
  }
  return csv;
}

std::vector<Branch> Branches(const VaporLog& log) {
  std::vector<Branch> out;
  for (const VaporLogStep& step : log.steps) out.push_back(step.branch);
  return out;
}
std::vector<int> Cycles(const VaporLog& log) {
  std::vector<int> out;
  for (const VaporLogStep& step : log.steps) out.push_back(step.cycle);
  return out;
}

VaporLog Read(const std::string& name, const std::string& csv) {
  return ReadVaporLog(LogDataSet(TestFile(name, csv)), IngestOptions{}, nullptr);
}

constexpr Branch kAds = Branch::kAdsorption;
constexpr Branch kDes = Branch::kDesorption;
constexpr Branch kDry = Branch::kDrying;

// A specimen put in wet (0.2600 g) at 90 % RH, equilibrating at 0.2550 g, then dried in steps:
// it loses 5 mg in its first step, far above 2 sqrt(2) u_balance = 0.28 mg (JobSpec default
// u_balance 0.1 mg), so every step is desorption; before, the first was labelled adsorption.
TEST(FirstStepBranchTest, LogThatStartsWetAndDriesIsDesorptionFromItsFirstStep) {
  const VaporLog log =
      Read("dries.csv",
           Log(0.2600, {{90, 0.2550}, {70, 0.2530}, {50, 0.2515}, {30, 0.2505}, {0, 0.2500}}));
  EXPECT_EQ(Branches(log), (std::vector<Branch>{kDes, kDes, kDes, kDes, kDry}));
  EXPECT_EQ(Cycles(log), (std::vector<int>{0, 0, 0, 0, 0}));
}

// The same set points with a specimen that comes in drier (0.2510 g) and takes up 4 mg in the
// first step: that step is adsorption (the top of the adsorption branch), the rest desorption.
TEST(FirstStepBranchTest, FirstStepThatGainsMassIsAdsorption) {
  const VaporLog log =
      Read("gains.csv", Log(0.2510, {{90, 0.2550}, {70, 0.2530}, {50, 0.2515}, {0, 0.2500}}));
  EXPECT_EQ(Branches(log), (std::vector<Branch>{kAds, kDes, kDes, kDry}));
  EXPECT_EQ(Cycles(log), (std::vector<int>{0, 0, 0, 0}));
}

// A specimen preconditioned at the first set point: its mass changes by 0.1 mg, within
// 2 sqrt(2) x 0.1 mg. The next set point decides: lower, desorption; higher, adsorption. A log
// of one such step keeps adsorption (no evidence either way).
TEST(FirstStepBranchTest, WithinNoiseTheNextSetPointDecides) {
  EXPECT_EQ(Branches(Read("flat_down.csv", Log(0.2549, {{90, 0.2550}, {70, 0.2530}}))),
            (std::vector<Branch>{kDes, kDes}));
  EXPECT_EQ(Branches(Read("flat_up.csv", Log(0.2509, {{30, 0.2510}, {60, 0.2525}}))),
            (std::vector<Branch>{kAds, kAds}));
  EXPECT_EQ(Branches(Read("flat_alone.csv", Log(0.2509, {{30, 0.2510}}))),
            (std::vector<Branch>{kAds}));
}

// Cycles restart each time the log comes back to its first branch: desorption first, then
// adsorption (same cycle), then desorption again (cycle 2, index 1). A log that starts with
// drying and adsorbs first counts as before.
TEST(FirstStepBranchTest, CyclesRestartOnTheFirstBranch) {
  const VaporLog wet_first = Read(
      "wet_first.csv",
      Log(0.2600,
          {{90, 0.2550}, {50, 0.2515}, {0, 0.2500}, {50, 0.2512}, {90, 0.2548}, {50, 0.2514}}));
  EXPECT_EQ(Branches(wet_first), (std::vector<Branch>{kDes, kDes, kDry, kAds, kAds, kDes}));
  EXPECT_EQ(Cycles(wet_first), (std::vector<int>{0, 0, 0, 0, 0, 1}));
  const VaporLog dry_first =
      Read("dry_first.csv",
           Log(0.2530, {{0, 0.2500}, {50, 0.2512}, {90, 0.2548}, {50, 0.2514}, {90, 0.2549}}));
  EXPECT_EQ(Branches(dry_first), (std::vector<Branch>{kDry, kAds, kAds, kDes, kAds}));
  EXPECT_EQ(Cycles(dry_first), (std::vector<int>{0, 0, 0, 0, 1}));
}

}  // namespace
}  // namespace sorbtrace::ingest
