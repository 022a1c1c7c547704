// Resample: residual and case bootstrap and JCGM 101 Monte Carlo, each draw from its own random
// stream and refitted on a reused FitWorkspace (its dense solver, or its ceres::Problem) of the
// thread that runs it, warm-started at the full-data solution.
#include <Eigen/Cholesky>
#include <algorithm>
#include <atomic>
#include <cmath>
#include <exception>
#include <limits>
#include <memory>
#include <numeric>
#include <system_error>
#include <thread>

#include "fitters/fitter.h"
#include "fitters/internal/fit_workspace.h"
#include "fitters/internal/random.h"
#include "fitters/internal/statistics.h"
#include "pipeline/common/draw_statistics.h"

namespace sorbtrace::fitters {
namespace {

// Whether the full fit fitted point i's true x[0] (its errors-in-variables mask, fitter.h).
bool X0IsFitted(const FitResult& full_fit, std::size_t i) {
  return i < full_fit.x0_is_fitted.size() && full_fit.x0_is_fitted[i] != 0;
}

// The linearised start of the residual-bootstrap refits (see Resample).
struct WarmStart {
  bool usable = false;
  Eigen::MatrixXd gain;      // (A'A)^-1 A', p x n
  Eigen::MatrixXd jacobian;  // a_i rows, n x p
  std::vector<double> b, c;  // dr_yi/dt_i and dr_xi/dt_i (c = 0: no fitted t_i)
  std::vector<double> g2;    // b^2 + c^2
  Eigen::VectorXd reduced, step;
  // Leverage h_i = a~_i (A'A)^-1 a~_i' of point i in the reduced problem (the hat matrix's
  // diagonal of the linearised fit).
  std::vector<double> leverage;

  // Weighted SSR (x terms included) of `data` at (params, t), t used where c != 0; +inf
  // where not evaluable. Work storage is kept between calls.
  std::vector<Observation> at;
  std::vector<double> residuals;
  double Cost(const Model& model, const std::vector<Observation>& data, const ModelContext& context,
              const std::vector<double>& params, const std::vector<double>& t) {
    at = data;
    residuals.resize(data.size());
    double ssr = 0.0;
    for (std::size_t i = 0; i < data.size(); ++i) {
      if (c[i] == 0.0) continue;
      at[i].x[0] = t[i];
      const double x_residual = c[i] * (t[i] - data[i].x[0]);  // (x0_i - t_i) / sigma_x0_i
      ssr += x_residual * x_residual;
    }
    if (!model.WeightedResiduals(params.data(), at.data(), at.size(), context, residuals.data(),
                                 nullptr, nullptr)) {
      return std::numeric_limits<double>::infinity();
    }
    for (double r : residuals) ssr += r * r;
    return ssr;
  }

  // The linearised step overshoots where the model is curved along poorly determined
  // directions (multimodal retention curves): halve it (at most kMaxHalvings times) while the
  // cost at the shorter step is lower, a backtracking line search on the step from the
  // full-data solution (J. Nocedal, S. J. Wright, Numerical Optimization, 2nd ed., Springer
  // 2006, alg. 3.1, with the simple-decrease condition). Measured on the fit benchmark:
  // durner2 refit iterations -22 %, GAB and BET unchanged (their full step is kept).
  std::vector<double> trial, trial_t, full_step_start, full_step_t;
  void Backtrack(const Model& model, const std::vector<Observation>& data,
                 const ModelContext& context, const FitResult& full_fit, std::vector<double>* start,
                 std::vector<double>* x0_start) {
    constexpr int kMaxHalvings = 4;
    double best = Cost(model, data, context, *start, *x0_start);
    full_step_start = *start;
    full_step_t = *x0_start;
    trial.resize(start->size());
    trial_t.resize(x0_start->size());
    double fraction = 1.0;
    for (int h = 0; h < kMaxHalvings; ++h) {
      fraction *= 0.5;
      for (std::size_t j = 0; j < trial.size(); ++j) {
        trial[j] =
            full_fit.parameters[j] + fraction * (full_step_start[j] - full_fit.parameters[j]);
      }
      for (std::size_t i = 0; i < trial_t.size(); ++i) {
        trial_t[i] = full_fit.fitted_x0[i] + fraction * (full_step_t[i] - full_fit.fitted_x0[i]);
      }
      const double cost = Cost(model, data, context, trial, trial_t);
      if (!(cost < best)) break;
      best = cost;
      *start = trial;
      *x0_start = trial_t;
    }
  }

