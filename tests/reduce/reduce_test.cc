// Reduce(): moisture content, GUM budgets (JCGM 100:2008) and the combination of specimens,
// on hand-made equilibria with hand-computed expected values.
#include "pipeline/reduce/reduce.h"

#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "pipeline/physics/physics.h"

namespace sorbtrace::reduce {
namespace {

const double k23C_K = 296.15;

equilibrate::EquilibriumPoint Point(std::string specimen, int step, double mass_g) {
  equilibrate::EquilibriumPoint p;
  p.dataset_id = "desiccator-23C";
  p.specimen_id = std::move(specimen);
  p.step_index = step;
  p.step_label = "NaCl";
  p.method = ingest::Method::kDesiccator;
  p.branch = ingest::Branch::kAdsorption;
  p.temperature_K = k23C_K;
  p.rh_fraction = 0.7537;
  p.u_rh_fraction = 0.0009;
  p.drh_dT_per_K = -0.0002;
  p.rh_source_kind = equilibrate::RhSource::kSaltTable;
  p.mass_g = mass_g;
  p.time_to_equilibrium_s = 72 * 3600.0;
  p.equilibrated = true;
  p.where = SourceLocation{"weighings.csv", 12, 0};
  return p;
}

equilibrate::DryMass Dry(std::string specimen, double mass_g) {
  equilibrate::DryMass d;
  d.specimen_id = std::move(specimen);
  d.mass_g = mass_g;
  d.method = "stated";
  d.stated = true;
  return d;
}

ingest::IngestResult Job() {
  ingest::IngestResult in;
  in.job.job_file = "job.toml";
  in.job.balance_resolution_g = 1e-4;
  in.job.balance_standard_uncertainty_g = 1e-4;
  in.job.temperature_standard_uncertainty_K = 0.2;
  in.job.specimens = {{"A", 10.0, 500.0, {}}, {"B", 10.0, 500.0, {}}, {"C", 10.0, 500.0, {}}};
  ingest::DataSetSpec dataset;
  dataset.id = "desiccator-23C";
  in.job.datasets.push_back(dataset);
  return in;
}

TEST(ReduceTest, WorkedBudgetOfOneSpecimen) {
  // Worked budget (JCGM 100:2008, Eq. 10):
  //   m = 10.2345 g, m_d = 10.0000 g -> u = 0.2345 / 10 = 0.02345 kg/kg
  //   u_bal = sqrt((1e-4)^2 + (1e-4/sqrt(12))^2) = sqrt(1e-8 + 8.333e-10) = 1.040833e-4 g
  //   c_m = 1/m_d = 0.1 /g          -> |c_m| u_bal = 1.040833e-5
  //   c_md = -m/m_d^2 = -0.102345 /g -> |c_md| u_bal = 1.065241e-5
  //   u_c = sqrt(1.040833e-5^2 + 1.065241e-5^2) = 1.489319e-5 kg/kg; U (k = 2) = 2.978638e-5
  //   RH: u_src = 0.0009, c_T u(T) = 0.0002 /K x 0.2 K = 4e-5 -> u(rh) = 9.008885e-4
  equilibrate::EquilibriumSet set;
  set.points.push_back(Point("A", 1, 10.2345));
  set.dry_masses.push_back(Dry("A", 10.0000));
  const ReducedIsotherms r = Reduce(Job(), set, ReduceOptions{});
  ASSERT_EQ(r.specimen_points.size(), 1u);
  const SpecimenPoint& p = r.specimen_points[0];
  EXPECT_NEAR(p.moisture_kg_per_kg, 0.02345, 1e-12);
  ASSERT_EQ(p.moisture_budget.size(), 2u);
  EXPECT_EQ(p.moisture_budget[0].quantity, "balance (wet mass)");
  EXPECT_NEAR(p.moisture_budget[0].standard_uncertainty, 1.040833e-4, 1e-10);
  EXPECT_NEAR(p.moisture_budget[0].sensitivity, 0.1, 1e-12);
  EXPECT_NEAR(p.moisture_budget[0].contribution, 1.040833e-5, 1e-11);
  EXPECT_EQ(p.moisture_budget[1].quantity, "balance (dry mass)");
  EXPECT_NEAR(p.moisture_budget[1].sensitivity, -0.102345, 1e-12);
  EXPECT_NEAR(p.moisture_budget[1].contribution, 1.065241e-5, 1e-11);
  EXPECT_NEAR(p.u_moisture_kg_per_kg, 1.489319e-5, 1e-11);
  EXPECT_NEAR(p.expanded_u_moisture_kg_per_kg, 2.978638e-5, 2e-11);
  ASSERT_EQ(p.rh_budget.size(), 2u);
  EXPECT_EQ(p.rh_budget[0].quantity, "RH (salt table)");
  EXPECT_NEAR(p.rh_budget[1].contribution, 4e-5, 1e-15);
  EXPECT_NEAR(p.u_rh_fraction, 9.008885e-4, 1e-10);
  EXPECT_FALSE(p.excluded);
}

TEST(ReduceTest, DriftExtrapolationAndDryMassLines) {
  // Extra lines: dry-mass method 2e-4 g x c_md, drift 3e-4 g x c_m, extrapolation 4e-4 g x c_m
  // with m = 11 g, m_d = 10 g: c_m = 0.1, c_md = -0.11.
  //   u_c^2 = (0.1*1.040833e-4)^2 + (0.11*1.040833e-4)^2 + (0.11*2e-4)^2 + (0.1*3e-4)^2
  //         + (0.1*4e-4)^2 = 1.0833e-10 + 1.3108e-10 + 4.84e-10 + 9e-10 + 1.6e-9
  //         = 3.2234e-9 -> u_c = 5.67750e-5
  equilibrate::EquilibriumSet set;
  auto eq = Point("A", 1, 11.0);
  eq.u_mass_drift_g = 3e-4;
  eq.extrapolated = true;
  eq.u_mass_extrapolation_g = 4e-4;
  set.points.push_back(eq);
  auto dry = Dry("A", 10.0);
  dry.u_mass_g = 2e-4;
  set.dry_masses.push_back(dry);
  const ReducedIsotherms r = Reduce(Job(), set, ReduceOptions{});
  const SpecimenPoint& p = r.specimen_points[0];
  ASSERT_EQ(p.moisture_budget.size(), 5u);
  EXPECT_EQ(p.moisture_budget[2].quantity, "dry-mass method");
  EXPECT_EQ(p.moisture_budget[3].quantity, "residual drift");
  EXPECT_EQ(p.moisture_budget[4].quantity, "extrapolation");
  EXPECT_NEAR(p.u_moisture_kg_per_kg, 5.67750e-5, 1e-9);
  EXPECT_TRUE(p.extrapolated);
  EXPECT_TRUE(r.points[0].extrapolated);
}

TEST(ReduceTest, ThreeSpecimensCombined) {
  // u_i = 0.0200, 0.0210, 0.0220 (m = 10.200, 10.210, 10.220 g on 10 g dry).
  // mean 0.0210; s = sqrt((1e-6 + 0 + 1e-6) / 2) = 0.0010.
  // The spread holds the balance scatter of each specimen (no systematic lines here), so
  // u_c = s / sqrt(3) = 5.7735e-4 (JCGM 100:2008, 4.2.3; 4.3.10: not counted twice).
  // Volumetric with rho_dry = 500 kg/m3 and rho_w(23 degC) = 997.539 kg/m3 (Kell 1975):
  //   psi = 0.0210 x 500 / 997.539 = 0.0105259 m3/m3.
  equilibrate::EquilibriumSet set;
  set.points.push_back(Point("A", 1, 10.200));
  set.points.push_back(Point("B", 1, 10.210));
  set.points.push_back(Point("C", 1, 10.220));
  for (const char* id : {"A", "B", "C"}) set.dry_masses.push_back(Dry(id, 10.0));
  const ReducedIsotherms r = Reduce(Job(), set, ReduceOptions{});
  ASSERT_EQ(r.points.size(), 1u);
  const IsothermPoint& p = r.points[0];
  EXPECT_EQ(p.num_specimens, 3);
  EXPECT_NEAR(p.moisture_kg_per_kg, 0.0210, 1e-12);
  EXPECT_NEAR(p.between_specimen_sd_kg_per_kg, 0.0010, 1e-12);
  EXPECT_NEAR(p.u_moisture_kg_per_kg, 0.0010 / std::sqrt(3.0), 1e-15);
  // Welch-Satterthwaite (JCGM 100:2008, G.4.1): the spread s/sqrt(3) with 2 degrees of freedom
  // is the only component, nu_eff = 2; k = t_95.45(2) = 4.53 (JCGM 100:2008, Table G.2).
  EXPECT_NEAR(p.effective_dof, 2.0, 1e-9);
  EXPECT_NEAR(p.coverage_factor, 4.53, 0.005);
  EXPECT_NEAR(p.expanded_u_moisture_kg_per_kg, p.coverage_factor * p.u_moisture_kg_per_kg, 1e-15);
  ASSERT_TRUE(p.has_volumetric);
  EXPECT_NEAR(p.volumetric_m3_per_m3, 0.0105259, 1e-7);
  // RH: same atmosphere, u(rh) not averaged down.
  EXPECT_NEAR(p.u_rh_fraction, 9.008885e-4, 1e-10);
  EXPECT_EQ(r.summary.num_points, 1);
}

TEST(ReduceTest, NotEquilibratedExcludedOrFlagged) {
  equilibrate::EquilibriumSet set;
  set.points.push_back(Point("A", 1, 10.20));
  auto late = Point("B", 1, 10.25);
  late.equilibrated = false;
  late.flags.push_back("not equilibrated: last change 0.348 % of mass over 48 h (limit 0.1 %)");
  set.points.push_back(late);
  set.dry_masses = {Dry("A", 10.0), Dry("B", 10.0)};
  const ReducedIsotherms excluded = Reduce(Job(), set, ReduceOptions{});
  EXPECT_TRUE(excluded.specimen_points[1].excluded);
  EXPECT_EQ(excluded.summary.num_excluded, 1);
  ASSERT_EQ(excluded.points.size(), 1u);
  EXPECT_EQ(excluded.points[0].num_specimens, 1);
  EXPECT_NEAR(excluded.points[0].moisture_kg_per_kg, 0.020, 1e-12);
  EXPECT_TRUE(excluded.points[0].equilibrated);

  ReduceOptions include;
  include.include_not_equilibrated = true;
  const ReducedIsotherms kept = Reduce(Job(), set, include);
  EXPECT_FALSE(kept.specimen_points[1].excluded);
  EXPECT_EQ(kept.points[0].num_specimens, 2);
  EXPECT_FALSE(kept.points[0].equilibrated);
  EXPECT_NEAR(kept.points[0].moisture_kg_per_kg, 0.0225, 1e-12);
  bool flagged = false;
  for (const auto& f : kept.points[0].flags)
    flagged = flagged || f == "B: included although not equilibrated";
  EXPECT_TRUE(flagged);
}

TEST(ReduceTest, NotEquilibratedDryMassExcludesThePoint) {
  equilibrate::EquilibriumSet set;
  set.points.push_back(Point("A", 1, 10.2));
  auto dry = Dry("A", 10.0);
  dry.equilibrated = false;
  set.dry_masses.push_back(dry);
  const ReducedIsotherms r = Reduce(Job(), set, ReduceOptions{});
  EXPECT_TRUE(r.specimen_points[0].excluded);
  EXPECT_TRUE(r.points.empty());
}

TEST(ReduceTest, NegativeMoistureContent) {
  // 0.1 mg below the dry mass: u = -1e-5, within k u_c = 2 x 1.47e-5: flagged.
  equilibrate::EquilibriumSet set;
  set.points.push_back(Point("A", 1, 9.9999));
  set.dry_masses.push_back(Dry("A", 10.0));
  const ReducedIsotherms r = Reduce(Job(), set, ReduceOptions{});
  EXPECT_EQ(r.specimen_points[0].flags.back(), "negative moisture content within its uncertainty");
  // 5 mg below: -5e-4 kg/kg, far outside: an input error at the step.
  set.points[0].mass_g = 9.995;
  try {
    Reduce(Job(), set, ReduceOptions{});
    FAIL() << "expected InputError";
  } catch (const InputError& error) {
    EXPECT_EQ(error.diagnostic().where.file, "weighings.csv");
    EXPECT_EQ(error.diagnostic().where.line, 12);
    EXPECT_NE(error.diagnostic().message.find("below the dry mass"), std::string::npos);
  }
  // Unless the job expects it.
  ingest::IngestResult job = Job();
  job.job.negative_moisture_expected = true;
  const ReducedIsotherms expected = Reduce(job, set, ReduceOptions{});
  EXPECT_NEAR(expected.specimen_points[0].moisture_kg_per_kg, -5e-4, 1e-12);
}

TEST(ReduceTest, DryingStepsAreNotIsothermPoints) {
  equilibrate::EquilibriumSet set;
  auto drying = Point("A", 0, 10.0);
  drying.branch = ingest::Branch::kDrying;
  set.points.push_back(drying);
  set.points.push_back(Point("A", 1, 10.2));
  set.dry_masses.push_back(Dry("A", 10.0));
  const ReducedIsotherms r = Reduce(Job(), set, ReduceOptions{});
  EXPECT_EQ(r.specimen_points.size(), 1u);
  EXPECT_EQ(r.points.size(), 1u);
}

TEST(ReduceTest, RetentionPointsGetTheirKelvinRh) {
  // p_c = -(rho_w R T / M_w) ln(rh): rh = 0.9 at 23 degC gives 14.37 MPa (derived from the
  // equation with Kell 1975 density); the inverse must return 0.9.
  ingest::IngestResult in = Job();
  ingest::DataSetSpec retention;
  retention.temperature_K = k23C_K;
  retention.file_as_written = "retention.csv";
  in.job.retention = retention;
  ingest::RetentionPoint rp;
  rp.specimen_id = "A";
  rp.capillary_pressure_Pa = physics::CapillaryPressure_Pa(0.9, k23C_K);
  rp.moisture_kg_per_kg = 0.15;
  rp.u_moisture_kg_per_kg = 0.004;
  in.retention_points.push_back(rp);
  EXPECT_NEAR(rp.capillary_pressure_Pa, 14.37e6, 0.01e6);
  const ReducedIsotherms r = Reduce(in, equilibrate::EquilibriumSet{}, ReduceOptions{});
  ASSERT_EQ(r.retention.size(), 1u);
  EXPECT_NEAR(r.retention[0].equivalent_rh_fraction, 0.9, 1e-12);
  EXPECT_DOUBLE_EQ(r.retention[0].u_moisture_kg_per_kg, 0.004);
}

}  // namespace
}  // namespace sorbtrace::reduce

