// The dry-mass reference rule lives in ingest (FindDryMassSources); equilibrate takes the mass
// of the step it names, and a declared specimen without data is warned about once.
#include <gtest/gtest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace {
namespace {

namespace fs = std::filesystem;

fs::path FreshJobDir(const std::string& name) {
  const fs::path dir = fs::temp_directory_path() /
                       ("sorbtrace_dry_mass_rule_" + name + "_" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

// A desiccator job: P1 dried in an oven (step 1), then over a desiccant (step 2), then two
// salts; P2 declared but without weighings. Masses invented.
fs::path WriteJob(const fs::path& dir, const std::string& method) {
  std::ofstream(dir / "job.toml") << "[job]\nid = \"DRY-1\"\nissue_date = \"2026-12-01\"\n"
                                     "[material]\nname = \"Test board (fictional)\"\n"
                                     "[measurement]\ndry_mass_method = \""
                                  << method
                                  << "\"\n[[specimen]]\nid = \"P1\"\n[[specimen]]\nid = \"P2\"\n"
                                     "[[dataset]]\nid = \"d23\"\nmethod = \"desiccator\"\n"
                                     "file = \"w.csv\"\ntemperature_C = 23.0\n";
  std::ofstream(dir / "w.csv") << "specimen,step,atmosphere,branch,weighed_at,mass_g\n"
                                  "P1,1,oven,drying,2026-09-01T09:00,24.0100\n"
                                  "P1,1,oven,drying,2026-09-02T09:00,24.0001\n"
                                  "P1,1,oven,drying,2026-09-03T09:00,24.0000\n"
                                  "P1,1,oven,drying,2026-09-04T09:00,24.0000\n"
                                  "P1,2,desiccant,drying,2026-09-05T09:00,24.0300\n"
                                  "P1,2,desiccant,drying,2026-09-06T09:00,24.0210\n"
                                  "P1,2,desiccant,drying,2026-09-07T09:00,24.0200\n"
                                  "P1,2,desiccant,drying,2026-09-08T09:00,24.0200\n"
                                  "P1,3,MgCl2,adsorption,2026-09-09T09:00,24.2380\n"
                                  "P1,3,MgCl2,adsorption,2026-09-10T09:00,24.2398\n"
                                  "P1,3,MgCl2,adsorption,2026-09-11T09:00,24.2400\n"
                                  "P1,3,MgCl2,adsorption,2026-09-12T09:00,24.2400\n"
                                  "P1,4,desiccant,drying,2026-09-13T09:00,24.0500\n"
                                  "P1,4,desiccant,drying,2026-09-14T09:00,24.0420\n"
                                  "P1,4,desiccant,drying,2026-09-15T09:00,24.0400\n"
                                  "P1,4,desiccant,drying,2026-09-16T09:00,24.0400\n";
  return dir / "job.toml";
}

int CountContaining(const std::vector<Diagnostic>& warnings, const std::string& text) {
  int count = 0;
  for (const Diagnostic& d : warnings) count += d.message.find(text) != std::string::npos;
  return count;
}

struct Case {
  const char* method;
  int step_index;  // 0-based step of P1 that is its dry reference
  double mass_g;   // its equilibrium (last constant) mass
};

class DryMassRuleTest : public ::testing::TestWithParam<Case> {};

TEST_P(DryMassRuleTest, OneRuleChoosesTheStepAndWarnsOnce) {
  const Case c = GetParam();
  const fs::path job_file = WriteJob(FreshJobDir(c.method), c.method);
  const ingest::IngestResult ingested = ingest::Ingest(ingest::LoadJobSpec(job_file));
  const std::vector<ingest::DryMassSource> sources = ingest::FindDryMassSources(ingested, nullptr);
  ASSERT_EQ(sources.size(), 1u);  // P2 has no data: no source
  EXPECT_EQ(sources[0].specimen_id, "P1");
  EXPECT_EQ(sources[0].step_index, c.step_index);

  const equilibrate::EquilibriumSet set = equilibrate::Equilibrate(ingested, {});
  ASSERT_EQ(set.dry_masses.size(), 1u);
  EXPECT_EQ(set.dry_masses[0].step_index, c.step_index);
  EXPECT_NEAR(set.dry_masses[0].mass_g, c.mass_g, 1e-3);

  // "specimen 'P2' has no sorption data": once, from ingest, none from equilibrate.
  EXPECT_EQ(CountContaining(ingested.summary.warnings, "'P2'"), 1);
  EXPECT_EQ(CountContaining(set.summary.warnings, "'P2'"), 0);
}

// oven: the oven step (1), not the first drying step of any kind; desiccant_step: the first
// 0 % RH step (2); final_drying_step: the last step when it is a drying step (4).
INSTANTIATE_TEST_SUITE_P(Methods, DryMassRuleTest,
                         ::testing::Values(Case{"oven", 0, 24.0000},
                                           Case{"desiccant_step", 1, 24.0200},
                                           Case{"final_drying_step", 3, 24.0400}));

TEST(DryMassRuleTest, OvenWithoutOvenStepIsRefusedAtTheSpecimen) {
  const fs::path dir = FreshJobDir("no_oven");
  const fs::path job_file = WriteJob(dir, "oven");
  // Only the salt step remains: no oven weighing, no stated dry mass.
  std::ofstream(dir / "w.csv") << "specimen,step,atmosphere,branch,weighed_at,mass_g\n"
                                  "P1,1,MgCl2,adsorption,2026-09-09T09:00,24.2380\n"
                                  "P1,1,MgCl2,adsorption,2026-09-10T09:00,24.2398\n"
                                  "P1,1,MgCl2,adsorption,2026-09-11T09:00,24.2400\n";
  try {
    ingest::Ingest(ingest::LoadJobSpec(job_file));
    FAIL() << "expected InputError";
  } catch (const InputError& error) {
    EXPECT_EQ(error.diagnostic().message, "no dry mass for specimen 'P1'");
    EXPECT_EQ(error.diagnostic().where.line, 8);  // its [[specimen]] entry
  }
}

}  // namespace
}  // namespace sorbtrace