  // drawn_y, drawn_x: the weighted y and x residuals of the drawn data at the full-data
  // solution (p_hat, t_hat).
  void Apply(const FitResult& full_fit, const std::vector<double>& drawn_y,
             const std::vector<double>& drawn_x, std::vector<double>* start,
             std::vector<double>* x0_start) {
    const Eigen::Index n = static_cast<Eigen::Index>(drawn_y.size());
    for (Eigen::Index i = 0; i < n; ++i) {
      const std::size_t k = static_cast<std::size_t>(i);
      reduced[i] =
          c[k] != 0.0 ? (c[k] * drawn_y[k] - b[k] * drawn_x[k]) / std::sqrt(g2[k]) : drawn_y[k];
    }
    step.noalias() = -gain * reduced;
    for (std::size_t j = 0; j < start->size(); ++j) {
      (*start)[j] = full_fit.parameters[j] + step[static_cast<Eigen::Index>(j)];
    }
    for (Eigen::Index i = 0; i < n; ++i) {
      const std::size_t k = static_cast<std::size_t>(i);
      if (c[k] == 0.0) continue;
      const double r_y = drawn_y[k] + jacobian.row(i).dot(step);
      (*x0_start)[k] = full_fit.fitted_x0[k] - (b[k] * r_y + c[k] * drawn_x[k]) / g2[k];
    }
  }
};

WarmStart LinearisedWarmStart(const Model& model, const std::vector<Observation>& observations,
                              const ModelContext& context, const FitResult& full_fit,
                              const FitOptions& fit_options) {
  WarmStart warm;
  if (fit_options.loss != LossKind::kSquared) return warm;  // the step assumes squared loss
  const std::size_t n = observations.size();
  const Eigen::Index p = static_cast<Eigen::Index>(full_fit.parameters.size());
  std::vector<Observation> at_solution = observations;
  warm.b.assign(n, 0.0);
  warm.c.assign(n, 0.0);
  warm.g2.assign(n, 1.0);
  for (std::size_t i = 0; i < n; ++i) {
    if (X0IsFitted(full_fit, i)) {
      at_solution[i].x[0] = full_fit.fitted_x0[i];
      warm.c[i] = -1.0 / observations[i].sigma_x0;
    }
  }
  using RowMajor = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
  RowMajor jacobian(static_cast<Eigen::Index>(n), p);
  std::vector<double> residuals(n), slopes(n);
  if (!model.WeightedResiduals(full_fit.parameters.data(), at_solution.data(), n, context,
                               residuals.data(), jacobian.data(), slopes.data())) {
    return warm;
  }
  warm.jacobian = jacobian;
  Eigen::MatrixXd reduced_rows = warm.jacobian;
  for (std::size_t i = 0; i < n; ++i) {
    if (warm.c[i] == 0.0) continue;
    warm.b[i] = slopes[i];
    warm.g2[i] = slopes[i] * slopes[i] + warm.c[i] * warm.c[i];
    reduced_rows.row(static_cast<Eigen::Index>(i)) *= warm.c[i] / std::sqrt(warm.g2[i]);
  }
  const Eigen::MatrixXd normal = reduced_rows.transpose() * reduced_rows;
  const Eigen::LDLT<Eigen::MatrixXd> ldlt(normal);
  if (ldlt.info() != Eigen::Success || !ldlt.isPositive()) return warm;
  warm.gain = ldlt.solve(reduced_rows.transpose());
  if (!warm.gain.allFinite()) return warm;
  warm.leverage.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    const Eigen::Index k = static_cast<Eigen::Index>(i);
    warm.leverage[i] = reduced_rows.row(k).dot(warm.gain.col(k));
  }
  warm.reduced.resize(static_cast<Eigen::Index>(n));
  warm.step.resize(p);
  warm.usable = true;
  return warm;
}

// The residual bootstrap's pool (see fitter.h): e_i = r_xi n_xi + r_yi n_yi, the weighted
// residual vector (r_xi, r_yi) = ((x0_i - t_hat_i) / sigma_x0_i, (y_i - f(t_hat_i)) / sigma_y_i)
// projected on the unit normal n_i = (-a_i, 1) / sqrt(1 + a_i^2) of the fitted curve in weighted
// coordinates, a_i = f'(t_hat_i) sigma_x0_i / sigma_y_i (a_i = 0 without a fitted t_i: e_i =
// r_yi). Divided by sqrt(1 - h_i), h_i the leverage of point i in the linearised fit (the
// modified residuals of Davison & Hinkley 1997, eq. 6.9: a point that pulls the fit towards
// itself shows a residual smaller than its error by that factor), then centred; without
// leverages (robust loss, singular Jacobian) or where some h_i >= 1, all scaled by the
// average factor sqrt(n / (n - p)) instead.
struct ResidualPool {
  std::vector<double> residual;
  std::vector<double> normal_x, normal_y;  // n_i
};

ResidualPool OrthogonalResiduals(const Model& model, const std::vector<Observation>& observations,
                                 const ModelContext& context, const FitResult& full_fit,
                                 const std::vector<double>& leverage) {
  const std::size_t n = observations.size();
  ResidualPool pool;
  pool.residual.assign(n, 0.0);
  pool.normal_x.assign(n, 0.0);
  pool.normal_y.assign(n, 1.0);
  for (std::size_t i = 0; i < n; ++i) {
    const Observation& o = observations[i];
    const double r_y = full_fit.residuals[i] / o.sigma_y;
    double r_x = 0.0;
    if (X0IsFitted(full_fit, i)) {
      const double x[kMaxInputs] = {full_fit.fitted_x0[i], o.x[1]};
      const double a =
          model.SlopeInX0(full_fit.parameters.data(), x, context) * o.sigma_x0 / o.sigma_y;
      if (std::isfinite(a)) {
        const double norm = std::sqrt(1.0 + a * a);
        pool.normal_x[i] = -a / norm;
        pool.normal_y[i] = 1.0 / norm;
        r_x = (o.x[0] - full_fit.fitted_x0[i]) / o.sigma_x0;
      }
    }
    pool.residual[i] = r_x * pool.normal_x[i] + r_y * pool.normal_y[i];
  }
  // Leverages below this are usable (1 - h_i >= 1e-6; a point fitted exactly carries no
  // information on its error: common practice).
  constexpr double kMaxLeverage = 1.0 - 1e-6;
  const bool modified =
      leverage.size() == n && std::all_of(leverage.begin(), leverage.end(), [](double h) {
        return std::isfinite(h) && h >= 0.0 && h < kMaxLeverage;
      });
  const int p = static_cast<int>(full_fit.parameters.size());
  const double inflation = std::sqrt(static_cast<double>(n) / (static_cast<double>(n) - p));
  double mean = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    if (modified) pool.residual[i] /= std::sqrt(1.0 - leverage[i]);
    mean += pool.residual[i];
  }
  mean /= static_cast<double>(n);
  for (double& e : pool.residual) e = modified ? e - mean : (e - mean) * inflation;
  return pool;
}

