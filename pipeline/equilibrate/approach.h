// Internal to the equilibrate stage: the residual approach to equilibrium of a step that
// stopped on its criterion.
//
// Why: a criterion (ISO 12571:2021 constant mass, from memory, clause not confirmed: three
// consecutive weighings at least 24 h apart within 0.1 % of the mass; for vapour-sorption logs a
// dm/dt limit such as 0.002 %/min over 10 min, common practice) stops a step while the mass still
// moves towards its equilibrium. With first-order kinetics m(t) = m_eq - A exp(-t/tau) the part
// left is m_eq - m(t) = tau dm/dt: at 0.002 %/min and tau = 90 min, 0.18 % of the dry mass, always
// of one sign (Glass, Boardman & Zelinka 2018, Wood Sci. Technol. 52, showed dm/dt-terminated steps
// under-read the equilibrium moisture content of wood by up to about 1 % MC). A bias of known sign
// and estimable size is corrected, and the correction's uncertainty enters the budget (JCGM
// 100:2008, 3.2.4: "the result of a measurement has been corrected for all recognized significant
// systematic effects"); leaving it as an uncertainty component alone would keep every point biased
// to one side and inflate U without centring it.
//
// How (from the step's own trace):
//  - the time constant and asymptote come from the kinetic-model average of FitExponentialTail
//    (one and two exponentials, Fickian sheet from the step start; the between-model spread is
//    the model term, exponential_tail.h) of the step's trace (desiccator: its weighings, preceded
//    by the step's start where it is known, see StepTrace; at least
//    kMinTracePointsForFit points) or of the tail of its block means (log, the same tail the
//    extrapolation of unfinished steps uses); correction = m_inf - m_reported, standard
//    uncertainty from the fit covariance and the model term. Log: Type A from the tail's own
//    residuals (n - 3 degrees of freedom, hundreds of block means). Desiccator: a step has 3-8
//    weighings, and s from its own 1-5 residual degrees of freedom is itself uncertain by
//    30-70 %; the scatter of the weighings about their curves is one property of the balance
//    and handling, so it is pooled over the data set's steps (JCGM 100:2008, 4.2.4: a pooled
//    estimate of a well-characterised measurement), PooledWeighingScatter, and every step's fit
//    uses it (TailFitOptions::point_sd_g). The step's start (the weighing that ended the
//    previous step) adds the large early change: a step that met its criterion after three
//    weighings, read from three late weighings alone, had its time constant fixed by their
//    curvature against the balance noise, and u varied about 40-fold between otherwise alike
//    steps (held-out desiccator jobs: mean u / RMS error 0.58-0.68 at the salts whose steps
//    ended after three weighings; with the start and the pooled scatter 1.00-1.03, and the RMS
//    error 3.7-3.9 times smaller);
//  - desiccator steps no fit describes (order in EstimateDesiccatorApproach): the three chain
//    weighings m2, m1, m0 (times t2 < t1 < t0, differences d2 = m1 - m2, d1 = m0 - m1) fix the
//    first-order time constant by
//    d1 / d2 = (1 - exp(-a/tau)) / (exp(b/tau) - 1), a = t0 - t1, b = t1 - t2 (for a = b:
//    d1/d2 = exp(-a/tau)), and the remaining approach is d1 / (exp(a/tau) - 1) (for a = b:
//    d1 r / (1 - r), r = exp(-a/tau)); its uncertainty by propagating the standard scatter of
//    the weighings (the pooled one, else the balance's stated uncertainty) on each of the three
//    weighings (sensitivities by central differences). Where the kinetic-model fit of the
//    step's own weighings (rule 2 below) failed the lack-of-fit test, those weighings scatter
//    more than the stated value says, and the three of them carry it too: the propagated
//    scatter is that fit's own, s = sqrt(SSR / (n - p)), Type A on n - p degrees of freedom
//    (as rule 3 does with five weighings or more; JCGM 100:2008, 4.2.2), while the curvature is
//    still tested against the stated scatter (a property of the balance and handling). Measured
//    on generated desiccator jobs (steps stopped after 3-4 weighings, 200 replicates,
//    tests/coverage/equilibrium_coverage_test.cc): chain estimates of four-weighing steps had
//    RMS(error / u) 2.4 (53 % within 2u) with the stated scatter, 1.16 (93 %) with this;
//  - when neither resolves a time constant (changes of mixed sign or lost in the noise, a
//    tail without curvature, a time constant beyond max_tau_to_tail_ratio times the trace):
//    no correction; the last change over the criterion interval is the half-width of a
//    rectangular distribution, u = |change| / sqrt(3) (JCGM 100:2008, 4.3.7), as before.
#pragma once

