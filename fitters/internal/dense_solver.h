// DenseLevenbergMarquardt: the bounded Levenberg-Marquardt trust-region method of Ceres Solver,
// as FitWorkspace configures it (TRUST_REGION, LEVENBERG_MARQUARDT, DENSE_QR, Jacobi scaling,
// monotonic steps), written out for the small dense problems of the resampled refits: squared
// loss, no errors in variables, a few parameters and tens of points. It skips Ceres' per-solve
// set-up (program reduction, evaluator and linear-solver construction) and evaluates all
// residuals and the Jacobian in one Model::WeightedResiduals call; all storage is allocated
// once per data-set size, nothing per iteration or per residual. Internal to fitters/.
//
// The iteration follows Ceres' TrustRegionMinimizer and LevenbergMarquardtStrategy
// (S. Agarwal, K. Mierle et al., Ceres Solver, http://ceres-solver.org, version 2.1; documented
// in its "Solving Non-linear Least Squares" chapter; the constants are its Solver::Options
// defaults):
//  - Jacobi scaling: columns of J multiplied by 1 / (1 + ||J_j||), ||J_j|| at the start point;
//  - step: minimise ||J s + r||^2 + ||D s||^2, D_jj = sqrt(clamp(||J_j||^2, 1e-6, 1e32) / radius),
//    by Householder QR of [J; D] (DENSE_QR);
//  - candidate x+ = clamp(x + scaling * s) to the parameter bounds (Ceres projects onto the box);
//  - step quality rho = (cost - cost+) / (model cost decrease); success if rho > 1e-3; radius
//    divided by max(1/3, 1 - (2 rho - 1)^3) on success (at most max_trust_region_radius), divided
//    by 2, 4, 8... on consecutive failures; five consecutive invalid steps are a failure;
//  - convergence: |x - x+| <= parameter_tolerance (|x| + parameter_tolerance); |cost - cost+| <=
//    function_tolerance * cost; max-norm of the projected gradient x - clamp(x - J'r) <=
//    gradient_tolerance; trust-region radius below 1e-32.
// Its solutions agree with the Ceres solve from the same start to within the tolerances; the
// resampling falls back to the Ceres solve whenever this one does not converge.
#pragma once

#include <Eigen/Core>
#include <Eigen/QR>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/model.h"

namespace sorbtrace::fitters::internal {

// Outcome of DenseLevenbergMarquardt::Solve.
struct DenseSolveOutcome {
  bool converged = false;  // a convergence test was met
  bool failed = false;     // not evaluable at the start, or five consecutive invalid steps
  double cost = 0.0;       // 0.5 * weighted SSR at the returned parameters
  int iterations = 0;      // trust-region iterations (successful and unsuccessful steps)
};

class DenseLevenbergMarquardt {
 public:
  // Uses options.max_iterations, the three tolerances, initial_trust_region_radius and (if
  // use_bounds) the model's parameter bounds; loss and errors in variables are not supported
  // (the caller uses FitWorkspace for those).
  DenseLevenbergMarquardt(const Model& model, const ModelContext& context,
                          const FitOptions& options);

  // Minimises the weighted SSR over `data` from *parameters (moved inside the bounds); on
  // return *parameters holds the last accepted point.
  DenseSolveOutcome Solve(const std::vector<Observation>& data, std::vector<double>* parameters);

 private:
  using RowMajorMatrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

  enum class Evaluation { kResidualsAndJacobian, kResidualsOnly, kFailed };

  void Resize(int num_residuals);
  void Clamp(Eigen::VectorXd* x) const;
  // Residuals and Jacobian at x into candidate_residuals_ and candidate_jacobian_; says which
  // of them are finite.
  Evaluation EvaluateCandidate(const Eigen::VectorXd& x);
  // Makes the candidate's residuals and Jacobian the current ones (buffer swap) and forms the
  // gradient J'r.
  void AcceptCandidate();
  // Max-norm of x - clamp(x - gradient).
  double ProjectedGradientMaxNorm(const Eigen::VectorXd& x) const;

  const Model& model_;
  ModelContext context_;
  FitOptions options_;
  int num_parameters_ = 0;
  Eigen::VectorXd lower_;
  Eigen::VectorXd upper_;
  const std::vector<Observation>* data_ = nullptr;

  // Work storage (sized by Resize).
  int num_residuals_ = -1;
  Eigen::VectorXd residuals_;
  Eigen::VectorXd candidate_residuals_;
  RowMajorMatrix jacobian_;  // n x p, unscaled
  RowMajorMatrix candidate_jacobian_;
  Eigen::MatrixXd scaled_jacobian_;  // n x p, columns times scaling_
  Eigen::MatrixXd augmented_;        // (n + p) x p: [scaled J; D]
  Eigen::VectorXd augmented_rhs_;    // (n + p): [r; 0]
  Eigen::HouseholderQR<Eigen::MatrixXd> qr_;
  Eigen::VectorXd model_residuals_;
  Eigen::VectorXd x_;
  Eigen::VectorXd candidate_;
  Eigen::VectorXd step_;
  Eigen::VectorXd gradient_;
  Eigen::VectorXd scaling_;
  Eigen::VectorXd lm_diagonal_squared_;  // clamped squared column norms of the scaled J
};

}  // namespace sorbtrace::fitters::internal