// Absolute weights (see fitter.h, "residual scale"): the pool scaled to root mean square 1, the
// stated scale. False (pool unchanged) where every residual is zero: no shape to resample.
bool ScaleToStatedSigma(ResidualPool* pool) {
  double sum_squares = 0.0;
  for (double e : pool->residual) sum_squares += e * e;
  const double rms = std::sqrt(sum_squares / static_cast<double>(pool->residual.size()));
  if (!(rms > 0.0) || !std::isfinite(rms)) return false;
  for (double& e : pool->residual) e /= rms;
  return true;
}

// What one resampled refit gave, kept per draw so the draws can be assembled in draw order.
struct DrawOutcome {
  bool converged = false;
  int iterations = 0;
  std::vector<double> parameters;  // the refit (when converged)
  std::vector<double> pivots;      // its studentised pivots (empty: none formed)
};

// One thread's refit machinery: its own workspace and warm-start work storage, reused from
// draw to draw.
struct DrawWorker {
  DrawWorker(const Model& model, const std::vector<Observation>& observations,
             const ModelContext& context, const FitOptions& refit_options,
             const WarmStart& linearised, const std::vector<double>& first_start)
      : workspace(model, observations, context, refit_options),
        warm(linearised),
        start(first_start),
        drawn_y(observations.size(), 0.0),
        drawn_x(observations.size(), 0.0),
        x0_start(observations.size(), 0.0),
        shift(observations.size(), 0.0),
        source(observations.size(), 0) {}
  internal::FitWorkspace workspace;
  WarmStart warm;
  std::vector<double> start, drawn_y, drawn_x, x0_start, shift;
  std::vector<std::size_t> source;
  Eigen::MatrixXd covariance;
};

