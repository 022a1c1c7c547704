#include "pipeline/equilibrate/exponential_tail.h"

#include <ceres/ceres.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
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

double TailFit::TotalUncertainty_g() const {
  return std::sqrt(u_m_inf_g * u_m_inf_g + u_model_g * u_model_g);
}

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

namespace {

// The tail in scaled variables: t' = (t - t0) / time_scale in [0, 1],
// m' = (m - mass_offset) / mass_scale in [-1, 1].
struct ScaledTail {
  std::vector<double> t;
  std::vector<double> m;
  double t0 = 0.0;
  double time_scale = 1.0;
  double mass_offset = 0.0;
  double mass_scale = 1.0;
};

ScaledTail Scale(std::span<const double> time_s, std::span<const double> mass_g) {
  ScaledTail scaled;
  const std::size_t n = time_s.size();
  scaled.t0 = time_s.front();
  scaled.time_scale = time_s[n - 1] - scaled.t0;
  double mean = 0.0;
  for (std::size_t i = 0; i < n; ++i) mean += mass_g[i];
  mean /= static_cast<double>(n);
  double largest = 0.0;
  for (std::size_t i = 0; i < n; ++i) largest = std::max(largest, std::abs(mass_g[i] - mean));
  scaled.mass_offset = mean;
  scaled.mass_scale = largest > 0.0 ? largest : 1.0;
  scaled.t.resize(n);
  scaled.m.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    scaled.t[i] = (time_s[i] - scaled.t0) / scaled.time_scale;
    scaled.m[i] = (mass_g[i] - mean) / scaled.mass_scale;
  }
  return scaled;
}

// Back to the units of the input (fit in scaled units in, fit in input units out).
TailFit Unscale(TailFit fit, const ScaledTail& scaled) {
  fit.t0_s = scaled.t0;
  fit.m_inf_g = scaled.mass_offset + scaled.mass_scale * fit.m_inf_g;
  fit.u_m_inf_g *= scaled.mass_scale;
  fit.amplitude_g *= scaled.mass_scale;
  fit.amplitude2_g *= scaled.mass_scale;
  fit.tau_s *= scaled.time_scale;
  fit.tau2_s *= scaled.time_scale;
  fit.slowest_tau_s *= scaled.time_scale;
  fit.rms_residual_g *= scaled.mass_scale;
  return fit;
}

// The golden section locates the minimum of SSR(tau) only to about sqrt(machine epsilon)
// relative (SSR is flat there); a few Gauss-Newton steps on (m_inf, A, tau) take tau to the
// optimum to rounding, so that the result does not depend on rounding-level differences of the
// input (the same log in g or mg).
void PolishTau(std::span<const double> t, std::span<const double> m, double& tau,
               LinearSolution& solution) {
  constexpr int kPolishSteps = 4;
  for (int step = 0; step < kPolishSteps; ++step) {
    Eigen::Matrix3d jtj = Eigen::Matrix3d::Zero();
    Eigen::Vector3d jtr = Eigen::Vector3d::Zero();
    for (std::size_t i = 0; i < t.size(); ++i) {
      const double e = std::exp(-t[i] / tau);
      const double r = m[i] - (solution.m_inf - solution.amplitude * e);
      const Eigen::Vector3d row(1.0, -e, -solution.amplitude * e * t[i] / (tau * tau));
      jtj += row * row.transpose();
      jtr += row * r;
    }
    Eigen::FullPivLU<Eigen::Matrix3d> lu(jtj);
    if (!lu.isInvertible()) return;
    const Eigen::Vector3d delta = lu.solve(jtr);
    const double next_tau = tau + delta(2);
    if (!(next_tau > 0.0)) return;
    const LinearSolution next = SolveLinear(t, m, 0.0, next_tau);
    // Near the optimum SSR changes at the rounding level only: a step is kept unless it
    // raises SSR by more than that.
    constexpr double kRoundingSlack = 1e-10;
    if (!next.ok || !(next.ssr <= solution.ssr * (1.0 + kRoundingSlack))) return;
    tau = next_tau;
    solution = next;
    if (std::abs(delta(2)) < std::numeric_limits<double>::epsilon() * tau) return;
  }
}

