#include "pipeline/equilibrate/exponential_tail.h"

#include <ceres/ceres.h>
#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <vector>

#include "fitters/fitter.h"

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
constexpr int kThreeParameters = 3;  // m_inf, A, tau
constexpr int kFiveParameters = 5;   // m_inf, A1, tau1, A2, tau2
// Points a fit needs: three parameters and residual degrees of freedom for s^2 and AICc (n - p -
// 1 > 0); with a stated point sd, one more point than parameters (a residual to weigh the
// candidates by).
constexpr std::size_t kMinPoints = 5;
constexpr std::size_t kMinPointsStatedSd = 4;
constexpr double kSecondsPerHour = 3600.0;
// A fitted amplitude is resolved when it lies more than this many standard uncertainties from
// zero (about 95 %, two-sided normal; common practice).
constexpr double kResolved = 2.0;

// ---- Fickian sheet -----------------------------------------------------------------------

// Below this x the short-time form is used (its omitted ierfc terms are below 1e-7 there,
// Crank 1975, eq. 4.20); above it the series converges within a few terms.
constexpr double kFickianShortTime = 0.2;
// Series terms are summed while j^2 x <= this (exp(-50) ~ 2e-22 relative).
constexpr double kFickianSeriesCutoff = 50.0;

struct FickianValue {
  double f = 0.0;       // F(x)
  double x_dfdx = 0.0;  // x F'(x): finite at x = 0, where F' is not
};

FickianValue Fickian(double x) {
  constexpr double kPi = std::numbers::pi;
  FickianValue value;
  x = std::max(0.0, x);
  if (x < kFickianShortTime) {
    const double root = std::sqrt(x / (kPi * kPi * kPi));
    value.f = 1.0 - 4.0 * root;
    value.x_dfdx = -2.0 * root;
    return value;
  }
  double sum = 0.0, sum_rate = 0.0;
  for (double j = 1.0; j * j * x <= kFickianSeriesCutoff || j == 1.0; j += 2.0) {
    const double e = std::exp(-j * j * x);
    sum += e / (j * j);
    sum_rate += e;
  }
  value.f = 8.0 / (kPi * kPi) * sum;
  value.x_dfdx = -x * 8.0 / (kPi * kPi) * sum_rate;
  return value;
}

// ---- Three-parameter models m = m_inf - A g(t; tau), by variable projection -------------

// g and tau dg/dtau of a three-parameter model at scaled time t; origin: the model's time
// origin (0: the tail start, for the exponential; the step start for the Fickian sheet).
struct Basis {
  KineticModel model = KineticModel::kOneExponential;
  double origin = 0.0;
  void Evaluate(double t, double tau, double* g, double* tau_dg_dtau) const {
    const double x = (t - origin) / tau;
    if (model == KineticModel::kFickianSheet) {
      const FickianValue v = Fickian(x);
      *g = v.f;
      *tau_dg_dtau = -v.x_dfdx;
    } else {
      *g = std::exp(-x);
      *tau_dg_dtau = *g * x;
    }
  }
};

struct LinearSolution {
  double m_inf = 0.0;
  double amplitude = 0.0;
  double ssr = 0.0;
  bool ok = false;
};