// Runs run_draw(b, worker, outcome_b) for b = 0 .. count - 1 on up to num_threads threads (the
// calling thread and num_threads - 1 more), each thread taking the next draw not yet taken and
// working on a DrawWorker of its own (all made here, before any thread starts, so a failure to
// make one throws as it did without threads). The outcomes do not depend on the number of
// threads as long as a draw depends on its index alone. An exception thrown by a draw is
// rethrown here, that of the lowest draw index, after every thread has ended (draws after it are
// skipped: with one thread they would never have run). A thread that cannot be started leaves
// its draws to the others.
template <typename MakeWorker, typename RunDraw>
std::vector<DrawOutcome> RunDraws(int count, int num_threads, const MakeWorker& make_worker,
                                  const RunDraw& run_draw) {
  std::vector<DrawOutcome> outcomes(static_cast<std::size_t>(std::max(0, count)));
  const int threads = std::clamp(num_threads, 1, std::max(1, count));
  std::vector<std::unique_ptr<DrawWorker>> workers;
  workers.reserve(static_cast<std::size_t>(threads));
  for (int t = 0; t < threads; ++t) workers.push_back(make_worker());
  std::vector<std::exception_ptr> errors(outcomes.size());
  std::atomic<int> next{0};
  std::atomic<int> first_error{count};
  const auto work = [&](DrawWorker* worker) {
    for (int b = next.fetch_add(1); b < count && b < first_error.load(); b = next.fetch_add(1)) {
      const std::size_t slot = static_cast<std::size_t>(b);
      try {
        run_draw(b, *worker, outcomes[slot]);
      } catch (...) {
        errors[slot] = std::current_exception();
        int seen = first_error.load();
        while (b < seen && !first_error.compare_exchange_weak(seen, b)) {
        }
      }
    }
  };
  std::vector<std::thread> pool;
  for (int t = 1; t < threads; ++t) {
    try {
      pool.emplace_back(work, workers[static_cast<std::size_t>(t)].get());
    } catch (const std::system_error&) {
      break;  // no more threads: the started ones and this one take every draw
    }
  }
  work(workers.front().get());
  for (std::thread& thread : pool) thread.join();
  if (first_error.load() < count) {
    std::rethrow_exception(errors[static_cast<std::size_t>(first_error.load())]);
  }
  return outcomes;
}

// One standardised draw of a common factor with nu degrees of freedom (CommonFactor): standard
// normal for infinite nu (the Box-Muller stream, as without degrees of freedom), else Student's
// t by inversion of one uniform (JCGM 101:2008, 6.4.9.7) with max(nu, kMinFactorDof) degrees of
// freedom (see CommonFactor).
double FactorVariate(internal::Random& random, double nu) {
  if (!std::isfinite(nu)) return random.Normal();
  return StudentTVariate(random.Uniform(), std::max(nu, kMinFactorDof));
}

