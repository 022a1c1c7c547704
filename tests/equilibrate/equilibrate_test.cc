// Equilibrate(): desiccator series and vapour logs built in memory (no files).
#include "pipeline/equilibrate/equilibrate.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <numbers>
#include <random>
#include <string>

#include "pipeline/equilibrate/approach.h"
#include "pipeline/equilibrate/exponential_tail.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::equilibrate {
namespace {

constexpr double kHour_s = 3600.0;
const double k23C_K = physics::CelsiusToKelvin(23.0);

bool HasFlagContaining(const EquilibriumPoint& point, const std::string& text) {
  for (const auto& flag : point.flags) {
    if (flag.find(text) != std::string::npos) return true;
  }
  return false;
}

ingest::DesiccatorStep Step(std::string specimen, int index, std::string atmosphere,
                            ingest::Branch branch,
                            const std::vector<std::pair<double, double>>& hours_grams) {
  ingest::DesiccatorStep step;
  step.specimen_id = std::move(specimen);
  step.step_index = index;
  step.step_number = index + 1;
  step.atmosphere = atmosphere;
  step.branch = branch;
  step.temperature_K = k23C_K;
  if (atmosphere == "desiccant") {
    step.set_rh_fraction = 0.0;
  } else if (atmosphere != "oven") {
    step.salt = atmosphere;
  }
  step.first_line = 2 + 10 * index;
  for (const auto& [h, g] : hours_grams) {
    ingest::Weighing w;
    w.time_s = h * kHour_s;
    w.mass_g = g;
    w.temperature_K = k23C_K;
    step.weighings.push_back(w);
  }
  return step;
}

ingest::IngestResult DesiccatorJob(ingest::DryMassMethod method) {
  ingest::IngestResult in;
  in.job.job_file = "job.toml";
  in.job.dry_mass_method = method;
  in.job.specimens = {{"A", std::nullopt, std::nullopt, {}}, {"B", std::nullopt, std::nullopt, {}}};
  ingest::DataSetSpec dataset;
  dataset.id = "desiccator-23C";
  dataset.temperature_K = k23C_K;
  in.job.datasets.push_back(dataset);
  ingest::DesiccatorSeries series;
  series.dataset_id = "desiccator-23C";
  series.file = "weighings.csv";
  using ingest::Branch;
  series.steps.push_back(Step("A", 0, "desiccant", Branch::kDrying,
                              {{0, 10.0100}, {24, 10.0010}, {48, 10.0001}, {72, 10.0000}}));
  series.steps.push_back(Step("A", 1, "NaCl", Branch::kAdsorption,
                              {{72, 10.0000}, {96, 10.0500}, {120, 10.0540}, {144, 10.0550}}));
  series.steps.push_back(Step("B", 0, "desiccant", Branch::kDrying,
                              {{0, 12.0100}, {24, 12.0004}, {48, 12.0001}, {72, 12.0000}}));
  series.steps.push_back(Step("B", 1, "NaCl", Branch::kAdsorption,
                              {{72, 12.000}, {96, 12.036}, {120, 12.060}, {144, 12.078}}));
  in.desiccator_series.push_back(series);
  return in;
}

TEST(EquilibrateDesiccatorTest, ConstantMassAndSaltHumidity) {
  const EquilibriumSet set =
      Equilibrate(DesiccatorJob(ingest::DryMassMethod::kDesiccantStep), EquilibrateOptions{});
  ASSERT_EQ(set.points.size(), 4u);
  const EquilibriumPoint& a = set.points[1];
  EXPECT_EQ(a.specimen_id, "A");
  EXPECT_EQ(a.step_label, "NaCl");
  EXPECT_TRUE(a.equilibrated);
  EXPECT_FALSE(a.extrapolated);
  // First met at the 4th weighing (144 h), step started at 72 h: 72 h to equilibrium.
  EXPECT_DOUBLE_EQ(a.time_to_equilibrium_s, 72 * kHour_s);
  // Residual approach (first-order kinetics through the chain 96, 120, 144 h, equal spacing):
  // d2 = 0.0040 g, d1 = 0.0010 g, r = d1/d2 = exp(-24 h/tau) = 0.25, remaining
  // d1 r / (1 - r) = 0.0010 x 0.25 / 0.75 = 3.3333e-4 g (geometric series of the later
  // changes); tau = 24 h / ln 4 = 17.31 h. The corrected mass is 10.0550 + 3.3333e-4 g.
  EXPECT_NEAR(a.approach_correction_g, 0.0010 * 0.25 / 0.75, 1e-9);
  EXPECT_NEAR(a.mass_g, 10.0550 + 0.0010 * 0.25 / 0.75, 1e-9);
  EXPECT_NEAR(a.approach_time_constant_s, 24 * kHour_s / std::log(4.0), 1.0);
  // Its uncertainty: R = d1^2 / (d2 - d1), dR/dm0 = 7/9, dR/dm1 = -8/9, dR/dm2 = 1/9, each
  // weighing with the scatter s the step's four weighings (72-144 h) show about their fit: that
  // fit with the balance's scatter, u = sqrt((1e-4)^2 + (1e-4/sqrt(12))^2) = 1.04083e-4 g (balance
  // defaults of the job, JCGM 100:2008 F.2.2.1), fails the lack-of-fit test (approach.h), so
  // s = sqrt(SSR / 1) of that fit, Type A with 1 degree of freedom: u(R) = s sqrt(49 + 64 + 1) / 9.
  const ingest::IngestResult job = DesiccatorJob(ingest::DryMassMethod::kDesiccantStep);
  std::vector<double> t_s, m_g;
  for (const ingest::Weighing& w : job.desiccator_series[0].steps[1].weighings) {
    t_s.push_back(w.time_s);
    m_g.push_back(w.mass_g);
  }
  internal::TailFitOptions tail = internal::TailOptions(EquilibrateOptions{}, t_s.front());
  tail.point_sd_g = BalanceStandardUncertainty_g(job.job);
  const internal::TailFit fit = internal::FitExponentialTail(t_s, m_g, tail);
  ASSERT_TRUE(fit.ok);
  ASSERT_EQ(fit.residual_degrees_of_freedom, 1);
  ASSERT_GT(fit.ssr_g2 / (1.04083e-4 * 1.04083e-4), 6.635);  // chi-square(1), upper 1 % (table)
  EXPECT_NEAR(a.u_mass_approach_g, std::sqrt(fit.ssr_g2) * std::sqrt(114.0) / 9.0, 1e-8);
  EXPECT_EQ(a.approach_degrees_of_freedom, 1);
  EXPECT_DOUBLE_EQ(a.u_mass_drift_g, 0.0);  // replaced by the approach estimate
  // NaCl at 23 degC: Greenspan (1977) polynomial, 75.37 %RH (truncated to 0.01).
  EXPECT_NEAR(a.rh_fraction, 0.7537, 0.0001);
  EXPECT_EQ(a.rh_source_kind, RhSource::kSaltTable);
  EXPECT_GT(a.u_rh_fraction, 0.0);
  EXPECT_EQ(a.where.file, "weighings.csv");
  EXPECT_EQ(a.where.line, 12);

  const EquilibriumPoint& b = set.points[3];
  EXPECT_FALSE(b.equilibrated);
  // Range of the last chain: (12.078 - 12.036) / 12.078 = 0.348 % over 48 h.
  EXPECT_TRUE(HasFlagContaining(b, "not equilibrated: last change 0.348 % of mass over 48 h"))
      << b.flags.front();
  EXPECT_EQ(set.summary.num_steps, 4);
  EXPECT_EQ(set.summary.num_equilibrated, 3);
  EXPECT_EQ(set.summary.num_not_equilibrated, 1);
  EXPECT_EQ(set.summary.num_extrapolated, 0);
  EXPECT_EQ(set.summary.warnings.size(), 1u);
}

TEST(EquilibrateDesiccatorTest, DryMassFromDesiccantStep) {
  const EquilibriumSet set =
      Equilibrate(DesiccatorJob(ingest::DryMassMethod::kDesiccantStep), EquilibrateOptions{});
  ASSERT_EQ(set.dry_masses.size(), 2u);
  EXPECT_EQ(set.dry_masses[0].specimen_id, "A");
  // Last weighing 10.0000 g corrected for the rest of the drying: chain 24, 48, 72 h with
  // d2 = -0.0009 g, d1 = -0.0001 g, r = 1/9, remaining d1 r / (1 - r) = -1.25e-5 g.
  EXPECT_NEAR(set.dry_masses[0].mass_g, 10.0000 - 1.25e-5, 1e-10);
  EXPECT_TRUE(set.dry_masses[0].equilibrated);
  EXPECT_FALSE(set.dry_masses[0].stated);
  EXPECT_EQ(set.dry_masses[0].step_index, 0);
  // u of that correction: R = d1^2 / (d2 - d1) with dR/dm0 = 17/64, dR/dm1 = -18/64,
  // dR/dm2 = 1/64 and u = 1.04083e-4 g per weighing: u(R) = 1.04083e-4 sqrt(614) / 64.
  EXPECT_NEAR(set.dry_masses[0].u_mass_g, 1.04083e-4 * std::sqrt(614.0) / 64.0, 1e-9)
      << set.points[0].flags.front();
  // The drying point itself: RH 0, dry source.
  EXPECT_EQ(set.points[0].rh_source_kind, RhSource::kDry);
  EXPECT_DOUBLE_EQ(set.points[0].rh_fraction, 0.0);
}

TEST(EquilibrateDesiccatorTest, StatedOvenDryMass) {
  ingest::IngestResult in = DesiccatorJob(ingest::DryMassMethod::kOvenDrying);
  in.job.specimens[0].dry_mass_g = 9.9876;
  in.job.specimens[1].dry_mass_g = 11.9876;
  const EquilibriumSet set = Equilibrate(in, EquilibrateOptions{});
  ASSERT_EQ(set.dry_masses.size(), 2u);
  EXPECT_TRUE(set.dry_masses[0].stated);
  EXPECT_DOUBLE_EQ(set.dry_masses[0].mass_g, 9.9876);
  EXPECT_DOUBLE_EQ(set.dry_masses[0].u_mass_g, 0.0);
  EXPECT_NE(set.dry_masses[0].method.find("ISO 12570"), std::string::npos);
}

TEST(EquilibrateDesiccatorTest, FinalDryingStepAndDryMassChangeWarning) {
  ingest::IngestResult in = DesiccatorJob(ingest::DryMassMethod::kFinalDryingStep);
  // A final desiccant step for A, 0.5 % heavier than the first one: used, and warned about.
  in.desiccator_series[0].steps.insert(
      in.desiccator_series[0].steps.begin() + 2,
      Step("A", 2, "desiccant", ingest::Branch::kDrying,
           {{144, 10.06}, {168, 10.0501}, {192, 10.0500}, {216, 10.0500}}));
  // B ends on a drying step as well ("final_drying_step" needs one: ingest::FindDryMassSources).
  in.desiccator_series[0].steps.push_back(
      Step("B", 2, "desiccant", ingest::Branch::kDrying,
           {{144, 12.0100}, {168, 12.0001}, {192, 12.0000}, {216, 12.0000}}));
  const EquilibriumSet set = Equilibrate(in, EquilibrateOptions{});
  // Weighed at the transfer (144 h, the NaCl step's last weighing): the four weighings resolve a
  // first-order decay (changes -9.9 mg, -0.1 mg, 0) whose remaining part is below 1 ug.
  EXPECT_NEAR(set.dry_masses[0].mass_g, 10.0500, 1e-6);
  EXPECT_EQ(set.dry_masses[0].step_index, 2);
  bool warned = false;
  for (const auto& w : set.summary.warnings) {
    warned = warned ||
             w.message.find("differs from the dry reference mass by -0.498 %") != std::string::npos;
  }
  EXPECT_TRUE(warned);
}

TEST(EquilibrateDesiccatorTest, MissingDryMassIsAnInputError) {
  ingest::IngestResult in = DesiccatorJob(ingest::DryMassMethod::kOvenDrying);
  // No stated dry mass and no oven step for A or B (their drying steps are desiccant steps):
  // "oven" has no source (the rule of ingest::FindDryMassSources).
  try {
    Equilibrate(in, EquilibrateOptions{});
    FAIL() << "expected InputError";
  } catch (const InputError& error) {
    EXPECT_EQ(error.diagnostic().message, "no dry mass for specimen 'A'");
    EXPECT_NE(error.diagnostic().expected.find("atmosphere oven"), std::string::npos);
  }
}

TEST(EquilibrateDesiccatorTest, UnknownSaltIsAnInputError) {
  ingest::IngestResult in = DesiccatorJob(ingest::DryMassMethod::kDesiccantStep);
  in.desiccator_series[0].steps[1].salt = "NaI";
  try {
    Equilibrate(in, EquilibrateOptions{});
    FAIL() << "expected InputError";
  } catch (const InputError& error) {
    EXPECT_EQ(error.diagnostic().where.line, 12);
    EXPECT_NE(error.diagnostic().message.find("no humidity for salt 'NaI'"), std::string::npos);
  }
}

// ---- The step start and the pooled weighing scatter (approach.h) ------------------------

// Specimen A: the desiccant step of DesiccatorJob (last weighing 10.0000 g at 72 h), then a NaCl
// step weighed from 96 h on, one day after it was moved in at 72 h, with first-order kinetics
// m(t) = 10.0200 - 0.0200 exp(-(t - 72 h) / 48 h) (no noise): the criterion range over 96-144 h,
// 0.0077 g, is below 0.1 % of the mass, so the step ends after three weighings with
// 0.0200 exp(-1.5) = 4.4626e-3 g of its approach left.
ingest::IngestResult ShortStepJob(double first_hour) {
  ingest::IngestResult in = DesiccatorJob(ingest::DryMassMethod::kDesiccantStep);
  std::vector<std::pair<double, double>> weighings;
  for (double h = first_hour; h <= first_hour + 48.0; h += 24.0) {
    weighings.emplace_back(h, 10.0200 - 0.0200 * std::exp(-(h - 72.0) / 48.0));
  }
  in.desiccator_series[0].steps[1] = Step("A", 1, "NaCl", ingest::Branch::kAdsorption, weighings);
  return in;
}

TEST(EquilibrateDesiccatorTest, StepStartsAtThePreviousStepsLastWeighing) {
  const EquilibriumPoint with_start =
      Equilibrate(ShortStepJob(96.0), EquilibrateOptions{}).points[1];
  ASSERT_TRUE(with_start.equilibrated);
  EXPECT_NE(with_start.approach_method.find("from the previous step's last"), std::string::npos)
      << with_start.approach_method;
  // The four points (72 h start and three weighings) lie on the curve: the fit returns it.
  EXPECT_NEAR(with_start.approach_correction_g, 0.0200 * std::exp(-1.5), 1e-7);
  EXPECT_NEAR(with_start.approach_time_constant_s, 48.0 * kHour_s, 60.0);
  // No step has five weighings: the balance's stated uncertainty is the scatter (Type B).
  const EquilibriumSet set = Equilibrate(ShortStepJob(96.0), EquilibrateOptions{});
  ASSERT_EQ(set.summary.weighing_scatter.size(), 1u);
  EXPECT_EQ(set.summary.weighing_scatter[0].num_steps, 0);
  EXPECT_NEAR(set.summary.weighing_scatter[0].sd_g,
              BalanceStandardUncertainty_g(ShortStepJob(96.0).job), 1e-15);
  EXPECT_EQ(with_start.approach_degrees_of_freedom, 0);

  // Without the start: the last three criterion weighings give the same value (exact first
  // order, equal spacing: d1 r / (1 - r)) with a larger uncertainty (the curvature of three
  // late weighings against the balance scatter, in place of the large early change).
  EquilibrateOptions own_weighings;
  own_weighings.previous_weighing_starts_step = false;
  const EquilibriumPoint without = Equilibrate(ShortStepJob(96.0), own_weighings).points[1];
  EXPECT_NE(without.approach_method.find("last three criterion weighings"), std::string::npos)
      << without.approach_method;
  EXPECT_NEAR(without.approach_correction_g, 0.0200 * std::exp(-1.5), 1e-7);
  // Measured: 1.02 mg without, 0.46 mg with the start.
  EXPECT_GT(without.u_mass_approach_g, 2.0 * with_start.u_mass_approach_g);
}

TEST(EquilibrateDesiccatorTest, AWeighingAtTheTransferIsTheStepStart) {
  // The NaCl step of ShortStepJob's curve weighed at 74 h (2 h after the previous step's last
  // weighing: less than half the 24 h interval, so the laboratory weighed on moving the
  // specimen) and at 120, 144 and 168 h (range 4.7 mg, below 0.1 % of the mass: met). The
  // previous weighing is not prepended, and the four weighings, the first at the step start,
  // are fitted (four points need the step start); the remaining approach is
  // 0.0200 exp(-(168 - 72) / 48) = 2.7067e-3 g.
  ingest::IngestResult in = DesiccatorJob(ingest::DryMassMethod::kDesiccantStep);
  std::vector<std::pair<double, double>> weighings;
  for (const double h : {74.0, 120.0, 144.0, 168.0}) {
    weighings.emplace_back(h, 10.0200 - 0.0200 * std::exp(-(h - 72.0) / 48.0));
  }
  in.desiccator_series[0].steps[1] = Step("A", 1, "NaCl", ingest::Branch::kAdsorption, weighings);
  const EquilibriumPoint point = Equilibrate(in, EquilibrateOptions{}).points[1];
  ASSERT_TRUE(point.equilibrated);
  EXPECT_NE(point.approach_method.find("kinetic models fitted to 4 weighings"), std::string::npos)
      << point.approach_method;
  EXPECT_EQ(point.approach_method.find("previous step's last"), std::string::npos)
      << point.approach_method;
  EXPECT_NEAR(point.approach_correction_g, 0.0200 * std::exp(-2.0), 2.0 * point.u_mass_approach_g);
}

TEST(EquilibrateDesiccatorTest, AStartTheKineticsDoNotReachIsNotUsed) {
  // The specimen was stored elsewhere between the steps: its last weighing before the step
  // (10.0000 g at 72 h) lies 0.5 g below a step that starts near 10.5 g. No kinetic model
  // passes through it within the balance scatter (chi-square upper tail below 1 %), so the
  // step's own weighings are used.
  ingest::IngestResult in = ShortStepJob(96.0);
  for (ingest::Weighing& w : in.desiccator_series[0].steps[1].weighings) w.mass_g += 0.5;
  const EquilibriumPoint point = Equilibrate(in, EquilibrateOptions{}).points[1];
  EXPECT_NE(point.approach_method.find("last three criterion weighings"), std::string::npos)
      << point.approach_method;
}

// The curve of AWeighingAtTheTransferIsTheStepStart weighed at 74 (the transfer), 120, 144 and
// 168 h, with the 144 h weighing 1.0 mg high: the four-point fit with the balance's stated
// scatter fails the lack-of-fit test (approach.h, rule 2), so the last three criterion weighings
// give the approach (rule 4), their curvature resolved against the stated scatter, but with the
// scatter the step's own weighings show, s = sqrt(SSR / (n - p)) of that fit with n - p = 1
// degree of freedom (the Type A scale of rule 3, JCGM 100:2008, 4.2.2). The propagation is linear
// in the weighing sd, so u is the stated-scatter chain's u (the same three weighings alone)
// times s / u_bal.
TEST(EquilibrateDesiccatorTest, ThreeWeighingChainTakesTheScatterItsStepShows) {
  auto job_with = [](const std::vector<double>& hours) {
    ingest::IngestResult in = DesiccatorJob(ingest::DryMassMethod::kDesiccantStep);
    std::vector<std::pair<double, double>> weighings;
    for (const double h : hours) {
      const double bump_g = h == 144.0 ? 1.0e-3 : 0.0;
      weighings.emplace_back(h, 10.0200 - 0.0200 * std::exp(-(h - 72.0) / 48.0) + bump_g);
    }
    in.desiccator_series[0].steps[1] = Step("A", 1, "NaCl", ingest::Branch::kAdsorption, weighings);
    return in;
  };
  const ingest::IngestResult four = job_with({74.0, 120.0, 144.0, 168.0});
  const EquilibriumPoint point = Equilibrate(four, EquilibrateOptions{}).points[1];
  ASSERT_TRUE(point.equilibrated);
  EXPECT_NE(point.approach_method.find("; the step's own scatter"), std::string::npos)
      << point.approach_method;
  EXPECT_EQ(point.approach_degrees_of_freedom, 1);
  // The same three weighings alone, without a start: rule 4 with the stated scatter.
  EquilibrateOptions no_start;
  no_start.previous_weighing_starts_step = false;
  const EquilibriumPoint chain = Equilibrate(job_with({120.0, 144.0, 168.0}), no_start).points[1];
  ASSERT_NE(chain.approach_method.find("last three criterion weighings"), std::string::npos)
      << chain.approach_method;
  EXPECT_EQ(chain.approach_method.find("own scatter"), std::string::npos);
  EXPECT_NEAR(point.approach_correction_g, chain.approach_correction_g, 1e-12);
  // The rejected fit, redone: its residual scale.
  const double stated_g = BalanceStandardUncertainty_g(four.job);
  std::vector<double> t_s, m_g;
  for (const ingest::Weighing& w : four.desiccator_series[0].steps[1].weighings) {
    t_s.push_back(w.time_s);
    m_g.push_back(w.mass_g);
  }
  internal::TailFitOptions tail = internal::TailOptions(EquilibrateOptions{}, t_s.front());
  tail.point_sd_g = stated_g;
  const internal::TailFit fit = internal::FitExponentialTail(t_s, m_g, tail);
  ASSERT_TRUE(fit.ok);
  ASSERT_EQ(fit.residual_degrees_of_freedom, 1);
  const double own_g = std::sqrt(fit.ssr_g2 / fit.residual_degrees_of_freedom);
  // Lack of fit: chi-square with 1 degree of freedom beyond its upper 1 % point, 6.635 (table).
  ASSERT_GT(fit.ssr_g2 / (stated_g * stated_g), 6.635);
  EXPECT_NEAR(point.u_mass_approach_g, chain.u_mass_approach_g * own_g / stated_g,
              1e-6 * point.u_mass_approach_g);
}

TEST(EquilibrateDesiccatorTest, WeighingScatterPooledOverTheStepsWithFiveWeighings) {
  // A's NaCl step weighed six times from its transfer at 72 h with +-0.2 mg alternating about
  // first-order kinetics (tau 30 h): the only step with five or more weighings, so the pooled
  // scatter is its own, s^2 = SSR / (6 - 3), on 3 degrees of freedom (JCGM 100:2008, 4.2.4), and
  // every fitted approach of the data set carries those degrees of freedom.
  ingest::IngestResult in = DesiccatorJob(ingest::DryMassMethod::kDesiccantStep);
  std::vector<std::pair<double, double>> weighings;
  for (int i = 0; i < 6; ++i) {
    const double h = 72.0 + 24.0 * i;
    const double wiggle_g = (i % 2 == 0 ? 2e-4 : -2e-4);
    weighings.emplace_back(h, 10.0060 - 0.0060 * std::exp(-(h - 72.0) / 30.0) + wiggle_g);
  }
  in.desiccator_series[0].steps[1] = Step("A", 1, "NaCl", ingest::Branch::kAdsorption, weighings);
  const EquilibriumSet set = Equilibrate(in, EquilibrateOptions{});
  const EquilibriumPoint& point = set.points[1];
  ASSERT_TRUE(point.equilibrated);
  ASSERT_EQ(set.summary.weighing_scatter.size(), 1u);
  EXPECT_EQ(set.summary.weighing_scatter[0].num_steps, 1);
  EXPECT_EQ(set.summary.weighing_scatter[0].degrees_of_freedom, 3);
  EXPECT_EQ(point.approach_degrees_of_freedom, 3);
}

// ---- Vapour logs ------------------------------------------------------------------------

class Normal {
 public:
  explicit Normal(std::uint64_t initial_state) : engine_(initial_state) {}
  double operator()() {
    constexpr double kTwoPow53 = 9007199254740992.0;
    const double u1 = (static_cast<double>(engine_() >> 11) + 1.0) / (kTwoPow53 + 1.0);
    const double u2 = static_cast<double>(engine_() >> 11) / kTwoPow53;
    return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
  }

