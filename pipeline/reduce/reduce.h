// Reduce stage: equilibrium masses -> moisture content on a dry basis, u = (m - m_dry)/m_dry
// [kg/kg], with a GUM (JCGM 100:2008) uncertainty budget per point: balance, dry mass, RH of
// the step (salt table or sensor), temperature effect on RH, extrapolation. Several specimens
// are combined per step: mean, between-specimen standard deviation, combined uncertainty. A
// step is one condition of a data set (cycle, branch, atmosphere, and its repetition within
// them): specimens whose own step numbers differ (one dried in the oven first) are combined.
//
// Budget of one specimen point (JCGM 100:2008, Eq. 10, inputs taken as uncorrelated):
//   u = (m - m_d) / m_d,  c_m = du/dm = 1/m_d,  c_md = du/dm_d = -m/m_d^2
//   u_bal = sqrt(u_balance^2 + (resolution/sqrt(12))^2)  per weighing: the stated standard
//           uncertainty of the balance combined with the rectangular rounding of its display
//           (JCGM 100:2008, F.2.2.1); counted on both m and m_d (conservative if the stated
//           value already contains the resolution).
//   lines: balance (wet mass) u_bal, c_m;  balance (dry mass) u_bal, c_md (each left out when
//          that mass is the asymptote of a fit through the step's independent weighings,
//          EquilibriumPoint::mass_includes_weighing_scatter: the fit's Type A uncertainty holds
//          the balance scatter already). A vapour-log mass is the asymptote of a tail fit or the
//          mean of the final window, both from many readings: its line carries
//          EquilibriumPoint::u_mass_balance_g (DryMass::u_mass_balance_g for the dry mass), the
//          part of u_bal its readings do not show, sqrt(u_bal^2 - s^2) with s the scatter
//          of one block mean (plus s^2 / n_window for a window mean), not one reading's u_bal
//          on top of the fit's Type A (JCGM 100:2008, 4.3.10; equilibrate.h); left out when 0;
//          dry-mass method  DryMass::u_mass_g, c_md (when > 0; nu = DryMass::degrees_of_freedom);
//          residual drift   EquilibriumPoint::u_mass_drift_g, c_m (when > 0; no time constant
//                           resolved: rectangular, no correction);
//          approach to equilibrium  u_mass_approach_g, c_m (when a correction was applied; nu
//                           of its fit), and its model term u_mass_approach_model_g (one vs two
//                           exponentials) on its own line (see equilibrate/approach.h);
//          extrapolation    EquilibriumPoint::u_mass_extrapolation_g, c_m (when extrapolated;
//                           nu of the tail fit) and the extrapolation model term
//                           u_mass_extrapolation_model_g on its own line.
//   u_c(u) = sqrt(sum (c_i u_i)^2). Treating the wet and dry weighings as uncorrelated
//   overstates u_c slightly when a common balance offset cancels in m - m_d.
// Degrees of freedom and coverage factor (JCGM 100:2008, Annex G): every budget line carries
//   its degrees of freedom nu_i (Type B lines: infinite; Type A lines: those of their
//   estimate). The effective degrees of freedom of u_c follow the Welch-Satterthwaite formula
//   (G.4.1, Eq. G.2b)  nu_eff = u_c^4 / sum_i (c_i u_i)^4 / nu_i, and the expanded uncertainty
//   uses k = t_p(nu_eff), the Student-t quantile with nu_eff truncated to the next lower
//   integer (G.4.1, step 3), p the coverage probability that ReduceOptions::coverage_factor
//   gives for a normal distribution, p = 2 Phi(k) - 1 (k = 2: p = 95.45 %, the column of
//   GUM Table G.2 in which t_p(infinity) = 2). With infinite nu_eff, k = coverage_factor.
// RH budget: RH source (salt table / sensor) with c = 1, temperature effect with
//   u(T) = job temperature standard uncertainty and c = d rh/dT of the source.
// Specimens combined per step (n specimens, u_i their moisture contents, measurement errors
// taken as independent between specimens):
//   mean = sum u_i / n,  s = sqrt(sum (u_i - mean)^2 / (n - 1))  (s = 0 for n = 1)
//   n = 1:  u_c(mean) = u_c(u_1), nu_eff that of the specimen point.
//   n >= 2: u_c(mean)^2 = max(s^2, u_ind^2) / n + sum_q (mean_i c_iq u_iq)^2
//   s^2 / n is the Type A standard uncertainty of the mean (JCGM 100:2008, 4.2.3); it holds
//   every effect that varies from specimen to specimen: the balance scatter, the Type A parts
//   of the tail fits, the dry-mass determination, and the material's specimen-to-specimen
//   variability, so those budget lines are not added again (JCGM 100:2008, 4.3.10: no double
//   counting). u_ind^2 = mean over the specimens of u_c(u_i)^2 - u_sys,i^2 (their evaluated
//   independent parts) is the floor: a spread of 2-3 specimens that happen to agree does not
//   make them vanish. The sum runs over the lines q that act alike on every specimen of the
//   step and so do not show in the spread (BudgetLine::systematic: residual drift,
//   kinetic-model terms), each the mean of its contributions, taken as fully correlated.
//   Welch-Satterthwaite over s/sqrt(n) (nu = n - 1; infinite for the floor) and the rest: with 2-3
//   specimens nu_eff is 1-2 and k = t_p(nu_eff) is 4.5-14 (JCGM 100:2008, G.3, G.4). RH of the
//   step: mean over specimens, with u = sqrt(mean u(rh_i)^2) (same atmosphere: fully correlated,
//   not averaged down).
// Specimens that differ from each other (a common specimen term). The same specimens are
//   weighed at every step of a data set, so a specimen that holds 3 % more water than the
//   material's mean does so at every RH: that part of the spread is common to all points of the
//   data set (correlated inputs, JCGM 100:2008, 5.2 and F.1.2.3), the rest varies from step to
//   step. Model (two-way layout specimen x step, one observation per cell, random specimen
//   effect; variance components as in ISO 5725-2:2019, here of a two-way layout):
//     ln u_si = ln U_i + d_s + e_si,   d_s ~ (0, sigma_d^2),  e_si ~ (0, phi v_i),
//   i.e. u_si = U_i (1 + delta_s) + e'_si to first order (relative specimen factor delta_s).
//   v_i = u_ind,i^2 / mean_i^2 is the step's evaluated independent part (u_ind,i^2 = mean over its
//   specimens of u_c^2 - u_sys^2), relative: the step-to-step errors are not alike at every RH
//   (a balance error weighs most where little water is held), so the steps are weighted
//   w_i = 1 / v_i and the data estimate only the common scale phi of the evaluated parts (as a
//   Birge ratio). Estimator (weighted least squares of the additive two-way model, with its
//   expected mean squares; for equal weights the two-way analysis of variance without
//   replication, D. C. Montgomery, Design and Analysis of Experiments, from memory): over the
//   complete block of S specimens x I steps, W = sum_i w_i,
//     d_s = sum_i w_i (y_si - ybar_.i) / W,   r_si = y_si - ybar_.i - d_s,
//     phi = sum_si w_i r_si^2 / ((S - 1)(I - 1))           (nu_e = (S - 1)(I - 1)),
//     MS_S = sum_s d_s^2 / (S - 1),  E[MS_S] = sigma_d^2 + phi / W,
//     sigma_d^2 = max(0, MS_S - phi / W)   (the usual truncation of a negative estimate),
//     nu_d = (MS_S - phi/W)^2 / (MS_S^2 / (S - 1) + (phi/W)^2 / nu_e)  (Satterthwaite 1946 for a
//       difference of mean squares; at most S - 1, about S - 1 when the specimen term dominates).
//   Complete block: every non-drying step of the data set (all branches and cycles) at which
//   every specimen of the data set was combined, with every moisture content > 0 (the log
//   scale) and v_i > 0. The term applies when S >= 2 and the block has I >= 2 steps; otherwise
//   (one specimen, or specimens missing at all but one step) the rule above is kept unchanged.
//   Where it applies, every combined point of the data set (also those with specimens missing:
//   their mean has n_i < S specimens) gets, in place of the spread line:
//     specimen line (common to every step)   standard uncertainty sigma_d (relative, unit 1),
//       c = mean_i / sqrt(n_i), nu = nu_d   (left out when sigma_d = 0);
//     independent line  sqrt(r) u_ind,i, c = 1 / sqrt(n_i), with r and its nu from two estimates
//       of the same variances: phi (nu_e) from the spread, and the evaluated parts themselves,
//       uncertain through their Type A lines (a desiccator's approach lines rest on one pooled
//       weighing scatter, equilibrate/approach.h): nu_ev from u(u^2)/u^2 = sqrt(2 / nu) per
//       specimen (JCGM 100:2008, E.4.3 and G.4.2; nu of its lines that are not systematic, G.2b),
//       added with the variances as weights over a step's specimens (one pooled scatter: fully
//       correlated) and averaged over the block's steps (phi weighs every step alike),
//       nu_ev = 2 / rel^2 (infinite when every such line is Type B). Then
//       - phi above the upper 1 % point of F(nu_e, nu_ev) (chi-square(nu_e) / nu_e for infinite
//         nu_ev; a Birge-ratio test, R. T. Birge, Phys. Rev. 40 (1932) 207, from memory; 1 %:
//         common practice, as the lack-of-fit test of approach.h): the budgets miss an effect
//         the specimens show, r = phi, nu = nu_e (IndependentEstimate::kObserved);
//       - else, nu_ev finite: both estimate one variance, pooled by their degrees of freedom,
//         r = (nu_ev + nu_e phi) / (nu_ev + nu_e), nu = nu_ev + nu_e (a pooled variance, JCGM
//         100:2008, 4.2.4 and G.3.3, as the pooled weighing scatter of approach.h; kPooled);
//       - else: r = 1, nu infinite (the evaluated parts; kEvaluated).
//       Why not max(phi, 1) (the rule before): the evaluated parts of one replicate are off by
//       their own sampling error (a pooled scatter on ~20 degrees of freedom: about 15 %), and phi
//       sees it; keeping the larger of the two adopted phi only where it raised u. Measured on
//       generated desiccator jobs (3 specimens with their own time constants, steps stopped after
//       3-4 weighings, 200 replicates; tests/coverage/equilibrium_coverage_test.cc): in the 58 %
//       of replicates with phi <= 1 the specimen points' RMS(error / u) was 0.92, 1.23 in the
//       others; the combined points on the floor had RMS z 0.85 and covered 98.8 %, those with
//       sqrt(phi) (k of nu_e = 10: 2.3) 98.4 %, all points 98.7 %; with this rule (and the
//       three-weighing chain of approach.h propagating the scatter its step shows) 96.75 %;
//   plus the systematic lines as above. The fit stage weights each point with
//   u_independent (the root sum of squares of every other line) and carries the specimen line as
//   one factor per specimen, correlated across the points (see pipeline/fit/fit_stage.h).
// Volumetric content psi = u rho_dry / rho_w(T) (rho_w: Kell 1975), u(psi) = u_c rho_dry/rho_w,
//   rho_dry the mean stated bulk density (density uncertainty not stated: not included).
// A negative moisture content is an InputError (at the step) when it is below zero by more
//   than k u_c and the job does not set negative_moisture_expected; within k u_c it is
//   flagged (balance noise at very low humidity).
#pragma once