// One term by variable projection on the scaled tail (t0 = 0, duration 1).
TailFit FitOneTerm(const ScaledTail& scaled) {
  TailFit fit;
  const std::span<const double> t(scaled.t);
  const std::span<const double> m(scaled.m);
  const std::size_t n = t.size();
  fit.num_points = static_cast<int>(n);
  // ---- Grid over ln tau, then golden section around the best grid point.
  const double log_lo = std::log(kTauMinFactor);
  const double log_hi = std::log(kTauMaxFactor);
  const double step = (log_hi - log_lo) / (kTauGridPoints - 1);
  int best = -1;
  double best_ssr = 0.0;
  for (int k = 0; k < kTauGridPoints; ++k) {
    const LinearSolution s = SolveLinear(t, m, 0.0, std::exp(log_lo + step * k));
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
    const LinearSolution s = SolveLinear(t, m, 0.0, std::exp(log_tau));
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
  double tau = std::exp(0.5 * (a + b));
  LinearSolution one = SolveLinear(t, m, 0.0, tau);
  if (!one.ok) {
    fit.message = "exponential fit failed";
    return fit;
  }
  PolishTau(t, m, tau, one);
  // Covariance of (m_inf, A, tau) from the Jacobian at the optimum (all columns of order 1 in
  // the scaled variables).
  Eigen::MatrixXd jacobian(static_cast<Eigen::Index>(n), 3);
  for (std::size_t i = 0; i < n; ++i) {
    const double e = std::exp(-t[i] / tau);
    const auto row = static_cast<Eigen::Index>(i);
    jacobian(row, 0) = 1.0;
    jacobian(row, 1) = -e;
    jacobian(row, 2) = -one.amplitude * e * t[i] / (tau * tau);
  }
  const Eigen::Matrix3d jtj = jacobian.transpose() * jacobian;
  Eigen::FullPivLU<Eigen::Matrix3d> lu(jtj);
  if (!lu.isInvertible()) {
    fit.message = "exponential fit not identifiable";
    return fit;
  }
  constexpr int kOneTermParameters = 3;
  const double s2 = one.ssr / static_cast<double>(n - kOneTermParameters);
  const Eigen::Matrix3d covariance = s2 * lu.inverse();
  fit.ok = true;
  fit.terms = 1;
  fit.m_inf_g = one.m_inf;
  fit.u_m_inf_g = std::sqrt(std::max(0.0, covariance(0, 0)));
  fit.amplitude_g = one.amplitude;
  fit.tau_s = tau;
  fit.slowest_tau_s = tau;
  fit.rms_residual_g = std::sqrt(one.ssr / static_cast<double>(n));
  fit.degrees_of_freedom = static_cast<int>(n) - kOneTermParameters;
  return fit;
}

// Two terms by Ceres on the scaled tail, started from the one-term solution split into a
// fast and a slow part (identical starting time constants would make the problem singular).
// The two-term fit runs on at most kMaxTwoTermPoints means of consecutive points (a long log
// tail has thousands of block means; means of groups keep the information on the asymptote,
// their residual variance estimates the variance of a group mean, and the fit costs a tenth).
// Project choice.
constexpr std::size_t kMaxTwoTermPoints = 200;

ScaledTail GroupMeans(const ScaledTail& scaled) {
  const std::size_t n = scaled.t.size();
  if (n <= kMaxTwoTermPoints) return scaled;
  const std::size_t group = (n + kMaxTwoTermPoints - 1) / kMaxTwoTermPoints;
  ScaledTail out = scaled;
  out.t.clear();
  out.m.clear();
  for (std::size_t first = 0; first < n; first += group) {
    const std::size_t last = std::min(n, first + group);
    double t = 0.0, m = 0.0;
    for (std::size_t i = first; i < last; ++i) {
      t += scaled.t[i];
      m += scaled.m[i];
    }
    out.t.push_back(t / static_cast<double>(last - first));
    out.m.push_back(m / static_cast<double>(last - first));
  }
  return out;
}

// all: the scaled tail; scaled: GroupMeans(all), formed once by the caller.
TailFit FitTwoTerms(const ScaledTail& all, const ScaledTail& scaled, const TailFit& one) {
  TailFit fit;
  const std::size_t n = scaled.t.size();
  fit.num_points = static_cast<int>(all.t.size());
  constexpr int kTwoTermParameters = 5;
  if (n < 2 * kTwoTermParameters) {
    fit.message = "two-term fit needs more points";
    return fit;
  }
  double x[kTwoTermParameters] = {one.m_inf_g, 0.3 * one.amplitude_g, std::log(0.2 * one.tau_s),
                                  0.7 * one.amplitude_g, std::log(one.tau_s)};
  ceres::Problem problem;
  for (std::size_t i = 0; i < n; ++i) {
    problem.AddResidualBlock(
        new ceres::AutoDiffCostFunction<TwoTermResidual, 1, kTwoTermParameters>(
            new TwoTermResidual(scaled.t[i], scaled.m[i])),
        nullptr, x);
  }
  ceres::Solver::Options solver_options;
  solver_options.linear_solver_type = ceres::DENSE_QR;
  solver_options.max_num_iterations = 200;
  solver_options.num_threads = 1;
  ceres::Solver::Summary summary;
  ceres::Solve(solver_options, &problem, &summary);
  if (!summary.IsSolutionUsable() || summary.termination_type == ceres::NO_CONVERGENCE) {
    fit.message = "two-term fit did not converge";
    return fit;
  }
  ceres::Covariance::Options covariance_options;
  ceres::Covariance covariance(covariance_options);
  std::vector<std::pair<const double*, const double*>> blocks = {{x, x}};
  double full[kTwoTermParameters * kTwoTermParameters];
  if (!covariance.Compute(blocks, &problem) || !covariance.GetCovarianceBlock(x, x, full)) {
    fit.message = "two-term fit not identifiable";
    return fit;
  }
  const double ssr = 2.0 * summary.final_cost;
  const double s2 = ssr / static_cast<double>(n - kTwoTermParameters);
  // Ceres' covariance assumes unit residual variance: scale by s^2.
  fit.ok = true;
  fit.terms = 2;
  fit.m_inf_g = x[0];
  fit.u_m_inf_g = std::sqrt(std::max(0.0, full[0] * s2));
  fit.amplitude_g = x[1];
  fit.tau_s = std::exp(x[2]);
  fit.amplitude2_g = x[3];
  fit.tau2_s = std::exp(x[4]);
  fit.slowest_tau_s = std::max(fit.tau_s, fit.tau2_s);
  fit.rms_residual_g = std::sqrt(ssr / static_cast<double>(n));
  fit.degrees_of_freedom = static_cast<int>(n) - kTwoTermParameters;
  if (!std::isfinite(fit.m_inf_g) || !std::isfinite(fit.u_m_inf_g)) {
    fit.ok = false;
    fit.message = "two-term fit not identifiable";
  }
  return fit;
}

// Small-sample Akaike criterion AICc = n ln(SSR/n) + 2p + 2p(p + 1)/(n - p - 1) (Hurvich &
// Tsai 1989; Burnham & Anderson 2002, Model Selection and Multimodel Inference, 2.4).
double Aicc(double ssr, std::size_t n, int p) {
  const double count = static_cast<double>(n);
  const double dof = count - p - 1.0;
  if (!(dof > 0.0) || !(ssr > 0.0)) return std::numeric_limits<double>::infinity();
  return count * std::log(ssr / count) + 2.0 * p + 2.0 * p * (p + 1.0) / dof;
}

// True when the tail supports a second exponential: AICc of the two-term fit below that of the
// one-term fit, both on the group means the two-term fit used. On a single exponential the
// two-term fit only follows the noise (its asymptote differs at the noise level), and counting
// that difference as a model term would count the noise twice.
bool TwoTermsSupported(const ScaledTail& grouped, const TailFit& one, const TailFit& two) {
  double ssr_one = 0.0, ssr_two = 0.0;
  for (std::size_t i = 0; i < grouped.t.size(); ++i) {
    const double t = grouped.t[i];
    const double r1 = grouped.m[i] - (one.m_inf_g - one.amplitude_g * std::exp(-t / one.tau_s));
    const double r2 = grouped.m[i] - (two.m_inf_g - two.amplitude_g * std::exp(-t / two.tau_s) -
                                      two.amplitude2_g * std::exp(-t / two.tau2_s));
    ssr_one += r1 * r1;
    ssr_two += r2 * r2;
  }
  constexpr int kOneTermParameters = 3;
  constexpr int kTwoTermParameters = 5;
  return Aicc(ssr_two, grouped.t.size(), kTwoTermParameters) <
         Aicc(ssr_one, grouped.t.size(), kOneTermParameters);
}

// Half-width of a rectangular distribution -> standard uncertainty (JCGM 100:2008, 4.3.7).
const double kSqrt3 = std::sqrt(3.0);

}  // namespace