namespace sorbtrace::reduce {
namespace {

// Specimens that differ (reduce.h, two-way decomposition). Specimen B holds exactly 2 % more
// water than A at both steps (u = 0.0200/0.0400 and 0.0204/0.0408 on 10 g dry): on the log
// scale the specimen effects are -+ ln(1.02)/2 whatever the step weights, the residuals are 0,
// so MS_S = sum d_s^2 / (S - 1) = ln(1.02)^2 / 2, sigma_d = ln(1.02) / sqrt(2) = 0.01400279,
// phi = 0 and nu_d = MS_S^2 / (MS_S^2 / 1) = 1 (Satterthwaite with a zero second mean square).
// Hand computation from the two-way random-effects model (Montgomery, from memory).
// Point 1: mean 0.0202, specimen line c = mean / sqrt(2): 0.0202 x ln(1.02) / 2 = 2.000065e-4;
// the independent part is the floor (phi <= 1), the specimens' own u_c: sqrt(mean u_c^2 / 2).
// A third step holding only specimen A (B missing) is outside the complete block and gets the
// specimen line with c = mean / sqrt(1).
TEST(ReduceTest, SpecimenTermFromTwoWayDecomposition) {
  equilibrate::EquilibriumSet set;
  set.points.push_back(Point("A", 1, 10.200));
  set.points.push_back(Point("B", 1, 10.204));
  set.points.push_back(Point("A", 2, 10.400));
  set.points.push_back(Point("B", 2, 10.408));
  set.points.push_back(Point("A", 3, 10.500));
  set.dry_masses.push_back(Dry("A", 10.0));
  set.dry_masses.push_back(Dry("B", 10.0));
  const ReducedIsotherms r = Reduce(Job(), set, ReduceOptions{});
  ASSERT_EQ(r.specimen_terms.size(), 1u);
  const SpecimenTerm& term = r.specimen_terms[0];
  EXPECT_EQ(term.num_steps, 2);
  EXPECT_NEAR(term.relative_sd, std::log(1.02) / std::sqrt(2.0), 1e-9);
  EXPECT_NEAR(term.degrees_of_freedom, 1.0, 1e-9);
  EXPECT_LT(term.independent_variance_ratio, 1e-12);
  ASSERT_EQ(r.points.size(), 3u);
  const IsothermPoint& p1 = r.points[0];
  EXPECT_EQ(p1.specimen_term, 0);
  EXPECT_NEAR(p1.u_specimen_common_kg_per_kg, 2.000065e-4, 1e-9);
  const double u_a = r.specimen_points[0].u_moisture_kg_per_kg;
  const double u_b = r.specimen_points[1].u_moisture_kg_per_kg;
  const double independent = std::sqrt((u_a * u_a + u_b * u_b) / 2.0 / 2.0);
  EXPECT_NEAR(p1.u_independent_kg_per_kg, independent, 1e-12);
  EXPECT_NEAR(p1.u_moisture_kg_per_kg, std::hypot(2.000065e-4, independent), 1e-9);
  ASSERT_EQ(p1.moisture_budget.size(), 2u);
  EXPECT_EQ(p1.moisture_budget[0].quantity, "specimen-to-specimen (common to every step, Type A)");
  EXPECT_EQ(p1.moisture_budget[0].unit, "1");
  EXPECT_NEAR(p1.moisture_budget[0].degrees_of_freedom, 1.0, 1e-9);
  // nu_eff by G.2b: only the specimen line is Type A with finite nu.
  const double c1 = 2.000065e-4;
  const double u1 = p1.u_moisture_kg_per_kg;
  EXPECT_NEAR(p1.effective_dof, std::pow(u1, 4) / std::pow(c1, 4), 1e-6);
  const IsothermPoint& p3 = r.points[2];
  EXPECT_EQ(p3.num_specimens, 1);
  EXPECT_NEAR(p3.u_specimen_common_kg_per_kg, 0.05 * std::log(1.02) / std::sqrt(2.0), 1e-9);
}

// One specimen, or the same specimens at one step only: no specimen term, the rule of
// combined points as before.
TEST(ReduceTest, NoSpecimenTermWithOneStep) {
  equilibrate::EquilibriumSet set;
  set.points.push_back(Point("A", 1, 10.200));
  set.points.push_back(Point("B", 1, 10.210));
  set.dry_masses.push_back(Dry("A", 10.0));
  set.dry_masses.push_back(Dry("B", 10.0));
  const ReducedIsotherms r = Reduce(Job(), set, ReduceOptions{});
  EXPECT_TRUE(r.specimen_terms.empty());
  EXPECT_EQ(r.points[0].specimen_term, -1);
  EXPECT_DOUBLE_EQ(r.points[0].u_independent_kg_per_kg, r.points[0].u_moisture_kg_per_kg);
}

TEST(WelchSatterthwaiteTest, GumG4WorkedExample) {
  // JCGM 100:2008 (GUM), G.4.1 example: Y = b X1 X2 X3, relative standard uncertainties 0.25 %,
  // 0.57 %, 0.82 % from n = 10, 5, 15 observations (nu = 9, 4, 14); u_c(y)/y = 1.03 % and
  // nu_eff = 1.03^4 / (0.25^4/9 + 0.57^4/4 + 0.82^4/14) = 19.0; t_95(19) = 2.09, U_95 = 2.2 %.
  std::vector<BudgetLine> lines;
  lines.push_back(BudgetLine{"x1", 0.25, "%", 1.0, 0.25, 9.0});
  lines.push_back(BudgetLine{"x2", 0.57, "%", 1.0, 0.57, 4.0});
  lines.push_back(BudgetLine{"x3", 0.82, "%", 1.0, 0.82, 14.0});
  const double nu = EffectiveDegreesOfFreedom(lines);
  EXPECT_NEAR(nu, 19.0, 0.05);
  // GUM computes nu_eff with u_c rounded to 1.03 % (19.04); from the unrounded inputs it is
  // 18.999, so the example's t_95(19) is taken at round(nu).
  const double k95 = StudentTCoverageFactor(std::round(nu), 0.95);
  EXPECT_NEAR(k95, 2.09, 0.005);
  EXPECT_NEAR(k95 * std::sqrt(0.25 * 0.25 + 0.57 * 0.57 + 0.82 * 0.82), 2.2, 0.05);
}

TEST(WelchSatterthwaiteTest, TypeBOnlyIsInfinite) {
  std::vector<BudgetLine> lines = {BudgetLine{"balance", 1e-4, "g", 1.0, 1e-4}};
  EXPECT_TRUE(std::isinf(EffectiveDegreesOfFreedom(lines)));
  EXPECT_DOUBLE_EQ(CoverageFactor(EffectiveDegreesOfFreedom(lines), 2.0), 2.0);
}

TEST(WelchSatterthwaiteTest, CoverageFactorsOfGumTableG2) {
  // JCGM 100:2008, Table G.2, column p = 95.45 % (k = 2 for a normal distribution):
  // nu = 1: 13.97, 2: 4.53, 3: 3.31, 10: 2.28, 20: 2.13, infinity: 2.00.
  EXPECT_NEAR(CoverageFactor(1.0, 2.0), 13.97, 0.005);
  EXPECT_NEAR(CoverageFactor(2.0, 2.0), 4.53, 0.005);
  EXPECT_NEAR(CoverageFactor(3.0, 2.0), 3.31, 0.005);
  EXPECT_NEAR(CoverageFactor(10.0, 2.0), 2.28, 0.005);
  EXPECT_NEAR(CoverageFactor(20.0, 2.0), 2.13, 0.005);
  // nu_eff is truncated to the next lower integer (G.4.1): 2.9 uses nu = 2.
  EXPECT_NEAR(CoverageFactor(2.9, 2.0), 4.53, 0.005);
  // Column p = 95 %: nu = 2: 4.30, nu = 19: 2.09 (Table G.2).
  EXPECT_NEAR(StudentTCoverageFactor(2.0, 0.95), 4.30, 0.005);
}

}  // namespace
}  // namespace sorbtrace::reduce

