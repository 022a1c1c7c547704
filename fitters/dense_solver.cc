#include "fitters/internal/dense_solver.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

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
// Geodesic acceleration: finite-difference step h and acceptance ratio alpha (Transtrum &
// Sethna 2012, sec. 4: "h = 0.1", "alpha = 0.75"; GSL's defaults too).
constexpr double kAccelerationDifference = 0.1;
constexpr double kMaxAccelerationRatio = 0.75;

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

// Solves L L' x = v for the Cholesky factor L that SolveByCholeskyInPlace left in the lower
// triangle of `factor` (forward then back substitution); x overwrites v.
void SolveWithCholeskyFactor(int p, const double* factor, double* v) {
  const auto at = [&](int r, int c) { return factor[static_cast<std::ptrdiff_t>(c) * p + r]; };
  for (int j = 0; j < p; ++j) {
    double sum = v[j];
    for (int l = 0; l < j; ++l) sum -= at(j, l) * v[l];
    v[j] = sum / at(j, j);
  }
  for (int j = p - 1; j >= 0; --j) {
    double sum = v[j];
    for (int r = j + 1; r < p; ++r) sum -= at(r, j) * v[r];
    v[j] = sum / at(j, j);
  }
}

// Solves N x = v in place for a symmetric positive definite p x p column-major N (only its
// lower triangle is read; L overwrites it) by Cholesky (Golub & Van Loan, Matrix Computations,
// 4th ed., alg. 4.2.1), then SolveWithCholeskyFactor; x overwrites v. False for a non-positive
// or non-finite pivot.
bool SolveByCholeskyInPlace(int p, double* normal, double* v) {
  const auto at = [&](int r, int c) -> double& {
    return normal[static_cast<std::ptrdiff_t>(c) * p + r];
  };
  for (int j = 0; j < p; ++j) {
    double d = at(j, j);
    for (int l = 0; l < j; ++l) d -= at(j, l) * at(j, l);
    if (!(d > 0.0) || !std::isfinite(d)) return false;
    const double root = std::sqrt(d);
    at(j, j) = root;
    for (int r = j + 1; r < p; ++r) {
      double sum = at(r, j);
      for (int l = 0; l < j; ++l) sum -= at(r, l) * at(j, l);
      at(r, j) = sum / root;
    }
  }
  SolveWithCholeskyFactor(p, normal, v);
  return true;
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
  use_scaled_step_test_ = options_.scaled_step_tolerance > 0.0 &&
                          static_cast<int>(options_.parameter_scale.size()) == p;
  use_acceleration_ =
      use_scaled_step_test_ && options_.step_solver == StepSolver::kDenseNormalCholesky;
  for (Eigen::VectorXd* v : {&x_, &candidate_x_, &gradient_x_, &scaling_x_, &diagonal_x_, &step_x_,
                             &normal_rhs_, &accel_x_})
    v->resize(p);
  normal_.resize(p, p);
  step_factor_.resize(p, p);
}

void DenseLevenbergMarquardt::Resize(int num_points, int num_true_x) {
  if (num_points == num_points_ && num_true_x == num_true_x_) return;
  num_points_ = num_points;
  num_true_x_ = num_true_x;
  const int n = num_points;
  const int q = num_true_x;
  const int p = num_parameters_;
  for (Eigen::VectorXd* v : {&ry_, &candidate_ry_, &slope_, &candidate_slope_, &model_ry_,
                             &point_gamma_, &point_beta_, &accel_ry_, &second_derivative_})
    v->resize(n);
  for (Eigen::VectorXd* v : {&t_, &candidate_t_, &rx_, &candidate_rx_, &gradient_t_, &scaling_t_,
                             &diagonal_t_, &step_t_, &model_rx_, &x_residual_jacobian_, &accel_t_})
    v->resize(q);
  jacobian_.resize(n, p);
  candidate_jacobian_.resize(n, p);
  // One row per point (a fitted x[0] eliminated), p damping rows.
  reduced_.resize(n + p, p);
  reduced_rhs_.resize(n + p);
  point_of_true_x_.resize(static_cast<std::size_t>(q));
}

