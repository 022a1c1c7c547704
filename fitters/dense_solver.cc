#include "fitters/internal/dense_solver.h"

#include <algorithm>
#include <cmath>
#include <limits>

namespace sorbtrace::fitters::internal {
namespace {

// Ceres Solver's Solver::Options defaults (ceres/solver.h, version 2.1), which FitWorkspace
// leaves unchanged.
constexpr double kMaxTrustRegionRadius = 1e16;
constexpr double kMinTrustRegionRadius = 1e-32;
constexpr double kMinRelativeDecrease = 1e-3;
constexpr double kMinLmDiagonal = 1e-6;
constexpr double kMaxLmDiagonal = 1e32;
constexpr int kMaxConsecutiveInvalidSteps = 5;

// Least-squares solution x of min ||A x - b|| for a column-major m x p matrix A (m >= p) by
// Householder QR (G. H. Golub, C. F. Van Loan, Matrix Computations, 4th ed., Johns Hopkins
// 2013, alg. 5.3.2 and sec. 5.3.3): A and b are overwritten (R in the upper triangle of A,
// Q'b in b). The same factorisation Ceres' DENSE_QR uses, written for the few columns here
// without the block-expression overhead of a general library. A zero or non-finite pivot gives
// a non-finite x, which the caller treats as an invalid step.
void SolveLeastSquaresByHouseholderQr(int m, int p, double* a, double* b, double* x) {
  for (int k = 0; k < p; ++k) {
    double* column = a + static_cast<std::ptrdiff_t>(k) * m;
    double norm_squared = 0.0;
    for (int i = k; i < m; ++i) norm_squared += column[i] * column[i];
    const double norm = std::sqrt(norm_squared);
    if (!(norm > 0.0)) {
      column[k] = 0.0;
      continue;
    }
    // v = column[k..m) - alpha e_1 with alpha = -sign(column[k]) norm (no cancellation);
    // H = I - 2 v v' / (v'v), v'v = 2 norm (norm + |column[k]|).
    const double alpha = column[k] > 0.0 ? -norm : norm;
    column[k] -= alpha;
    const double two_over_vtv = 1.0 / (norm * (norm + std::abs(column[k] + alpha)));
    for (int j = k + 1; j < p; ++j) {
      double* other = a + static_cast<std::ptrdiff_t>(j) * m;
      double dot = 0.0;
      for (int i = k; i < m; ++i) dot += column[i] * other[i];
      const double factor = dot * two_over_vtv;
      for (int i = k; i < m; ++i) other[i] -= factor * column[i];
    }
    double dot = 0.0;
    for (int i = k; i < m; ++i) dot += column[i] * b[i];
    const double factor = dot * two_over_vtv;
    for (int i = k; i < m; ++i) b[i] -= factor * column[i];
    column[k] = alpha;  // R_kk
  }
  // Back substitution R x = (Q'b)[0..p).
  for (int k = p - 1; k >= 0; --k) {
    double sum = b[k];
    for (int j = k + 1; j < p; ++j) sum -= a[static_cast<std::ptrdiff_t>(j) * m + k] * x[j];
    x[k] = sum / a[static_cast<std::ptrdiff_t>(k) * m + k];
  }
}

}  // namespace

DenseLevenbergMarquardt::DenseLevenbergMarquardt(const Model& model, const ModelContext& context,
                                                 const FitOptions& options)
    : model_(model),
      context_(context),
      options_(options),
      num_parameters_(model.num_parameters()),
      lower_(Eigen::VectorXd::Constant(num_parameters_, -kInfinity)),
      upper_(Eigen::VectorXd::Constant(num_parameters_, kInfinity)) {
  if (options_.use_bounds) {
    const ModelInfo& info = model_.info();
    for (int j = 0; j < num_parameters_; ++j) {
      const ParameterSpec& spec = info.parameters[static_cast<std::size_t>(j)];
      lower_[j] = spec.lower_bound;
      upper_[j] = spec.upper_bound;
      if (!(lower_[j] <= upper_[j])) bounds_ordered_ = false;
    }
  }
  const int p = num_parameters_;
  x_.resize(p);
  candidate_.resize(p);
  step_.resize(p);
  gradient_.resize(p);
  scaling_.resize(p);
  lm_diagonal_squared_.resize(p);
}

void DenseLevenbergMarquardt::Resize(int num_residuals) {
  if (num_residuals == num_residuals_) return;
  num_residuals_ = num_residuals;
  const int n = num_residuals;
  const int p = num_parameters_;
  residuals_.resize(n);
  candidate_residuals_.resize(n);
  model_residuals_.resize(n);
  jacobian_.resize(n, p);
  candidate_jacobian_.resize(n, p);
  scaled_jacobian_.resize(n, p);
  augmented_.setZero(n + p, p);
  augmented_rhs_.setZero(n + p);
}

void DenseLevenbergMarquardt::Clamp(Eigen::VectorXd* x) const {
  // As Ceres' bounded Plus: only bounds that are ordered are applied (FitWorkspace sets the
  // finite ones; an infinite bound clamps nothing).
  for (int j = 0; j < num_parameters_; ++j) {
    if (lower_[j] <= upper_[j]) (*x)[j] = std::clamp((*x)[j], lower_[j], upper_[j]);
  }
}

DenseLevenbergMarquardt::Evaluation DenseLevenbergMarquardt::EvaluateCandidate(
    const Eigen::VectorXd& x) {
  const std::vector<Observation>& data = *data_;
  if (model_.WeightedResiduals(x.data(), data.data(), data.size(), context_,
                               candidate_residuals_.data(), candidate_jacobian_.data())) {
    return Evaluation::kResidualsAndJacobian;
  }
  // Tell a non-finite Jacobian from non-finite residuals (rare; Ceres evaluates the cost of a
  // candidate without its Jacobian and fails only when an accepted point has none).
  return model_.WeightedResiduals(x.data(), data.data(), data.size(), context_,
                                  candidate_residuals_.data(), nullptr)
             ? Evaluation::kResidualsOnly
             : Evaluation::kFailed;
}

void DenseLevenbergMarquardt::AcceptCandidate() {
  residuals_.swap(candidate_residuals_);
  jacobian_.swap(candidate_jacobian_);
  gradient_.noalias() = jacobian_.transpose() * residuals_;
}

double DenseLevenbergMarquardt::ProjectedGradientMaxNorm(const Eigen::VectorXd& x) const {
  double norm = 0.0;
  for (int j = 0; j < num_parameters_; ++j) {
    double moved = x[j] - gradient_[j];
    if (lower_[j] <= upper_[j]) moved = std::clamp(moved, lower_[j], upper_[j]);
    norm = std::max(norm, std::abs(x[j] - moved));
  }
  return norm;
}

DenseSolveOutcome DenseLevenbergMarquardt::Solve(const std::vector<Observation>& data,
                                                 std::vector<double>* parameters) {
  DenseSolveOutcome outcome;
  const int p = num_parameters_;
  const int n = static_cast<int>(data.size());
  if (static_cast<int>(parameters->size()) != p || n < 1) {
    outcome.failed = true;
    outcome.message = "no parameters or no data";
    return outcome;
  }
  if (!bounds_ordered_) {
    // Ceres rejects such a problem with its own message; leave it to Ceres.
    outcome.failed = true;
    outcome.message = "a lower bound exceeds its upper bound";
    return outcome;
  }
  data_ = &data;
  Resize(n);
  for (int j = 0; j < p; ++j) x_[j] = (*parameters)[static_cast<std::size_t>(j)];
  Clamp(&x_);
  int steps = 0;
  const auto finish = [&](bool converged, bool failed, const char* message) {
    for (int j = 0; j < p; ++j) (*parameters)[static_cast<std::size_t>(j)] = x_[j];
    outcome.converged = converged;
    outcome.failed = failed;
    if (failed) outcome.cost = std::numeric_limits<double>::infinity();
    outcome.iterations = steps + 1;
    outcome.message = message;
    return outcome;
  };

  if (EvaluateCandidate(x_) != Evaluation::kResidualsAndJacobian) {
    return finish(false, true, "Residual and Jacobian evaluation failed at the start point.");
  }
  AcceptCandidate();
  double cost = 0.5 * residuals_.squaredNorm();
  outcome.cost = cost;
  // Jacobi scaling, fixed at the start point.
  for (int j = 0; j < p; ++j) scaling_[j] = 1.0 / (1.0 + jacobian_.col(j).norm());
  scaled_jacobian_ = jacobian_ * scaling_.asDiagonal();
  if (ProjectedGradientMaxNorm(x_) <= options_.gradient_tolerance) {
    return finish(true, false, "Gradient tolerance reached (dense solver).");
  }

  double radius = options_.initial_trust_region_radius;
  const double max_radius = std::max(kMaxTrustRegionRadius, radius);
  double decrease_factor = 2.0;
  bool reuse_diagonal = false;
  int consecutive_invalid_steps = 0;
  while (true) {
    if (steps >= options_.max_iterations) {
      return finish(false, false, "Maximum number of iterations reached (dense solver).");
    }
    ++steps;

    // Levenberg-Marquardt step: min ||Js s + r||^2 + ||D s||^2 by QR of [Js; D].
    if (!reuse_diagonal) {
      for (int j = 0; j < p; ++j) {
        lm_diagonal_squared_[j] =
            std::clamp(scaled_jacobian_.col(j).squaredNorm(), kMinLmDiagonal, kMaxLmDiagonal);
      }
    }
    augmented_.topRows(n) = scaled_jacobian_;
    augmented_.bottomRows(p).setZero();
    for (int j = 0; j < p; ++j) augmented_(n + j, j) = std::sqrt(lm_diagonal_squared_[j] / radius);
    augmented_rhs_.head(n) = residuals_;
    augmented_rhs_.tail(p).setZero();
    SolveLeastSquaresByHouseholderQr(n + p, p, augmented_.data(), augmented_rhs_.data(),
                                     step_.data());
    step_ = -step_;

    double model_cost_change = -std::numeric_limits<double>::infinity();
    if (step_.allFinite()) {
      model_residuals_.noalias() = scaled_jacobian_ * step_;
      model_cost_change = -model_residuals_.dot(residuals_ + 0.5 * model_residuals_);
    }
    if (!(model_cost_change > 0.0 && std::isfinite(model_cost_change))) {
      // Invalid step: shrink the trust region as for a rejected step.
      if (++consecutive_invalid_steps >= kMaxConsecutiveInvalidSteps) {
        return finish(false, true, "Too many consecutive invalid steps (dense solver).");
      }
      radius /= decrease_factor;
      decrease_factor *= 2.0;
      reuse_diagonal = true;
      if (radius < kMinTrustRegionRadius) {
        return finish(true, false, "Minimum trust region radius reached (dense solver).");
      }
      continue;
    }
    consecutive_invalid_steps = 0;

    candidate_ = x_ + scaling_.cwiseProduct(step_);
    Clamp(&candidate_);
    // The Jacobian is evaluated with the residuals: most steps are accepted, and the value
    // comes with it at little extra cost.
    const Evaluation evaluation = EvaluateCandidate(candidate_);
    const double candidate_cost = evaluation == Evaluation::kFailed
                                      ? std::numeric_limits<double>::max()
                                      : 0.5 * candidate_residuals_.squaredNorm();

    if ((x_ - candidate_).norm() <=
        options_.parameter_tolerance * (x_.norm() + options_.parameter_tolerance)) {
      return finish(true, false, "Parameter tolerance reached (dense solver).");
    }
    const double cost_change = cost - candidate_cost;
    if (std::abs(cost_change) <= options_.function_tolerance * cost) {
      return finish(true, false, "Function tolerance reached (dense solver).");
    }

    const double relative_decrease = cost_change / model_cost_change;
    if (relative_decrease > kMinRelativeDecrease) {
      x_ = candidate_;
      if (evaluation != Evaluation::kResidualsAndJacobian) {
        return finish(false, true, "Jacobian evaluation failed at an accepted point.");
      }
      AcceptCandidate();
      cost = candidate_cost;
      outcome.cost = cost;
      scaled_jacobian_ = jacobian_ * scaling_.asDiagonal();
      const double shape = 2.0 * relative_decrease - 1.0;
      radius = std::min(max_radius, radius / std::max(1.0 / 3.0, 1.0 - shape * shape * shape));
      decrease_factor = 2.0;
      reuse_diagonal = false;
      if (ProjectedGradientMaxNorm(x_) <= options_.gradient_tolerance) {
        return finish(true, false, "Gradient tolerance reached (dense solver).");
      }
    } else {
      radius /= decrease_factor;
      decrease_factor *= 2.0;
      reuse_diagonal = true;
    }
    if (radius < kMinTrustRegionRadius) {
      return finish(true, false, "Minimum trust region radius reached (dense solver).");
    }
  }
}

}  // namespace sorbtrace::fitters::internal
