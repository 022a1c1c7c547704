// The settings table (pipeline/run/settings_table.h) against the README, the stages' own
// Options::IsValid and the recorded settings.
#include "pipeline/run/settings_table.h"

#include <gtest/gtest.h>
#include <unistd.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>
#include <string>

#include "pipeline/common/diagnostics.h"
#include "pipeline/run/run.h"

namespace sorbtrace::run::internal {
namespace {

std::filesystem::path WriteJob(const std::string& name, const std::string& text) {
  const auto dir = std::filesystem::temp_directory_path() /
                   ("sorbtrace_settings_table_test_" + std::to_string(::getpid()));
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

std::string ReadText(const std::filesystem::path& path) {
  std::ifstream in(path);
  std::stringstream text;
  text << in.rdbuf();
  return text.str();
}

// A written value in TOML: whole numbers as integers for integer keys, else with 17 digits.
std::string Toml(const SettingKey& key, double value) {
  if (key.kind == SettingKind::kInteger || key.kind == SettingKind::kSeed) {
    return std::to_string(static_cast<long long>(value));
  }
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "%.17g", value);
  std::string text = buffer;
  if (text.find_first_of(".e") == std::string::npos) text += ".0";
  return text;
}

bool AllStagesValid(const JobSettings& s, std::string* error) {
  return s.fit.IsValid(error) && s.pores.IsValid(error) && s.equilibrate.IsValid(error) &&
         s.reduce.IsValid(error) && s.ingest.IsValid(error);
}

bool IsRange(const SettingKey& key) {
  return key.kind == SettingKind::kNumber || key.kind == SettingKind::kInteger ||
         key.kind == SettingKind::kSeed;
}

TEST(SettingsTableTest, ReadmeTableIsTheGeneratedOne) {
  const std::string readme = ReadText(std::filesystem::path(SORBTRACE_SOURCE_DIR) / "README.md");
  const std::string begin = "<!-- settings table: generated from pipeline/run/settings.cc -->\n";
  const std::string end = "<!-- end of settings table -->";
  const auto from = readme.find(begin);
  const auto to = readme.find(end);
  ASSERT_NE(from, std::string::npos) << "README lacks the marker " << begin;
  ASSERT_NE(to, std::string::npos);
  const std::string in_readme = readme.substr(from + begin.size(), to - from - begin.size());
  const std::string generated = SettingsMarkdownTable();
  if (in_readme != generated) {
    const auto written = WriteJob("settings_table.md", generated);
    ADD_FAILURE() << "the README settings table differs from the table generated from "
                     "pipeline/run/settings.cc; the generated one is in "
                  << written << ": paste it between the README markers";
  }
}

TEST(SettingsTableTest, KeysAreUniqueAndGroupedBySection) {
  std::set<std::string> seen;
  std::set<std::string> sections_done;
  std::string section;
  for (const SettingKey& key : SettingKeys()) {
    EXPECT_TRUE(seen.insert(std::string(key.section) + "." + key.name).second) << key.name;
    if (section != key.section) {
      EXPECT_EQ(sections_done.count(key.section), 0u) << key.section << " split in two";
      sections_done.insert(section);
      section = key.section;
    }
    EXPECT_NE(std::string(key.doc), "") << key.name;
    if (IsRange(key)) {
      EXPECT_LT(key.min, key.max) << key.name;
    }
    if (key.kind == SettingKind::kCustom) {
      EXPECT_NE(key.read, nullptr) << key.name;
      EXPECT_NE(key.record, nullptr) << key.name;
    } else {
      EXPECT_NE(key.access.get, nullptr) << key.name;
    }
  }
}

// Every value the table admits at its bounds either reaches the stages as a valid setting or
// is refused by a rule between keys at a line and column of the job file, never by a stage's
// IsValid ("inconsistent settings" at the file alone).
TEST(SettingsTableTest, TableBoundsAreAcceptedByTheStages) {
  int checked = 0;
  for (const SettingKey& key : SettingKeys()) {
    if (!IsRange(key)) continue;
    for (const double value : {key.min, key.max}) {
      const std::string text =
          std::string("[") + key.section + "]\n" + key.name + " = " + Toml(key, value) + "\n";
      const auto path = WriteJob("bound.toml", text);
      try {
        const JobSettings s = LoadJobSettings(path, FullTemplateJob(), "out");
        std::string error;
        EXPECT_TRUE(AllStagesValid(s, &error)) << text << error;
        EXPECT_NEAR(key.access.get(s), value * key.factor, 1e-12 * std::abs(value * key.factor))
            << text;
      } catch (const InputError& e) {
        EXPECT_GT(e.diagnostic().where.line, 0) << text << e.what();
      }
      ++checked;
    }
  }
  EXPECT_GE(checked, 2 * 30);
}

// Where a stage checks a key at the same bound as the table (stage_bound), a value just beyond
// the bound is refused by the stage as well: the two ranges are one.
TEST(SettingsTableTest, StageBoundsAreTheTableBounds) {
  int checked = 0;
  for (const SettingKey& key : SettingKeys()) {
    if (key.stage_bound == kStageNone) continue;
    ASSERT_TRUE(IsRange(key)) << key.name;
    const double step = key.kind == SettingKind::kNumber ? 1e-6 * (key.max - key.min) : 1.0;
    for (const auto& [flag, beyond] :
         {std::pair{kStageMin, key.min - step}, std::pair{kStageMax, key.max + step}}) {
      if ((key.stage_bound & flag) == 0) continue;
      JobSettings s;
      key.access.set(s, beyond * key.factor);
      std::string error;
      EXPECT_FALSE(AllStagesValid(s, &error))
          << key.section << "." << key.name << " = " << beyond << " passes the stage";
      ++checked;
    }
  }
  EXPECT_GE(checked, 15);
}

TEST(SettingsTableTest, RecordsValuesAsWritten) {
  const auto path = WriteJob("as_written.toml",
                             "[equilibrium]\nmass_change_limit_percent = 0.07\n"
                             "rate_limit_percent_per_min = 0.0003\n"
                             "[pores]\nfilm = \"constant\"\nfilm_thickness_nm = 0.3\n"
                             "contact_angle_deg = 7\n"
                             "molecular_area_nm2 = 0.125\n");
  const JobSettings s = LoadJobSettings(path, FullTemplateJob(), "out");
  // 0.07 * 0.01 / 0.01 is 0.07000000000000001 in binary floating point; the record says 0.07.
  EXPECT_EQ(s.effective["equilibrium"]["mass_change_limit_percent"].dump(), "0.07");
  EXPECT_EQ(s.effective["equilibrium"]["rate_limit_percent_per_min"].dump(), "0.0003");
  EXPECT_EQ(s.effective["pores"]["film_thickness_nm"].dump(), "0.3");
  EXPECT_EQ(s.effective["pores"]["contact_angle_deg"].dump(), "7.0");
  EXPECT_EQ(s.effective["pores"]["molecular_area_nm2"].dump(), "0.125");
  // Defaults are recorded in the same units: 0.5e-9 m as 0.5 nm, 600 s as 10 min.
  const JobSettings d = LoadJobSettings(WriteJob("d.toml", "[job]\n"), FullTemplateJob(), "out");
  EXPECT_EQ(d.effective["pores"]["film_thickness_nm"].dump(), "0.5");
  EXPECT_EQ(d.effective["pores"]["monolayer_thickness_nm"].dump(), "0.311");
  EXPECT_EQ(d.effective["equilibrium"]["rate_window_min"].dump(), "10.0");
  EXPECT_EQ(d.effective["report"]["coverage_factor"].dump(), "2.0");
}

TEST(SettingsTableTest, WorkKeysAreLocatedFromTheTable) {
  const auto path =
      WriteJob("work.toml", "[fit]\nbootstrap_resamples = 10\n[pores]\n\ngrid_points = 20\n");
  const JobSettings s = LoadJobSettings(path, FullTemplateJob(), "out");
  EXPECT_EQ(s.work_keys.at("fit.bootstrap_resamples").line, 2);
  EXPECT_EQ(s.work_keys.at("pores.grid_points").line, 5);
  EXPECT_EQ(s.work_keys.at("fit.monte_carlo_draws").line, 0);  // default: not written
  EXPECT_EQ(s.work_keys.size(), 6u);
}

}  // namespace
}  // namespace sorbtrace::run::internal
