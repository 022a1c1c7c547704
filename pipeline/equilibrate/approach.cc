#include "pipeline/equilibrate/approach.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <array>
#include <boost/math/distributions/chi_squared.hpp>
#include <cmath>
#include <limits>
#include <vector>

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

ApproachEstimate FromThreeWeighings(std::span<const ingest::Weighing> weighings,
                                    double reported_mass_g, double balance_u_g,
                                    const EquilibrateOptions& options) {
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
  if (!(std::abs(curvature) > kResolved * std::sqrt(6.0) * balance_u_g)) return estimate;
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
    variance += c * c * balance_u_g * balance_u_g;
  }
  estimate.estimated = true;
  estimate.correction_g = m[0] + remaining - reported_mass_g;
  estimate.u_correction_g = std::sqrt(variance);
  estimate.time_constant_s = tau;
  estimate.degrees_of_freedom = 0;
  estimate.method =
      fmt::format("first-order decay through the last three criterion weighings, tau = {:.3g} h",
                  tau / kSecondsPerHour);
  return estimate;
}

// ---- Shared time constant of a desiccator group (see the header) -------------------------

// Scaled data of the group: time x = (t - t0_j) / T (T the longest span), mass
// y = (m - mean_j) / S (S the largest |m - mean_j|): the fit does not depend on the units.
struct ScaledGroup {
  std::vector<std::vector<double>> x, y;
  std::vector<double> mean_g;
  double time_scale_s = 0.0;
  double mass_scale_g = 0.0;
  std::size_t num_points = 0;
};

ScaledGroup ScaleGroup(std::span<const GroupMember> members) {
  ScaledGroup group;
  for (const GroupMember& member : members) {
    group.time_scale_s = std::max(group.time_scale_s,
                                  member.weighings.back().time_s - member.weighings.front().time_s);
    double mean = 0.0;
    for (const auto& w : member.weighings) mean += w.mass_g;
    mean /= static_cast<double>(member.weighings.size());
    group.mean_g.push_back(mean);
    for (const auto& w : member.weighings) {
      group.mass_scale_g = std::max(group.mass_scale_g, std::abs(w.mass_g - mean));
    }
    group.num_points += member.weighings.size();
  }
  for (std::size_t j = 0; j < members.size(); ++j) {
    std::vector<double> x, y;
    for (const auto& w : members[j].weighings) {
      x.push_back((w.time_s - members[j].weighings.front().time_s) / group.time_scale_s);
      y.push_back((w.mass_g - group.mean_g[j]) / group.mass_scale_g);
    }
    group.x.push_back(std::move(x));
    group.y.push_back(std::move(y));
  }
  return group;
}

// For a decay rate lambda (per scaled time): each member's exact least-squares a_j, b_j of
// y = a - b exp(-lambda x); returns the summed squared residuals.
double ProfileSsr(const ScaledGroup& group, double lambda, std::vector<double>* a,
                  std::vector<double>* b) {
  double ssr = 0.0;
  for (std::size_t j = 0; j < group.x.size(); ++j) {
    const std::vector<double>& x = group.x[j];
    const std::vector<double>& y = group.y[j];
    const double n = static_cast<double>(x.size());
    double se = 0.0, see = 0.0, sy = 0.0, sey = 0.0;
    for (std::size_t k = 0; k < x.size(); ++k) {
      const double e = std::exp(-lambda * x[k]);
      se += e;
      see += e * e;
      sy += y[k];
      sey += e * y[k];
    }
    // y = a + c e with c = -b: normal equations of the two columns 1 and e.
    const double det = n * see - se * se;
    if (!(det > 0.0)) return std::numeric_limits<double>::infinity();
    const double c = (n * sey - se * sy) / det;
    const double intercept = (sy - c * se) / n;
    for (std::size_t k = 0; k < x.size(); ++k) {
      const double r = y[k] - intercept - c * std::exp(-lambda * x[k]);
      ssr += r * r;
    }
    if (a != nullptr) a->push_back(intercept);
    if (b != nullptr) b->push_back(-c);
  }
  return ssr;
}

