#include "pipeline/equilibrate/exponential_tail.h"

#include <ceres/ceres.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <vector>

namespace sorbtrace::equilibrate::internal {
namespace {

// Search range of tau relative to the tail duration: from 1/100 of it (a tail that is
// already flat) to 1000 times it (a straight line: no curvature to extrapolate from).
constexpr double kTauMinFactor = 0.01;
constexpr double kTauMaxFactor = 1000.0;
constexpr int kTauGridPoints = 241;
constexpr int kGoldenIterations = 80;
// Golden ratio conjugate (sqrt(5) - 1) / 2.
constexpr double kGolden = 0.6180339887498949;

struct LinearSolution {
  double m_inf = 0.0;
  double amplitude = 0.0;
  double ssr = 0.0;
  bool ok = false;
};

// For a fixed tau: m_i = m_inf - A e_i solved by linear least squares.
LinearSolution SolveLinear(std::span<const double> t, std::span<const double> m, double t0,
                           double tau) {
  const std::size_t n = t.size();
  double se = 0.0, see = 0.0, sm = 0.0, sem = 0.0;
  std::vector<double> e(n);
  for (std::size_t i = 0; i < n; ++i) {
    e[i] = std::exp(-(t[i] - t0) / tau);
    se += e[i];
    see += e[i] * e[i];
    sm += m[i];
    sem += e[i] * m[i];
  }
  const double count = static_cast<double>(n);
  // Normal equations for m = a + b e with a = m_inf, b = -A.
  const double det = count * see - se * se;
  LinearSolution solution;
  if (!(std::abs(det) > 1e-300)) return solution;
  const double b = (count * sem - se * sm) / det;
  const double a = (sm - b * se) / count;
  double ssr = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double r = m[i] - (a + b * e[i]);
    ssr += r * r;
  }
  solution.m_inf = a;
  solution.amplitude = -b;
  solution.ssr = ssr;
  solution.ok = true;
  return solution;
}

struct TwoTermResidual {
  TwoTermResidual(double t, double m) : t_(t), m_(m) {}
  template <typename T>
  bool operator()(const T* const x, T* residual) const {
    // x = {m_inf, A1, ln tau1, A2, ln tau2}, t measured from t0.
    residual[0] = T(m_) - (x[0] - x[1] * exp(-T(t_) / exp(x[2])) - x[3] * exp(-T(t_) / exp(x[4])));
    return true;
  }
  double t_;
  double m_;
};

}  // namespace

double TailFit::Mass_g(double time_s) const {
  const double dt = time_s - t0_s;
  double m = m_inf_g - amplitude_g * std::exp(-dt / tau_s);
  if (terms == 2) m -= amplitude2_g * std::exp(-dt / tau2_s);
  return m;
}

double TailFit::Slope_g_per_s(double time_s) const {
  const double dt = time_s - t0_s;
  double slope = amplitude_g / tau_s * std::exp(-dt / tau_s);
  if (terms == 2) slope += amplitude2_g / tau2_s * std::exp(-dt / tau2_s);
  return slope;
}