void DenseLevenbergMarquardt::Clamp(Eigen::VectorXd* x) const {
  for (int j = 0; j < num_parameters_; ++j) {
    if (lower_[j] <= upper_[j]) (*x)[j] = std::clamp((*x)[j], lower_[j], upper_[j]);
  }
}

DenseLevenbergMarquardt::Evaluation DenseLevenbergMarquardt::EvaluateCandidate(
    const Eigen::VectorXd& x, const Eigen::VectorXd& t) {
  const int q = num_true_x_;
  for (int k = 0; k < q; ++k) {
    const std::size_t i = static_cast<std::size_t>(point_of_true_x_[static_cast<std::size_t>(k)]);
    evaluated_[i].x[0] = t[k];
    candidate_rx_[k] = (observed_x0_[static_cast<std::size_t>(k)] - t[k]) / evaluated_[i].sigma_x0;
  }
  const std::size_t n = evaluated_.size();
  double* slopes = q > 0 ? candidate_slope_.data() : nullptr;
  if (model_.WeightedResiduals(x.data(), evaluated_.data(), n, context_, candidate_ry_.data(),
                               candidate_jacobian_.data(), slopes)) {
    if (q == 0) candidate_slope_.setZero();
    return Evaluation::kResidualsAndJacobian;
  }
  // Tell a non-finite Jacobian from non-finite residuals (rare; Ceres evaluates the cost of a
  // candidate without its Jacobian and fails only when an accepted point has none).
  return model_.WeightedResiduals(x.data(), evaluated_.data(), n, context_, candidate_ry_.data(),
                                  nullptr, nullptr)
             ? Evaluation::kResidualsOnly
             : Evaluation::kFailed;
}

void DenseLevenbergMarquardt::AcceptCandidate() {
  x_.swap(candidate_x_);
  t_.swap(candidate_t_);
  ry_.swap(candidate_ry_);
  rx_.swap(candidate_rx_);
  jacobian_.swap(candidate_jacobian_);
  slope_.swap(candidate_slope_);
  gradient_x_.noalias() = jacobian_.transpose() * ry_;
  for (int k = 0; k < num_true_x_; ++k) {
    const int i = point_of_true_x_[static_cast<std::size_t>(k)];
    gradient_t_[k] = slope_[i] * ry_[i] + x_residual_jacobian_[k] * rx_[k];
  }
}

double DenseLevenbergMarquardt::Cost(const Eigen::VectorXd& ry, const Eigen::VectorXd& rx) const {
  return 0.5 * (ry.squaredNorm() + rx.squaredNorm());
}

double DenseLevenbergMarquardt::ProjectedGradientMaxNorm() const {
  double norm = 0.0;
  for (int j = 0; j < num_parameters_; ++j) {
    double moved = x_[j] - gradient_x_[j];
    if (lower_[j] <= upper_[j]) moved = std::clamp(moved, lower_[j], upper_[j]);
    norm = std::max(norm, std::abs(x_[j] - moved));
  }
  for (int k = 0; k < num_true_x_; ++k) norm = std::max(norm, std::abs(gradient_t_[k]));
  return norm;
}

bool DenseLevenbergMarquardt::GaussNewtonStepWithinScale() {
  // The undamped Gauss-Newton step of the reduced problem (every fitted t_i eliminated) from
  // its normal equations, solved by Cholesky. Only this test uses it, so the squared condition
  // number of the normal equations does no harm: a singular or indefinite N fails the test and
  // the ordinary tolerances decide.
  const int p = num_parameters_;
  FormScaledNormalEquations(0.0);
  if (!SolveByCholeskyInPlace(p, normal_.data(), normal_rhs_.data())) return false;
  for (int j = 0; j < p; ++j) {
    if (!(std::abs(normal_rhs_[j] * scaling_x_[j]) <=
          options_.scaled_step_tolerance * options_.parameter_scale[static_cast<std::size_t>(j)])) {
      return false;
    }
  }
  return true;
}

