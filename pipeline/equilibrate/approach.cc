#include "pipeline/equilibrate/approach.h"

#include <fmt/format.h>

#include <array>
#include <boost/math/distributions/chi_squared.hpp>
#include <cmath>
#include <vector>

#include "pipeline/common/number_text.h"
#include "pipeline/equilibrate/criteria.h"
#include "pipeline/equilibrate/exponential_tail.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::equilibrate::internal {
namespace {

using physics::kSecondsPerHour;
using physics::kSecondsPerMinute;
// Bisection on the decay rate lambda = 1/tau of the three-weighing estimate.
constexpr int kBisections = 200;

// Accepts a fitted tail as an estimate of the remaining approach (the fit refuses time
// constants beyond options.max_tau_to_tail_ratio of its span).
ApproachEstimate FromTailFit(const TailFit& fit, double reported_mass_g, std::string_view what) {
  ApproachEstimate estimate;
  if (!fit.ok) return estimate;
  estimate.estimated = true;
  estimate.correction_g = fit.m_inf_g - reported_mass_g;
  estimate.u_correction_g = fit.u_m_inf_g;
  estimate.u_model_g = fit.u_model_g;
  estimate.time_constant_s = fit.slowest_tau_s;
  estimate.degrees_of_freedom = fit.degrees_of_freedom;
  estimate.method =
      fmt::format("kinetic models fitted to {} {} ({}), tau = {:.3g} h", fit.num_points, what,
                  DescribeCandidates(fit), fit.slowest_tau_s / kSecondsPerHour);
  return estimate;
}

// Remaining approach after m0 from three weighings (see the header); nullopt-like: returns
// false when the changes do not resolve a first-order decay.
bool RemainingFromThree(const std::array<double, 3>& m, double a_s, double b_s, double* remaining,
                        double* tau_s) {
  const double d1 = m[0] - m[1];
  const double d2 = m[1] - m[2];
  if (!(d1 * d2 > 0.0) || !(a_s > 0.0) || !(b_s > 0.0)) return false;
  const double ratio = d1 / d2;
  // f(lambda) = (1 - exp(-a lambda)) / (exp(b lambda) - 1) falls from a/b (lambda -> 0) to 0.
  if (!(ratio < a_s / b_s)) return false;
  auto f = [&](double lambda) { return -std::expm1(-a_s * lambda) / std::expm1(b_s * lambda); };
  double lo = 0.0;
  double hi = 1.0 / a_s;
  constexpr int kMaxDoublings = 200;
  for (int i = 0; i < kMaxDoublings && f(hi) > ratio; ++i) hi *= 2.0;
  for (int i = 0; i < kBisections; ++i) {
    const double mid = 0.5 * (lo + hi);
    (f(mid) > ratio ? lo : hi) = mid;
  }
  const double lambda = 0.5 * (lo + hi);
  if (!(lambda > 0.0)) return false;
  *remaining = d1 / std::expm1(a_s * lambda);
  *tau_s = 1.0 / lambda;
  return std::isfinite(*remaining);
}

// stated: the data set's scatter (the resolution test); propagated: the scatter propagated to
// the remaining approach (the step's own where its weighings contradict the stated one).
ApproachEstimate FromThreeWeighings(std::span<const ingest::Weighing> weighings,
                                    double reported_mass_g, const WeighingScatter& stated,
                                    const WeighingScatter& propagated,
                                    const EquilibrateOptions& options) {
  const double weighing_sd_g = propagated.sd_g;
  ApproachEstimate estimate;
  // The chain of the criterion: the last weighing and the previous ones min_weighing_interval
  // apart (criteria.h); three are needed.
  const std::vector<int> chain = ConstantMassChain(weighings, 3, options);
  if (chain.size() < 3) return estimate;
  std::array<double, 3> m{};
  std::array<double, 3> t{};
  for (std::size_t i = 0; i < 3; ++i) {
    m[i] = weighings[static_cast<std::size_t>(chain[i])].mass_g;
    t[i] = weighings[static_cast<std::size_t>(chain[i])].time_s;
  }
  const double a = t[0] - t[1];
  const double b = t[1] - t[2];
  double remaining = 0.0, tau = 0.0;
  if (!RemainingFromThree(m, a, b, &remaining, &tau)) return estimate;
  // The estimate must be resolved: d2 - d1 (the curvature) larger than twice its standard
  // uncertainty sqrt(6) u_balance (three weighings, coefficients 1, -2, 1); otherwise the
  // ratio d1/d2 is noise and the time constant unbounded.
  const double curvature = (m[1] - m[2]) - (m[0] - m[1]);
  const double kResolved = 2.0;  // about 95 % one-sided, project choice
  if (!(std::abs(curvature) > kResolved * std::sqrt(6.0) * stated.sd_g)) return estimate;
  if (!(tau <= options.max_tau_to_tail_ratio * (t[0] - t[2]))) return estimate;
  // Propagation of the balance uncertainty of each weighing (JCGM 100:2008, Eq. 10) with
  // central-difference sensitivities.
  double variance = 0.0;
  for (std::size_t i = 0; i < 3; ++i) {
    // Step small against the curvature (the scale on which R is nonlinear), large against the
    // rounding of m.
    const double h = std::max(1e-3 * std::abs(curvature), 1e-12 * std::abs(m[i]));
    std::array<double, 3> up = m, down = m;
    up[i] += h;
    down[i] -= h;
    double r_up = 0.0, r_down = 0.0, tau_unused = 0.0;
    if (!RemainingFromThree(up, a, b, &r_up, &tau_unused) ||
        !RemainingFromThree(down, a, b, &r_down, &tau_unused)) {
      return ApproachEstimate{};
    }
    const double c = (r_up - r_down) / (2.0 * h);
    variance += c * c * weighing_sd_g * weighing_sd_g;
  }
  estimate.estimated = true;
  estimate.correction_g = m[0] + remaining - reported_mass_g;
  estimate.u_correction_g = std::sqrt(variance);
  estimate.time_constant_s = tau;
  estimate.degrees_of_freedom = propagated.degrees_of_freedom;
  estimate.method =
      fmt::format("first-order decay through the last three criterion weighings, tau = {:.3g} h",
                  tau / kSecondsPerHour);
  if (propagated.sd_g != stated.sd_g) {
    estimate.method += fmt::format(
        "; the step's own scatter {} g ({} degrees of freedom)",
        common::FormatSignificant(propagated.sd_g, common::kUncertaintySignificantDigits),
        propagated.degrees_of_freedom);
  }
  return estimate;
}

// The weighings of a trace as arrays, from its start (when known and asked for) on.
struct Series {
  std::vector<double> time_s;
  std::vector<double> mass_g;
  bool from_start = false;
};
Series ToSeries(const StepTrace& trace, bool from_start) {
  Series series;
  series.from_start = from_start && trace.start != nullptr;
  if (series.from_start) {
    series.time_s.push_back(trace.start->time_s);
    series.mass_g.push_back(trace.start->mass_g);
  }
  for (const ingest::Weighing& weighing : trace.weighings) {
    series.time_s.push_back(weighing.time_s);
    series.mass_g.push_back(weighing.mass_g);
  }
  return series;
}

// The upper-tail probability of the chi-square of the fit's model with the largest weight,
// weighed by the stated scatter (n - p degrees of freedom).
double LackOfFitProbability(const TailFit& fit, double sd_g) {
  const int dof = fit.residual_degrees_of_freedom;
  if (dof < 1 || !(sd_g > 0.0)) return 1.0;
  return boost::math::cdf(boost::math::complement(
      boost::math::chi_squared_distribution<double>(dof), fit.ssr_g2 / (sd_g * sd_g)));
}

// The kinetic-model fit of the step's own weighings with its own residual scale (Type A).
TailFit FitOwnWeighings(const StepTrace& trace, const EquilibrateOptions& options) {
  const Series own = ToSeries(trace, false);
  return FitExponentialTail(own.time_s, own.mass_g, TailOptions(options, own.time_s.front()));
}

// Approach from a kinetic-model fit of `series` with the stated scatter; not estimated when the
// series is too short, the fit fails or fails the lack-of-fit test.
ApproachEstimate FitWithStatedScatter(const Series& series, double reported_mass_g,
                                      const WeighingScatter& scatter,
                                      const EquilibrateOptions& options,
                                      WeighingScatter* contradicted = nullptr) {
  TailFitOptions tail = TailOptions(options, series.time_s.front());
  tail.point_sd_g = scatter.sd_g;
  tail.point_sd_degrees_of_freedom = scatter.degrees_of_freedom;
  const TailFit fit = FitExponentialTail(series.time_s, series.mass_g, tail);
  if (!fit.ok) return ApproachEstimate{};
  if (LackOfFitProbability(fit, scatter.sd_g) < kLackOfFitProbability) {
    if (contradicted != nullptr && fit.residual_degrees_of_freedom >= 1) {
      *contradicted = WeighingScatter{std::sqrt(fit.ssr_g2 / fit.residual_degrees_of_freedom),
                                      fit.residual_degrees_of_freedom, 0};
    }
    return ApproachEstimate{};
  }
  ApproachEstimate estimate =
      FromTailFit(fit, reported_mass_g,
                  series.from_start ? "weighings from the previous step's last" : "weighings");
  estimate.includes_weighing_scatter = true;
  return estimate;
}

}  // namespace

