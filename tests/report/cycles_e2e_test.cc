// Two adsorption/desorption cycles of one log are not two independent replicates, on the real
// binary. The log is generated from the invented vapour demo (example_inputs/
// wood_fibre_board_vapour, itself generated data): its first cycle (the 0 % RH step, then
// adsorption and desorption) is written twice, the second time later and with the water taken
// up by the specimen multiplied by kCycleFactor (mass m' = m_0 + (m - m_0) kCycleFactor, m_0 the
// mass at the end of the 0 % step): a second cycle 4 % wetter at every step, as a drifted
// balance or a conditioned material would give. Truth: the two cycles differ by ln(1.04) on the
// log scale at every step, so one cycle's factor has the relative standard deviation
// ln(1.04) / sqrt(2) = 2.77 % (the standard deviation of two values d apart is d / sqrt(2)),
// less the points' own share (below 0.01 % here). The sheet must
//  - number the cycle of every row of the equilibrium table (columns "Cycle", 1 and 2, on the
//    sheet and in equilibrium_table.csv);
//  - draw the cycles with their own markers (legend entries "cycle 1" and "cycle 2");
//  - say how the cycles were combined, with the cycle component's relative standard deviation
//    (2.8 %, to two digits).
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iomanip>
#include <map>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

#include "tests/common/e2e_support.h"
#include "tests/report/pdf_tools.h"

namespace sorbtrace::report {
namespace {

namespace fs = std::filesystem;

constexpr double kCycleFactor = 1.04;

struct LogRow {
  double elapsed_s = 0.0;
  std::string set_rh, measured_rh, temperature;
  double mass_mg = 0.0;
};

// Writes the two-cycle log (see the header) from the demo's log; returns false if the demo
// log does not have the expected shape.
bool WriteTwoCycleLog(const fs::path& demo_log, const fs::path& out) {
  std::ifstream in(demo_log);
  std::string line;
  std::vector<std::string> header;
  std::vector<LogRow> rows;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#' || line.rfind("elapsed", 0) == 0) {
      header.push_back(line);
      continue;
    }
    std::istringstream fields(line);
    LogRow r;
    std::string elapsed, mass;
    std::getline(fields, elapsed, ',');
    std::getline(fields, r.set_rh, ',');
    std::getline(fields, r.measured_rh, ',');
    std::getline(fields, r.temperature, ',');
    std::getline(fields, mass, ',');
    r.elapsed_s = std::stod(elapsed);
    r.mass_mg = std::stod(mass);
    rows.push_back(r);
  }
  // The first cycle: the 0 % step, then every row until the log is back at 0 %.
  size_t dry_end = 0;
  while (dry_end < rows.size() && std::stod(rows[dry_end].set_rh) == 0.0) ++dry_end;
  size_t cycle_end = dry_end;
  while (cycle_end < rows.size() && std::stod(rows[cycle_end].set_rh) != 0.0) ++cycle_end;
  if (dry_end == 0 || dry_end >= rows.size() || cycle_end <= dry_end) return false;
  const double m0 = rows[dry_end - 1].mass_mg;
  const double period = rows[cycle_end].elapsed_s - rows[0].elapsed_s;
  std::ofstream o(out);
  for (const std::string& h : header) o << h << "\n";
  auto put = [&o](const LogRow& r, double elapsed, double mass) {
    o << static_cast<long long>(std::llround(elapsed)) << "," << r.set_rh << "," << r.measured_rh
      << "," << r.temperature << "," << std::fixed << std::setprecision(4) << mass << "\n";
  };
  for (size_t i = 0; i < cycle_end; ++i) put(rows[i], rows[i].elapsed_s, rows[i].mass_mg);
  for (size_t i = 0; i < cycle_end; ++i) {
    put(rows[i], rows[i].elapsed_s + period, m0 + (rows[i].mass_mg - m0) * kCycleFactor);
  }
  for (size_t i = 0; i < dry_end; ++i)
    put(rows[i], rows[i].elapsed_s + 2.0 * period, rows[i].mass_mg);
  return static_cast<bool>(o);
}

TEST(CyclesE2eTest, TwoCyclesAreNumberedMarkedAndCarriedAsACycleComponent) {
  const fs::path demo = fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs/wood_fibre_board_vapour";
  const fs::path root = e2e::FreshDir("cycles_e2e", "two_cycles");
  fs::create_directories(root / "job/data");
  fs::copy_file(demo / "job.toml", root / "job/job.toml");
  fs::copy_file(demo / "lab_profile.toml", root / "job/lab_profile.toml");
  ASSERT_TRUE(
      WriteTwoCycleLog(demo / "data/vapour_log_W1.csv", root / "job/data/vapour_log_W1.csv"));
  const e2e::Outcome made = e2e::Sorbtrace("make '" + (root / "job/job.toml").string() +
                                           "' --out '" + (root / "out").string() + "' -q");
  ASSERT_EQ(made.exit_code, 0) << made.output;
  const std::string text = testing::CollapseSpaces(testing::PdfText(root / "out/datasheet.pdf"));
  // The equilibrium table has a Cycle column; both cycles appear in the legend.
  EXPECT_NE(text.find("Cycle"), std::string::npos);
  EXPECT_NE(text.find("cycle 1 (± U)"), std::string::npos);
  EXPECT_NE(text.find("cycle 2 (± U)"), std::string::npos);
  // How the cycles were combined, with the cycle component of the adsorption branch.
  EXPECT_NE(text.find("not as independent replicates"), std::string::npos);
  std::smatch m;
  ASSERT_TRUE(std::regex_search(
      text, m, std::regex(R"(relative standard deviation adsorption: ([0-9.]+) %)")))
      << "the sentence on the cycles";
  const double printed = std::stod(m[1]);
  const double truth = 100.0 * std::log(kCycleFactor) / std::sqrt(2.0);  // 2.77 %
  EXPECT_NEAR(printed, truth, 0.1) << "printed to two significant digits";
  // equilibrium_table.csv keeps the cycles apart, numbered from 1 as on the sheet: rows of
  // both record kinds (specimen, combined) in cycle 1 and in cycle 2, and in no other. The
  // cycle is the 7th column; no text before it holds a comma in this job.
  std::ifstream csv(root / "out/equilibrium_table.csv");
  std::string line;
  ASSERT_TRUE(std::getline(csv, line));
  ASSERT_EQ(line.rfind("record,dataset,specimen,step,atmosphere,branch,cycle,", 0), 0u) << line;
  std::map<std::string, std::map<std::string, int>> rows_per_cycle;
  while (std::getline(csv, line)) {
    std::vector<std::string> cells;
    std::istringstream fields(line);
    for (std::string cell; cells.size() < 7 && std::getline(fields, cell, ',');) {
      cells.push_back(cell);
    }
    ASSERT_EQ(cells.size(), 7u) << line;
    ++rows_per_cycle[cells[0]][cells[6]];
  }
  for (const char* record : {"specimen", "combined"}) {
    const std::map<std::string, int>& cycles = rows_per_cycle[record];
    ASSERT_EQ(cycles.size(), 2u) << record;
    EXPECT_GT(cycles.count("1"), 0u) << record;
    EXPECT_GT(cycles.count("2"), 0u) << record;
  }
  fs::remove_all(root);
}

}  // namespace
}  // namespace sorbtrace::report
