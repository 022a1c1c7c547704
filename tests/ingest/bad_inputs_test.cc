// Every bad input of tests/bad_inputs/ingest is an InputError naming file, line, column, what
// is wrong and what was expected; never a crash. Locations are counted by hand in each file
// (1-based line; column = first byte of the offending field).
#include <gtest/gtest.h>

#include <cctype>
#include <string>

#include "pipeline/common/diagnostics.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::ingest {
namespace {

const std::string kDir = "tests/bad_inputs/ingest/";

enum class Reader { kDesiccator, kVaporLog, kRetention, kJob, kJobThenIngest };

struct BadInput {
  const char* file;
  Reader reader;
  int line;
  int column;
  const char* message;  // the full message (what is wrong)
  char delimiter = ',';
};

JobSpec TwoSpecimenJob() {
  JobSpec job;
  job.job_file = kDir + "none.toml";
  job.specimens.push_back(SpecimenSpec{"P1", 24.0, std::nullopt, {}});
  job.specimens.push_back(SpecimenSpec{"P2", 31.0, std::nullopt, {}});
  return job;
}

DataSetSpec DataSet(const BadInput& input) {
  DataSetSpec dataset;
  dataset.id = "bad";
  dataset.file = kDir + input.file;
  dataset.temperature_K = 296.15;
  dataset.specimen_id = "P1";
  dataset.format.delimiter = input.delimiter;
  return dataset;
}

void Read(const BadInput& input) {
  const JobSpec job = TwoSpecimenJob();
  switch (input.reader) {
    case Reader::kDesiccator:
      ReadDesiccatorSeries(job, DataSet(input));
      break;
    case Reader::kVaporLog:
      ReadVaporLog(DataSet(input), IngestOptions{}, nullptr);
      break;
    case Reader::kRetention:
      ReadRetentionPoints(job, DataSet(input));
      break;
    case Reader::kJob:
      LoadJobSpec(kDir + input.file);
      break;
    case Reader::kJobThenIngest:
      Ingest(LoadJobSpec(kDir + input.file), IngestOptions{});
      break;
  }
}

class BadInputTest : public ::testing::TestWithParam<BadInput> {};

TEST_P(BadInputTest, IsAnInputErrorAtTheRightPlace) {
  const BadInput& input = GetParam();
  try {
    Read(input);
    FAIL() << input.file << " was accepted";
  } catch (const InputError& error) {
    const Diagnostic& d = error.diagnostic();
    EXPECT_EQ(d.severity, Severity::kError);
    EXPECT_EQ(d.where.file, kDir + input.file);
    EXPECT_EQ(d.where.line, input.line) << error.what();
    EXPECT_EQ(d.where.column, input.column) << error.what();
    EXPECT_EQ(d.message, input.message) << error.what();
    EXPECT_FALSE(d.expected.empty()) << error.what();
    const std::string prefix = kDir + input.file + ":" + std::to_string(input.line) + ":" +
                               std::to_string(input.column) + ": error: ";
    EXPECT_EQ(std::string(error.what()).substr(0, prefix.size()), prefix);
  }
}

const BadInput kBadInputs[] = {
    // ---- CSV structure
    {"empty.csv", Reader::kDesiccator, 1, 1, "empty file"},
    {"desiccator_header_only.csv", Reader::kDesiccator, 2, 1,
     "no weighings after the header (line 1)"},
    {"log_header_only.csv", Reader::kVaporLog, 2, 1, "no data lines after the header (line 1)"},
    {"desiccator_missing_column.csv", Reader::kDesiccator, 1, 1, "missing column for the mass"},
    {"desiccator_unknown_column.csv", Reader::kDesiccator, 1, 65, "unknown column 'operator'"},
    {"desiccator_duplicate_column.csv", Reader::kDesiccator, 1, 51,
     "column 'mass_g' appears twice (also at column 33)"},
    {"desiccator_two_mass_columns.csv", Reader::kDesiccator, 1, 51,
     "columns 'mass_g' and 'mass_mg' both give the mass"},
    {"desiccator_bare_mass.csv", Reader::kDesiccator, 1, 44,
     "column 'mass' carries no unit and the job file declares no mass_unit"},
    {"desiccator_truncated_line.csv", Reader::kDesiccator, 3, 43,
     "truncated line: the line has 6 fields, the header (line 1) has 7"},
    {"desiccator_too_many_fields.csv", Reader::kDesiccator, 3, 49,
     "too many fields: the line has 8 fields, the header (line 1) has 7"},
    {"log_truncated.csv", Reader::kVaporLog, 3, 9,
     "truncated line: the line has 3 fields, the header (line 1) has 5"},
    {"desiccator_wrong_delimiter.csv", Reader::kDesiccator, 1, 1,
     "the header is a single column but contains ';': the file seems to be delimited by ';'"},
    {"desiccator_unclosed_quote.csv", Reader::kDesiccator, 3, 6,
     "quoted field is not closed on this line"},
    // ---- numbers
    {"desiccator_text_in_number.csv", Reader::kDesiccator, 3, 44,
     "'24.33x1' in column 'mass_g' is not a number"},
    {"desiccator_nan.csv", Reader::kDesiccator, 3, 44,
     "'nan' in column 'mass_g' is not a finite number"},
    {"desiccator_inf.csv", Reader::kDesiccator, 2, 22,
     "'-inf' in column 'temperature_C' is not a finite number"},
    {"desiccator_huge.csv", Reader::kDesiccator, 3, 44,
     "'1e400' in column 'mass_g' is out of the range of a double"},
    {"desiccator_empty_cell.csv", Reader::kDesiccator, 2, 22,
     "empty cell in column 'temperature_C'"},
    {"log_decimal_comma_undeclared.csv", Reader::kVaporLog, 2, 5,
     "'0,1' in column 'measured_rh_percent' is not a number", ';'},
    // ---- physical checks
    {"desiccator_zero_mass.csv", Reader::kDesiccator, 3, 44,
     "mass 0 in column 'mass_g' is not positive"},
    {"desiccator_negative_mass.csv", Reader::kDesiccator, 2, 44,
     "mass -24.3 in column 'mass_g' is not positive"},
    {"log_negative_mass.csv", Reader::kVaporLog, 3, 13,
     "mass -1000 in column 'mass_mg' is not positive"},
    {"log_rh_over_100.csv", Reader::kVaporLog, 3, 7,
     "measured RH 100.2 in column 'measured_rh_percent' is outside 0..100 %"},
    {"log_set_rh_negative.csv", Reader::kVaporLog, 2, 3,
     "set-point RH -5 in column 'set_rh_percent' is outside 0..100 %"},
    {"desiccator_rh_out_of_range.csv", Reader::kDesiccator, 2, 6,
     "stated humidity 'rh:120%' is outside 0..100 %"},
    {"log_kelvin_as_celsius.csv", Reader::kVaporLog, 2, 9,
     "temperature 298.15 in column 'temperature_C' is implausible for a sorption test"},
    // ---- salts (Greenspan 1977 tabulates K2CO3 over 0..30 degC only)
    {"desiccator_unknown_salt.csv", Reader::kDesiccator, 2, 6, "unknown atmosphere 'NaCl2'"},
    {"desiccator_salt_temperature.csv", Reader::kDesiccator, 2, 23,
     "temperature 35 degC is outside the table of K2CO3 (Greenspan 1977)"},
    // ---- time order
    {"desiccator_time_backwards.csv", Reader::kDesiccator, 3, 27,
     "2026-09-01T09:00 of specimen P1 is earlier than the previous weighing of that specimen "
     "(line 2)"},
    {"desiccator_time_duplicate.csv", Reader::kDesiccator, 3, 27,
     "2026-09-01T09:00 of specimen P1 is the same time as the previous weighing of that "
     "specimen (line 2)"},
    {"log_time_backwards.csv", Reader::kVaporLog, 4, 1,
     "time goes backwards: 30 in column 'elapsed_s' is earlier than on line 3"},
    {"log_time_duplicate.csv", Reader::kVaporLog, 4, 1,
     "duplicate time stamp: 60 in column 'elapsed_s' repeats that of line 3"},
    {"desiccator_bad_date.csv", Reader::kDesiccator, 2, 27,
     "'2026-02-30T09:00' in column 'weighed_at' is not a date-time: day 30 does not exist in "
     "month 2 of 2026"},
    // ---- desiccator structure
    {"desiccator_one_weighing.csv", Reader::kDesiccator, 4, 4,
     "step 2 of specimen P1 has 1 weighing"},
    {"desiccator_unknown_specimen.csv", Reader::kDesiccator, 3, 1,
     "specimen 'P9' is not declared in the job file"},
    {"desiccator_step_resumed.csv", Reader::kDesiccator, 5, 4,
     "step 1 of specimen P1 resumes after step 2 (line 4)"},
    {"desiccator_oven_adsorption.csv", Reader::kDesiccator, 2, 11,
     "branch 'adsorption' with atmosphere 'oven'"},
    {"desiccator_atmosphere_changes.csv", Reader::kDesiccator, 3, 6,
     "atmosphere 'KCl' differs from 'NaCl' of step 1 of specimen P1 (line 2)"},
    // ---- retention
    {"retention_negative_moisture.csv", Reader::kRetention, 3, 9,
     "moisture content -0.05 is negative"},
    {"retention_missing_pressure.csv", Reader::kRetention, 1, 1,
     "missing column for the capillary pressure"},
    // ---- job files
    {"job_unknown_key.toml", Reader::kJob, 8, 1, "unknown key 'drying_temp_C' in [measurement]"},
    {"job_unknown_table.toml", Reader::kJob, 15, 2, "unknown top-level table [extras]"},
    {"job_duplicate_specimen.toml", Reader::kJob, 12, 6,
     "specimen id 'P1' is declared twice (also on line 8)"},
    {"job_missing_file.toml", Reader::kJob, 13, 8,
     "data file 'no_such_file.csv' not found (looked for "
     "tests/bad_inputs/ingest/no_such_file.csv)"},
    {"job_missing_id.toml", Reader::kJob, 1, 1, "missing key 'id' in [job]"},
    {"job_bad_method.toml", Reader::kJob, 7, 19, "'furnace' is not a valid dry_mass_method"},
    {"job_decimal_comma_with_comma.toml", Reader::kJob, 15, 17,
     "decimal_comma = true with the ',' delimiter"},
    {"job_wrong_type.toml", Reader::kJob, 14, 17,
     "key 'temperature_C' in [[dataset]] is not a number"},
    {"job_bad_issue_date.toml", Reader::kJob, 3, 14, "issue_date '20.10.2026' is not a date"},
    {"job_bad_datetime_format.toml", Reader::kJob, 15, 19,
     "datetime_format '%d.%m.%Y': field %H is missing"},
    {"job_unknown_specimen_in_log.toml", Reader::kJob, 13, 12, "specimen 'P7' is not declared"},
    {"job_dry_mass_missing.toml", Reader::kJobThenIngest, 8, 1, "no dry mass for specimen 'P1'"},
};

INSTANTIATE_TEST_SUITE_P(Ingest, BadInputTest, ::testing::ValuesIn(kBadInputs),
                         [](const ::testing::TestParamInfo<BadInput>& param_info) {
                           std::string name = param_info.param.file;
                           for (char& c : name) {
                             if (!std::isalnum(static_cast<unsigned char>(c))) c = '_';
                           }
                           return name;
                         });

// The syntax error location comes from toml++; check the file and that a line is given.
TEST(BadJobFileTest, TomlSyntaxError) {
  try {
    LoadJobSpec(kDir + "job_syntax_error.toml");
    FAIL() << "accepted";
  } catch (const InputError& error) {
    EXPECT_EQ(error.diagnostic().where.file, kDir + "job_syntax_error.toml");
    EXPECT_EQ(error.diagnostic().where.line, 5) << error.what();
    EXPECT_EQ(error.diagnostic().message.substr(0, 12), "TOML syntax:");
  }
}

TEST(BadJobFileTest, MissingJobFile) {
  try {
    LoadJobSpec(kDir + "no_such_job.toml");
    FAIL() << "accepted";
  } catch (const InputError& error) {
    EXPECT_EQ(std::string(error.what()),
              kDir +
                  "no_such_job.toml: error: job file not found; expected an existing TOML "
                  "job file");
  }
}

// Expected texts of a few errors, in full (message + expectation).
TEST(BadInputMessageTest, FullText) {
  const JobSpec job = TwoSpecimenJob();
  BadInput salt{"desiccator_salt_temperature.csv", Reader::kDesiccator, 0, 0, ""};
  try {
    ReadDesiccatorSeries(job, DataSet(salt));
    FAIL();
  } catch (const InputError& error) {
    EXPECT_EQ(std::string(error.what()),
              kDir +
                  "desiccator_salt_temperature.csv:2:23: error: temperature 35 degC is outside "
                  "the table of K2CO3 (Greenspan 1977); expected a temperature within "
                  "0 degC..30 degC for K2CO3");
  }
  BadInput comma{"log_decimal_comma_undeclared.csv", Reader::kVaporLog, 0, 0, "", ';'};
  try {
    ReadVaporLog(DataSet(comma), IngestOptions{}, nullptr);
    FAIL();
  } catch (const InputError& error) {
    EXPECT_EQ(error.diagnostic().expected,
              "a decimal number written like 12.5 (declare decimal_comma = true if the file "
              "writes decimal commas)");
  }
}

}  // namespace
}  // namespace sorbtrace::ingest
