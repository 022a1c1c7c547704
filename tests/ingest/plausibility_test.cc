// The plausibility rules of pipeline/ingest/plausibility.h at their bounds: each bound is hit
// from both sides, so a rule that stopped firing, or fired on what is right, fails here.
#include "pipeline/ingest/plausibility.h"

#include <gtest/gtest.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::ingest::internal {
namespace {

namespace fs = std::filesystem;

// ---- R2 ---------------------------------------------------------------------------------------

TEST(RhFractionRuleTest, StatedHumiditiesFromZeroToOnePercentAreFractions) {
  EXPECT_FALSE(StatedRhLooksLikeFraction(0.0));   // rh:0% is a dry step
  EXPECT_TRUE(StatedRhLooksLikeFraction(0.113));  // LiCl written as a fraction
  EXPECT_TRUE(StatedRhLooksLikeFraction(1.0));    // 100 % as a fraction
  EXPECT_FALSE(StatedRhLooksLikeFraction(1.2));   // above 1: not a fraction
  EXPECT_FALSE(StatedRhLooksLikeFraction(11.3));
}

TEST(RhFractionRuleTest, APercentColumnUpToOnePointFiveIsFractions) {
  EXPECT_FALSE(PercentColumnLooksLikeFractions(0.0));  // a drying-only log
  EXPECT_TRUE(PercentColumnLooksLikeFractions(0.9));
  EXPECT_TRUE(PercentColumnLooksLikeFractions(1.5));  // the bound of plausibility.h
  EXPECT_FALSE(PercentColumnLooksLikeFractions(1.51));
  EXPECT_FALSE(PercentColumnLooksLikeFractions(90.0));
}

// ---- R3 ---------------------------------------------------------------------------------------

TEST(UtcOffsetRuleTest, ReadsTheOffsetOfEveryIsoForm) {
  EXPECT_FALSE(UtcOffsetOf("2026-09-01T09:00").stated);
  EXPECT_FALSE(UtcOffsetOf("2026-09-01 09:00:15.5").stated);
  EXPECT_TRUE(UtcOffsetOf("2026-09-01T09:00Z").stated);
  EXPECT_EQ(UtcOffsetOf("2026-09-01T09:00Z").minutes, 0);
  EXPECT_EQ(UtcOffsetOf("2026-09-01T11:00+02:00").minutes, 120);
  EXPECT_EQ(UtcOffsetOf("2026-09-01T11:00:00.5+0200").minutes, 120);
  EXPECT_EQ(UtcOffsetOf("2026-09-01T07:30-01:30").minutes, -90);
  EXPECT_EQ(DescribeUtcOffset(UtcOffsetOf("2026-09-01T07:30-01:30")), "UTC offset -01:30");
  EXPECT_EQ(DescribeUtcOffset(UtcOffsetOf("2026-09-01T07:30")), "no UTC offset");
}

TEST(UtcOffsetRuleTest, ADaylightSavingChangeIsOneClock) {
  // EU summer time: +01:00 to +02:00 on the last Sunday of March, back in October.
  UtcOffsetTracker europe;
  EXPECT_EQ(europe.Add(UtcOffsetOf("2026-03-28T09:00+01:00"), 2), "");
  EXPECT_EQ(europe.Add(UtcOffsetOf("2026-03-30T09:00+02:00"), 3), "");
  EXPECT_EQ(europe.Add(UtcOffsetOf("2026-10-26T09:00+01:00"), 4), "");
  // Lord Howe Island moves by 30 min (+10:30 / +11:00).
  UtcOffsetTracker lord_howe;
  EXPECT_EQ(lord_howe.Add(UtcOffsetOf("2026-04-04T09:00+11:00"), 2), "");
  EXPECT_EQ(lord_howe.Add(UtcOffsetOf("2026-04-06T09:00+10:30"), 3), "");
  UtcOffsetTracker local;  // no offsets at all: one local clock
  EXPECT_EQ(local.Add(UtcOffsetOf("2026-09-01T09:00"), 2), "");
  EXPECT_EQ(local.Add(UtcOffsetOf("2026-09-03T09:00"), 3), "");
}

TEST(UtcOffsetRuleTest, StampsWithAndWithoutOffsetOrTwoClocksAreRefused) {
  UtcOffsetTracker mixed;
  EXPECT_EQ(mixed.Add(UtcOffsetOf("2026-09-01T09:00"), 2), "");
  EXPECT_EQ(mixed.Add(UtcOffsetOf("2026-09-03T09:00Z"), 3),
            "a stamp with UTC offset +00:00 among stamps with no UTC offset (from line 2): the "
            "time between weighings is unknown by the offset");
  UtcOffsetTracker spread;  // one hour and one minute apart: not a daylight-saving change
  EXPECT_EQ(spread.Add(UtcOffsetOf("2026-09-01T09:00+01:00"), 2), "");
  EXPECT_EQ(spread.Add(UtcOffsetOf("2026-09-02T09:00+02:00"), 3), "");
  EXPECT_EQ(spread.Add(UtcOffsetOf("2026-09-03T09:00+00:59"), 4),
            "UTC offset +00:59 is more than 1 h from UTC offset +02:00 of line 3: two clocks, "
            "not a daylight-saving change");
}

// ---- R6 ---------------------------------------------------------------------------------------

TEST(MassScaleRuleTest, NamesTheUnitMixUpOfARatio) {
  EXPECT_NE(MassUnitMixUp(1021.0).find("mg under a g column"), std::string::npos);
  EXPECT_NE(MassUnitMixUp(1.02e6).find("ug under a g column"), std::string::npos);
  EXPECT_NE(MassUnitMixUp(0.00102).find("g under a mg column"), std::string::npos);
  EXPECT_NE(MassUnitMixUp(1.0e-6).find("g under a ug column"), std::string::npos);
  EXPECT_EQ(MassUnitMixUp(10.2), "");  // a wrong dry mass, not a unit
  EXPECT_EQ(MassUnitMixUp(1.2), "");
  EXPECT_EQ(MassUnitMixUp(0.0), "");
}

// ---- Whole jobs on disk -------------------------------------------------------------------------

// A mass as a lab writes it (up to ten significant digits).
std::string Format(double value) {
  char text[32];
  std::snprintf(text, sizeof text, "%.10g", value);
  return text;
}

class JobOnDisk : public ::testing::Test {
 protected:
  void SetUp() override {
    dir_ = fs::temp_directory_path() /
           ("sorbtrace_plausibility_unit_" +
            std::string(::testing::UnitTest::GetInstance()->current_test_info()->name()));
    fs::remove_all(dir_);
    fs::create_directories(dir_);
  }
  void TearDown() override { fs::remove_all(dir_); }