// Decay rates searched (scaled time): from 1 / max_tau_to_tail_ratio (the longest credible tau)
// to kMaxScaledRate (tau a thirtieth of the span: between weighings a day apart over a few days
// the mass would be flat, nothing to resolve); grid, then golden section. Project choices.
constexpr double kMaxScaledRate = 30.0;
constexpr int kRateGrid = 120;
constexpr int kGoldenSteps = 80;
// Resolution of the decay rate (see the header), as kResolved in FromThreeWeighings.
constexpr double kRateResolved = 2.0;
// Quantile of the chi-square test of the residuals against the balance (common practice).
constexpr double kResidualTestProbability = 0.95;

// Minimises ProfileSsr over ln(lambda); false when the minimum lies at an end of the range.
bool BestRate(const ScaledGroup& group, double lo_rate, double* lambda) {
  const double lo = std::log(lo_rate);
  const double hi = std::log(kMaxScaledRate);
  if (!(hi > lo)) return false;
  auto ssr_at = [&](double log_rate) {
    return ProfileSsr(group, std::exp(log_rate), nullptr, nullptr);
  };
  int best = 0;
  double best_ssr = std::numeric_limits<double>::infinity();
  const double step = (hi - lo) / kRateGrid;
  for (int i = 0; i <= kRateGrid; ++i) {
    const double value = ssr_at(lo + step * i);
    if (value < best_ssr) {
      best_ssr = value;
      best = i;
    }
  }
  if (best == 0 || best == kRateGrid) return false;
  // Golden section in [best - 1, best + 1] grid steps.
  const double golden = 0.5 * (std::sqrt(5.0) - 1.0);
  double left = lo + step * (best - 1), right = lo + step * (best + 1);
  double p = right - golden * (right - left), q = left + golden * (right - left);
  double fp = ssr_at(p), fq = ssr_at(q);
  for (int i = 0; i < kGoldenSteps; ++i) {
    if (fp < fq) {
      right = q;
      q = p;
      fq = fp;
      p = right - golden * (right - left);
      fp = ssr_at(p);
    } else {
      left = p;
      p = q;
      fp = fq;
      q = left + golden * (right - left);
      fq = ssr_at(q);
    }
  }
  *lambda = std::exp(0.5 * (left + right));
  return std::isfinite(best_ssr);
}

}  // namespace

