// Job-file stage settings: defaults, overrides, and exact error messages for bad keys.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <string>
#include <utility>

#include "pipeline/common/diagnostics.h"
#include "pipeline/run/run.h"

namespace sorbtrace::run {
namespace {

std::filesystem::path WriteJob(const std::string& name, const std::string& text) {
  const auto dir = std::filesystem::temp_directory_path() / "sorbtrace_settings_test";
  std::filesystem::create_directories(dir);
  const auto path = dir / name;
  std::ofstream(path) << text;
  return path;
}

ingest::JobSpec FullTemplateJob() {
  ingest::JobSpec job;
  job.template_name = "full";
  return job;
}

TEST(JobSettingsTest, DefaultsWhenSectionsAreAbsent) {
  const auto path = WriteJob("defaults.toml", "[job]\nid = \"X\"\n");
  const JobSettings s = LoadJobSettings(path, FullTemplateJob(), "out");
  EXPECT_DOUBLE_EQ(s.equilibrate.mass_change_limit_fraction, 0.001);  // ISO 12571: 0.1 %
  EXPECT_EQ(s.fit.bootstrap_resamples, 1000);
  EXPECT_EQ(s.template_file.filename(), "full.toml");
  EXPECT_EQ(s.effective["fit"]["loss"], "squared");
}

// The declared material class decides the pore-size section (docs/input-formats.md, [job]
// material_class): swelling classes omit it, porous minerals report it, the rest caution.
TEST(JobSettingsTest, MaterialClassDecidesThePoreSection) {
  const auto path = WriteJob("material.toml", "[job]\nid = \"X\"\n");
  const std::pair<ingest::MaterialClass, pores::MaterialClass> cases[] = {
      {ingest::MaterialClass::kUnstated, pores::MaterialClass::kNotStated},
      {ingest::MaterialClass::kOther, pores::MaterialClass::kNotStated},
      {ingest::MaterialClass::kPorousMineral, pores::MaterialClass::kRigid},
      {ingest::MaterialClass::kWoodOrFibre, pores::MaterialClass::kSwelling},
      {ingest::MaterialClass::kPolymer, pores::MaterialClass::kSwelling},
      {ingest::MaterialClass::kPharmaceuticalPowder, pores::MaterialClass::kSwelling},
      {ingest::MaterialClass::kFood, pores::MaterialClass::kSwelling},
  };
  for (const auto& [declared, expected] : cases) {
    ingest::JobSpec job = FullTemplateJob();
    job.material_class = declared;
    const JobSettings s = LoadJobSettings(path, job, "out");
    EXPECT_EQ(s.pores.material_class, expected) << ingest::MaterialClassName(declared);
  }
}

TEST(JobSettingsTest, OverridesAreConvertedToSiAndRecorded) {
  const auto path = WriteJob("overrides.toml",
                             "[equilibrium]\nrate_limit_percent_per_min = 0.0003\n"
                             "rate_window_min = 120\n"
                             "[fit]\nmodels = [\"gab\", \"bet\"]\nloss = \"huber\"\n"
                             "bootstrap_resamples = 50\n"
                             "[pores]\nfilm = \"constant\"\nfilm_thickness_nm = 0.4\n"
                             "reference_conditions = [{ temperature_C = 25, rh_percent = 80 }]\n"
                             "[report]\ncoverage_factor = 3\n");
  const JobSettings s = LoadJobSettings(path, FullTemplateJob(), "out");
  EXPECT_DOUBLE_EQ(s.equilibrate.rate_limit_fraction_per_min, 3e-6);
  EXPECT_DOUBLE_EQ(s.equilibrate.rate_window_s, 7200.0);
  ASSERT_EQ(s.fit.models.size(), 2u);
  EXPECT_EQ(s.fit.loss, fitters::LossKind::kHuber);
  EXPECT_EQ(s.pores.film, pores::FilmModel::kConstant);
  EXPECT_NEAR(s.pores.constant_film_thickness_m, 0.4e-9, 1e-20);
  ASSERT_EQ(s.pores.reference_conditions.size(), 1u);
  EXPECT_DOUBLE_EQ(s.pores.reference_conditions[0].temperature_K, 298.15);
  EXPECT_DOUBLE_EQ(s.reduce.coverage_factor, 3.0);
  EXPECT_EQ(s.effective["fit"]["models"][1], "bet");
}

TEST(JobSettingsTest, UnknownKeyNamesKeyLineAndColumn) {
  const auto path = WriteJob("unknown.toml", "[fit]\nmodels = [\"gab\"]\nbootstrapp = 3\n");
  try {
    LoadJobSettings(path, FullTemplateJob(), "out");
    FAIL() << "no error";
  } catch (const InputError& error) {
    EXPECT_EQ(error.diagnostic().where.line, 3);
    EXPECT_EQ(error.diagnostic().where.column, 1);
    EXPECT_NE(std::string(error.what()).find("unknown key 'bootstrapp' in [fit]"),
              std::string::npos)
        << error.what();
  }
}

TEST(JobSettingsTest, OutOfRangeAndWrongTypeAreErrors) {
  const auto range = WriteJob("range.toml", "[fit]\nconfidence_level = 1.5\n");
  EXPECT_THROW(LoadJobSettings(range, FullTemplateJob(), "out"), InputError);
  const auto type = WriteJob("type.toml", "[pores]\ngrid_points = \"many\"\n");
  try {
    LoadJobSettings(type, FullTemplateJob(), "out");
    FAIL() << "no error";
  } catch (const InputError& error) {
    EXPECT_NE(std::string(error.what()).find("key 'grid_points' in [pores] is not an integer"),
              std::string::npos)
        << error.what();
    EXPECT_EQ(error.diagnostic().where.line, 2);
  }
  const auto choice = WriteJob("choice.toml", "[pores]\ngeometry = \"slit\"\n");
  try {
    LoadJobSettings(choice, FullTemplateJob(), "out");
    FAIL() << "no error";
  } catch (const InputError& error) {
    EXPECT_NE(std::string(error.what()).find("\"open_cylinder\", \"closed_cylinder\""),
              std::string::npos)
        << error.what();
  }
}

TEST(JobSettingsTest, RefitToleranceIsReadRecordedAndRangeChecked) {
  const auto path = WriteJob("refit.toml", "[fit]\nrefit_tolerance_se = 0.002\n");
  const JobSettings s = LoadJobSettings(path, FullTemplateJob(), "out");
  EXPECT_DOUBLE_EQ(s.fit.refit_tolerance_se, 0.002);
  EXPECT_DOUBLE_EQ(s.effective["fit"]["refit_tolerance_se"].get<double>(), 0.002);
  const auto bad = WriteJob("refit_bad.toml", "[job]\nid = \"X\"\n[fit]\nrefit_tolerance_se = 2\n");
  try {
    LoadJobSettings(bad, FullTemplateJob(), "out");
    FAIL() << "no error";
  } catch (const InputError& error) {
    EXPECT_EQ(error.diagnostic().where.line, 4);
    EXPECT_NE(std::string(error.what()).find("refit_tolerance_se"), std::string::npos)
        << error.what();
  }
}

}  // namespace
}  // namespace sorbtrace::run
