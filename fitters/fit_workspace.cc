#include "fitters/internal/fit_workspace.h"

#include <fmt/format.h>

#include <Eigen/Cholesky>
#include <Eigen/Eigenvalues>
#include <Eigen/SVD>
#include <algorithm>
#include <cmath>
#include <utility>

#include "pipeline/common/number_text.h"

namespace sorbtrace::fitters::internal {
namespace {

// Relative sensitivity |p_j| * ||J_j|| below which a parameter counts as having no effect,
// as a fraction of the largest: 1e-12, a few orders above double rounding (common practice).
constexpr double kMinRelativeSensitivity = 1e-12;

// x = x0 + diag(scale) * delta: a linear re-scaling of the parameter block so that
// ceres::Covariance sees a Jacobian with unit-norm columns (the rank test then measures the
// conditioning of the problem, not the units of the parameters). C is returned in the
// ambient (original) coordinates.
class DiagonalScaleManifold final : public ceres::Manifold {
 public:
  explicit DiagonalScaleManifold(std::vector<double> scale) : scale_(std::move(scale)) {}
  int AmbientSize() const override { return static_cast<int>(scale_.size()); }
  int TangentSize() const override { return static_cast<int>(scale_.size()); }
  bool Plus(const double* x, const double* delta, double* x_plus_delta) const override {
    for (std::size_t i = 0; i < scale_.size(); ++i) x_plus_delta[i] = x[i] + scale_[i] * delta[i];
    return true;
  }
  bool PlusJacobian(const double* /*x*/, double* jacobian) const override {
    const std::size_t n = scale_.size();
    std::fill(jacobian, jacobian + n * n, 0.0);
    for (std::size_t i = 0; i < n; ++i) jacobian[i * n + i] = scale_[i];
    return true;
  }
  bool Minus(const double* y, const double* x, double* y_minus_x) const override {
    for (std::size_t i = 0; i < scale_.size(); ++i) y_minus_x[i] = (y[i] - x[i]) / scale_[i];
    return true;
  }
  bool MinusJacobian(const double* /*x*/, double* jacobian) const override {
    const std::size_t n = scale_.size();
    std::fill(jacobian, jacobian + n * n, 0.0);
    for (std::size_t i = 0; i < n; ++i) jacobian[i * n + i] = 1.0 / scale_[i];
    return true;
  }