std::vector<ApproachEstimate> EstimateSharedDesiccatorApproach(std::span<const GroupMember> members,
                                                               double balance_u_g,
                                                               const EquilibrateOptions& options) {
  const std::size_t num_members = members.size();
  if (num_members < 2) return {};
  for (const GroupMember& member : members) {
    if (member.weighings.size() < 3) return {};
  }
  const ScaledGroup group = ScaleGroup(members);
  const int num_parameters = 2 * static_cast<int>(num_members) + 1;
  if (!(group.time_scale_s > 0.0) || !(group.mass_scale_g > 0.0) ||
      static_cast<int>(group.num_points) <= num_parameters - 1) {
    return {};
  }
  double lambda = 0.0;
  if (!BestRate(group, 1.0 / options.max_tau_to_tail_ratio, &lambda)) {
    return std::vector<ApproachEstimate>(num_members);
  }
  std::vector<double> a, b;
  const double ssr = ProfileSsr(group, lambda, &a, &b);
  // Jacobian of the residual model in (a_1, b_1, ..., a_J, b_J, lambda).
  Eigen::MatrixXd jacobian =
      Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(group.num_points), num_parameters);
  Eigen::Index row = 0;
  for (std::size_t j = 0; j < num_members; ++j) {
    const auto col = static_cast<Eigen::Index>(2 * j);
    for (double x : group.x[j]) {
      const double e = std::exp(-lambda * x);
      jacobian(row, col) = 1.0;
      jacobian(row, col + 1) = -e;
      jacobian(row, num_parameters - 1) = b[j] * x * e;
      ++row;
    }
  }
  const Eigen::MatrixXd normal = jacobian.transpose() * jacobian;
  const Eigen::FullPivLU<Eigen::MatrixXd> lu(normal);
  if (!lu.isInvertible()) return std::vector<ApproachEstimate>(num_members);
  // Scale of the residuals: the balance, unless the chi-square test rejects it (header).
  const double sigma_balance = balance_u_g / group.mass_scale_g;
  const int nu = static_cast<int>(group.num_points) - num_parameters;
  const double variance = sigma_balance * sigma_balance;
  if (nu >= 1) {
    const boost::math::chi_squared_distribution<double> chi2(nu);
    if (!(ssr <= variance * boost::math::quantile(chi2, kResidualTestProbability))) return {};
  }
  const Eigen::MatrixXd covariance = variance * lu.inverse();
  const auto rate = static_cast<Eigen::Index>(num_parameters - 1);
  const double var_rate = covariance(rate, rate);
  if (!(var_rate > 0.0) || !(lambda > kRateResolved * std::sqrt(var_rate))) {
    return std::vector<ApproachEstimate>(num_members);
  }
  const double tau_s = group.time_scale_s / lambda;
  std::vector<ApproachEstimate> estimates(num_members);
  for (std::size_t j = 0; j < num_members; ++j) {
    const auto col = static_cast<Eigen::Index>(2 * j);
    const double var_a = covariance(col, col);
    const double shared = covariance(col, rate) * covariance(col, rate) / var_rate;
    const double own = std::max(0.0, var_a - shared);
    ApproachEstimate& estimate = estimates[j];
    estimate.estimated = true;
    const double asymptote_g = group.mean_g[j] + a[j] * group.mass_scale_g;
    estimate.correction_g = asymptote_g - members[j].reported_mass_g;
    estimate.u_correction_g = std::sqrt(own) * group.mass_scale_g;
    estimate.u_model_g = std::sqrt(shared) * group.mass_scale_g;
    estimate.time_constant_s = tau_s;
    estimate.degrees_of_freedom = 0;  // the balance u (Type B, infinite)
    estimate.includes_weighing_scatter = true;
    estimate.method = fmt::format(
        "first-order decay with one time constant for the {} specimens of the step, fitted to "
        "{} weighings, tau = {:.3g} h (u of tau {:.2g} h, shared part u = {:.2g} g)",
        num_members, group.num_points, tau_s / kSecondsPerHour,
        tau_s * std::sqrt(var_rate) / lambda / kSecondsPerHour, estimate.u_model_g);
  }
  return estimates;
}

TailFitOptions TailOptions(const EquilibrateOptions& options, double step_start_s) {
  TailFitOptions tail;
  tail.max_exponential_terms = options.exponential_terms;
  tail.max_tau_to_span = options.max_tau_to_tail_ratio;
  tail.step_start_s = step_start_s;
  return tail;
}

ApproachEstimate EstimateDesiccatorApproach(std::span<const ingest::Weighing> weighings,
                                            double reported_mass_g, double balance_u_g,
                                            const EquilibrateOptions& options) {
  if (static_cast<int>(weighings.size()) >= kMinWeighingsForFit) {
    std::vector<double> t, m;
    for (const auto& weighing : weighings) {
      t.push_back(weighing.time_s);
      m.push_back(weighing.mass_g);
    }
    // The first weighing is taken at the transfer into the desiccator: the step start.
    const TailFit fit = FitExponentialTail(t, m, TailOptions(options, t.front()));
    ApproachEstimate estimate = FromTailFit(fit, reported_mass_g, "weighings");
    estimate.includes_weighing_scatter = estimate.estimated;
    if (estimate.estimated) return estimate;
  }
  return FromThreeWeighings(weighings, reported_mass_g, balance_u_g, options);
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