  void Write(const std::string& name, const std::string& text) {
    std::ofstream(dir_ / name, std::ios::binary) << text;
  }
  // A desiccator job with one specimen P1 and `measurement` lines; `weighings` the CSV rows.
  IngestResult Run(const std::string& measurement, const std::string& specimen,
                   const std::vector<double>& masses_g) {
    std::string csv = "specimen,step,atmosphere,branch,weighed_at,mass_g\n";
    for (std::size_t i = 0; i < masses_g.size(); ++i) {
      csv += "P1," + std::to_string(i / 2 + 1) + (i / 2 == 0 ? ",MgCl2," : ",NaCl,") +
             "adsorption,2026-09-" + (i + 1 < 10 ? "0" : "") + std::to_string(i + 1) + "T09:00," +
             Format(masses_g[i]) + "\n";
    }
    Write("weighings.csv", csv);
    Write("job.toml",
          "[job]\nid = \"U\"\nissue_date = \"2026-12-01\"\n[material]\nname = \"m\"\n"
          "[measurement]\n" +
              measurement + "[[specimen]]\nid = \"P1\"\n" + specimen +
              "[[dataset]]\nid = \"d\"\nmethod = \"desiccator\"\n"
              "file = \"weighings.csv\"\ntemperature_C = 23.0\n");
    return Ingest(LoadJobSpec(dir_ / "job.toml"));
  }
  // The error a job raises ("" when none).
  std::string ErrorOf(const std::string& measurement, const std::string& specimen,
                      const std::vector<double>& masses_g, SourceLocation* where = nullptr) {
    try {
      Run(measurement, specimen, masses_g);
    } catch (const InputError& error) {
      if (where != nullptr) *where = error.diagnostic().where;
      return error.diagnostic().message;
    }
    return "";
  }