TailFit FitExponentialTail(std::span<const double> time_s, std::span<const double> mass_g,
                           int terms) {
  TailFit fit;
  const std::size_t n = std::min(time_s.size(), mass_g.size());
  fit.num_points = static_cast<int>(n);
  if (n < 5) {
    fit.message = "too few points in the tail";
    return fit;
  }
  const double t0 = time_s.front();
  const double span = time_s[n - 1] - t0;
  if (!(span > 0.0)) {
    fit.message = "tail has no duration";
    return fit;
  }
  fit.t0_s = t0;
  // Work on mass relative to the tail mean for conditioning.
  double mean_m = 0.0;
  for (std::size_t i = 0; i < n; ++i) mean_m += mass_g[i];
  mean_m /= static_cast<double>(n);
  std::vector<double> m(n);
  for (std::size_t i = 0; i < n; ++i) m[i] = mass_g[i] - mean_m;
  std::span<const double> t = time_s.first(n);

  // ---- One term: grid over ln tau, then golden section around the best grid point.
  const double log_lo = std::log(kTauMinFactor * span);
  const double log_hi = std::log(kTauMaxFactor * span);
  const double step = (log_hi - log_lo) / (kTauGridPoints - 1);
  int best = -1;
  double best_ssr = 0.0;
  for (int k = 0; k < kTauGridPoints; ++k) {
    const LinearSolution s = SolveLinear(t, m, t0, std::exp(log_lo + step * k));
    if (s.ok && (best < 0 || s.ssr < best_ssr)) {
      best = k;
      best_ssr = s.ssr;
    }
  }
  if (best < 0) {
    fit.message = "exponential fit failed";
    return fit;
  }
  if (best == kTauGridPoints - 1) {
    fit.message = "tail shows no curvature (time constant unbounded)";
    return fit;
  }
  double a = log_lo + step * std::max(0, best - 1);
  double b = log_lo + step * std::min(kTauGridPoints - 1, best + 1);
  auto ssr_at = [&](double log_tau) {
    const LinearSolution s = SolveLinear(t, m, t0, std::exp(log_tau));
    return s.ok ? s.ssr : 1e300;
  };
  double c = b - kGolden * (b - a);
  double d = a + kGolden * (b - a);
  double fc = ssr_at(c);
  double fd = ssr_at(d);
  for (int iteration = 0; iteration < kGoldenIterations; ++iteration) {
    if (fc < fd) {
      b = d;
      d = c;
      fd = fc;
      c = b - kGolden * (b - a);
      fc = ssr_at(c);
    } else {
      a = c;
      c = d;
      fc = fd;
      d = a + kGolden * (b - a);
      fd = ssr_at(d);
    }
  }
  const double tau = std::exp(0.5 * (a + b));
  const LinearSolution one = SolveLinear(t, m, t0, tau);
  if (!one.ok || n < 4) {
    fit.message = "exponential fit failed";
    return fit;
  }
  // Covariance of (m_inf, A, tau) from the Jacobian at the optimum.
  Eigen::MatrixXd jacobian(static_cast<Eigen::Index>(n), 3);
  for (std::size_t i = 0; i < n; ++i) {
    const double dt = t[i] - t0;
    const double e = std::exp(-dt / tau);
    const auto row = static_cast<Eigen::Index>(i);
    jacobian(row, 0) = 1.0;
    jacobian(row, 1) = -e;
    jacobian(row, 2) = -one.amplitude * e * dt / (tau * tau);
  }
  const Eigen::Matrix3d jtj = jacobian.transpose() * jacobian;
  Eigen::FullPivLU<Eigen::Matrix3d> lu(jtj);
  if (!lu.isInvertible()) {
    fit.message = "exponential fit not identifiable";
    return fit;
  }
  const double s2 = one.ssr / static_cast<double>(n - 3);
  const Eigen::Matrix3d covariance = s2 * lu.inverse();
  fit.ok = true;
  fit.terms = 1;
  fit.m_inf_g = one.m_inf + mean_m;
  fit.u_m_inf_g = std::sqrt(std::max(0.0, covariance(0, 0)));
  fit.amplitude_g = one.amplitude;
  fit.tau_s = tau;
  fit.slowest_tau_s = tau;
  fit.rms_residual_g = std::sqrt(one.ssr / static_cast<double>(n));
  if (terms != 2) return fit;

  // ---- Two terms: Ceres, started from the one-term solution split into a fast and a slow
  // part. Identical starting time constants would make the problem singular.
  constexpr int kTwoTermParameters = 5;
  if (n < 2 * kTwoTermParameters) {
    fit.message = "two-term fit needs more points; one term used";
    return fit;
  }
  double x[kTwoTermParameters] = {one.m_inf, 0.3 * one.amplitude, std::log(0.2 * tau),
                                  0.7 * one.amplitude, std::log(tau)};
  ceres::Problem problem;
  for (std::size_t i = 0; i < n; ++i) {
    problem.AddResidualBlock(
        new ceres::AutoDiffCostFunction<TwoTermResidual, 1, kTwoTermParameters>(
            new TwoTermResidual(t[i] - t0, m[i])),
        nullptr, x);
  }
  ceres::Solver::Options solver_options;
  solver_options.linear_solver_type = ceres::DENSE_QR;
  solver_options.max_num_iterations = 200;
  solver_options.num_threads = 1;
  ceres::Solver::Summary summary;
  ceres::Solve(solver_options, &problem, &summary);
  if (!summary.IsSolutionUsable() || summary.termination_type == ceres::NO_CONVERGENCE) {
    fit.message = "two-term fit did not converge; one term used";
    return fit;
  }
  ceres::Covariance::Options covariance_options;
  ceres::Covariance covariance2(covariance_options);
  std::vector<std::pair<const double*, const double*>> blocks = {{x, x}};
  double full[kTwoTermParameters * kTwoTermParameters];
  if (!covariance2.Compute(blocks, &problem) || !covariance2.GetCovarianceBlock(x, x, full)) {
    fit.message = "two-term fit not identifiable; one term used";
    return fit;
  }
  const double ssr2 = 2.0 * summary.final_cost;
  const double s2_two = ssr2 / static_cast<double>(n - kTwoTermParameters);
  // Ceres' covariance assumes unit residual variance: scale by s^2.
  fit.terms = 2;
  fit.m_inf_g = x[0] + mean_m;
  fit.u_m_inf_g = std::sqrt(std::max(0.0, full[0] * s2_two));
  fit.amplitude_g = x[1];
  fit.tau_s = std::exp(x[2]);
  fit.amplitude2_g = x[3];
  fit.tau2_s = std::exp(x[4]);
  fit.slowest_tau_s = std::max(fit.tau_s, fit.tau2_s);
  fit.rms_residual_g = std::sqrt(ssr2 / static_cast<double>(n));
  fit.message.clear();
  return fit;
}

}  // namespace sorbtrace::equilibrate::internal