void DenseLevenbergMarquardt::FormScaledNormalEquations(double inverse_radius) {
  // Point i's row of the reduced problem is sqrt(gamma_i) a~_i with right-hand side
  // -beta_i / sqrt(gamma_i) (see ComputeStep), so it adds gamma_i a~_i a~_i' to N and
  // -beta_i a~_i to v; gamma_i = 1, beta_i = r_yi without a fitted t_i.
  for (int i = 0, k = 0; i < num_points_; ++i) {
    const bool fitted_x = k < num_true_x_ && point_of_true_x_[static_cast<std::size_t>(k)] == i;
    double gamma = 1.0;
    double beta = ry_[i];
    if (fitted_x) {
      const double b = slope_[i] * scaling_t_[k];
      const double c = x_residual_jacobian_[k] * scaling_t_[k];
      const double d2 = inverse_radius > 0.0 ? diagonal_t_[k] * inverse_radius : 0.0;
      const double h = b * b + c * c + d2;
      gamma = (c * c + d2) / h;
      beta = ry_[i] - b * (b * ry_[i] + c * rx_[k]) / h;
      ++k;
    }
    point_gamma_[i] = gamma;
    point_beta_[i] = beta;
  }
  // This runs for every step and every accepted point of every refit: for the usual parameter
  // counts with fixed-size (unrolled, vectorised) Eigen products.
  if (!AccumulateForFixedSize(std::integer_sequence<int, 2, 3, 4, 5, 6, 7, 8, 9>{})) {
    AccumulateNormalEquations<Eigen::Dynamic>();
  }
}

template <int... P>
bool DenseLevenbergMarquardt::AccumulateForFixedSize(std::integer_sequence<int, P...> /*sizes*/) {
  return ((num_parameters_ == P ? (AccumulateNormalEquations<P>(), true) : false) || ...);
}

template <int P>
void DenseLevenbergMarquardt::AccumulateNormalEquations() {
  const int p = num_parameters_;
  using Vector = Eigen::Matrix<double, P, 1>;
  using Matrix = Eigen::Matrix<double, P, P>;
  Matrix normal = Matrix::Zero(p, p);
  Vector rhs = Vector::Zero(p);
  const Eigen::Map<const Vector> scaling(scaling_x_.data(), p);
  for (int i = 0; i < num_points_; ++i) {
    const Eigen::Map<const Vector> row(jacobian_.data() + static_cast<std::ptrdiff_t>(i) * p, p);
    const Vector a = row.cwiseProduct(scaling);
    normal.noalias() += (point_gamma_[i] * a) * a.transpose();
    rhs.noalias() -= point_beta_[i] * a;
  }
  normal_ = normal;
  normal_rhs_ = rhs;
}