// One draw of the residual bootstrap's scale factor w = sqrt(nu / chi2_nu), chi2_nu the sum of
// nu squared standard normal deviates (see fitter.h, "residual scale"): the ratio sigma / s of
// the error scale to the scale s estimated from nu = n - p residuals, drawn from its
// distribution given s (the posterior of sigma^2, nu s^2 / chi2_nu, of a normal regression
// under the prior p(sigma) ~ 1 / sigma: A. Gelman et al., Bayesian Data Analysis, 3rd ed.
// 2013, sec. 14.2, eq. 14.7; from memory). The parameters of a linear model drawn with it are
// t_nu-distributed about their estimates, as the Student-t interval states them.
double ResidualScaleVariate(internal::Random& random, int nu) {
  double chi2 = 0.0;
  for (int k = 0; k < nu; ++k) {
    const double z = random.Normal();
    chi2 += z * z;
  }
  return chi2 > 0.0 ? std::sqrt(static_cast<double>(nu) / chi2) : 1.0;
}

}  // namespace

ResampleResult Resample(const Model& model, const std::vector<Observation>& observations,
                        const ModelContext& context, const FitResult& full_fit,
                        const FitOptions& fit_options, const ResampleOptions& options) {
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  ResampleResult result;
  const int p = model.num_parameters();
  const std::size_t n = observations.size();
  const std::size_t pp = static_cast<std::size_t>(p);
  const int num_resamples = std::max(0, options.num_resamples);
  result.parameter_low.assign(pp, kNaN);
  result.parameter_high.assign(pp, kNaN);
  result.parameter_u.assign(pp, kNaN);
  result.studentized_low.assign(pp, kNaN);
  result.studentized_high.assign(pp, kNaN);
  if (!full_fit.ok() || full_fit.parameters.size() != pp || full_fit.residuals.size() != n ||
      full_fit.fitted_x0.size() != n || static_cast<int>(n) <= p || !fit_options.IsValid(nullptr)) {
    result.num_failed = num_resamples;
    return result;
  }
  if (!full_fit.summary.covariance_available) {
    // A rank-deficient fit: see ResampleResult::not_formed.
    result.not_formed =
        "not formed: the full-data fit has no covariance (rank-deficient Jacobian), so some "
        "parameter is not determined by the data and its resampled refits would only drift along "
        "that direction";
    result.num_failed = num_resamples;
    return result;
  }

  const int dof = static_cast<int>(n) - p;
  const bool relative = fit_options.weights == WeightConvention::kRelative;
  const double s = relative ? std::sqrt(full_fit.statistics.weighted_ssr / dof) : 1.0;

  // Refits stop within options.refit_tolerance_se full-data standard errors of their optimum.
  FitOptions refit_options = fit_options;
  refit_options.step_solver = StepSolver::kDenseNormalCholesky;
  if (options.refit_tolerance_se > 0.0 && full_fit.estimates.size() == pp &&
      std::all_of(full_fit.estimates.begin(), full_fit.estimates.end(),
                  [](const ParameterEstimate& e) {
                    return std::isfinite(e.standard_error) && e.standard_error > 0.0;
                  })) {
    refit_options.scaled_step_tolerance = options.refit_tolerance_se;
    refit_options.parameter_scale.clear();
    for (const ParameterEstimate& e : full_fit.estimates) {
      refit_options.parameter_scale.push_back(e.standard_error);
    }
  }
  // Residual bootstrap: each refit starts one Gauss-Newton step away from the full-data
  // solution (p_hat, t_hat), computed from the full-data Jacobian for the drawn residuals, so
  // the refit begins within second order of its optimum. Point i has y residual
  // r_yi = e*_i n_yi and x residual r_xi = (x0*_i - t_hat_i) / sigma_x0_i = e*_i n_xi (the
  // drawn residual put back along the normal; see fitter.h),
  // Jacobian rows a_i = dr_yi/dp, b_i = dr_yi/dt_i, c_i = -1 / sigma_x0_i. Eliminating the
  // step in t_i leaves the row a_i c_i / g_i and residual (c_i r_yi - b_i r_xi) / g_i with
  // g_i = sqrt(b_i^2 + c_i^2) (a_i and r_yi alone without a fitted t_i); then
  // s_p = -(A'A)^-1 A' r and s_ti = -(b_i (r_yi + a_i s_p) + c_i r_xi) / g_i^2.
  WarmStart warm_start;
  if (options.kind == ResampleKind::kResidualBootstrap) {
    warm_start = LinearisedWarmStart(model, observations, context, full_fit, fit_options);
  }
  // The residual bootstrap's pool: each point's signed orthogonal residual, corrected for its
  // leverage and centred (see fitter.h), and the direction it is put back along.
  ResidualPool pool;
  if (options.kind == ResampleKind::kResidualBootstrap) {
    pool = OrthogonalResiduals(model, observations, context, full_fit, warm_start.leverage);
    if (!relative && !ScaleToStatedSigma(&pool)) {
      result.not_formed = kBootstrapZeroResiduals;
      result.num_failed = num_resamples;
      return result;
    }
  }

  // Full-data standard errors in the form of the pivots (fitter.h): the fit's own, s
  // sqrt([(J'J)^-1]_jj) under kRelative and sqrt([(J'J)^-1]_jj) under kAbsolute.
  const bool studentize = options.kind != ResampleKind::kMonteCarloInputs;
  std::vector<double> se_hat(pp, kNaN);
  if (studentize && full_fit.summary.covariance_available && full_fit.estimates.size() == pp) {
    for (std::size_t j = 0; j < pp; ++j) se_hat[j] = full_fit.estimates[j].standard_error;
  }
  // Relative shift sum_k w_ik z_k of each observation in this resample (common factors).
  const bool common = std::any_of(
      options.common_factors.begin(), options.common_factors.end(), [n](const CommonFactor& f) {
        return f.weights.size() == n && f.relative_standard_uncertainty > 0.0;
      });
  // A common factor moves p* without entering se*: the pivot would not be one (fitter.h).
  if (studentize && common) result.studentized_not_formed = kStudentizedWithCommonFactor;
  const bool studentize_ok = studentize && !common &&
                             std::all_of(se_hat.begin(), se_hat.end(),
                                         [](double se) { return std::isfinite(se) && se > 0.0; });

  // Draw b: its data from its own random stream (internal::DrawStreamState), its refit on the
  // worker's workspace (every Solve starts afresh from the given start: no state carries over
  // from the draw before), its outcome in its own slot.
  const auto run_draw = [&](int b, DrawWorker& worker, DrawOutcome& outcome) {
    internal::Random random(internal::DrawStreamState(options.seed, static_cast<std::uint64_t>(b)));
    internal::FitWorkspace& workspace = worker.workspace;
    WarmStart& warm = worker.warm;
    std::vector<double>& start = worker.start;
    std::vector<double>& drawn_y = worker.drawn_y;
    std::vector<double>& drawn_x = worker.drawn_x;
    std::vector<double>& x0_start = worker.x0_start;
    std::vector<std::size_t>& source = worker.source;
    std::vector<double>& shift = worker.shift;
    if (common) {
      std::fill(shift.begin(), shift.end(), 0.0);
      for (const CommonFactor& factor : options.common_factors) {
        if (factor.weights.size() != n || !(factor.relative_standard_uncertainty > 0.0)) continue;
        const double z =
            factor.relative_standard_uncertainty * FactorVariate(random, factor.degrees_of_freedom);
        for (std::size_t i = 0; i < n; ++i) shift[i] += factor.weights[i] * z;
      }
    }
    std::vector<Observation>& data = workspace.data();
    switch (options.kind) {
      case ResampleKind::kResidualBootstrap: {
        const double scale = relative ? ResidualScaleVariate(random, dof) : 1.0;
        for (std::size_t i = 0; i < n; ++i) {
          data[i] = observations[i];
          const double e = scale * pool.residual[random.Index(n)];
          drawn_y[i] =
              e * pool.normal_y[i] + full_fit.fitted[i] * shift[i] / observations[i].sigma_y;
          drawn_x[i] = e * pool.normal_x[i];
          data[i].y = full_fit.fitted[i] + observations[i].sigma_y * drawn_y[i];
          if (pool.normal_x[i] != 0.0) {
            data[i].x[0] = full_fit.fitted_x0[i] + observations[i].sigma_x0 * drawn_x[i];
          }
          x0_start[i] = full_fit.fitted_x0[i];
        }
        if (warm.usable) {
          warm.Apply(full_fit, drawn_y, drawn_x, &start, &x0_start);
          warm.Backtrack(model, data, context, full_fit, &start, &x0_start);
        }
        break;
      }
      case ResampleKind::kCaseBootstrap:
        for (std::size_t i = 0; i < n; ++i) {
          source[i] = random.Index(n);
          data[i] = observations[source[i]];
          data[i].y *= 1.0 + shift[source[i]];
          x0_start[i] = full_fit.fitted_x0[source[i]];
        }
        break;
      case ResampleKind::kMonteCarloInputs:
        for (std::size_t i = 0; i < n; ++i) {
          data[i] = observations[i];
          data[i].y += observations[i].y * shift[i] + s * observations[i].sigma_y * random.Normal();
          if (observations[i].sigma_x0 > 0.0) {
            data[i].x[0] += s * observations[i].sigma_x0 * random.Normal();
          }
          x0_start[i] = full_fit.fitted_x0[i];
        }
        break;
    }
    workspace.DataChanged();
    const internal::SolveOutcome solved =
        workspace.Solve(warm.usable ? start : full_fit.parameters, &x0_start);
    outcome.iterations = solved.iterations;
    outcome.converged = solved.converged;
    if (!solved.converged) return;
    outcome.parameters = workspace.parameters();
    double weighted_ssr = 0.0;
    Eigen::MatrixXd& covariance = worker.covariance;
    if (studentize_ok && workspace.LastSolveCovariance(&covariance, &weighted_ssr)) {
      // The refit's residual variance under kRelative; the stated scale (1) under kAbsolute.
      const double s2 = relative ? weighted_ssr / dof : 1.0;
      bool usable = std::isfinite(s2) && s2 > 0.0;
      for (std::size_t j = 0; j < pp && usable; ++j) {
        const Eigen::Index jj = static_cast<Eigen::Index>(j);
        usable = covariance(jj, jj) > 0.0;
      }
      if (usable) {
        outcome.pivots.resize(pp);
        for (std::size_t j = 0; j < pp; ++j) {
          const Eigen::Index jj = static_cast<Eigen::Index>(j);
          outcome.pivots[j] =
              (outcome.parameters[j] - full_fit.parameters[j]) / std::sqrt(s2 * covariance(jj, jj));
        }
      }
    }
  };
  const std::vector<DrawOutcome> outcomes = RunDraws(
      num_resamples, options.num_threads,
      [&] {
        return std::make_unique<DrawWorker>(model, observations, context, refit_options, warm_start,
                                            full_fit.parameters);
      },
      run_draw);

  // In draw order, so the result does not depend on the number of threads.
  std::vector<std::vector<double>> pivots(studentize_ok ? pp : 0);
  for (const DrawOutcome& outcome : outcomes) {
    result.refit_iterations += outcome.iterations;
    if (!outcome.converged) {
      ++result.num_failed;
      continue;
    }
    result.parameter_draws.push_back(outcome.parameters);
    if (outcome.pivots.size() == pp && studentize_ok) {
      for (std::size_t j = 0; j < pp; ++j) pivots[j].push_back(outcome.pivots[j]);
      ++result.num_studentized;
    }
  }

  const std::size_t draws = result.parameter_draws.size();
  if (draws < 2) return result;
  const double alpha = 1.0 - options.confidence_level;
  std::vector<double> column(draws);
  for (std::size_t j = 0; j < pp; ++j) {
    for (std::size_t d = 0; d < draws; ++d) column[d] = result.parameter_draws[d][j];
    const DrawStatistics stats = DrawStatisticsOf(column, options.confidence_level);
    result.parameter_u[j] = stats.standard_uncertainty;
    result.parameter_low[j] = stats.low;
    result.parameter_high[j] = stats.high;
    if (studentize_ok && pivots[j].size() >= 2) {
      double t_low = kNaN, t_high = kNaN;
      internal::PercentilePair(&pivots[j], 0.5 * alpha, 1.0 - 0.5 * alpha, &t_low, &t_high);
      result.studentized_low[j] = full_fit.parameters[j] - t_high * se_hat[j];
      result.studentized_high[j] = full_fit.parameters[j] - t_low * se_hat[j];
    }
  }
  return result;
}

}  // namespace sorbtrace::fitters