#include <limits>
#include <string>
#include <vector>

#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::reduce {

// Set by the run stage from the job file ([equilibrium] include_not_equilibrated) and the
// report template (coverage factor).
struct ReduceOptions {
  double coverage_factor = 2.0;           // k for expanded uncertainties (about 95 %)
  bool include_not_equilibrated = false;  // if true, such points are kept but flagged

  bool IsValid(std::string* error) const;
};

// One line of an uncertainty budget: u(x_i), sensitivity c_i, contribution |c_i| u(x_i).
struct BudgetLine {
  std::string quantity;               // e.g. "balance (wet mass)", "dry mass", "RH (salt table)"
  double standard_uncertainty = 0.0;  // in the unit of the input quantity
  std::string unit;
  double sensitivity = 0.0;   // d(output)/d(input)
  double contribution = 0.0;  // |c_i| u(x_i), in the unit of the output
  // Degrees of freedom of u(x_i); infinity for a Type B evaluation taken as exactly known.
  double degrees_of_freedom = std::numeric_limits<double>::infinity();
  // Acts alike on every specimen of a step (not seen in their spread; see the combination).
  bool systematic = false;
};

// Welch-Satterthwaite effective degrees of freedom of sqrt(sum contribution_i^2) (JCGM
// 100:2008, G.4.1, Eq. G.2b); infinity when every line is Type B (or u_c = 0).
double EffectiveDegreesOfFreedom(const std::vector<BudgetLine>& lines);