 private:
  std::vector<double> scale_;
};

std::unique_ptr<ceres::LossFunction> MakeLoss(LossKind kind, double scale) {
  switch (kind) {
    case LossKind::kSquared:
      return nullptr;
    case LossKind::kHuber:
      return std::make_unique<ceres::HuberLoss>(scale);
    case LossKind::kSoftLOne:
      return std::make_unique<ceres::SoftLOneLoss>(scale);
    case LossKind::kCauchy:
      return std::make_unique<ceres::CauchyLoss>(scale);
  }
  return nullptr;
}

}  // namespace

FitWorkspace::FitWorkspace(const Model& model, std::vector<Observation> observations,
                           const ModelContext& context, const FitOptions& options)
    : model_(model),
      context_(context),
      options_(options),
      data_(std::move(observations)),
      parameters_(static_cast<std::size_t>(model.num_parameters()), 0.0),
      x0_true_(data_.size(), 0.0),
      state_(parameters_.size() + data_.size(), 0.0),
      eiv_(ErrorsInVariablesMask(data_, options_)),
      loss_(MakeLoss(options.loss, options.loss_scale)) {
  for (std::size_t i = 0; i < data_.size(); ++i) x0_true_[i] = data_[i].x[0];
  solver_options_.minimizer_type = ceres::TRUST_REGION;
  solver_options_.trust_region_strategy_type = ceres::LEVENBERG_MARQUARDT;
  solver_options_.linear_solver_type = ceres::DENSE_QR;
  solver_options_.max_num_iterations = options_.max_iterations;
  solver_options_.function_tolerance = options_.function_tolerance;
  solver_options_.gradient_tolerance = options_.gradient_tolerance;
  solver_options_.parameter_tolerance = options_.parameter_tolerance;
  solver_options_.use_nonmonotonic_steps = options_.use_nonmonotonic_steps;
  solver_options_.initial_trust_region_radius = options_.initial_trust_region_radius;
  solver_options_.max_trust_region_radius =
      std::max(solver_options_.max_trust_region_radius, options_.initial_trust_region_radius);
  solver_options_.num_threads = 1;  // deterministic and cheap for small problems
  solver_options_.logging_type = ceres::SILENT;
  solver_options_.minimizer_progress_to_stdout = false;
  if (options_.loss == LossKind::kSquared && !options_.use_nonmonotonic_steps) {
    dense_solver_ = std::make_unique<DenseLevenbergMarquardt>(model_, context_, options_);
  }
  Build();
}

int FitWorkspace::num_errors_in_variables() const {
  return static_cast<int>(std::count(eiv_.begin(), eiv_.end(), 1));
}

void FitWorkspace::Build() {
  ceres::Problem::Options problem_options;
  problem_options.cost_function_ownership = ceres::TAKE_OWNERSHIP;
  problem_options.loss_function_ownership = ceres::DO_NOT_TAKE_OWNERSHIP;
  problem_options.manifold_ownership = ceres::DO_NOT_TAKE_OWNERSHIP;
  problem_ = std::make_unique<ceres::Problem>(problem_options);
  // The blocks live in one array, parameters first: Ceres' covariance orders blocks by
  // address, so a fixed layout keeps its rounding (and the result) the same from run to run.
  state_.resize(parameters_.size() + data_.size());
  SyncToState();
  double* params = state_.data();
  const int p = num_parameters();
  problem_->AddParameterBlock(params, p);
  if (options_.use_bounds) {
    const ModelInfo& info = model_.info();
    for (int j = 0; j < p; ++j) {
      const ParameterSpec& spec = info.parameters[static_cast<std::size_t>(j)];
      if (std::isfinite(spec.lower_bound))
        problem_->SetParameterLowerBound(params, j, spec.lower_bound);
      if (std::isfinite(spec.upper_bound))
        problem_->SetParameterUpperBound(params, j, spec.upper_bound);
    }
  }
  referencing_ = true;
  for (std::size_t i = 0; i < data_.size(); ++i) {
    if (eiv_[i]) {
      ceres::CostFunction* cost =
          model_.NewErrorsInVariablesResidualReferencing(&data_[i], &context_);
      if (cost == nullptr) {
        referencing_ = false;
        cost = model_.NewErrorsInVariablesResidual(data_[i], context_);
      }
      problem_->AddResidualBlock(cost, loss_.get(), params, TrueX0Block(i));
    } else {
      ceres::CostFunction* cost = model_.NewResidualReferencing(&data_[i], &context_);
      if (cost == nullptr) {
        referencing_ = false;
        cost = model_.NewResidual(data_[i], context_);
      }
      problem_->AddResidualBlock(cost, loss_.get(), params);
    }
  }
}

void FitWorkspace::DataChanged() {
  std::vector<char> eiv = ErrorsInVariablesMask(data_, options_);
  if (referencing_ && eiv == eiv_) return;
  eiv_ = std::move(eiv);
  x0_true_.resize(data_.size(), 0.0);
  Build();
}

std::vector<double> FitWorkspace::ClampToBounds(std::vector<double> point) const {
  if (!options_.use_bounds) return point;
  const ModelInfo& info = model_.info();
  for (std::size_t j = 0; j < point.size() && j < info.parameters.size(); ++j) {
    const ParameterSpec& spec = info.parameters[j];
    if (spec.lower_bound <= spec.upper_bound && std::isfinite(point[j])) {
      point[j] = std::clamp(point[j], spec.lower_bound, spec.upper_bound);
    }
  }
  return point;
}

void FitWorkspace::SetStartingX0(const std::vector<double>* x0_start) {
  for (std::size_t i = 0; i < data_.size(); ++i) {
    x0_true_[i] = (x0_start != nullptr && i < x0_start->size()) ? (*x0_start)[i] : data_[i].x[0];
  }
}

void FitWorkspace::SetState(const std::vector<double>& parameters,
                            const std::vector<double>* x0_true) {
  std::copy(parameters.begin(), parameters.end(), parameters_.begin());
  SetStartingX0(x0_true);
  SyncToState();
}

double* FitWorkspace::TrueX0Block(std::size_t i) { return state_.data() + parameters_.size() + i; }

void FitWorkspace::SyncToState() {
  std::copy(parameters_.begin(), parameters_.end(), state_.begin());
  std::copy(x0_true_.begin(), x0_true_.end(),
            state_.begin() + static_cast<std::ptrdiff_t>(parameters_.size()));
}

void FitWorkspace::SyncFromState() {
  const auto x0_begin = state_.begin() + static_cast<std::ptrdiff_t>(parameters_.size());
  std::copy(state_.begin(), x0_begin, parameters_.begin());
  std::copy(x0_begin, state_.end(), x0_true_.begin());
}

SolveOutcome FitWorkspace::Solve(const std::vector<double>& start,
                                 const std::vector<double>* x0_start) {
  SetState(ClampToBounds(start), x0_start);
  if (dense_solver_ != nullptr) {
    std::vector<double>& solution = dense_scratch_;
    std::vector<double>& x0_solution = dense_x0_scratch_;
    solution = parameters_;
    x0_solution = x0_true_;
    const DenseSolveOutcome dense = dense_solver_->Solve(data_, eiv_, &solution, &x0_solution);
    if (!dense.failed) {
      std::copy(solution.begin(), solution.end(), parameters_.begin());
      std::copy(x0_solution.begin(), x0_solution.end(), x0_true_.begin());
      SyncToState();
      SolveOutcome outcome;
      outcome.converged = dense.converged;
      outcome.cost = dense.cost;
      outcome.iterations = dense.iterations;
      outcome.message = dense.message;
      outcome.dense = true;
      last_solve_dense_ = true;
      last_solve_failed_ = false;
      last_solve_cost_ = outcome.cost;
      return outcome;
    }
    // A numerical failure (non-finite values along the path): Ceres from the same start.
    SetState(ClampToBounds(start), x0_start);
  }
  ceres::Solver::Summary summary;
  ceres::Solve(solver_options_, problem_.get(), &summary);
  SyncFromState();
  SolveOutcome outcome;
  outcome.converged = summary.termination_type == ceres::CONVERGENCE ||
                      summary.termination_type == ceres::USER_SUCCESS;
  outcome.failed =
      summary.termination_type == ceres::FAILURE || summary.termination_type == ceres::USER_FAILURE;
  outcome.cost = outcome.failed ? std::numeric_limits<double>::infinity() : summary.final_cost;
  if (!std::isfinite(outcome.cost)) {
    outcome.failed = true;
    outcome.converged = false;
  }
  outcome.iterations = summary.num_successful_steps + summary.num_unsuccessful_steps;
  outcome.message = summary.message;
  last_solve_dense_ = false;
  last_solve_failed_ = outcome.failed;
  last_solve_cost_ = outcome.cost;
  return outcome;
}

bool FitWorkspace::LastSolveCovariance(Eigen::MatrixXd* covariance, double* weighted_ssr) {
  if (last_solve_failed_) return false;
  *weighted_ssr = 2.0 * last_solve_cost_;
  if (!last_solve_dense_ || dense_solver_ == nullptr) {
    std::string error;
    return ComputeCovariance(covariance, &error);
  }
  double dense_ssr = 0.0;
  if (!dense_solver_->ParameterNormalMatrix(&normal_scratch_, &dense_ssr)) return false;
  *weighted_ssr = dense_ssr;
  // Column equilibration and rank test as ComputeCovariance: the scaled normal matrix's
  // eigenvalues are the squared singular values of the scaled Jacobian, so
  // sigma_min / sigma_max < sqrt(r) is lambda_min / lambda_max < r.
  const Eigen::Index p = normal_scratch_.rows();
  scale_scratch_ = normal_scratch_.diagonal();
  if ((scale_scratch_.array() <= 0.0).any()) return false;
  scale_scratch_ = scale_scratch_.cwiseSqrt().cwiseInverse();
  scaled_scratch_.noalias() =
      scale_scratch_.asDiagonal() * normal_scratch_ * scale_scratch_.asDiagonal();
  // Fast path, for every refit of a resampling run: Cholesky of the scaled matrix (unit
  // diagonal, so lambda_max <= trace = p) and its inverse; since trace(N^-1) = sum 1/lambda_i >=
  // 1/lambda_min, 1 / (p trace(N^-1)) is a lower bound on lambda_min / lambda_max. When that
  // bound already passes the rank test, the test passes; otherwise the eigenvalues decide.
  llt_scratch_.compute(scaled_scratch_);
  if (llt_scratch_.info() == Eigen::Success) {
    inverse_scratch_.setIdentity(p, p);
    llt_scratch_.solveInPlace(inverse_scratch_);
    const double trace_inverse = inverse_scratch_.trace();
    if (std::isfinite(trace_inverse) && trace_inverse > 0.0 &&
        1.0 / (static_cast<double>(p) * trace_inverse) >=
            options_.covariance_min_reciprocal_condition_number) {
      *covariance = scale_scratch_.asDiagonal() * inverse_scratch_ * scale_scratch_.asDiagonal();
      return covariance->allFinite();
    }
  }
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(scaled_scratch_);
  if (eigen.info() != Eigen::Success) return false;
  const double lambda_max = eigen.eigenvalues().maxCoeff();
  const double lambda_min = eigen.eigenvalues().minCoeff();
  if (!(lambda_max > 0.0) ||
      lambda_min / lambda_max < options_.covariance_min_reciprocal_condition_number) {
    return false;
  }
  *covariance = scale_scratch_.asDiagonal() * eigen.eigenvectors() *
                eigen.eigenvalues().cwiseInverse().asDiagonal() * eigen.eigenvectors().transpose() *
                scale_scratch_.asDiagonal();
  return covariance->allFinite();
}

bool FitWorkspace::ComputeCovariance(Eigen::MatrixXd* covariance, std::string* error) {
  const int p = num_parameters();
  SyncToState();
  double* params = state_.data();
  // Column norms of the parameter Jacobian at the current state.
  ceres::Problem::EvaluateOptions evaluate_options;
  evaluate_options.parameter_blocks = {params};
  evaluate_options.num_threads = 1;
  ceres::CRSMatrix jacobian;
  if (!problem_->Evaluate(evaluate_options, nullptr, nullptr, nullptr, &jacobian)) {
    *error = "the Jacobian could not be evaluated at the solution";
    return false;
  }
  std::vector<double> column_norm(static_cast<std::size_t>(p), 0.0);
  for (int row = 0; row < jacobian.num_rows; ++row) {
    for (int k = jacobian.rows[static_cast<std::size_t>(row)];
         k < jacobian.rows[static_cast<std::size_t>(row) + 1]; ++k) {
      const double v = jacobian.values[static_cast<std::size_t>(k)];
      column_norm[static_cast<std::size_t>(jacobian.cols[static_cast<std::size_t>(k)])] += v * v;
    }
  }
  std::vector<double> scale(static_cast<std::size_t>(p), 1.0);
  for (int j = 0; j < p; ++j) {
    const double norm = std::sqrt(column_norm[static_cast<std::size_t>(j)]);
    if (!std::isfinite(norm)) {
      *error = "the Jacobian is not finite at the solution";
      return false;
    }
    if (norm == 0.0) {
      *error = "the Jacobian column of parameter " +
               model_.info().parameters[static_cast<std::size_t>(j)].name +
               " is zero (parameter has no effect on the fit)";
      return false;
    }
    scale[static_cast<std::size_t>(j)] = 1.0 / norm;
  }

  // A parameter whose relative change moves the residuals by a vanishing fraction of what
  // the others do has no effect on the fit (e.g. a rate constant driven to the plateau
  // exp(-b x) ~ 0); the equilibration above would hide that, so test it explicitly.
  double max_sensitivity = 0.0;
  std::vector<double> sensitivity(static_cast<std::size_t>(p), 0.0);
  for (std::size_t j = 0; j < sensitivity.size(); ++j) {
    sensitivity[j] = std::sqrt(column_norm[j]) * std::abs(parameters_[j]);
    max_sensitivity = std::max(max_sensitivity, sensitivity[j]);
  }
  for (std::size_t j = 0; j < sensitivity.size(); ++j) {
    if (parameters_[j] != 0.0 && sensitivity[j] < kMinRelativeSensitivity * max_sensitivity) {
      *error = fmt::format(
          "parameter {} has almost no effect on the fit (relative sensitivity {} of the "
          "largest)",
          model_.info().parameters[j].name,
          common::FormatSignificant(sensitivity[j] / max_sensitivity, common::kDiagnosticDigits));
      return false;
    }
  }

  // The rank test of ceres::Covariance on the parameter columns, done here first so that a
  // singular problem is reported through the flags instead of Ceres' error log.
  Eigen::MatrixXd scaled = Eigen::MatrixXd::Zero(jacobian.num_rows, p);
  for (int row = 0; row < jacobian.num_rows; ++row) {
    for (int k = jacobian.rows[static_cast<std::size_t>(row)];
         k < jacobian.rows[static_cast<std::size_t>(row) + 1]; ++k) {
      const int col = jacobian.cols[static_cast<std::size_t>(k)];
      scaled(row, col) =
          jacobian.values[static_cast<std::size_t>(k)] * scale[static_cast<std::size_t>(col)];
    }
  }
  const Eigen::VectorXd singular_values =
      Eigen::JacobiSVD<Eigen::MatrixXd>(scaled).singularValues();
  const double ratio = singular_values(p - 1) / singular_values(0);
  if (!(ratio >= std::sqrt(options_.covariance_min_reciprocal_condition_number))) {
    *error = fmt::format(
        "the Jacobian is rank deficient or too ill-conditioned at the solution (column-scaled "
        "sigma_min / sigma_max = {} < sqrt({}))",
        common::FormatSignificant(ratio, common::kDiagnosticDigits),
        common::FormatSetting(options_.covariance_min_reciprocal_condition_number));
    return false;
  }

  DiagonalScaleManifold manifold(scale);
  problem_->SetManifold(params, &manifold);
  // Errors in variables: the fitted true x of each point is a parameter block of its own.
  // Ceres' rank test runs over every block, so scale those columns to unit norm as well
  // (their raw norms, |f'(x)|/sigma_y and 1/sigma_x, can exceed the parameter columns by
  // many decades and would fail the test although the problem is well posed).
  std::vector<double*> x_blocks;
  for (std::size_t i = 0; i < x0_true_.size(); ++i) {
    if (eiv_[i] != 0 && problem_->HasParameterBlock(TrueX0Block(i))) {
      x_blocks.push_back(TrueX0Block(i));
    }
  }
  std::vector<std::unique_ptr<DiagonalScaleManifold>> x_manifolds;
  if (!x_blocks.empty()) {
    ceres::Problem::EvaluateOptions x_options;
    x_options.parameter_blocks = x_blocks;
    x_options.num_threads = 1;
    ceres::CRSMatrix x_jacobian;
    if (problem_->Evaluate(x_options, nullptr, nullptr, nullptr, &x_jacobian)) {
      std::vector<double> x_norm(x_blocks.size(), 0.0);
      for (std::size_t k = 0; k < x_jacobian.values.size(); ++k) {
        const double v = x_jacobian.values[k];
        x_norm[static_cast<std::size_t>(x_jacobian.cols[k])] += v * v;
      }
      for (std::size_t b = 0; b < x_blocks.size(); ++b) {
        const double norm = std::sqrt(x_norm[b]);
        if (!(norm > 0.0) || !std::isfinite(norm)) continue;
        x_manifolds.push_back(
            std::make_unique<DiagonalScaleManifold>(std::vector<double>{1.0 / norm}));
        problem_->SetManifold(x_blocks[b], x_manifolds.back().get());
      }
    }
  }
  ceres::Covariance::Options covariance_options;
  covariance_options.algorithm_type = ceres::DENSE_SVD;
  covariance_options.min_reciprocal_condition_number =
      options_.covariance_min_reciprocal_condition_number;
  covariance_options.null_space_rank = 0;
  covariance_options.num_threads = 1;
  covariance_options.apply_loss_function = true;
  ceres::Covariance covariance_engine(covariance_options);
  std::vector<std::pair<const double*, const double*>> blocks = {{params, params}};
  bool ok = covariance_engine.Compute(blocks, problem_.get());
  if (ok) {
    covariance->resize(p, p);
    Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> block(p, p);
    ok = covariance_engine.GetCovarianceBlock(params, params, block.data());
    *covariance = block;
  }
  problem_->SetManifold(params, nullptr);
  for (double* block : x_blocks) problem_->SetManifold(block, nullptr);
  if (!ok) {
    *error = fmt::format(
        "the Jacobian is rank deficient or too ill-conditioned at the solution "
        "(column-scaled sigma_min / sigma_max below sqrt({}))",
        common::FormatSetting(options_.covariance_min_reciprocal_condition_number));
  }
  return ok;
}

}  // namespace sorbtrace::fitters::internal