void DenseLevenbergMarquardt::ComputeStep(double radius) {
  const int n = num_points_;
  const int p = num_parameters_;
  if (options_.step_solver == StepSolver::kDenseNormalCholesky) {
    // The normal equations of the reduced rows and the p damping rows (Ceres'
    // DENSE_NORMAL_CHOLESKY; squares the condition number, which the damping bounds), formed
    // from the Jacobian rows directly. A singular system gives a non-finite step, which the
    // caller treats as invalid.
    const double inverse_radius = 1.0 / radius;
    FormScaledNormalEquations(inverse_radius);
    for (int j = 0; j < p; ++j) normal_(j, j) += diagonal_x_[j] * inverse_radius;
    step_x_ = normal_rhs_;
    step_factor_ = normal_;
    if (!SolveByCholeskyInPlace(p, step_factor_.data(), step_x_.data())) {
      step_x_.setConstant(std::numeric_limits<double>::quiet_NaN());
    }
    BackSubstituteTrueX0Steps(radius);
    step_accelerated_ =
        use_acceleration_ && step_x_.allFinite() && step_t_.allFinite() && AccelerateStep(radius);
    return;
  }
  // Rows of the scaled Jacobian: a_i = dr_yi/dp * scaling_x, b_i = dr_yi/dt_i * scaling_t,
  // c_i = dr_xi/dt_i * scaling_t, damping d_i = sqrt(diagonal_t / radius).
  int row = 0;
  int k = 0;
  const int m = static_cast<int>(reduced_.rows());
  for (int i = 0; i < n; ++i) {
    const bool fitted_x = k < num_true_x_ && point_of_true_x_[static_cast<std::size_t>(k)] == i;
    if (!fitted_x) {
      for (int j = 0; j < p; ++j) reduced_(row, j) = jacobian_(i, j) * scaling_x_[j];
      reduced_rhs_[row] = -ry_[i];
      ++row;
      continue;
    }
    const double b = slope_[i] * scaling_t_[k];
    const double c = x_residual_jacobian_[k] * scaling_t_[k];
    const double d = std::sqrt(diagonal_t_[k] / radius);
    const double h = b * b + c * c + d * d;
    // Minimised over s_t, the three rows (y, x, damping) of the point leave ||P v||^2, P = I -
    // w w' / h the projection onto the complement of w = (b, c, d) and v = (a s_p + r_y, r_x,
    // 0) = e_1 (a s_p) + v0. As a function of u = a s_p that is gamma u^2 + 2 beta u + const
    // with gamma = e_1' P e_1 = (c^2 + d^2) / h > 0 and beta = e_1' P v0: one row
    // sqrt(gamma) a, right-hand side -beta / sqrt(gamma).
    const double gamma = (c * c + d * d) / h;
    const double beta = ry_[i] - b * (b * ry_[i] + c * rx_[k]) / h;
    const double root_gamma = std::sqrt(gamma);
    for (int j = 0; j < p; ++j) reduced_(row, j) = root_gamma * jacobian_(i, j) * scaling_x_[j];
    reduced_rhs_[row] = -beta / root_gamma;
    ++row;
    ++k;
  }
  for (int j = 0; j < p; ++j) {
    for (int jj = 0; jj < p; ++jj) reduced_(row + j, jj) = 0.0;
    reduced_(row + j, j) = std::sqrt(diagonal_x_[j] / radius);
    reduced_rhs_[row + j] = 0.0;
  }
  SolveLeastSquaresByHouseholderQr(m, p, reduced_.data(), reduced_rhs_.data(), step_x_.data());
  BackSubstituteTrueX0Steps(radius);
}

void DenseLevenbergMarquardt::BackSubstituteTrueX0Steps(double radius) {
  // Back-substitution of the eliminated steps: s_t = -(b (a s_p + r_y) + c r_x) / h.
  const int p = num_parameters_;
  for (int k = 0; k < num_true_x_; ++k) {
    const int i = point_of_true_x_[static_cast<std::size_t>(k)];
    const double b = slope_[i] * scaling_t_[k];
    const double c = x_residual_jacobian_[k] * scaling_t_[k];
    const double h = b * b + c * c + diagonal_t_[k] / radius;
    double a_dot_s = 0.0;
    for (int j = 0; j < p; ++j) a_dot_s += jacobian_(i, j) * scaling_x_[j] * step_x_[j];
    step_t_[k] = -(b * (a_dot_s + ry_[i]) + c * rx_[k]) / h;
  }
}