// Coverage factor k_p = t_p(nu) for the coverage probability p that nominal_k gives for a normal
// distribution (p = 2 Phi(nominal_k) - 1); nu truncated to the next lower integer, at least 1
// (JCGM 100:2008, G.3.4 and G.4.1); nominal_k itself for infinite nu. Student-t quantile from
// Boost.Math.
double CoverageFactor(double degrees_of_freedom, double nominal_k);
// k_p = t_p(nu) for a given coverage probability p (no truncation of nu), e.g. p = 0.95.
double StudentTCoverageFactor(double degrees_of_freedom, double coverage_probability);

// Which estimate of the specimens' independent parts a data set's independent line adopts (see
// the header comment).
enum class IndependentEstimate {
  kEvaluated,  // the evaluated parts (phi consistent with them, every line Type B)
  kPooled,     // the evaluated parts pooled with phi by degrees of freedom
  kObserved,   // phi alone (significantly above the evaluated parts)
};

// The specimen term of one data set (see the header comment: two-way decomposition).
struct SpecimenTerm {
  std::string dataset_id;
  std::vector<std::string> specimen_ids;  // the S specimens of the complete block
  int num_steps = 0;                      // I, the steps of the complete block
  // sigma_d: relative standard deviation of one specimen's factor (1 + delta_s), and nu_d.
  double relative_sd = 0.0;
  double degrees_of_freedom = std::numeric_limits<double>::infinity();
  // phi: the step-to-step scatter over the specimens' evaluated independent parts (a variance
  // ratio, as a Birge ratio squared), and its nu_e.
  double independent_variance_ratio = 1.0;
  double residual_degrees_of_freedom = std::numeric_limits<double>::infinity();
  // nu_ev of the evaluated independent parts (infinity: all Type B), the estimate adopted, the
  // factor it applies to the evaluated variances u_ind,i^2 and the degrees of freedom of the
  // independent line (infinity for kEvaluated).
  double evaluated_degrees_of_freedom = std::numeric_limits<double>::infinity();
  IndependentEstimate independent_estimate = IndependentEstimate::kEvaluated;
  double adopted_variance_ratio = 1.0;
  double independent_degrees_of_freedom = std::numeric_limits<double>::infinity();
};