#include <span>
#include <string>
#include <vector>

#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/equilibrate/exponential_tail.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::equilibrate::internal {

// A desiccator trace is fitted from 4 points (3 parameters and one residual to weigh the kinetic
// models by, with the stated scatter; exponential_tail.h), and enters the pooled scatter from 5
// (a residual degree of freedom beyond the weights').
inline constexpr int kMinTracePointsForFit = 4;
inline constexpr int kMinTracePointsForScatter = 5;
// A fit whose weighted residuals exceed the stated scatter at the 1 % upper tail of chi-square
// (n - p degrees of freedom) does not describe the trace (lack of fit; 1 %: common practice).
inline constexpr double kLackOfFitProbability = 0.01;

// A desiccator step's weighings and, where known, its start: the specimen's weighing that ended
// its previous step, taken as the moment it was moved into this step's atmosphere (see
// EquilibrateOptions::previous_weighing_starts_step); its time is then the step start (the
// Fickian sheet's time origin), else the first weighing's.
struct StepTrace {
  std::span<const ingest::Weighing> weighings;
  const ingest::Weighing* start = nullptr;
  // No start to prepend: the step's first weighing was taken at the transfer itself.
  bool first_weighing_is_start = false;
};

// Standard deviation of one weighing about its step's approach curve.
struct WeighingScatter {
  double sd_g = 0.0;
  int degrees_of_freedom = 0;  // 0: infinite (Type B, the balance's stated uncertainty)
  int num_steps = 0;           // steps pooled (0: the balance's stated uncertainty)
};

// s_p^2 = sum_j SSR_j / sum_j nu_j over the steps with at least kMinTracePointsForScatter
// weighings whose kinetic-model fit succeeded (the step's own weighings, without its start: the
// scatter must not depend on that assumption; SSR and nu = n - p of the model with the largest
// weight), nu_p = sum nu_j (JCGM 100:2008, 4.2.4 and G.3.3); with none, the balance's stated
// standard uncertainty as a Type B value.
WeighingScatter PooledWeighingScatter(std::span<const StepTrace> traces, double balance_u_g,
                                      const EquilibrateOptions& options);

// The tail-fit options of the equilibrate options (the one translation, for the extrapolation of
// unfinished steps and the approach estimate); step_start_s: the Fickian sheet's time origin.
TailFitOptions TailOptions(const EquilibrateOptions& options, double step_start_s);

struct ApproachEstimate {
  bool estimated = false;        // a time constant was resolved (correction applied)
  double correction_g = 0.0;     // m_eq - m_reported, signed
  double u_correction_g = 0.0;   // standard uncertainty of the correction (fit or propagation)
  double u_model_g = 0.0;        // model term (one vs two exponentials), fit only
  double time_constant_s = 0.0;  // resolved first-order time constant
  int degrees_of_freedom = 0;    // of u_correction_g (0 = infinite: Type B propagation)
  // Desiccator fit: the corrected mass is the asymptote of a fit through independent
  // weighings, whose uncertainty already holds the scatter of the balance.
  bool includes_weighing_scatter = false;
  std::string method;  // how it was estimated, for the flags
};

// reported_mass_g: the mass the step reports (last weighing); scatter: PooledWeighingScatter of
// its data set. In order, the first that resolves the approach:
//  1. the trace from its start, fitted with the stated scatter, if it passes the lack-of-fit test;
//  2. the step's own weighings, the same way (at least kMinTracePointsForFit when the first was
//     taken at the transfer, else kMinTracePointsForScatter: a four-point fit from a first
//     weighing already inside the approach would lean on its least settled point);
//  3. its own weighings (at least kMinTracePointsForScatter) with the fit's own residual scale
//     (Type A, n - p degrees of freedom: kinetics the models describe only with a scatter
//     larger than the data set's);
//  4. the last three criterion weighings (above), with the stated scatter, or the scatter of the
//     own weighings' fit where rule 2 found it larger (lack of fit).
ApproachEstimate EstimateDesiccatorApproach(const StepTrace& trace, double reported_mass_g,
                                            const WeighingScatter& scatter,
                                            const EquilibrateOptions& options);

// tail: block means of the tail (times increasing); step_start_s: the time of the humidity
// change; reported_mass_g: the final-window mean.
ApproachEstimate EstimateLogApproach(std::span<const double> tail_time_s,
                                     std::span<const double> tail_mass_g, double step_start_s,
                                     double reported_mass_g, const EquilibrateOptions& options);

}  // namespace sorbtrace::equilibrate::internal