bool DenseLevenbergMarquardt::AccelerateStep(double radius) {
  const int n = num_points_;
  const int p = num_parameters_;
  const int q = num_true_x_;
  const double h = kAccelerationDifference;
  // Residuals at x + h v (parameters inside their bounds: a projected point would not lie on
  // the line the difference assumes).
  candidate_x_ = x_ + h * scaling_x_.cwiseProduct(step_x_);
  for (int j = 0; j < p; ++j) {
    if (lower_[j] <= upper_[j] && (candidate_x_[j] < lower_[j] || candidate_x_[j] > upper_[j])) {
      return false;
    }
  }
  for (int k = 0; k < q; ++k) {
    const std::size_t i = static_cast<std::size_t>(point_of_true_x_[static_cast<std::size_t>(k)]);
    evaluated_[i].x[0] = t_[k] + h * scaling_t_[k] * step_t_[k];
  }
  if (!model_.WeightedResiduals(candidate_x_.data(), evaluated_.data(), static_cast<std::size_t>(n),
                                context_, accel_ry_.data(), nullptr, nullptr)) {
    return false;
  }
  // r''_v of the y residuals (the x residuals are linear in t: no second derivative).
  second_derivative_.noalias() = jacobian_ * scaling_x_.cwiseProduct(step_x_);
  for (int k = 0; k < q; ++k) {
    const int i = point_of_true_x_[static_cast<std::size_t>(k)];
    second_derivative_[i] += slope_[i] * scaling_t_[k] * step_t_[k];
  }
  second_derivative_ = (2.0 / h) * ((accel_ry_ - ry_) / h - second_derivative_);
  // a = -(N)^-1 J' r'': the reduced right-hand side of FormScaledNormalEquations with r_y ->
  // r''_y and r_x -> 0, i.e. beta_i = gamma_i r''_i (gamma_i = 1 without a fitted t_i).
  accel_x_.setZero();
  for (int i = 0; i < n; ++i) {
    const double beta = point_gamma_[i] * second_derivative_[i];
    for (int j = 0; j < p; ++j) accel_x_[j] -= beta * jacobian_(i, j) * scaling_x_[j];
  }
  SolveWithCholeskyFactor(p, step_factor_.data(), accel_x_.data());
  for (int k = 0; k < q; ++k) {
    const int i = point_of_true_x_[static_cast<std::size_t>(k)];
    const double b = slope_[i] * scaling_t_[k];
    const double c = x_residual_jacobian_[k] * scaling_t_[k];
    const double hk = b * b + c * c + diagonal_t_[k] / radius;
    double a_dot_s = 0.0;
    for (int j = 0; j < p; ++j) a_dot_s += jacobian_(i, j) * scaling_x_[j] * accel_x_[j];
    accel_t_[k] = -b * (a_dot_s + second_derivative_[i]) / hk;
  }
  if (!accel_x_.allFinite() || !accel_t_.allFinite()) return false;
  const double velocity = std::sqrt(step_x_.squaredNorm() + step_t_.squaredNorm());
  const double acceleration = std::sqrt(accel_x_.squaredNorm() + accel_t_.squaredNorm());
  return 2.0 * acceleration <= kMaxAccelerationRatio * velocity;
}