// For a fixed tau: m_i = m_inf - A g_i solved by linear least squares.
LinearSolution SolveLinear(std::span<const double> t, std::span<const double> m, const Basis& basis,
                           double tau) {
  const std::size_t n = t.size();
  double se = 0.0, see = 0.0, sm = 0.0, sem = 0.0;
  std::vector<double> e(n);
  for (std::size_t i = 0; i < n; ++i) {
    double unused = 0.0;
    basis.Evaluate(t[i], tau, &e[i], &unused);
    se += e[i];
    see += e[i] * e[i];
    sm += m[i];
    sem += e[i] * m[i];
  }
  const double count = static_cast<double>(n);
  // Normal equations for m = a + b g with a = m_inf, b = -A.
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

// One candidate's fit in scaled units.
struct ModelFit {
  bool ok = false;
  std::string message;
  KineticModel model = KineticModel::kOneExponential;
  double origin = 0.0;  // scaled time origin (Fickian sheet)
  double m_inf = 0.0;
  double u_m_inf = 0.0;
  // [(J'J)^-1]_(m_inf, m_inf): u_m_inf^2 / s^2, for a stated point standard deviation.
  double unscaled_variance_m_inf = 0.0;
  double amplitude = 0.0;
  double tau = 0.0;
  double amplitude2 = 0.0;
  double tau2 = 0.0;
  double slowest_tau = 0.0;
  double ssr = 0.0;
  int num_points = 0;
  int degrees_of_freedom = 0;
  int parameters = kThreeParameters;
  // The fit reached an optimum (SSR and curve valid) even if !ok (not identifiable): it takes
  // part in the Akaike weights.
  bool has_optimum = false;
  double Value(double t) const {
    if (model == KineticModel::kTwoExponentials) {
      return m_inf - amplitude * std::exp(-t / tau) - amplitude2 * std::exp(-t / tau2);
    }
    double g = 0.0, unused = 0.0;
    Basis{model, origin}.Evaluate(t, tau, &g, &unused);
    return m_inf - amplitude * g;
  }
};

// The golden section locates the minimum of SSR(tau) only to about sqrt(machine epsilon)
// relative (SSR is flat there); a few Gauss-Newton steps on (m_inf, A, tau) take tau to the
// optimum to rounding, so that the result does not depend on rounding-level differences of the
// input (the same log in g or mg).
void PolishTau(std::span<const double> t, std::span<const double> m, const Basis& basis,
               double& tau, LinearSolution& solution) {
  constexpr int kPolishSteps = 4;
  for (int step = 0; step < kPolishSteps; ++step) {
    Eigen::Matrix3d jtj = Eigen::Matrix3d::Zero();
    Eigen::Vector3d jtr = Eigen::Vector3d::Zero();
    for (std::size_t i = 0; i < t.size(); ++i) {
      double g = 0.0, tau_dg = 0.0;
      basis.Evaluate(t[i], tau, &g, &tau_dg);
      const double r = m[i] - (solution.m_inf - solution.amplitude * g);
      const Eigen::Vector3d row(1.0, -g, -solution.amplitude * tau_dg / tau);
      jtj += row * row.transpose();
      jtr += row * r;
    }
    Eigen::FullPivLU<Eigen::Matrix3d> lu(jtj);
    if (!lu.isInvertible()) return;
    const Eigen::Vector3d delta = lu.solve(jtr);
    const double next_tau = tau + delta(2);
    if (!(next_tau > 0.0)) return;
    const LinearSolution next = SolveLinear(t, m, basis, next_tau);
    // Near the optimum SSR changes at the rounding level only: a step is kept unless it
    // raises SSR by more than that.
    constexpr double kRoundingSlack = 1e-10;
    if (!next.ok || !(next.ssr <= solution.ssr * (1.0 + kRoundingSlack))) return;
    tau = next_tau;
    solution = next;
    if (std::abs(delta(2)) < std::numeric_limits<double>::epsilon() * tau) return;
  }
}

// A three-parameter model by variable projection on the scaled tail (t0 = 0, duration 1).
ModelFit FitThreeParameters(const ScaledTail& scaled, const Basis& basis) {
  ModelFit fit;
  fit.model = basis.model;
  fit.origin = basis.origin;
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
    const LinearSolution s = SolveLinear(t, m, basis, std::exp(log_lo + step * k));
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
    const LinearSolution s = SolveLinear(t, m, basis, std::exp(log_tau));
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
  LinearSolution one = SolveLinear(t, m, basis, tau);
  if (!one.ok) {
    fit.message = "exponential fit failed";
    return fit;
  }
  PolishTau(t, m, basis, tau, one);
  fit.has_optimum = true;
  fit.m_inf = one.m_inf;
  fit.amplitude = one.amplitude;
  fit.tau = tau;
  fit.slowest_tau = tau;
  fit.ssr = one.ssr;
  // Covariance of (m_inf, A, tau) from the Jacobian at the optimum (all columns of order 1 in
  // the scaled variables).
  Eigen::MatrixXd jacobian(static_cast<Eigen::Index>(n), 3);
  for (std::size_t i = 0; i < n; ++i) {
    double g = 0.0, tau_dg = 0.0;
    basis.Evaluate(t[i], tau, &g, &tau_dg);
    const auto row = static_cast<Eigen::Index>(i);
    jacobian(row, 0) = 1.0;
    jacobian(row, 1) = -g;
    jacobian(row, 2) = -one.amplitude * tau_dg / tau;
  }
  const Eigen::Matrix3d jtj = jacobian.transpose() * jacobian;
  Eigen::FullPivLU<Eigen::Matrix3d> lu(jtj);
  if (!lu.isInvertible()) {
    fit.message = "exponential fit not identifiable";
    return fit;
  }
  const double s2 = one.ssr / static_cast<double>(n - kThreeParameters);
  const Eigen::Matrix3d unscaled = lu.inverse();
  fit.ok = true;
  fit.unscaled_variance_m_inf = std::max(0.0, unscaled(0, 0));
  fit.u_m_inf = std::sqrt(s2 * fit.unscaled_variance_m_inf);
  fit.degrees_of_freedom = static_cast<int>(n) - kThreeParameters;
  return fit;
}

// ---- Two exponentials ----------------------------------------------------------------------

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

// Two terms by Ceres on the scaled tail, started from the one-term solution split into a
// fast and a slow part (identical starting time constants would make the problem singular).
// The two-term fit runs on at most kMaxGroupMeans means of consecutive points (a long log
// tail has thousands of block means; means of groups keep the information on the asymptote,
// their residual variance estimates the variance of a group mean, and the fit costs a tenth).
// The model weights are computed on the same group means. Project choice.
constexpr std::size_t kMaxGroupMeans = 200;

ScaledTail GroupMeans(const ScaledTail& scaled) {
  const std::size_t n = scaled.t.size();
  if (n <= kMaxGroupMeans) return scaled;
  const std::size_t group = (n + kMaxGroupMeans - 1) / kMaxGroupMeans;
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

// grouped: GroupMeans of the scaled tail; one: the one-exponential fit (starting values).
ModelFit FitTwoTerms(const ScaledTail& grouped, const ModelFit& one) {
  ModelFit fit;
  fit.model = KineticModel::kTwoExponentials;
  fit.parameters = kFiveParameters;
  const std::size_t n = grouped.t.size();
  fit.num_points = static_cast<int>(n);
  if (n < 2 * kFiveParameters) {
    fit.message = "two-term fit needs more points";
    return fit;
  }
  double x[kFiveParameters] = {one.m_inf, 0.3 * one.amplitude, std::log(0.2 * one.tau),
                               0.7 * one.amplitude, std::log(one.tau)};
  ceres::Problem problem;
  for (std::size_t i = 0; i < n; ++i) {
    problem.AddResidualBlock(new ceres::AutoDiffCostFunction<TwoTermResidual, 1, kFiveParameters>(
                                 new TwoTermResidual(grouped.t[i], grouped.m[i])),
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
  double full[kFiveParameters * kFiveParameters];
  if (!covariance.Compute(blocks, &problem) || !covariance.GetCovarianceBlock(x, x, full)) {
    fit.message = "two-term fit not identifiable";
    return fit;
  }
  const double ssr = 2.0 * summary.final_cost;
  const double s2 = ssr / static_cast<double>(n - kFiveParameters);
  // Ceres' covariance assumes unit residual variance: scale by s^2.
  fit.ok = true;
  fit.m_inf = x[0];
  fit.unscaled_variance_m_inf = std::max(0.0, full[0]);
  fit.u_m_inf = std::sqrt(fit.unscaled_variance_m_inf * s2);
  fit.amplitude = x[1];
  fit.tau = std::exp(x[2]);
  fit.amplitude2 = x[3];
  fit.tau2 = std::exp(x[4]);
  fit.slowest_tau = std::max(fit.tau, fit.tau2);
  fit.ssr = ssr;
  fit.degrees_of_freedom = static_cast<int>(n) - kFiveParameters;
  if (!std::isfinite(fit.m_inf) || !std::isfinite(fit.u_m_inf)) {
    fit.ok = false;
    fit.message = "two-term fit not identifiable";
    return fit;
  }
  // The two processes must be resolved: their time constants distinct by more than kResolved
  // standard uncertainties of ln(tau2 / tau1). On a single exponential the second term follows
  // the noise or shares the first's time constant: the one-exponential model with undetermined
  // extra parameters, whose covariance would only add the noise again.
  const double u_log_ratio =
      std::sqrt(std::max(0.0, (full[2 * kFiveParameters + 2] + full[4 * kFiveParameters + 4] -
                               2.0 * full[2 * kFiveParameters + 4]) *
                                  s2));
  if (!(std::abs(x[4] - x[2]) > kResolved * u_log_ratio)) {
    fit.ok = false;
    fit.message = "second exponential not resolved";
  }
  return fit;
}

// ---- Model average -------------------------------------------------------------------------

// Small-sample Akaike criterion AICc = n ln(SSR/n) + 2p + 2p(p + 1)/(n - p - 1) (Hurvich &
// Tsai 1989; Burnham & Anderson 2002, 2.4).
double Aicc(double ssr, std::size_t n, int p) {
  const double count = static_cast<double>(n);
  const double dof = count - p - 1.0;
  if (!(dof > 0.0) || !(ssr > 0.0)) return std::numeric_limits<double>::infinity();
  return count * std::log(ssr / count) + 2.0 * p + 2.0 * p * (p + 1.0) / dof;
}

// The same with a stated standard deviation of the points: -2 ln L = chi^2 + const, so
// AIC = chi^2 + 2p (Burnham & Anderson 2002, 2.2, for a known error variance; from memory),
// chi^2 = SSR / sd^2. Defined for every n (no small-sample term: that one corrects for the
// estimated variance).
double AicStatedSd(double chi_square, int p) { return chi_square + 2.0 * p; }

double SsrOn(const ScaledTail& data, const ModelFit& fit) {
  double ssr = 0.0;
  for (std::size_t i = 0; i < data.t.size(); ++i) {
    const double r = data.m[i] - fit.Value(data.t[i]);
    ssr += r * r;
  }
  return ssr;
}

}  // namespace

std::string KineticModelName(KineticModel model) {
  switch (model) {
    case KineticModel::kOneExponential:
      return "one exponential";
    case KineticModel::kTwoExponentials:
      return "two exponentials";
    case KineticModel::kFickianSheet:
      return "Fickian sheet";
  }
  return "unknown";
}

double FickianSheetUnaccomplished(double x) { return Fickian(x).f; }

std::string DescribeCandidates(const TailFit& fit) {
  std::string text;
  for (const TailCandidate& candidate : fit.candidates) {
    if (!text.empty()) text += ", ";
    text += fmt::format("{} {:.2f}", KineticModelName(candidate.model), candidate.weight);
  }
  return text;
}

double TailFit::TotalUncertainty_g() const {
  return std::sqrt(u_m_inf_g * u_m_inf_g + u_model_g * u_model_g);
}

double TailFit::Mass_g(double time_s) const {
  if (model == KineticModel::kFickianSheet) {
    return model_m_inf_g - amplitude_g * Fickian((time_s - step_start_s) / tau_s).f;
  }
  const double dt = time_s - t0_s;
  double m = model_m_inf_g - amplitude_g * std::exp(-dt / tau_s);
  if (terms == 2) m -= amplitude2_g * std::exp(-dt / tau2_s);
  return m;
}

double TailFit::Slope_g_per_s(double time_s) const {
  if (model == KineticModel::kFickianSheet) {
    const double x = (time_s - step_start_s) / tau_s;
    if (!(x > 0.0)) return std::numeric_limits<double>::infinity();
    return -amplitude_g * Fickian(x).x_dfdx / (x * tau_s);
  }
  const double dt = time_s - t0_s;
  double slope = amplitude_g / tau_s * std::exp(-dt / tau_s);
  if (terms == 2) slope += amplitude2_g / tau2_s * std::exp(-dt / tau2_s);
  return slope;
}

TailFit FitExponentialTail(std::span<const double> time_s, std::span<const double> mass_g,
                           const TailFitOptions& options) {
  TailFit fit;
  const std::size_t n = std::min(time_s.size(), mass_g.size());
  fit.num_points = static_cast<int>(n);
  const bool stated_sd = options.point_sd_g.has_value() && *options.point_sd_g > 0.0;
  if (n < (stated_sd ? kMinPointsStatedSd : kMinPoints)) {
    fit.message = "too few points in the tail";
    return fit;
  }
  if (!(time_s[n - 1] - time_s.front() > 0.0)) {
    fit.message = "tail has no duration";
    return fit;
  }
  const ScaledTail scaled = Scale(time_s.first(n), mass_g.first(n));
  fit.t0_s = scaled.t0;
  // ---- The candidates' fits (with an optimum: they take part in the weights).
  std::vector<ModelFit> fits;
  const ModelFit one = FitThreeParameters(scaled, Basis{KineticModel::kOneExponential, 0.0});
  if (one.has_optimum) fits.push_back(one);
  const ScaledTail grouped = GroupMeans(scaled);
  if (one.ok && options.max_exponential_terms >= 2) {
    // An unresolved second exponential is the one-exponential model again: left out.
    const ModelFit two = FitTwoTerms(grouped, one);
    if (two.ok) fits.push_back(two);
  }
  // Span over which the data constrain each model (scaled; see the header).
  double fickian_span = 1.0;
  if (options.step_start_s && *options.step_start_s <= scaled.t0) {
    const double origin = (*options.step_start_s - scaled.t0) / scaled.time_scale;
    fickian_span = 1.0 - origin;
    const ModelFit sheet = FitThreeParameters(scaled, Basis{KineticModel::kFickianSheet, origin});
    if (sheet.has_optimum) fits.push_back(sheet);
  }
  if (fits.empty()) {
    fit.message = one.message;
    return fit;
  }
  // ---- Akaike weights on the group means.
  std::vector<double> aicc;
  aicc.reserve(fits.size());
  // Stated sd: of one point in scaled units (a group mean of g points has sd / sqrt(g)).
  const double group_size = static_cast<double>(n) / static_cast<double>(grouped.t.size());
  const double sd_scaled = stated_sd ? *options.point_sd_g / scaled.mass_scale : 0.0;
  for (const ModelFit& candidate : fits) {
    const double ssr = SsrOn(grouped, candidate);
    aicc.push_back(
        stated_sd ? AicStatedSd(ssr * group_size / (sd_scaled * sd_scaled), candidate.parameters)
                  : Aicc(ssr, grouped.t.size(), candidate.parameters));
  }
  std::vector<double> all_weights = fitters::AkaikeWeights(aicc);
  double all_sum = 1.0;  // AkaikeWeights: normalised, or all 0 when no AICc is defined
  if (std::none_of(all_weights.begin(), all_weights.end(), [](double w) { return w > 0.0; })) {
    std::fill(all_weights.begin(), all_weights.end(), 1.0);
    all_sum = static_cast<double>(all_weights.size());
  }
  // ---- Usable candidates: identifiable, time constant within max_tau_to_span of their span.
  // When the models that cannot give an asymptote carry more than half the weight (they
  // describe the tail better), the tail does not determine it: refused.
  std::vector<ModelFit> credible;
  std::vector<double> weight;
  double weight_sum = 0.0;
  std::string refusal;
  for (std::size_t i = 0; i < fits.size(); ++i) {
    const ModelFit& candidate = fits[i];
    const double span = candidate.model == KineticModel::kFickianSheet ? fickian_span : 1.0;
    if (!candidate.ok) {
      if (refusal.empty()) {
        refusal = fmt::format("{}: {}", KineticModelName(candidate.model), candidate.message);
      }
    } else if (!(candidate.slowest_tau <= options.max_tau_to_span * span)) {
      if (refusal.empty()) {
        refusal = fmt::format("time constant {:.3g} h exceeds {:.3g} x the fitted tail ({:.3g} h)",
                              candidate.slowest_tau * scaled.time_scale / kSecondsPerHour,
                              options.max_tau_to_span, span * scaled.time_scale / kSecondsPerHour);
      }
    } else {
      credible.push_back(candidate);
      weight.push_back(all_weights[i] / all_sum);
      weight_sum += all_weights[i] / all_sum;
    }
  }
  // Half the weight: project choice.
  constexpr double kMinUsableWeight = 0.5;
  if (credible.empty() || !(weight_sum >= kMinUsableWeight)) {
    fit.message = refusal.empty() ? one.message : refusal;
    if (!credible.empty()) {
      fit.message += fmt::format("; the models without an asymptote carry {:.2f} of the weight",
                                 1.0 - weight_sum);
    }
    return fit;
  }
  double mean = 0.0;
  std::size_t top = 0;
  for (std::size_t i = 0; i < credible.size(); ++i) {
    weight[i] /= weight_sum;
    mean += weight[i] * credible[i].m_inf;
    if (weight[i] > weight[top]) top = i;
  }
  double within = 0.0, between = 0.0;
  for (std::size_t i = 0; i < credible.size(); ++i) {
    const double variance = stated_sd ? sd_scaled * sd_scaled * credible[i].unscaled_variance_m_inf
                                      : credible[i].u_m_inf * credible[i].u_m_inf;
    credible[i].u_m_inf = std::sqrt(variance);
    within += weight[i] * variance;
    between += weight[i] * (credible[i].m_inf - mean) * (credible[i].m_inf - mean);
  }
  // ---- Back to the units of the input.
  const double s = scaled.mass_scale;
  const double time_scale = scaled.time_scale;
  for (std::size_t i = 0; i < credible.size(); ++i) {
    fit.candidates.push_back(
        TailCandidate{credible[i].model, scaled.mass_offset + s * credible[i].m_inf,
                      s * credible[i].u_m_inf, credible[i].slowest_tau * time_scale, weight[i]});
  }
  const ModelFit& chosen = credible[top];
  fit.ok = true;
  fit.m_inf_g = scaled.mass_offset + s * mean;
  fit.u_m_inf_g = s * std::sqrt(within);
  fit.u_model_g = s * std::sqrt(between);
  fit.degrees_of_freedom =
      stated_sd ? options.point_sd_degrees_of_freedom : chosen.degrees_of_freedom;
  fit.model = chosen.model;
  fit.terms = chosen.model == KineticModel::kTwoExponentials ? 2 : 1;
  fit.step_start_s = scaled.t0 + chosen.origin * time_scale;
  fit.model_m_inf_g = scaled.mass_offset + s * chosen.m_inf;
  fit.amplitude_g = s * chosen.amplitude;
  fit.tau_s = chosen.tau * time_scale;
  fit.amplitude2_g = s * chosen.amplitude2;
  fit.tau2_s = chosen.tau2 * time_scale;
  fit.slowest_tau_s = chosen.slowest_tau * time_scale;
  fit.rms_residual_g =
      s * std::sqrt(chosen.ssr / static_cast<double>(std::max(1, chosen.num_points)));
  fit.ssr_g2 = s * s * chosen.ssr;
  fit.residual_degrees_of_freedom = chosen.degrees_of_freedom;
  return fit;
}

}  // namespace sorbtrace::equilibrate::internal