namespace sorbtrace::reduce {
namespace {

// The estimate of the independent parts a data set adopts (reduce.h): specimens A and B (dry
// 10 g, stated) at two steps, A at 10.200 / 10.400 g, B at b1 / 10.400 g, so that the two-way
// residuals, and phi on nu_e = (2 - 1)(2 - 1) = 1 degree of freedom, grow with b1 - 10.200 g.
// approach_u_g > 0 adds an approach line of that u with 4 degrees of freedom to every point.
ReducedIsotherms TwoByTwo(double b1_g, double approach_u_g) {
  equilibrate::EquilibriumSet set;
  set.points.push_back(Point("A", 1, 10.200));
  set.points.push_back(Point("B", 1, b1_g));
  set.points.push_back(Point("A", 2, 10.400));
  set.points.push_back(Point("B", 2, 10.400));
  for (auto& p : set.points) {
    p.u_mass_approach_g = approach_u_g;
    p.approach_degrees_of_freedom = 4;
  }
  set.dry_masses.push_back(Dry("A", 10.0));
  set.dry_masses.push_back(Dry("B", 10.0));
  return Reduce(Job(), set, ReduceOptions{});
}

// sqrt(mean u_c^2 / n) of the first step's specimens (no systematic lines here).
double FloorOfFirstStep(const ReducedIsotherms& r) {
  const double u_a = r.specimen_points[0].u_moisture_kg_per_kg;
  const double u_b = r.specimen_points[1].u_moisture_kg_per_kg;
  return std::sqrt((u_a * u_a + u_b * u_b) / 2.0 / 2.0);
}

// Type B budgets and phi above 1 but below the upper 1 % point of chi-square(1) / 1, 6.635
// (chi-square table, e.g. NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.4): the
// spread does not contradict the budgets, which stay (the rule before took sqrt(phi) of them).
TEST(ReduceTest, IndependentPartsKeptWhenTheSpreadDoesNotContradictTypeBBudgets) {
  const ReducedIsotherms r = TwoByTwo(10.2005, 0.0);
  ASSERT_EQ(r.specimen_terms.size(), 1u);
  const SpecimenTerm& term = r.specimen_terms[0];
  ASSERT_GT(term.independent_variance_ratio, 1.0);
  ASSERT_LT(term.independent_variance_ratio, 6.635);
  EXPECT_TRUE(std::isinf(term.evaluated_degrees_of_freedom));
  EXPECT_EQ(term.independent_estimate, IndependentEstimate::kEvaluated);
  EXPECT_DOUBLE_EQ(term.adopted_variance_ratio, 1.0);
  EXPECT_NEAR(r.points[0].u_independent_kg_per_kg, FloorOfFirstStep(r), 1e-15);
}

// phi beyond that point (6.635 is the smallest upper 1 % point of F(1, nu_ev), reached for
// infinite nu_ev): the budgets miss an effect the specimens show; phi alone, with nu_e = 1.
TEST(ReduceTest, ObservedScatterAdoptedWhenItContradictsTheBudgets) {
  const ReducedIsotherms r = TwoByTwo(10.2040, 0.0);
  const SpecimenTerm& term = r.specimen_terms.at(0);
  ASSERT_GT(term.independent_variance_ratio, 6.635);
  EXPECT_EQ(term.independent_estimate, IndependentEstimate::kObserved);
  EXPECT_DOUBLE_EQ(term.adopted_variance_ratio, term.independent_variance_ratio);
  EXPECT_DOUBLE_EQ(term.independent_degrees_of_freedom, 1.0);
  EXPECT_NEAR(r.points[0].u_independent_kg_per_kg,
              std::sqrt(term.independent_variance_ratio) * FloorOfFirstStep(r), 1e-15);
}

// Budgets with a Type A line (approach, u = 0.1 mg, c = 1 / 10 g, nu = 4): their degrees of
// freedom nu_ev (JCGM 100:2008, E.4.3 and G.4.2: u(u^2) / u^2 = sqrt(2 / nu); per specimen
// nu_s = u_c^4 nu / (c u)^4 by G.2b, the relative uncertainties of the specimens' variances added
// with their variances as weights, the steps' averaged, nu_ev = 2 / rel^2), and phi pooled with
// them by degrees of freedom: r = (nu_ev + nu_e phi) / (nu_ev + nu_e), nu = nu_ev + nu_e.
TEST(ReduceTest, SpreadPooledWithTypeABudgetsByDegreesOfFreedom) {
  const ReducedIsotherms r = TwoByTwo(10.2005, 1e-4);
  const SpecimenTerm& term = r.specimen_terms.at(0);
  const double phi = term.independent_variance_ratio;
  ASSERT_LT(phi, 6.635);
  double rel = 0.0;
  for (int step = 0; step < 2; ++step) {
    double sum_v = 0.0, sum_vr = 0.0;
    for (int s = 0; s < 2; ++s) {
      const double u =
          r.specimen_points[static_cast<std::size_t>(2 * step + s)].u_moisture_kg_per_kg;
      const double nu_s = std::pow(u, 4) * 4.0 / std::pow(1e-5, 4);
      sum_v += u * u;
      sum_vr += u * u * std::sqrt(2.0 / nu_s);
    }
    rel += sum_vr / sum_v / 2.0;
  }
  const double nu_ev = 2.0 / (rel * rel);
  EXPECT_NEAR(term.evaluated_degrees_of_freedom, nu_ev, 1e-9 * nu_ev);
  EXPECT_EQ(term.independent_estimate, IndependentEstimate::kPooled);
  const double ratio = (nu_ev + phi) / (nu_ev + 1.0);
  EXPECT_NEAR(term.adopted_variance_ratio, ratio, 1e-12);
  EXPECT_NEAR(term.independent_degrees_of_freedom, nu_ev + 1.0, 1e-9 * nu_ev);
  EXPECT_NEAR(r.points[0].u_independent_kg_per_kg, std::sqrt(ratio) * FloorOfFirstStep(r), 1e-15);
  const BudgetLine& line = r.points[0].moisture_budget.back();
  EXPECT_EQ(line.quantity,
            "independent parts of the specimens' budgets, pooled with their step-to-step scatter");
  EXPECT_NEAR(line.degrees_of_freedom, nu_ev + 1.0, 1e-9 * nu_ev);
}

}  // namespace
}  // namespace sorbtrace::reduce