TailFitOptions TailOptions(const EquilibrateOptions& options, double step_start_s) {
  TailFitOptions tail;
  tail.max_exponential_terms = options.exponential_terms;
  tail.max_tau_to_span = options.max_tau_to_tail_ratio;
  tail.step_start_s = step_start_s;
  return tail;
}

WeighingScatter PooledWeighingScatter(std::span<const StepTrace> traces, double balance_u_g,
                                      const EquilibrateOptions& options) {
  double ssr_g2 = 0.0;
  WeighingScatter scatter;
  for (const StepTrace& trace : traces) {
    if (static_cast<int>(trace.weighings.size()) < kMinTracePointsForScatter) continue;
    const TailFit fit = FitOwnWeighings(trace, options);
    if (!fit.ok || fit.residual_degrees_of_freedom < 1) continue;
    ssr_g2 += fit.ssr_g2;
    scatter.degrees_of_freedom += fit.residual_degrees_of_freedom;
    ++scatter.num_steps;
  }
  if (scatter.num_steps == 0 || !(ssr_g2 > 0.0)) return WeighingScatter{balance_u_g, 0, 0};
  scatter.sd_g = std::sqrt(ssr_g2 / scatter.degrees_of_freedom);
  return scatter;
}

ApproachEstimate EstimateDesiccatorApproach(const StepTrace& trace, double reported_mass_g,
                                            const WeighingScatter& scatter,
                                            const EquilibrateOptions& options) {
  if (trace.start != nullptr) {  // 1. from the start (it makes at least four points)
    ApproachEstimate estimate =
        FitWithStatedScatter(ToSeries(trace, true), reported_mass_g, scatter, options);
    if (estimate.estimated) return estimate;
  }
  // 2. the own weighings; four points only when the first was taken at the transfer.
  const int needed =
      trace.first_weighing_is_start ? kMinTracePointsForFit : kMinTracePointsForScatter;
  WeighingScatter chain_scatter = scatter;
  if (static_cast<int>(trace.weighings.size()) >= needed) {
    ApproachEstimate estimate = FitWithStatedScatter(ToSeries(trace, false), reported_mass_g,
                                                     scatter, options, &chain_scatter);
    if (estimate.estimated) return estimate;
  }
  if (static_cast<int>(trace.weighings.size()) >= kMinTracePointsForScatter) {  // 3.
    ApproachEstimate estimate =
        FromTailFit(FitOwnWeighings(trace, options), reported_mass_g, "weighings");
    estimate.includes_weighing_scatter = estimate.estimated;
    if (estimate.estimated) {
      estimate.method += "; own residual scale";
      return estimate;
    }
  }
  return FromThreeWeighings(trace.weighings, reported_mass_g, scatter, chain_scatter,
                            options);  // 4.
}

ApproachEstimate EstimateLogApproach(std::span<const double> tail_time_s,
                                     std::span<const double> tail_mass_g, double step_start_s,
                                     double reported_mass_g, const EquilibrateOptions& options) {
  if (static_cast<int>(tail_time_s.size()) < options.min_tail_points) return ApproachEstimate{};
  const TailFit fit =
      FitExponentialTail(tail_time_s, tail_mass_g, TailOptions(options, step_start_s));
  const double span_s = tail_time_s.back() - tail_time_s.front();
  ApproachEstimate estimate = FromTailFit(fit, reported_mass_g, "block means");
  if (estimate.estimated) {
    estimate.method += fmt::format(" (tail of {:.3g} min)", span_s / kSecondsPerMinute);
  }
  return estimate;
}

}  // namespace sorbtrace::equilibrate::internal
