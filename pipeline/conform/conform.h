// Statements of conformity: does a measured quantity (value y, standard uncertainty u) meet a
// specification (a tolerance interval), under a named decision rule, and at what risk?
//
// Knowledge of the measurand Y after the measurement (JCGM 106:2012; GUM JCGM 100:2008
// Annex G.3): (Y - y)/u follows Student's t distribution with nu = nu_eff degrees of freedom
// (Welch-Satterthwaite, GUM G.4), or the standard normal distribution when nu is infinite
// (JCGM 106 §7 works with the normal). F below is that distribution's cumulative function.
//
//   expanded uncertainty   U = k u                                    (GUM 6.2.1)
//   tolerance interval     [T_L, T_U]; one of the limits may be infinite (a one-sided
//                          specification "<= T_U" or ">= T_L")
//   conformance probability
//                          p_c = F((T_U - y)/u) - F((T_L - y)/u)       (JCGM 106 §7)
//                          with F(+inf) = 1, F(-inf) = 0; for u = 0, p_c = 1 if
//                          T_L <= y <= T_U, else 0
//   acceptance interval    [A_L, A_U] = [T_L + w, T_U - w], guard band w >= 0
//                          (ILAC-G8:09/2019 §4.1; JCGM 106 §8)
//   false acceptance at the acceptance limit
//                          PFA = 1 - p_c(y = A): the probability that the measurand lies
//                          outside the tolerance interval when the measured value sits on
//                          an acceptance limit A (the larger over the finite limits). For
//                          a one-sided limit and normal F: PFA = 1 - Phi(w/u) = 1 - Phi(r k)
//                          for w = r U: w = U, k = 2 gives 1 - Phi(2) = 0.0228, the
//                          "< 2.5 %" of guarded acceptance (ILAC-G8:09/2019 §4.2.2).
//
// Decision rules:
//  - simple acceptance (ILAC-G8:09/2019 §4.2.1, "shared risk", w = 0): pass if
//    T_L <= y <= T_U, fail otherwise. The risk at the limit is 50 %.
//  - guarded acceptance (ILAC-G8:09/2019 §4.2.2): w = r U with r = 1 (the guide's w = U) or a
//    stated fraction; pass if A_L <= y <= A_U, fail otherwise. With `non_binary` (§4.2.3)
//    a result inside [T_L - w, T_U + w] but outside the acceptance interval is inconclusive
//    (the guide's "conditional pass" and "conditional fail"); fail only beyond T +- w.
//  - conformance probability (JCGM 106:2012 §7 conformance probability, §8 acceptance
//    intervals; section numbers from memory): pass if p_c >= p_required; fail if
//    p_c <= 1 - p_required (non-conformity at least as probable as p_required: this
//    program's symmetric choice); inconclusive in between. The acceptance limits are the
//    measured values at which p_c = p_required (w = u F^-1(p_required) for a one-sided
//    limit); when even the interval's midpoint gives p_c < p_required, no value can pass
//    and the acceptance interval is empty (NaN limits).
//
// Worked figures (tests/conform): w = 0.83 U with k = 2 puts the acceptance limit 1.66 u
// inside the tolerance limit, PFA = 1 - Phi(1.66) = 0.0485, under 5 % (a one-sided 95 %
// bound); JCGM 106's example y = 13.6, u = 1.8, [12.5, 16.3] gives p_c = 0.6626
// (recomputed).
//
// Limits are inclusive: a measured value exactly on an acceptance limit passes.
// Units: y, u, the limits, U, w and the acceptance limits share the quantity's unit.
#pragma once

#include <limits>
#include <span>
#include <string>
#include <string_view>