TailFit FitExponentialTail(std::span<const double> time_s, std::span<const double> mass_g,
                           int terms, double max_alternative_tau_to_span) {
  TailFit fit;
  const std::size_t n = std::min(time_s.size(), mass_g.size());
  fit.num_points = static_cast<int>(n);
  if (n < 5) {
    fit.message = "too few points in the tail";
    return fit;
  }
  if (!(time_s[n - 1] - time_s.front() > 0.0)) {
    fit.message = "tail has no duration";
    return fit;
  }
  const ScaledTail scaled = Scale(time_s.first(n), mass_g.first(n));
  const TailFit one = FitOneTerm(scaled);
  if (!one.ok) {
    fit.message = one.message;
    fit.t0_s = scaled.t0;
    return fit;
  }
  const ScaledTail grouped = GroupMeans(scaled);
  const TailFit two = FitTwoTerms(scaled, grouped, one);
  const bool use_two = terms == 2 && two.ok;
  TailFit chosen = use_two ? two : one;
  const TailFit& other = use_two ? one : two;
  if (terms == 2 && !two.ok) chosen.message = two.message + "; one term used";
  // The other model as the model term, when the tail shows more than one exponential (AICc
  // prefers two terms) and the alternative is a credible description of it (its slowest time
  // constant within the accepted range; the tail duration is 1 here).
  if (other.ok && two.ok && other.slowest_tau_s <= max_alternative_tau_to_span &&
      TwoTermsSupported(grouped, one, two)) {
    chosen.has_alternative = true;
    chosen.alternative_m_inf_g = other.m_inf_g;
    chosen.u_model_g = std::abs(other.m_inf_g - chosen.m_inf_g) / kSqrt3;
  }
  TailFit out = Unscale(chosen, scaled);
  if (out.has_alternative) {
    out.alternative_m_inf_g = scaled.mass_offset + scaled.mass_scale * out.alternative_m_inf_g;
    out.u_model_g *= scaled.mass_scale;
  }
  return out;
}

}  // namespace sorbtrace::equilibrate::internal
