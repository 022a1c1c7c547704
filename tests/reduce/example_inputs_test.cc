// The example scenarios (example_inputs/, written by scripts/generate_examples.cc) through
// ingest -> equilibrate -> reduce, compared with the truth the generator recorded in
// example_inputs/truth.json. The truth is exact (the generator's own model), so the checks
// test that the stages recover what was put in, within the uncertainty they state.
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <string>

#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/reduce/reduce.h"

namespace sorbtrace::reduce {
namespace {

const std::filesystem::path kExamples =
    std::filesystem::path(SORBTRACE_SOURCE_DIR) / "example_inputs";

nlohmann::json Truth() {
  std::ifstream in(kExamples / "truth.json");
  return nlohmann::json::parse(in);
}

const nlohmann::json& Scenario(const nlohmann::json& truth, const std::string& name) {
  for (const auto& s : truth["scenarios"]) {
    if (s["scenario"] == name) return s;
  }
  throw std::runtime_error("no scenario " + name);
}

double Gab(const nlohmann::json& p, double a) {
  const double xm = p["xm_kg_per_kg"], c = p["c"], k = p["k"];
  return xm * c * k * a / ((1 - k * a) * (1 - k * a + c * k * a));
}

struct ScenarioRun {
  ingest::IngestResult ingested;
  equilibrate::EquilibriumSet equilibria;
  ReducedIsotherms reduced;
};

ScenarioRun RunScenario(const std::string& name) {
  ScenarioRun run;
  const ingest::JobSpec job = ingest::LoadJobSpec(kExamples / name / "job.toml");
  run.ingested = ingest::Ingest(job);
  run.equilibria = equilibrate::Equilibrate(run.ingested, equilibrate::EquilibrateOptions{});
  run.reduced = Reduce(run.ingested, run.equilibria, ReduceOptions{});
  return run;
}

TEST(ExampleInputsTest, LimePlasterDesiccatorRecoversTruth) {
  const nlohmann::json truth = Truth();
  const nlohmann::json& s = Scenario(truth, "lime_plaster_desiccator");
  const ScenarioRun run = RunScenario("lime_plaster_desiccator");
  // 12 steps x 3 specimens, one flagged (P3 at K2SO4 adsorption, step 7).
  EXPECT_EQ(run.equilibria.summary.num_steps, 36);
  EXPECT_EQ(run.equilibria.summary.num_not_equilibrated, 1);
  EXPECT_EQ(run.reduced.summary.num_excluded, 1);
  int checked = 0;
  for (const SpecimenPoint& p : run.reduced.specimen_points) {
    if (p.specimen_id == "P3" && p.step_label == "K2SO4" &&
        p.branch == ingest::Branch::kAdsorption) {
      EXPECT_TRUE(p.excluded);
      continue;
    }
    EXPECT_FALSE(p.excluded) << p.specimen_id << " step " << p.step_index + 1;
    const double factor = s["specimen_factors"][p.specimen_id];
    const auto& gab = s["isotherms"][p.branch == ingest::Branch::kDesorption ? 1 : 0]["gab"];
    const double expected = factor * Gab(gab, p.rh_fraction);
    // The simulated lab stops within 0.02 % mass change over the last three weighings: the
    // recorded mass can still lie up to about 0.03 % of the dry mass (3e-4 kg/kg) short of
    // equilibrium, a bias the stated uncertainty (balance + residual drift) does not cover.
    EXPECT_NEAR(p.moisture_kg_per_kg, expected, 3.0 * p.u_moisture_kg_per_kg + 3e-4)
        << p.specimen_id << " step " << p.step_index + 1 << " " << p.step_label;
    ++checked;
  }
  EXPECT_EQ(checked, 32);
  // 11 combined points (drying step excluded), K2SO4 adsorption from P1 and P2 only.
  EXPECT_EQ(run.reduced.points.size(), 11u);
  for (const IsothermPoint& p : run.reduced.points) {
    EXPECT_EQ(p.num_specimens,
              p.step_label == "K2SO4" && p.branch == ingest::Branch::kAdsorption ? 2 : 3);
    EXPECT_TRUE(p.has_volumetric);
  }
}

// Vapour logs: each step compared with the generator's true equilibrium of the same step: a
// step that ended by the instrument's stop rule is corrected for its residual approach to
// equilibrium (equilibrate/approach.h), an unfinished one extrapolated; both must lie within
// 3 u of the truth. The dry reference (the first drying step) is corrected the same way, so
// the reference is the true dry mass: expected = x_eq / (1 + x_ref_eq) with x_ref_eq the
// drying step's true equilibrium (0).
void CheckLog(const ScenarioRun& run, const nlohmann::json& steps, const std::string& dataset) {
  double x_ref = 0.0;
  for (const auto& step : steps) {
    if (step["branch"] == "drying") {
      x_ref = step["true_equilibrium_moisture_kg_per_kg"];
      break;
    }
  }
  auto relative = [x_ref](double x) { return (1.0 + x) / (1.0 + x_ref) - 1.0; };
  int extrapolated = 0;
  int compared = 0;
  for (const SpecimenPoint& p : run.reduced.specimen_points) {
    if (p.dataset_id != dataset) continue;
    const auto& step = steps[static_cast<std::size_t>(p.step_index)];
    ASSERT_NEAR(p.rh_fraction * 100.0, step["set_rh_percent"].get<double>(), 0.5)
        << dataset << " " << p.step_index;
    if (p.extrapolated) {
      ++extrapolated;
      EXPECT_TRUE(step["ended_by_maximum_step_time"].get<bool>());
    }
    EXPECT_NEAR(p.moisture_kg_per_kg,
                relative(step["true_equilibrium_moisture_kg_per_kg"].get<double>()),
                3.0 * p.u_moisture_kg_per_kg)
        << dataset << " step " << p.step_index + 1;
    ++compared;
  }
  EXPECT_GT(compared, 0);
  std::printf("%s: %d points compared, %d extrapolated\n", dataset.c_str(), compared, extrapolated);
}

TEST(ExampleInputsTest, WoodFibreBoardLogRecoversTruth) {
  const nlohmann::json truth = Truth();
  const ScenarioRun run = RunScenario("wood_fibre_board_vapour");
  CheckLog(run, Scenario(truth, "wood_fibre_board_vapour")["steps"], "dvs-23C");
  EXPECT_GT(run.equilibria.summary.num_extrapolated, 0);
}

TEST(ExampleInputsTest, ExcipientLogRecoversTruth) {
  const nlohmann::json truth = Truth();
  const ScenarioRun run = RunScenario("excipient_powder_25C");
  CheckLog(run, Scenario(truth, "excipient_powder_25C")["steps"], "dvs-25C");
  // The last point is the 80 % step.
  ASSERT_FALSE(run.reduced.points.empty());
  EXPECT_NEAR(run.reduced.points.back().rh_fraction, 0.80, 0.005);
}

TEST(ExampleInputsTest, WoodFibreBoardTwoTemperaturesRecoverTruth) {
  const nlohmann::json truth = Truth();
  const nlohmann::json& s = Scenario(truth, "wood_fibre_board_23C_40C");
  const ScenarioRun run = RunScenario("wood_fibre_board_23C_40C");
  CheckLog(run, s["steps"]["dvs-23C"], "dvs-23C");
  CheckLog(run, s["steps"]["dvs-40C"], "dvs-40C");
}

}  // namespace
}  // namespace sorbtrace::reduce