// Moisture content of one specimen at one equilibrium.
struct SpecimenPoint {
  std::string dataset_id;
  std::string specimen_id;
  int step_index = 0;
  std::string step_label;
  ingest::Branch branch = ingest::Branch::kAdsorption;
  int cycle = 0;
  double temperature_K = 0.0;
  double rh_fraction = 0.0;
  double u_rh_fraction = 0.0;  // standard, incl. temperature effect
  std::string rh_source;
  double mass_g = 0.0;  // equilibrium (or extrapolated) mass
  double dry_mass_g = 0.0;
  double moisture_kg_per_kg = 0.0;
  double u_moisture_kg_per_kg = 0.0;           // standard, combined
  double expanded_u_moisture_kg_per_kg = 0.0;  // coverage_factor * u
  // Welch-Satterthwaite over the moisture budget (infinity: all Type B) and k = t_p(nu_eff).
  double effective_dof = std::numeric_limits<double>::infinity();
  double coverage_factor = 2.0;
  // Root sum of squares of the systematic lines of moisture_budget (kg/kg).
  double u_systematic_kg_per_kg = 0.0;
  std::vector<BudgetLine> moisture_budget;
  std::vector<BudgetLine> rh_budget;
  double time_to_equilibrium_s = 0.0;
  bool equilibrated = false;
  bool extrapolated = false;
  bool excluded = false;  // not combined into an IsothermPoint (not equilibrated)
  std::vector<std::string> flags;
  SourceLocation where;  // first line of the step in its file
};

