#include "pipeline/conform/conform.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <string>

#include "pipeline/conform/internal/probability.h"

namespace sorbtrace::conform {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInfinity = std::numeric_limits<double>::infinity();
// Bounds of the options (see conform.h).
constexpr double kMaxGuardBandMultiplier = 10.0;
constexpr double kMinDegreesOfFreedom = 1.0;  // Student t is defined for nu > 0; nu_eff >= 1

std::string Number(double x) {
  if (std::isinf(x)) return x > 0 ? "+inf" : "-inf";
  return fmt::format("{:.6g}", x);
}

std::string RuleText(const Options& options) {
  switch (options.rule) {
    case DecisionRule::kSimpleAcceptance:
      return "simple acceptance, w = 0 (ILAC-G8:09/2019 §4.2.1)";
    case DecisionRule::kGuardedAcceptance:
      return fmt::format("guarded acceptance, w = {} U ({}, ILAC-G8:09/2019 §{})",
                         Number(options.guard_band_multiplier),
                         options.non_binary ? "non-binary" : "binary",
                         options.non_binary ? "4.2.3" : "4.2.2");
    case DecisionRule::kConformanceProbability:
      return fmt::format("required conformance probability {} (JCGM 106:2012)",
                         Number(options.required_conformance_probability));
  }
  return "unknown rule";
}

bool InInterval(double y, double lower, double upper) { return y >= lower && y <= upper; }

// The guard band w and the acceptance limits of the rule; NaN limits: empty interval.
void SetAcceptanceInterval(const Measurement& m, const ToleranceInterval& t, const Options& options,
                           Result* r) {
  const double u = m.standard_uncertainty;
  const double nu = m.effective_degrees_of_freedom;
  double w = 0.0;
  if (options.rule == DecisionRule::kGuardedAcceptance) {
    w = options.guard_band_multiplier * r->expanded_uncertainty;
  } else if (options.rule == DecisionRule::kConformanceProbability && u > 0.0) {
    const double p = options.required_conformance_probability;
    if (std::isinf(t.lower) || std::isinf(t.upper)) {
      w = u * internal::StandardQuantile(p, nu);  // one-sided: F((T - A)/u) = p
    } else {
      w = t.upper - internal::UpperAcceptanceLimitTwoSided(u, nu, t.lower, t.upper, p);
    }
  }
  r->guard_band = w;
  r->acceptance_lower = t.lower + w;
  r->acceptance_upper = t.upper - w;
  if (std::isnan(w) || r->acceptance_lower > r->acceptance_upper) {
    r->acceptance_lower = r->acceptance_upper = kNaN;
  }
}

// 1 - p_c with the measured value on each finite acceptance limit; the larger.
double FalseAcceptanceAtLimit(const Measurement& m, const ToleranceInterval& t, const Result& r) {
  if (std::isnan(r.acceptance_lower)) return kNaN;
  double pfa = 0.0;
  for (const double a : {r.acceptance_lower, r.acceptance_upper}) {
    if (std::isinf(a)) continue;
    const double p_c = internal::ConformanceProbability(
        a, m.standard_uncertainty, m.effective_degrees_of_freedom, t.lower, t.upper);
    pfa = std::max(pfa, 1.0 - p_c);
  }
  return pfa;
}

Decision Decide(const Measurement& m, const ToleranceInterval& t, const Options& options,
                const Result& r) {
  const double y = m.value;
  const bool accepted =
      !std::isnan(r.acceptance_lower) && InInterval(y, r.acceptance_lower, r.acceptance_upper);
  switch (options.rule) {
    case DecisionRule::kSimpleAcceptance:
      return accepted ? Decision::kPass : Decision::kFail;
    case DecisionRule::kGuardedAcceptance:
      if (accepted) return Decision::kPass;
      if (!options.non_binary) return Decision::kFail;
      return InInterval(y, t.lower - r.guard_band, t.upper + r.guard_band) ? Decision::kInconclusive
                                                                           : Decision::kFail;
    case DecisionRule::kConformanceProbability: {
      const double p = options.required_conformance_probability;
      if (r.conformance_probability >= p) return Decision::kPass;
      if (r.conformance_probability <= 1.0 - p) return Decision::kFail;
      return Decision::kInconclusive;
    }
  }
  return Decision::kInconclusive;
}

std::string Statement(const Measurement& m, const Result& r) {
  std::string where;
  if (std::isnan(r.acceptance_lower)) {
    where = "no measured value can be accepted (empty acceptance interval)";
  } else {
    where = fmt::format("acceptance interval [{}, {}]", Number(r.acceptance_lower),
                        Number(r.acceptance_upper));
  }
  return fmt::format("{}: y = {}, U = {}, {}; conformance probability {:.4f}",
                     DecisionName(r.decision), Number(m.value), Number(r.expanded_uncertainty),
                     where, r.conformance_probability);
}

}  // namespace

