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
//    the model term, exponential_tail.h) of the step's weighings (desiccator,
//    at least kMinWeighingsForFit) or of the tail of its block means (log, the same tail the
//    extrapolation of unfinished steps uses); correction = m_inf - m_reported, standard
//    uncertainty from the fit covariance (Type A, n - 3 degrees of freedom) and the model term;
//  - desiccator steps with fewer weighings: the three chain weighings m2, m1, m0 (times t2 <
//    t1 < t0, differences d2 = m1 - m2, d1 = m0 - m1) fix the first-order time constant by
//    d1 / d2 = (1 - exp(-a/tau)) / (exp(b/tau) - 1), a = t0 - t1, b = t1 - t2 (for a = b:
//    d1/d2 = exp(-a/tau)), and the remaining approach is d1 / (exp(a/tau) - 1) (for a = b:
//    d1 r / (1 - r), r = exp(-a/tau)); its uncertainty by propagating the balance standard
//    uncertainty of the three weighings (sensitivities by central differences);
//  - desiccator steps of several specimens in the same atmosphere at the same time (one
//    desiccator: the steps with the same atmosphere and branch whose weighing periods overlap,
//    grouped by the equilibrate stage) of which one or more met the criterion with fewer than
//    kMinWeighingsForFit weighings: specimens of one material in one desiccator see the same
//    humidity and temperature, so their first-order time constant is one (tau = 4 l^2/(pi^2 D)
//    for sheets of one thickness, Crank 1975, eq. 4.18) while each has its own asymptote and
//    amplitude. One fit through every weighing of every specimen of the group that met its
//    criterion, m_j(t) = a_j - b_j exp(-(t - t0_j)/tau) (t0_j the specimen's first weighing),
//    2 J + 1 parameters for J specimens: variable projection (for each tau the model is linear
//    in a_j, b_j, solved exactly per specimen; tau by a log-spaced grid and golden-section
//    refinement of the summed squared residuals, G. H. Golub, V. Pereyra, SIAM J. Numer. Anal.
//    10 (1973) 413, from memory). A specimen stopped at its first three weighings then borrows
//    the time constant of the group instead of fixing it by the ratio of two noisy differences
//    (the three-weighing rule above, whose correction and propagated u scatter by an order of
//    magnitude between replicates). Uncertainty: the covariance s^2 (J^T J)^-1 at the optimum
//    (JCGM 100:2008, 4.2; linearised), with s the balance standard uncertainty of one weighing
//    (infinite degrees of freedom). The shared time constant is a hypothesis, tested: when
//    SSR / u_balance^2 exceeds the 95 % quantile of chi-square with nu = N - (2 J + 1) degrees of
//    freedom (common practice), the specimens do not share one tau (thickness or density differ)
//    and the group is not used: each specimen keeps its own estimate (fit or three weighings).
//    Inflating s to SSR / nu instead was measured to overstate u up to 5-fold on generated jobs
//    whose specimens draw their own tau (tests/coverage/equilibrium_coverage_test.cc). The
//    variance of a_j is split by the law of total variance of the Gaussian: the part through the
//    shared time constant, cov(a_j, tau)^2 / var(tau), is common to every specimen of the step
//    and is returned as u_model_g (the reduce stage's line for an input that acts alike on the
//    specimens, budget line "kinetic model"); the rest, var(a_j) - that part, is the specimen's
//    own (u_correction_g; it holds the balance scatter of its weighings). The time constant is
//    resolved when the fitted decay rate 1/tau exceeds twice its standard uncertainty (about
//    95 % one-sided, project choice, as the curvature test above) and tau is at most
//    max_tau_to_tail_ratio times the longest specimen span of the group. Specimens with at least
//    kMinWeighingsForFit weighings keep their own kinetic-model fit (their weighings still
//    inform the shared tau). When the group fit accepts the shared tau but does not resolve it,
//    the three weighings of one specimen do not either: its steps keep the drift term below;
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

// A first-order fit needs 3 parameters and some residual degrees of freedom; 5 is the least
// FitExponentialTail accepts.
inline constexpr int kMinWeighingsForFit = 5;

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
  // weighings, whose Type A uncertainty already holds the scatter of the balance.
  bool includes_weighing_scatter = false;
  std::string method;  // how it was estimated, for the flags
};

// reported_mass_g: the mass the step reports (last weighing). balance_u_g: standard
// uncertainty of one weighing.
ApproachEstimate EstimateDesiccatorApproach(std::span<const ingest::Weighing> weighings,
                                            double reported_mass_g, double balance_u_g,
                                            const EquilibrateOptions& options);

// One specimen of a desiccator group (see the header): its weighings (time order) and the mass
// its step reports (last weighing).
struct GroupMember {
  std::span<const ingest::Weighing> weighings;
  double reported_mass_g = 0.0;
};

// The shared-time-constant fit of a desiccator group (see the header): one estimate per member,
// in order, all estimated or none (estimates not estimated when tau is not resolved); an empty
// vector when the group cannot be used (fewer than two members, too few weighings, or the
// residuals reject the shared time constant): each member keeps its own estimate.
std::vector<ApproachEstimate> EstimateSharedDesiccatorApproach(std::span<const GroupMember> members,
                                                               double balance_u_g,
                                                               const EquilibrateOptions& options);

// tail: block means of the tail (times increasing); step_start_s: the time of the humidity
// change; reported_mass_g: the final-window mean.
ApproachEstimate EstimateLogApproach(std::span<const double> tail_time_s,
                                     std::span<const double> tail_mass_g, double step_start_s,
                                     double reported_mass_g, const EquilibrateOptions& options);

}  // namespace sorbtrace::equilibrate::internal