// The material's isotherm point at one step: specimens combined.
struct IsothermPoint {
  std::string dataset_id;
  int step_index = 0;
  std::string step_label;
  ingest::Branch branch = ingest::Branch::kAdsorption;
  int cycle = 0;
  double temperature_K = 0.0;
  double rh_fraction = 0.0;
  double u_rh_fraction = 0.0;                  // standard
  double expanded_u_rh_fraction = 0.0;         // k * u
  double moisture_kg_per_kg = 0.0;             // mean over specimens
  double u_moisture_kg_per_kg = 0.0;           // combined standard (rule above)
  double expanded_u_moisture_kg_per_kg = 0.0;  // coverage_factor * u
  // Welch-Satterthwaite over moisture_budget (see above); infinity when no Type A part. The same k
  // applies to the volumetric content.
  double effective_dof = std::numeric_limits<double>::infinity();
  double coverage_factor = 2.0;
  double between_specimen_sd_kg_per_kg = 0.0;
  // Index into ReducedIsotherms::specimen_terms of the data set's specimen term (-1: none), the
  // contribution of its specimen line, mean * sigma_d / sqrt(num_specimens) (0 without one),
  // and the rest of u, sqrt(u^2 - u_specimen_common^2), with which the fit stage weights the
  // point (equal to u_moisture_kg_per_kg without a specimen term).
  int specimen_term = -1;
  double u_specimen_common_kg_per_kg = 0.0;
  double u_independent_kg_per_kg = 0.0;
  // The part of u_independent_kg_per_kg that is the pooled Type A estimate of the specimen term
  // (the independent line sqrt(r) u_ind,i / sqrt(n_i) where it is pooled or observed, with
  // SpecimenTerm::independent_degrees_of_freedom; 0 where the evaluated parts are kept or there
  // is no specimen term). The rest
  // of u_independent is Type B (infinite nu). The fit stage gives each part its own degrees of
  // freedom in Welch-Satterthwaite (pipeline/fit/fit_stage.h).
  double u_pooled_scatter_kg_per_kg = 0.0;
  // The budget of u_moisture_kg_per_kg (root sum of squares of the contributions is u).
  std::vector<BudgetLine> moisture_budget;
  int num_specimens = 0;
  std::vector<std::string> specimen_ids;
  // The specimen points combined here: indices into ReducedIsotherms::specimen_points (the one
  // record of which specimen point belongs to which isotherm point; later stages read it
  // rather than matching step numbers, which differ between specimens).
  std::vector<int> specimen_point_indices;
  bool has_volumetric = false;
  double volumetric_m3_per_m3 = 0.0;  // u * rho_dry / rho_water, when a density is given
  double u_volumetric_m3_per_m3 = 0.0;
  double time_to_equilibrium_s = 0.0;  // longest among specimens
  bool equilibrated = false;           // all specimens equilibrated
  bool extrapolated = false;           // any specimen extrapolated
  std::vector<std::string> flags;
};

// A retention point passed through with its equivalent RH (Kelvin), for joint fits.
struct RetentionIsothermPoint {
  std::string specimen_id;
  double capillary_pressure_Pa = 0.0;
  double equivalent_rh_fraction = 0.0;
  double temperature_K = 0.0;
  double moisture_kg_per_kg = 0.0;
  double u_moisture_kg_per_kg = 0.0;
  ingest::Branch branch = ingest::Branch::kDesorption;
};

struct ReduceSummary {
  std::vector<Diagnostic> warnings;
  int num_points = 0;
  int num_excluded = 0;  // not equilibrated and not included
};

struct ReducedIsotherms {
  double coverage_factor = 2.0;
  std::vector<SpecimenPoint> specimen_points;
  std::vector<IsothermPoint> points;         // sorted by dataset, cycle, branch, step
  std::vector<SpecimenTerm> specimen_terms;  // one per data set where the term applies
  std::vector<RetentionIsothermPoint> retention;
  ReduceSummary summary;
};

ReducedIsotherms Reduce(const ingest::IngestResult& ingested,
                        const equilibrate::EquilibriumSet& equilibria,
                        const ReduceOptions& options);

}  // namespace sorbtrace::reduce