DenseSolveOutcome DenseLevenbergMarquardt::Solve(const std::vector<Observation>& data,
                                                 const std::vector<char>& eiv,
                                                 std::vector<double>* parameters,
                                                 std::vector<double>* x0_true) {
  DenseSolveOutcome outcome;
  const int p = num_parameters_;
  const int n = static_cast<int>(data.size());
  int q = 0;
  for (int i = 0; i < n && i < static_cast<int>(eiv.size()); ++i)
    q += eiv[static_cast<std::size_t>(i)] ? 1 : 0;
  if (static_cast<int>(parameters->size()) != p || n < 1 ||
      (q > 0 && (x0_true == nullptr || static_cast<int>(x0_true->size()) != n))) {
    outcome.failed = true;
    outcome.message = "no parameters, no data or no true x[0]";
    return outcome;
  }
  if (!bounds_ordered_) {
    // Ceres rejects such a problem with its own message; leave it to Ceres.
    outcome.failed = true;
    outcome.message = "a lower bound exceeds its upper bound";
    return outcome;
  }
  Resize(n, q);
  evaluated_ = data;
  observed_x0_.resize(static_cast<std::size_t>(q));
  for (int i = 0, k = 0; i < n; ++i) {
    if (i >= static_cast<int>(eiv.size()) || !eiv[static_cast<std::size_t>(i)]) continue;
    const Observation& o = data[static_cast<std::size_t>(i)];
    point_of_true_x_[static_cast<std::size_t>(k)] = i;
    observed_x0_[static_cast<std::size_t>(k)] = o.x[0];
    x_residual_jacobian_[k] = -1.0 / o.sigma_x0;
    candidate_t_[k] = (*x0_true)[static_cast<std::size_t>(i)];
    ++k;
  }
  for (int j = 0; j < p; ++j) candidate_x_[j] = (*parameters)[static_cast<std::size_t>(j)];
  Clamp(&candidate_x_);
  x_ = candidate_x_;
  t_ = candidate_t_;
  int steps = 0;
  const auto finish = [&](bool converged, bool failed, const char* message) {
    for (int j = 0; j < p; ++j) (*parameters)[static_cast<std::size_t>(j)] = x_[j];
    for (int k = 0; k < num_true_x_; ++k) {
      (*x0_true)[static_cast<std::size_t>(point_of_true_x_[static_cast<std::size_t>(k)])] = t_[k];
    }
    outcome.converged = converged;
    outcome.failed = failed;
    if (failed) outcome.cost = std::numeric_limits<double>::infinity();
    outcome.iterations = steps + 1;
    outcome.message = message;
    return outcome;
  };

  if (EvaluateCandidate(candidate_x_, candidate_t_) != Evaluation::kResidualsAndJacobian) {
    return finish(false, true, "Residual and Jacobian evaluation failed at the start point.");
  }
  AcceptCandidate();
  double cost = Cost(ry_, rx_);
  outcome.cost = cost;
  // Jacobi scaling, fixed at the start point.
  for (int j = 0; j < p; ++j) scaling_x_[j] = 1.0 / (1.0 + jacobian_.col(j).norm());
  for (int k = 0; k < q; ++k) {
    const double b = slope_[point_of_true_x_[static_cast<std::size_t>(k)]];
    scaling_t_[k] =
        1.0 / (1.0 + std::sqrt(b * b + x_residual_jacobian_[k] * x_residual_jacobian_[k]));
  }
  if (ProjectedGradientMaxNorm() <= options_.gradient_tolerance) {
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

    if (!reuse_diagonal) {
      for (int j = 0; j < p; ++j) {
        diagonal_x_[j] = std::clamp(jacobian_.col(j).squaredNorm() * scaling_x_[j] * scaling_x_[j],
                                    kMinLmDiagonal, kMaxLmDiagonal);
      }
      for (int k = 0; k < q; ++k) {
        const double b = slope_[point_of_true_x_[static_cast<std::size_t>(k)]] * scaling_t_[k];
        const double c = x_residual_jacobian_[k] * scaling_t_[k];
        diagonal_t_[k] = std::clamp(b * b + c * c, kMinLmDiagonal, kMaxLmDiagonal);
      }
    }
    ComputeStep(radius);

    // Model decrease -m'(r + m/2), m = J_scaled * step.
    double model_cost_change = -std::numeric_limits<double>::infinity();
    if (step_x_.allFinite() && step_t_.allFinite()) {
      model_ry_.noalias() = jacobian_ * scaling_x_.cwiseProduct(step_x_);
      for (int k = 0; k < q; ++k) {
        const int i = point_of_true_x_[static_cast<std::size_t>(k)];
        model_ry_[i] += slope_[i] * scaling_t_[k] * step_t_[k];
        model_rx_[k] = x_residual_jacobian_[k] * scaling_t_[k] * step_t_[k];
      }
      model_cost_change =
          -model_ry_.dot(ry_ + 0.5 * model_ry_) - model_rx_.dot(rx_ + 0.5 * model_rx_);
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

    if (step_accelerated_) {
      // The trust region judges the velocity's model decrease against the accelerated step's
      // actual one (Transtrum & Sethna 2012, sec. 4).
      step_x_ += 0.5 * accel_x_;
      step_t_ += 0.5 * accel_t_;
    }
    candidate_x_ = x_ + scaling_x_.cwiseProduct(step_x_);
    Clamp(&candidate_x_);
    candidate_t_ = t_ + scaling_t_.cwiseProduct(step_t_);
    // The Jacobian is evaluated with the residuals: most steps are accepted, and the value
    // comes with it at little extra cost.
    const Evaluation evaluation = EvaluateCandidate(candidate_x_, candidate_t_);
    const double candidate_cost = evaluation == Evaluation::kFailed
                                      ? std::numeric_limits<double>::max()
                                      : Cost(candidate_ry_, candidate_rx_);

    const double step_norm =
        std::sqrt((x_ - candidate_x_).squaredNorm() + (t_ - candidate_t_).squaredNorm());
    const double x_norm = std::sqrt(x_.squaredNorm() + t_.squaredNorm());
    if (step_norm <= options_.parameter_tolerance * (x_norm + options_.parameter_tolerance)) {
      return finish(true, false, "Parameter tolerance reached (dense solver).");
    }
    const double cost_change = cost - candidate_cost;
    if (std::abs(cost_change) <= options_.function_tolerance * cost) {
      // Ceres stops here at x. When the cost no longer tells the two points apart (its
      // rounding, about 1e-16 relative, can exceed the change a parameter error of 1e-9 makes),
      // the candidate, one more Levenberg-Marquardt step on, is the better estimate: take it.
      if (evaluation == Evaluation::kResidualsAndJacobian) {
        AcceptCandidate();
        outcome.cost = candidate_cost;
      }
      return finish(true, false, "Function tolerance reached (dense solver).");
    }

    const double relative_decrease = cost_change / model_cost_change;
    if (relative_decrease > kMinRelativeDecrease) {
      if (evaluation != Evaluation::kResidualsAndJacobian) {
        x_ = candidate_x_;
        t_ = candidate_t_;
        return finish(false, true, "Jacobian evaluation failed at an accepted point.");
      }
      AcceptCandidate();
      cost = candidate_cost;
      outcome.cost = cost;
      const double shape = 2.0 * relative_decrease - 1.0;
      radius = std::min(max_radius, radius / std::max(1.0 / 3.0, 1.0 - shape * shape * shape));
      decrease_factor = 2.0;
      reuse_diagonal = false;
      if (ProjectedGradientMaxNorm() <= options_.gradient_tolerance) {
        return finish(true, false, "Gradient tolerance reached (dense solver).");
      }
      if (use_scaled_step_test_ && GaussNewtonStepWithinScale()) {
        return finish(true, false,
                      "Gauss-Newton step within the tolerance in parameter scales (dense solver).");
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

bool DenseLevenbergMarquardt::ParameterNormalMatrix(Eigen::MatrixXd* normal, double* weighted_ssr) {
  if (num_points_ < 1 || jacobian_.rows() != num_points_) return false;
  // The undamped scaled normal equations (point weights gamma_i = c_i^2 / (b_i^2 + c_i^2): the
  // scaling of t_i cancels), unscaled: N_jl / (scaling_j scaling_l).
  FormScaledNormalEquations(0.0);
  const int p = num_parameters_;
  normal->resize(p, p);
  for (int j = 0; j < p; ++j) {
    for (int l = 0; l <= j; ++l) {
      const double value = normal_(j, l) / (scaling_x_[j] * scaling_x_[l]);
      (*normal)(j, l) = value;
      (*normal)(l, j) = value;
    }
  }
  *weighted_ssr = 2.0 * Cost(ry_, rx_);
  return normal->allFinite() && std::isfinite(*weighted_ssr);
}

}  // namespace sorbtrace::fitters::internal
