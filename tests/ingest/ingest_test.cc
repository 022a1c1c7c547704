// Ingest stage on the fixture files of tests/ingest/fixtures (values written in the fixtures
// are the reference: checked exactly after the declared unit conversion).
#include "pipeline/ingest/ingest.h"

#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <string>

#include "pipeline/common/files.h"

namespace sorbtrace::ingest {
namespace {

const std::string kFixtures = "tests/ingest/fixtures/";
constexpr double kZeroCelsius_K = 273.15;  // ITS-90

TEST(LoadJobSpecTest, ReadsEveryKey) {
  const JobSpec job = LoadJobSpec(kFixtures + "job_basic.toml");
  EXPECT_EQ(job.job_id, "LAB-2026-0142");
  EXPECT_EQ(job.issue_date, "2026-10-20");
  EXPECT_EQ(job.template_name, "full");
  EXPECT_EQ(job.test_dates, "2026-09-01 to 2026-10-12");
  EXPECT_EQ(job.material_class, MaterialClass::kPorousMineral);
  EXPECT_EQ(job.test_method, TestMethod::kIso12571Desiccator);
  EXPECT_EQ(TestMethodCitation(job.test_method), "ISO 12571:2021, desiccator method");
  EXPECT_EQ(job.material_name, "Lime-hemp plaster LH-3");
  EXPECT_EQ(job.material_description, "Hand-applied plaster, 28 days cured");
  EXPECT_EQ(job.client, "Example Building Materials Ltd.");
  EXPECT_EQ(job.dry_mass_method, DryMassMethod::kOvenDrying);
  EXPECT_EQ(job.drying_temperature_K, 105.0 + kZeroCelsius_K);
  EXPECT_EQ(job.balance_resolution_g, 0.0001);
  EXPECT_EQ(job.balance_standard_uncertainty_g, 0.00012);
  EXPECT_EQ(job.rh_sensor_standard_uncertainty_fraction, 0.8 / 100.0);
  EXPECT_EQ(job.temperature_standard_uncertainty_K, 0.2);
  EXPECT_FALSE(job.negative_moisture_expected);

  ASSERT_EQ(job.specimens.size(), 3u);
  EXPECT_EQ(job.specimens[0].id, "P1");
  EXPECT_EQ(job.specimens[0].dry_mass_g, 24.1830);
  EXPECT_FALSE(job.specimens[0].bulk_density_kg_per_m3.has_value());
  EXPECT_EQ(job.specimens[0].where.line, 23);  // its [[specimen]] header
  EXPECT_EQ(job.specimens[1].id, "P2");
  EXPECT_FALSE(job.specimens[1].dry_mass_g.has_value());
  EXPECT_EQ(job.specimens[1].bulk_density_kg_per_m3, 780.0);

  ASSERT_EQ(job.datasets.size(), 2u);
  EXPECT_EQ(job.datasets[0].id, "desiccator-23C");
  EXPECT_EQ(job.datasets[0].method, Method::kDesiccator);
  EXPECT_EQ(job.datasets[0].file, std::filesystem::path(kFixtures + "desiccator.csv"));
  EXPECT_EQ(job.datasets[0].file_as_written, "desiccator.csv");
  EXPECT_EQ(job.datasets[0].temperature_K, 23.0 + kZeroCelsius_K);
  EXPECT_EQ(job.datasets[0].format.delimiter, ',');
  EXPECT_EQ(job.datasets[0].format.datetime_format, "iso8601");
  EXPECT_EQ(job.datasets[0].format.mass_unit, "");  // not declared: the header says
  EXPECT_EQ(job.datasets[1].method, Method::kVaporLog);
  EXPECT_EQ(job.datasets[1].specimen_id, "P3");
  EXPECT_EQ(job.datasets[1].temperature_K, 25.0 + kZeroCelsius_K);
  ASSERT_TRUE(job.retention.has_value());
  EXPECT_EQ(job.retention->file, std::filesystem::path(kFixtures + "retention.csv"));
  EXPECT_EQ(job.retention->temperature_K, 20.0 + kZeroCelsius_K);
}

// [job] material_class and method: optional (unstated when absent), each value read back.
TEST(LoadJobSpecTest, MaterialClassAndMethodAreOptionalAndRead) {
  const JobSpec european = LoadJobSpec(kFixtures + "job_european.toml");
  EXPECT_EQ(european.material_class, MaterialClass::kUnstated);
  EXPECT_EQ(european.test_method, TestMethod::kUnstated);
  EXPECT_EQ(TestMethodCitation(european.test_method), "");
  // Citations as the standards name themselves (ISO 12571:2021 title page; ASTM C1498-04a).
  EXPECT_EQ(TestMethodCitation(TestMethod::kIso12571ClimaticChamber),
            "ISO 12571:2021, climatic-chamber method");
  EXPECT_EQ(TestMethodCitation(TestMethod::kAstmC1498), "ASTM C1498-04a");
  const auto dir = std::filesystem::temp_directory_path() /
                   ("sorbtrace_ingest_class_" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  const std::string basic = [] {
    std::ifstream in(kFixtures + "job_basic.toml");
    return std::string(std::istreambuf_iterator<char>(in), {});
  }();
  for (const MaterialClass c :
       {MaterialClass::kPorousMineral, MaterialClass::kWoodOrFibre, MaterialClass::kPolymer,
        MaterialClass::kPharmaceuticalPowder, MaterialClass::kFood, MaterialClass::kOther}) {
    std::string text = basic;
    const std::string from = "material_class = \"porous_mineral\"";
    text.replace(text.find(from), from.size(),
                 "material_class = \"" + std::string(MaterialClassName(c)) + "\"");
    std::ofstream(dir / "job.toml") << text;
    for (const char* file : {"desiccator.csv", "vapour_log.csv", "retention.csv"}) {
      std::filesystem::copy_file(kFixtures + file, dir / file,
                                 std::filesystem::copy_options::overwrite_existing);
    }
    EXPECT_EQ(LoadJobSpec(dir / "job.toml").material_class, c) << MaterialClassName(c);
  }
  std::filesystem::remove_all(dir);
}

TEST(IngestTest, WholeJob) {
  const JobSpec job = LoadJobSpec(kFixtures + "job_basic.toml");
  const IngestResult result = Ingest(job, IngestOptions{});
  ASSERT_EQ(result.desiccator_series.size(), 1u);
  ASSERT_EQ(result.vapor_logs.size(), 1u);
  ASSERT_EQ(result.retention_points.size(), 3u);
  ASSERT_EQ(result.inputs.size(), 4u);
  EXPECT_EQ(result.inputs[0].role, "job");
  EXPECT_EQ(result.inputs[0].path, "job_basic.toml");  // relative to its own folder, like the data
  EXPECT_EQ(result.inputs[1].role, "desiccator");
  EXPECT_EQ(result.inputs[1].path, "desiccator.csv");
  EXPECT_EQ(result.inputs[2].role, "vapor_log");
  EXPECT_EQ(result.inputs[3].role, "retention");
  // The recorded digest is that of the bytes on disk (content read independently).
  EXPECT_EQ(result.inputs[1].sha256, Sha256Hex(ReadWholeFile(kFixtures + "desiccator.csv")));
  EXPECT_EQ(result.inputs[1].size_bytes, ReadWholeFile(kFixtures + "desiccator.csv").size());
  EXPECT_EQ(result.summary.rows_read, 10 + 7 + 3);
  EXPECT_EQ(result.summary.num_steps, 4 + 5);
  EXPECT_EQ(result.summary.num_specimens, 3);
  EXPECT_TRUE(result.summary.warnings.empty());
}

TEST(DesiccatorTest, StepsGroupedBySpecimen) {
  const JobSpec job = LoadJobSpec(kFixtures + "job_basic.toml");
  const DesiccatorSeries series = ReadDesiccatorSeries(job, job.datasets[0]);
  EXPECT_EQ(series.dataset_id, "desiccator-23C");
  EXPECT_EQ(series.file, "desiccator.csv");
  ASSERT_EQ(series.steps.size(), 4u);

  const DesiccatorStep& p1_mgcl2 = series.steps[0];
  EXPECT_EQ(p1_mgcl2.specimen_id, "P1");
  EXPECT_EQ(p1_mgcl2.step_index, 0);
  EXPECT_EQ(p1_mgcl2.step_number, 1);
  EXPECT_EQ(p1_mgcl2.atmosphere, "MgCl2");
  EXPECT_EQ(p1_mgcl2.salt, "MgCl2");
  EXPECT_FALSE(p1_mgcl2.set_rh_fraction.has_value());
  EXPECT_EQ(p1_mgcl2.branch, Branch::kAdsorption);
  EXPECT_EQ(p1_mgcl2.first_line, 2);
  EXPECT_EQ(p1_mgcl2.last_line, 6);
  ASSERT_EQ(p1_mgcl2.weighings.size(), 3u);
  EXPECT_EQ(p1_mgcl2.weighings[0].mass_g, 24.3012);
  EXPECT_EQ(p1_mgcl2.weighings[1].mass_g, 24.3371);
  EXPECT_EQ(p1_mgcl2.weighings[2].mass_g, 24.3388);
  EXPECT_EQ(p1_mgcl2.weighings[0].time_s, 0.0);            // earliest weighing of the file
  EXPECT_EQ(p1_mgcl2.weighings[1].time_s, 2.0 * 86400.0);  // two days later
  EXPECT_EQ(p1_mgcl2.weighings[2].time_s, 4.0 * 86400.0);
  EXPECT_EQ(p1_mgcl2.weighings[1].timestamp, "2026-09-03T09:00");
  EXPECT_EQ(p1_mgcl2.weighings[1].line, 4);
  EXPECT_EQ(p1_mgcl2.weighings[0].temperature_K, 23.1 + kZeroCelsius_K);
  EXPECT_DOUBLE_EQ(p1_mgcl2.temperature_K, (23.1 + 23.0 + 23.0) / 3.0 + kZeroCelsius_K);

  const DesiccatorStep& p1_nacl = series.steps[1];
  EXPECT_EQ(p1_nacl.specimen_id, "P1");
  EXPECT_EQ(p1_nacl.step_index, 1);
  EXPECT_EQ(p1_nacl.salt, "NaCl");
  ASSERT_EQ(p1_nacl.weighings.size(), 2u);
  EXPECT_EQ(p1_nacl.weighings[1].mass_g, 24.5102);

  const DesiccatorStep& p2_mgcl2 = series.steps[2];
  EXPECT_EQ(p2_mgcl2.specimen_id, "P2");
  EXPECT_EQ(p2_mgcl2.weighings[0].time_s, 300.0);  // 5 min after P1
  EXPECT_EQ(p2_mgcl2.weighings[0].mass_g, 31.0377);

  const DesiccatorStep& p2_oven = series.steps[3];
  EXPECT_EQ(p2_oven.specimen_id, "P2");
  EXPECT_EQ(p2_oven.step_index, 1);
  EXPECT_EQ(p2_oven.atmosphere, "oven");
  EXPECT_FALSE(p2_oven.salt.has_value());
  EXPECT_FALSE(p2_oven.set_rh_fraction.has_value());
  EXPECT_EQ(p2_oven.branch, Branch::kDrying);
  EXPECT_EQ(p2_oven.weighings[1].mass_g, 30.7009);
  EXPECT_DOUBLE_EQ(p2_oven.temperature_K, 105.0 + kZeroCelsius_K);
}

// Spreadsheet export: byte-order mark, CRLF, ';' and decimal commas, day-first local times,
// quoted fields with the delimiter and a doubled quote inside, lower-case salt, trailing
// empty line.
TEST(DesiccatorTest, EuropeanSpreadsheetExport) {
  const JobSpec job = LoadJobSpec(kFixtures + "job_european.toml");
  const DesiccatorSeries series = ReadDesiccatorSeries(job, job.datasets[0]);
  ASSERT_EQ(series.steps.size(), 2u);
  const DesiccatorStep& first = series.steps[0];
  EXPECT_EQ(first.salt, "MgCl2");
  EXPECT_EQ(first.atmosphere, "mgcl2");
  ASSERT_EQ(first.weighings.size(), 2u);
  EXPECT_EQ(first.weighings[0].mass_g, 24.3012);
  EXPECT_EQ(first.weighings[1].mass_g, 24.3371);
  EXPECT_EQ(first.weighings[0].temperature_K, 23.1 + kZeroCelsius_K);
  EXPECT_EQ(first.weighings[1].time_s, 2.0 * 86400.0);
  const DesiccatorStep& second = series.steps[1];
  EXPECT_EQ(second.set_rh_fraction, 50.5 / 100.0);
  EXPECT_FALSE(second.salt.has_value());
  EXPECT_EQ(second.weighings[0].time_s, 4.0 * 86400.0 + 1800.0);  // 05.09. 9:30
  EXPECT_EQ(second.weighings[0].mass_g, 24.41);
  EXPECT_EQ(second.weighings[1].mass_g, 12.345);  // 1,2345e1
}

// ISO 8601 offsets across a daylight-saving change; mass in mg; no temperature column.
TEST(DesiccatorTest, IsoOffsetsAndMilligrams) {
  JobSpec job;
  job.specimens.push_back(SpecimenSpec{"S1", 1.5, std::nullopt, {}});
  DataSetSpec dataset;
  dataset.id = "iso";
  dataset.file = kFixtures + "desiccator_iso_offsets.csv";
  dataset.temperature_K = 23.0 + kZeroCelsius_K;
  job.datasets.push_back(dataset);
  const DesiccatorSeries series = ReadDesiccatorSeries(job, dataset);
  ASSERT_EQ(series.steps.size(), 2u);
  const DesiccatorStep& desiccant = series.steps[0];
  EXPECT_EQ(desiccant.branch, Branch::kDrying);
  EXPECT_EQ(desiccant.set_rh_fraction, 0.0);
  EXPECT_EQ(desiccant.weighings[0].mass_g, 1500.25 / 1000.0);
  EXPECT_EQ(desiccant.weighings[1].time_s, 3.0 * 3600.0 + 0.5);  // 22:30Z -> 01:30:00.5Z
  EXPECT_EQ(desiccant.temperature_K, 23.0 + kZeroCelsius_K);     // nominal
  const DesiccatorStep& licl = series.steps[1];
  EXPECT_EQ(licl.salt, "LiCl");
  EXPECT_EQ(licl.weighings[0].time_s, 25.5 * 3600.0);
  EXPECT_EQ(licl.weighings[1].time_s, 2.0 * 86400.0 + 3.0 * 3600.0);
}

TEST(VaporLogTest, SegmentsBySetPoint) {
  const JobSpec job = LoadJobSpec(kFixtures + "job_basic.toml");
  IngestOptions options;
  options.log_block_s = 100.0;
  IngestSummary summary;
  const VaporLog log = ReadVaporLog(job.datasets[1], options, &summary);
  EXPECT_EQ(log.dataset_id, "dvs-25C");
  EXPECT_EQ(log.specimen_id, "P3");
  EXPECT_EQ(log.num_rows, 7);
  ASSERT_EQ(log.steps.size(), 5u);
  const Branch expected_branch[] = {Branch::kDrying, Branch::kAdsorption, Branch::kAdsorption,
                                    Branch::kDesorption, Branch::kAdsorption};
  const int expected_cycle[] = {0, 0, 0, 0, 1};
  const double expected_set[] = {0.0, 10.0 / 100.0, 20.0 / 100.0, 10.0 / 100.0, 20.0 / 100.0};
  const int expected_first_line[] = {3, 5, 7, 8, 9};
  for (std::size_t i = 0; i < 5; ++i) {
    EXPECT_EQ(log.steps[i].step_index, static_cast<int>(i));
    EXPECT_EQ(log.steps[i].branch, expected_branch[i]) << i;
    EXPECT_EQ(log.steps[i].cycle, expected_cycle[i]) << i;
    EXPECT_EQ(log.steps[i].set_rh_fraction, expected_set[i]) << i;
    EXPECT_EQ(log.steps[i].first_line, expected_first_line[i]) << i;
  }
  const VaporLogStep& drying = log.steps[0];
  EXPECT_EQ(drying.last_line, 4);
  EXPECT_EQ(drying.num_rows, 2);
  EXPECT_EQ(drying.start_time_s, 0.0);
  EXPECT_EQ(drying.end_time_s, 60.0);
  ASSERT_EQ(drying.blocks.size(), 1u);
  EXPECT_EQ(drying.blocks[0].num_rows, 2);
  EXPECT_EQ(drying.blocks[0].time_s, 30.0);
  EXPECT_DOUBLE_EQ(drying.blocks[0].mass_g, (1012.551 + 1012.430) / 2.0 / 1000.0);
  EXPECT_DOUBLE_EQ(drying.rh_measured_mean_fraction, (0.4 + 0.2) / 2.0 / 100.0);
  // Sample standard deviation of two values a, b is |a - b| / sqrt(2).
  EXPECT_DOUBLE_EQ(drying.rh_measured_std_fraction, (0.4 - 0.2) / 100.0 / std::sqrt(2.0));
  EXPECT_DOUBLE_EQ(drying.temperature_mean_K, (25.02 + 25.01) / 2.0 + kZeroCelsius_K);
  EXPECT_EQ(log.steps[2].num_rows, 1);
  EXPECT_EQ(log.steps[2].rh_measured_std_fraction, 0.0);
  EXPECT_EQ(log.steps[4].blocks[0].mass_g, 1014.602 / 1000.0);
  EXPECT_TRUE(summary.warnings.empty());
}

TEST(VaporLogTest, BlocksAlignWithStepStart) {
  const JobSpec job = LoadJobSpec(kFixtures + "job_basic.toml");
  IngestOptions options;
  options.log_block_s = 50.0;  // rows at 0 s and 60 s of the drying step fall in two blocks
  const VaporLog log = ReadVaporLog(job.datasets[1], options, nullptr);
  ASSERT_EQ(log.steps[0].blocks.size(), 2u);
  EXPECT_EQ(log.steps[0].blocks[0].time_s, 0.0);
  EXPECT_EQ(log.steps[0].blocks[1].time_s, 60.0);
  EXPECT_EQ(log.steps[0].blocks[1].mass_g, 1012.430 / 1000.0);
  EXPECT_EQ(log.steps[0].blocks[1].rh_measured_fraction, 0.2 / 100.0);
  EXPECT_EQ(log.steps[0].blocks[1].temperature_K, 25.01 + kZeroCelsius_K);
}

TEST(VaporLogTest, GapWarnings) {
  const JobSpec job = LoadJobSpec(kFixtures + "job_basic.toml");
  IngestOptions options;
  options.log_gap_warning_s = 59.0;  // every 60 s step between readings is a gap
  IngestSummary summary;
  ReadVaporLog(job.datasets[1], options, &summary);
  ASSERT_EQ(summary.warnings.size(), 6u);
  EXPECT_EQ(summary.warnings[0].severity, Severity::kWarning);
  EXPECT_EQ(summary.warnings[0].where.file, kFixtures + "vapour_log.csv");
  EXPECT_EQ(summary.warnings[0].where.line, 4);
  EXPECT_EQ(summary.warnings[0].where.column, 1);
  EXPECT_EQ(summary.warnings[0].message, "gap of 60 s in the log after line 3");
}

// Fractions, minutes, kelvin, tab delimiter and a bare "mass" column with mass_unit declared.
TEST(VaporLogTest, DeclaredUnits) {
  DataSetSpec dataset;
  dataset.id = "units";
  dataset.method = Method::kVaporLog;
  dataset.file = kFixtures + "vapour_log_units.tsv";
  dataset.format.delimiter = '\t';
  dataset.format.mass_unit = "g";
  const VaporLog log = ReadVaporLog(dataset, IngestOptions{}, nullptr);
  ASSERT_EQ(log.steps.size(), 4u);
  // The first step gains 0.1 mg, within 2 sqrt(2) u_balance (JobSpec default 0.1 mg), and the
  // next set point is lower: desorption (VaporLogStep::branch).
  EXPECT_EQ(log.steps[0].branch, Branch::kDesorption);
  EXPECT_EQ(log.steps[0].set_rh_fraction, 0.5);
  EXPECT_EQ(log.steps[0].end_time_s, 30.0);  // 0.5 min
  EXPECT_EQ(log.steps[1].branch, Branch::kDesorption);
  EXPECT_EQ(log.steps[1].start_time_s, 60.0);
  EXPECT_EQ(log.steps[2].branch, Branch::kDrying);
  EXPECT_EQ(log.steps[2].cycle, 0);
  EXPECT_EQ(log.steps[3].branch, Branch::kAdsorption);
  // Adsorption after the log's first branch (desorption): still its first cycle.
  EXPECT_EQ(log.steps[3].cycle, 0);
  EXPECT_EQ(log.steps[3].blocks[0].mass_g, 0.2510);
  EXPECT_EQ(log.steps[3].blocks[0].temperature_K, 298.14);
  EXPECT_EQ(log.steps[3].blocks[0].rh_measured_fraction, 0.399);

  dataset.format.mass_unit = "mg";  // contradicts nothing: bare column, declared mg
  const VaporLog in_mg = ReadVaporLog(dataset, IngestOptions{}, nullptr);
  EXPECT_EQ(in_mg.steps[3].blocks[0].mass_g, 0.2510 / 1000.0);
}

// Plain rows take the reader's fast path, the others (quotes, spaces, exponents, '+') the
// general one; both give the same correctly rounded values. BOM, CRLF, blank and empty rows.
TEST(VaporLogTest, FastAndGeneralPathsAgree) {
  DataSetSpec dataset;
  dataset.id = "mixed";
  dataset.method = Method::kVaporLog;
  dataset.file = kFixtures + "vapour_log_mixed.csv";
  IngestOptions options;
  options.log_block_s = 5.0;  // one row per block
  const VaporLog log = ReadVaporLog(dataset, options, nullptr);
  EXPECT_EQ(log.num_rows, 4);
  ASSERT_EQ(log.steps.size(), 1u);
  const auto& blocks = log.steps[0].blocks;
  ASSERT_EQ(blocks.size(), 4u);
  EXPECT_EQ(blocks[0].mass_g, 1000.5 / 1000.0);
  EXPECT_EQ(blocks[1].time_s, 10.0);
  EXPECT_EQ(blocks[1].rh_measured_fraction, 50.1 / 100.0);
  EXPECT_EQ(blocks[1].mass_g, 1000.75 / 1000.0);
  EXPECT_EQ(blocks[2].temperature_K, 25.0 + kZeroCelsius_K);
  EXPECT_EQ(blocks[2].mass_g, 1001.0 / 1000.0);
  EXPECT_EQ(blocks[3].mass_g, 1001.25 / 1000.0);
  EXPECT_EQ(log.steps[0].last_line, 7);
  EXPECT_EQ(log.steps[0].set_rh_fraction, 50.0 / 100.0);
}

TEST(RetentionTest, PfAndPercent) {
  const JobSpec job = LoadJobSpec(kFixtures + "job_basic.toml");
  const auto points = ReadRetentionPoints(job, *job.retention);
  ASSERT_EQ(points.size(), 3u);
  EXPECT_EQ(points[1].specimen_id, "P1");
  EXPECT_EQ(points[1].line, 3);
  EXPECT_EQ(points[1].branch, Branch::kDesorption);
  EXPECT_EQ(points[1].moisture_kg_per_kg, 21.2 / 100.0);
  EXPECT_EQ(points[1].u_moisture_kg_per_kg, 0.5 / 100.0);
  // pF 3 = 10^3 cm = 10 m of water head; p = h rho_w g with rho_w(20 degC) = 998.2067 kg/m3
  // (Kell 1975, J. Chem. Eng. Data 20, 97) and g = 9.80665 m/s2 (CGPM 1901): 97 890 Pa.
  EXPECT_NEAR(points[1].capillary_pressure_Pa, 10.0 * 998.2067 * 9.80665, 1.0);
  EXPECT_NEAR(points[0].capillary_pressure_Pa, 1.0 * 998.2067 * 9.80665, 0.1);
}

TEST(BranchNameTest, Names) {
  EXPECT_EQ(BranchName(Branch::kAdsorption), "adsorption");
  EXPECT_EQ(BranchName(Branch::kDesorption), "desorption");
  EXPECT_EQ(BranchName(Branch::kDrying), "drying");
}

TEST(IngestOptionsTest, Validation) {
  std::string error;
  EXPECT_TRUE(IngestOptions{}.IsValid(&error));
  IngestOptions bad;
  bad.log_block_s = 0.0;
  EXPECT_FALSE(bad.IsValid(&error));
  EXPECT_EQ(error, "log_block_s must be positive");
}

}  // namespace
}  // namespace sorbtrace::ingest

namespace sorbtrace::ingest {
namespace {

// The issue fields of a job and its laboratory profile, read back from the wood-fibre 23/40 °C
// demo (an amendment, sampled by the laboratory, tested at the profile's second location); a job
// without the keys has none of them and no profile (a draft).
TEST(LoadJobSpecTest, LaboratoryProfileAndIssueFieldsAreRead) {
  const JobSpec job = LoadJobSpec(std::string(SORBTRACE_SOURCE_DIR) +
                                  "/example_inputs/wood_fibre_board_23C_40C/job.toml");
  ASSERT_TRUE(job.lab_profile.has_value());
  const LabProfile& lab = *job.lab_profile;
  EXPECT_EQ(lab.name, "Hollowmere Building Physics Laboratory (fictional)");
  EXPECT_EQ(lab.file_as_written, "lab_profile.toml");
  EXPECT_EQ(lab.accreditation_body, "Fictland Accreditation Service (fictional)");
  ASSERT_EQ(lab.signatories.size(), 2u);
  EXPECT_EQ(lab.signatories[1].role, "quality manager");
  ASSERT_EQ(lab.locations.size(), 2u);
  // [job] location = "sorption-annex" picks the second [[location]], not the lab's address.
  EXPECT_EQ(job.work_location, "Sorption annex, Unit 3, Mill Yard, Hollowmere");
  EXPECT_EQ(job.revision, 1);
  EXPECT_EQ(job.supersedes, "HBPL-2026-0322 issued 2026-05-12");
  EXPECT_EQ(job.received_date, "2026-04-15");
  EXPECT_EQ(job.sampling.by, SamplingBy::kLaboratory);
  EXPECT_FALSE(job.sampling.plan.empty());
  EXPECT_EQ(job.material_class, MaterialClass::kWoodOrFibre);

  const JobSpec bare = LoadJobSpec(kFixtures + "job_european.toml");
  EXPECT_FALSE(bare.lab_profile.has_value());
  EXPECT_EQ(bare.revision, 0);
  EXPECT_EQ(bare.sampling.by, SamplingBy::kUnstated);
  EXPECT_TRUE(bare.work_location.empty());
}

}  // namespace
}  // namespace sorbtrace::ingest