  fs::path dir_;
};

TEST_F(JobOnDisk, MoistureUpToFiveHundredPercentIsAccepted) {
  // Dry 24 g: 144 g is u = 5.00 (the bound), 144.1 g is above it.
  EXPECT_EQ(ErrorOf("", "dry_mass_g = 24.0\n", {24.5, 24.6, 143.0, 144.0}), "");
  SourceLocation where;
  const std::string error = ErrorOf("", "dry_mass_g = 24.0\n", {24.5, 24.6, 143.0, 144.1}, &where);
  EXPECT_NE(error.find("a moisture content of 500.4 % dry basis"), std::string::npos) << error;
  EXPECT_EQ(where.line, 5);  // the row of the largest mass
}

TEST_F(JobOnDisk, BelowTheDryMassByMoreThanOnePercentIsRefusedUnlessExpected) {
  // Dry 24 g: 23.77 g is u = -0.96 %, 23.75 g is u = -1.04 %.
  EXPECT_EQ(ErrorOf("", "dry_mass_g = 24.0\n", {23.77, 23.78, 24.5, 24.6}), "");
  const std::string error = ErrorOf("", "dry_mass_g = 24.0\n", {23.75, 23.76, 24.5, 24.6});
  EXPECT_NE(error.find("a moisture content of -1.042 % dry basis"), std::string::npos) << error;
  // Declared: down to -50 %.
  EXPECT_EQ(ErrorOf("negative_moisture_expected = true\n", "dry_mass_g = 24.0\n",
                    {23.75, 23.76, 24.5, 24.6}),
            "");
  EXPECT_NE(ErrorOf("negative_moisture_expected = true\n", "dry_mass_g = 24.0\n",
                    {11.9, 11.95, 24.5, 24.6})
                .find("-50.42 % dry basis"),
            std::string::npos);
}

TEST_F(JobOnDisk, ABalanceUncertaintyOfOnePercentOfTheSmallestMassIsRefusedAtItsKey) {
  // Smallest mass 24.5 g: 1 % is 0.245 g.
  EXPECT_EQ(ErrorOf("balance_standard_uncertainty_g = 0.2449\nbalance_resolution_g = 0.2\n",
                    "dry_mass_g = 24.0\n", {24.5, 24.6, 25.0, 25.1}),
            "");
  SourceLocation where;
  const std::string error = ErrorOf("balance_standard_uncertainty_g = 0.245\n",
                                    "dry_mass_g = 24.0\n", {24.5, 24.6, 25.0, 25.1}, &where);
  EXPECT_NE(error.find("balance_standard_uncertainty_g = 0.245 g is 1 % of the smallest mass"),
            std::string::npos)
      << error;
  EXPECT_EQ(where.line, 7);  // the key in [measurement]
  EXPECT_EQ(where.column, 34);
}

TEST_F(JobOnDisk, SensorUncertaintiesBeyondTheBoundsAreRefusedAtTheirKeys) {
  EXPECT_EQ(ErrorOf("rh_sensor_standard_uncertainty_percent = 10\n"
                    "temperature_standard_uncertainty_K = 5\n",
                    "dry_mass_g = 24.0\n", {24.5, 24.6, 25.0, 25.1}),
            "");
  SourceLocation where;
  EXPECT_EQ(ErrorOf("rh_sensor_standard_uncertainty_percent = 10.5\n", "dry_mass_g = 24.0\n",
                    {24.5, 24.6, 25.0, 25.1}, &where),
            "rh_sensor_standard_uncertainty_percent = 10.5 %RH is beyond what the instrument of a "
            "sorption test has");
  EXPECT_EQ(where.line, 7);
  EXPECT_EQ(where.column, 42);
  EXPECT_NE(ErrorOf("temperature_standard_uncertainty_K = 5.5\n", "dry_mass_g = 24.0\n",
                    {24.5, 24.6, 25.0, 25.1})
                .find("temperature_standard_uncertainty_K = 5.5 K"),
            std::string::npos);
}

TEST_F(JobOnDisk, AMassBelowOneNanogramIsRefused) {
  EXPECT_EQ(ErrorOf("", "dry_mass_g = 24.0\n", {24.5, 24.6, 25.0, 1e-10}),
            "mass 1e-10 in column 'mass_g' is below 1 ng: no balance weighs it");
}

// A vapour log of `rows` rows per set point, written in percent.
std::string Log(const std::vector<double>& set_points, int rows, bool freeze_second_step) {
  std::string csv = "elapsed_s,set_rh_percent,measured_rh_percent,temperature_C,mass_mg\n";
  int t = 0;
  for (std::size_t s = 0; s < set_points.size(); ++s) {
    for (int k = 0; k < rows; ++k, t += 60) {
      const double mass = freeze_second_step && s == 1 ? 1000.0 : 1000.0 + 0.1 * t / 60.0;
      csv += std::to_string(t) + "," + std::to_string(set_points[s]) + "," +
             std::to_string(set_points[s] + 0.2 + 0.01 * (k % 3)) + ",25.0" +
             std::to_string(k % 3) + "," + std::to_string(mass) + "\n";
    }
  }
  return csv;
}

TEST_F(JobOnDisk, ADryingOnlyLogInPercentIsNotFractions) {
  Write("log.csv", Log({0.0}, 12, false));
  DataSetSpec dataset;
  dataset.id = "v";
  dataset.file = dir_ / "log.csv";
  dataset.specimen_id = "E1";
  IngestSummary summary;
  const VaporLog log = ReadVaporLog(dataset, IngestOptions{}, &summary);
  EXPECT_EQ(log.steps.size(), 1u);
  EXPECT_TRUE(summary.warnings.empty());
}

TEST_F(JobOnDisk, AFrozenBalanceStepIsAWarningFromTenRows) {
  DataSetSpec dataset;
  dataset.id = "v";
  dataset.file = dir_ / "log.csv";
  dataset.specimen_id = "E1";
  Write("log.csv", Log({0.0, 10.0, 20.0}, 9, true));  // 9 rows: below the bound
  IngestSummary nine;
  ReadVaporLog(dataset, IngestOptions{}, &nine);
  EXPECT_TRUE(nine.warnings.empty());
  Write("log.csv", Log({0.0, 10.0, 20.0}, 10, true));
  IngestSummary ten;
  ReadVaporLog(dataset, IngestOptions{}, &ten);
  ASSERT_EQ(ten.warnings.size(), 1u);
  EXPECT_EQ(ten.warnings[0].severity, Severity::kWarning);
  EXPECT_EQ(ten.warnings[0].where.line, 12);  // header line 1, step 2 starts at row 11
  EXPECT_NE(ten.warnings[0].message.find("step 2 (set 10 %RH, lines 12-21): the mass reads 1 g "
                                         "on all 10 rows"),
            std::string::npos)
      << ten.warnings[0].message;
}

TEST(DistinctSourcesRuleTest, TheSameBytesUnderTwoNamesAreRefusedAtTheSecondEntry) {
  DataSetSpec a;
  a.id = "a";
  a.file = "a.csv";
  a.file_as_written = "a.csv";
  a.where = SourceLocation{"job.toml", 10, 1};
  DataSetSpec b = a;
  b.id = "b";
  b.file = "b.csv";
  b.file_as_written = "b.csv";
  b.where = SourceLocation{"job.toml", 16, 1};
  InputFileRecord ra{"desiccator", "a.csv", "00ff", 10};
  InputFileRecord rb{"desiccator", "b.csv", "11ff", 10};
  EXPECT_NO_THROW(CheckDistinctDataSources({&a, &b}, {ra, rb}));
  rb.sha256 = ra.sha256;
  try {
    CheckDistinctDataSources({&a, &b}, {ra, rb});
    FAIL() << "same bytes accepted";
  } catch (const InputError& error) {
    EXPECT_EQ(error.diagnostic().where.line, 16);
    EXPECT_NE(error.diagnostic().message.find("whose bytes are those of 'a.csv'"),
              std::string::npos);
  }
}

}  // namespace
}  // namespace sorbtrace::ingest::internal