 private:
  std::mt19937_64 engine_;
};

// Step with first-order kinetics from m_start towards m_eq with time constant tau.
ingest::VaporLogStep KineticStep(int index, double set_rh, ingest::Branch branch, double start_s,
                                 double duration_s, double m_start, double m_eq, double tau_s,
                                 Normal& noise) {
  ingest::VaporLogStep step;
  step.step_index = index;
  step.set_rh_fraction = set_rh;
  step.branch = branch;
  step.start_time_s = start_s;
  step.end_time_s = start_s + duration_s;
  step.first_line = 2 + index * 1000;
  step.temperature_mean_K = k23C_K;
  step.rh_measured_mean_fraction = set_rh;
  for (double t = start_s + 5.0; t < start_s + duration_s; t += 10.0) {
    ingest::LogBlock block;
    block.time_s = t;
    block.mass_g = m_eq + (m_start - m_eq) * std::exp(-(t - start_s) / tau_s) + 1e-6 * noise();
    block.rh_measured_fraction = set_rh + 0.002 * noise();
    block.temperature_K = k23C_K;
    block.num_rows = 10;
    step.blocks.push_back(block);
  }
  return step;
}

ingest::IngestResult LogJob() {
  ingest::IngestResult in;
  in.job.job_file = "job.toml";
  in.job.dry_mass_method = ingest::DryMassMethod::kDesiccantStep;
  in.job.rh_sensor_standard_uncertainty_fraction = 0.008;
  in.job.specimens = {{"W", std::nullopt, std::nullopt, {}}};
  ingest::DataSetSpec dataset;
  dataset.id = "dvs";
  dataset.method = ingest::Method::kVaporLog;
  dataset.specimen_id = "W";
  dataset.temperature_K = k23C_K;
  in.job.datasets.push_back(dataset);
  ingest::VaporLog log;
  log.dataset_id = "dvs";
  log.file = "log.csv";
  log.specimen_id = "W";
  Normal noise(2026);
  using ingest::Branch;
  // 0 %: flat at 1.0000 g. 50 %: tau 20 min over 4 h -> equilibrium 1.0400 g reached.
  // 80 %: tau 2 h, stopped after 3 h -> still 0.04 exp(-1.5) = 8.9 mg below 1.0800 g.
  log.steps.push_back(
      KineticStep(0, 0.0, Branch::kDrying, 0, 2 * kHour_s, 1.0001, 1.0000, 600, noise));
  log.steps.push_back(KineticStep(1, 0.5, Branch::kAdsorption, 2 * kHour_s, 4 * kHour_s, 1.0000,
                                  1.0400, 1200, noise));
  log.steps.push_back(KineticStep(2, 0.8, Branch::kAdsorption, 6 * kHour_s, 3 * kHour_s, 1.0400,
                                  1.0800, 7200, noise));
  in.vapor_logs.push_back(log);
  return in;
}

TEST(EquilibrateLogTest, RateCriterionAndExtrapolation) {
  const EquilibriumSet set = Equilibrate(LogJob(), EquilibrateOptions{});
  ASSERT_EQ(set.points.size(), 3u);
  const EquilibriumPoint& drying = set.points[0];
  EXPECT_TRUE(drying.equilibrated);
  const EquilibriumPoint& p50 = set.points[1];
  EXPECT_TRUE(p50.equilibrated);
  EXPECT_FALSE(p50.extrapolated);
  EXPECT_EQ(p50.step_label, "set 50 %");
  // Mean over the last 10 min of 1.04 - 0.04 exp(-t/1200): the remainder is < 1e-7 g.
  EXPECT_NEAR(p50.mass_g, 1.0400, 2e-6);
  // Criterion first met where 0.04/1200 exp(-t/1200) < 2e-5 * 1.0000 / 60 (g/s), i.e.
  // t > 1200 ln(100) = 5526 s (plus the ~300 s lag of the centred 600 s window).
  EXPECT_NEAR(p50.time_to_equilibrium_s, 1200.0 * std::log(100.0) + 300.0, 400.0);
  EXPECT_NEAR(p50.rh_fraction, 0.5, 0.001);
  EXPECT_EQ(p50.rh_source_kind, RhSource::kSensor);
  EXPECT_GE(p50.u_rh_fraction, 0.008);
  // d rh / dT at constant vapour pressure: -rh dln(p_s)/dT, about -0.5 x 0.0615 /K at 23 degC
  // (IAPWS saturation pressure, derived).
  EXPECT_NEAR(p50.drh_dT_per_K, -0.5 * 0.0615, 0.0005);

  const EquilibriumPoint& p80 = set.points[2];
  EXPECT_TRUE(p80.equilibrated);
  EXPECT_TRUE(p80.extrapolated);
  EXPECT_TRUE(HasFlagContaining(p80, "extrapolated:"));
  EXPECT_GT(p80.u_mass_extrapolation_g, 0.0);
  EXPECT_NEAR(p80.mass_g, 1.0800, 3.0 * p80.u_mass_extrapolation_g);
  // Projected equilibrium: 0.04/7200 exp(-t/7200) = 2e-5 * 1.0 / 60 -> t = 7200 ln(16.67)
  // = 20257 s from the step start.
  EXPECT_NEAR(p80.time_to_equilibrium_s, 7200.0 * std::log(0.04 / 7200.0 * 60.0 / 2e-5), 600.0);
  EXPECT_EQ(set.summary.num_extrapolated, 1);
  EXPECT_EQ(set.summary.num_equilibrated, 2);

  ASSERT_EQ(set.dry_masses.size(), 1u);
  EXPECT_NEAR(set.dry_masses[0].mass_g, 1.0000, 2e-6);
  ASSERT_EQ(set.traces.size(), 1u);
  // 9 h of 10 s blocks = 3240 points, decimated to at most 2000.
  EXPECT_LE(set.traces[0].points.size(), static_cast<std::size_t>(kMaxTracePoints));
  EXPECT_GT(set.traces[0].points.size(), 1000u);
  EXPECT_EQ(set.traces[0].equilibrium_times_s.size(), 2u);
}

TEST(EquilibrateLogTest, WithoutExtrapolationTheStepIsNotEquilibrated) {
  EquilibrateOptions options;
  options.extrapolate_unfinished_steps = false;
  const EquilibriumSet set = Equilibrate(LogJob(), options);
  const EquilibriumPoint& p80 = set.points[2];
  EXPECT_FALSE(p80.equilibrated);
  EXPECT_FALSE(p80.extrapolated);
  // Final rate 0.04/7200 exp(-1.5) g/s = 7.44e-5 g/min = 0.0074 %/min of 1 g.
  EXPECT_TRUE(HasFlagContaining(p80, "not equilibrated: final rate 0.007"));
  EXPECT_TRUE(HasFlagContaining(p80, "not extrapolated: extrapolation disabled"));
  EXPECT_EQ(set.summary.num_not_equilibrated, 1);
}

TEST(EquilibrateLogTest, TooSlowATailIsNotExtrapolated) {
  // With max_tau_to_tail_ratio = 0.5 the tau of 2 h over a 1.8 h tail is rejected.
  EquilibrateOptions options;
  options.max_tau_to_tail_ratio = 0.5;
  const EquilibriumSet set = Equilibrate(LogJob(), options);
  EXPECT_FALSE(set.points[2].equilibrated);
  EXPECT_TRUE(HasFlagContaining(set.points[2], "exceeds 0.5 x the fitted tail"));
}

// A log mass from many readings carries the part of the stated balance uncertainty its readings
// do not show (EquilibriumPoint::u_mass_balance_g): the blocks of LogJob() scatter with sd 1 ug
// (the generated noise), so sqrt(u_bal^2 - (1 ug)^2) remains, once, and the same for the dry mass.
TEST(EquilibrateLogTest, BalanceUncertaintyBeyondTheReadingScatter) {
  for (const double stated_g : {5e-6, 1e-6}) {
    SCOPED_TRACE(stated_g);
    ingest::IngestResult job = LogJob();
    job.job.balance_standard_uncertainty_g = stated_g;
    job.job.balance_resolution_g = 1e-9;  // rounding negligible: u_bal = stated_g
    const EquilibriumSet set = Equilibrate(job, EquilibrateOptions{});
    ASSERT_EQ(set.points.size(), 3u);
    const double persistent_g = std::sqrt(std::max(0.0, stated_g * stated_g - 1e-12));
    for (const EquilibriumPoint& point : set.points) {
      ASSERT_TRUE(point.u_mass_balance_g.has_value());
      if (stated_g > 1e-6) {
        // s estimated from hundreds of blocks (a few % relative): u within 1 % of sqrt(24) ug.
        EXPECT_NEAR(*point.u_mass_balance_g, persistent_g, 0.01 * persistent_g);
      } else {
        // Stated = scatter: (almost) nothing of the balance is left beyond the readings' Type A.
        EXPECT_LT(*point.u_mass_balance_g, 0.35 * stated_g);
      }
    }
    ASSERT_EQ(set.dry_masses.size(), 1u);
    ASSERT_TRUE(set.dry_masses[0].u_mass_balance_g.has_value());
    EXPECT_EQ(*set.dry_masses[0].u_mass_balance_g, *set.points[0].u_mass_balance_g);
  }
}

TEST(EquilibrateOptionsTest, InvalidOptionsAreRejected) {
  EquilibrateOptions options;
  std::string error;
  EXPECT_TRUE(options.IsValid(&error));
  options.exponential_terms = 3;
  EXPECT_FALSE(options.IsValid(&error));
  EXPECT_EQ(error, "exponential_terms 3 must be 1 or 2");
  EXPECT_THROW(Equilibrate(LogJob(), options), InputError);
}

}  // namespace
}  // namespace sorbtrace::equilibrate