namespace sorbtrace::conform {

enum class DecisionRule {
  kSimpleAcceptance,        // ILAC-G8:09/2019 §4.2.1
  kGuardedAcceptance,       // ILAC-G8:09/2019 §4.2.2 (binary) / §4.2.3 (non-binary)
  kConformanceProbability,  // JCGM 106:2012: required probability of conformity
};

enum class Decision { kPass, kFail, kInconclusive };

// "pass", "fail", "inconclusive".
const char* DecisionName(Decision decision);

struct ToleranceInterval {
  double lower = -std::numeric_limits<double>::infinity();  // T_L
  double upper = std::numeric_limits<double>::infinity();   // T_U
};

struct Measurement {
  double value = 0.0;                 // y
  double standard_uncertainty = 0.0;  // u >= 0
  double coverage_factor = 2.0;       // k > 0; U = k u
  // nu_eff >= 1; infinity: the normal distribution.
  double effective_degrees_of_freedom = std::numeric_limits<double>::infinity();
};

struct Options {
  DecisionRule rule = DecisionRule::kSimpleAcceptance;
  // Guarded acceptance: w = r U. ILAC-G8:09/2019 §4.2.2 takes r = 1; 0 < r <= 10 accepted
  // (a guard band of ten expanded uncertainties is far beyond any published rule).
  double guard_band_multiplier = 1.0;
  // Guarded acceptance: the non-binary statement of ILAC-G8:09/2019 §4.2.3.
  bool non_binary = false;
  // Conformance-probability rule: 0.5 < p_required < 1 (0.95 common practice).
  double required_conformance_probability = 0.95;

  bool IsValid(std::string* message) const;
};

struct Summary {
  bool valid = false;
  std::string message;    // why the input is invalid (empty when valid)
  std::string rule;       // e.g. "guarded acceptance, w = 1 U (ILAC-G8:09/2019 §4.2.2)"
  std::string statement;  // e.g. "pass: y = 7.6 inside the acceptance interval [-inf, 7.7]"
};

struct Result {
  Decision decision = Decision::kInconclusive;
  double expanded_uncertainty = 0.0;  // U = k u
  double guard_band = 0.0;            // w (NaN if the acceptance interval is empty)
  double acceptance_lower = -std::numeric_limits<double>::infinity();  // A_L (NaN: empty)
  double acceptance_upper = std::numeric_limits<double>::infinity();   // A_U (NaN: empty)
  double conformance_probability = 0.0;                                // p_c at y
  // PFA at the acceptance limit (NaN if the acceptance interval is empty).
  double false_acceptance_probability_at_limit = 0.0;
  Summary summary;
};

// Checks measurement (finite y, finite u >= 0, k > 0, nu_eff >= 1 or infinite), tolerance
// (T_L < T_U, not both infinite, neither NaN) and options. False with a message naming the
// offending quantity and what is allowed.
bool IsValid(const Measurement& measurement, const ToleranceInterval& tolerance,
             const Options& options, std::string* message);

// Decides; never throws. Invalid input: summary.valid false with the message, decision
// inconclusive, the numbers NaN.
Result AssessConformity(const Measurement& measurement, const ToleranceInterval& tolerance,
                        const Options& options);

// Hygroscopicity classes of the European Pharmacopoeia (general chapter 5.11, characters
// section in monographs): the increase in mass [%] after 24 h at 25 °C / 80 % RH places a
// substance in one class, each class the half-open interval [lower, upper):
//   non-hygroscopic       [0, 0.2)       slightly hygroscopic  [0.2, 2)
//   hygroscopic           [2, 15)        very hygroscopic      [15, inf)
// ("deliquescent", enough water to form a liquid, is not a mass limit and is not listed).
// The 24 h / 25 °C / 80 % RH conditions are confirmed by R. Allada, Asian J. Pharm. (abstract
// at asiapharmaceutics.info, article 867); the 0.2 / 2 / 15 % limits are those of
// J. Swarbrick (ed.), Encyclopedia of Pharmaceutical Technology, 3rd ed., 2007, vol. 1 (classes
// I-IV: < 0.2, 0.2-2, 2-15, > 15 % w/w after 24 h at about 80 % RH), read in a stored public
// page quoting that text (scribd document 405658347); the Ph. Eur. chapter itself was not seen.
// The one table of the limits: the pores stage classifies with it, a [[specification]]
// "class at most X" takes its upper limit from it.
struct HygroscopicityClass {
  std::string_view name;  // as the sheet prints it and a job file writes it
  double lower_percent;   // inclusive
  double upper_percent;   // exclusive; infinity for the last class
};

// The four classes in increasing order of mass increase.
std::span<const HygroscopicityClass> HygroscopicityClasses();

// The class of a mass increase [%] (below 0 counts as non-hygroscopic).
std::string_view HygroscopicityClassOf(double mass_increase_percent);

// The class called `name` (exact, as listed above), or nullptr.
const HygroscopicityClass* FindHygroscopicityClass(std::string_view name);

}  // namespace sorbtrace::conform