const char* DecisionName(Decision decision) {
  switch (decision) {
    case Decision::kPass:
      return "pass";
    case Decision::kFail:
      return "fail";
    case Decision::kInconclusive:
      return "inconclusive";
  }
  return "inconclusive";
}

bool Options::IsValid(std::string* message) const {
  auto fail = [&](const std::string& text) {
    if (message != nullptr) *message = text;
    return false;
  };
  if (rule == DecisionRule::kGuardedAcceptance &&
      !(guard_band_multiplier > 0.0 && guard_band_multiplier <= kMaxGuardBandMultiplier)) {
    return fail(fmt::format("guard-band multiplier r = {}: expected 0 < r <= {} (w = r U)",
                            Number(guard_band_multiplier), Number(kMaxGuardBandMultiplier)));
  }
  if (rule == DecisionRule::kConformanceProbability &&
      !(required_conformance_probability > 0.5 && required_conformance_probability < 1.0)) {
    return fail(fmt::format("required conformance probability {}: expected 0.5 < p < 1",
                            Number(required_conformance_probability)));
  }
  return true;
}

bool IsValid(const Measurement& m, const ToleranceInterval& t, const Options& options,
             std::string* message) {
  auto fail = [&](const std::string& text) {
    if (message != nullptr) *message = text;
    return false;
  };
  if (!std::isfinite(m.value)) return fail("measured value y is not a finite number");
  if (!(std::isfinite(m.standard_uncertainty) && m.standard_uncertainty >= 0.0)) {
    return fail(fmt::format("standard uncertainty u = {}: expected a finite u >= 0",
                            Number(m.standard_uncertainty)));
  }
  if (!(std::isfinite(m.coverage_factor) && m.coverage_factor > 0.0)) {
    return fail(fmt::format("coverage factor k = {}: expected k > 0", Number(m.coverage_factor)));
  }
  if (!(m.effective_degrees_of_freedom >= kMinDegreesOfFreedom)) {  // also NaN
    return fail(fmt::format("effective degrees of freedom {}: expected >= 1 or infinite",
                            Number(m.effective_degrees_of_freedom)));
  }
  if (std::isnan(t.lower) || std::isnan(t.upper)) return fail("a tolerance limit is NaN");
  if (std::isinf(t.lower) && std::isinf(t.upper)) {
    return fail("no tolerance limit: expected a lower limit, an upper limit or both");
  }
  if (!(t.lower < t.upper)) {
    return fail(fmt::format("tolerance interval [{}, {}]: expected lower < upper", Number(t.lower),
                            Number(t.upper)));
  }
  return options.IsValid(message);
}

Result AssessConformity(const Measurement& measurement, const ToleranceInterval& tolerance,
                        const Options& options) {
  Result r;
  r.summary.rule = RuleText(options);
  if (!IsValid(measurement, tolerance, options, &r.summary.message)) {
    r.expanded_uncertainty = r.guard_band = r.conformance_probability = kNaN;
    r.acceptance_lower = r.acceptance_upper = r.false_acceptance_probability_at_limit = kNaN;
    r.summary.statement = "not assessed: " + r.summary.message;
    return r;
  }
  r.summary.valid = true;
  r.expanded_uncertainty = measurement.coverage_factor * measurement.standard_uncertainty;
  r.conformance_probability = internal::ConformanceProbability(
      measurement.value, measurement.standard_uncertainty, measurement.effective_degrees_of_freedom,
      tolerance.lower, tolerance.upper);
  SetAcceptanceInterval(measurement, tolerance, options, &r);
  r.false_acceptance_probability_at_limit = FalseAcceptanceAtLimit(measurement, tolerance, r);
  r.decision = Decide(measurement, tolerance, options, r);
  r.summary.statement = Statement(measurement, r);
  return r;
}

namespace {

// Ph. Eur. 5.11 class limits [% mass increase] (sources in conform.h).
constexpr HygroscopicityClass kHygroscopicityClasses[] = {
    {"non-hygroscopic", 0.0, 0.2},
    {"slightly hygroscopic", 0.2, 2.0},
    {"hygroscopic", 2.0, 15.0},
    {"very hygroscopic", 15.0, kInfinity},
};

}  // namespace

std::span<const HygroscopicityClass> HygroscopicityClasses() { return kHygroscopicityClasses; }

std::string_view HygroscopicityClassOf(double mass_increase_percent) {
  std::string_view name = kHygroscopicityClasses[0].name;
  for (const HygroscopicityClass& c : kHygroscopicityClasses) {
    if (mass_increase_percent >= c.lower_percent) name = c.name;
  }
  return name;
}

const HygroscopicityClass* FindHygroscopicityClass(std::string_view name) {
  for (const HygroscopicityClass& c : kHygroscopicityClasses) {
    if (c.name == name) return &c;
  }
  return nullptr;
}

}  // namespace sorbtrace::conform
