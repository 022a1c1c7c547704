// DenseLevenbergMarquardt: the bounded Levenberg-Marquardt trust-region method of Ceres Solver,
// as FitWorkspace configures it (TRUST_REGION, LEVENBERG_MARQUARDT, DENSE_QR, Jacobi scaling,
// monotonic steps), written out for the small problems of the engine: squared loss, a few
// parameters, tens of points, optionally errors in variables (a fitted true x[0] per point).
// It skips Ceres' per-solve set-up (program reduction, evaluator and linear-solver
// construction) and evaluates all residuals and the Jacobian in one Model::WeightedResiduals
// call; all storage is allocated once per data-set size, nothing per iteration or residual.
// Internal to fitters/.
//
// The iteration follows Ceres' TrustRegionMinimizer and LevenbergMarquardtStrategy
// (S. Agarwal, K. Mierle et al., Ceres Solver, http://ceres-solver.org, version 2.1; its
// "Solving Non-linear Least Squares" chapter; the constants are its Solver::Options defaults):
//  - Jacobi scaling: columns of J multiplied by 1 / (1 + ||J_j||), ||J_j|| at the start point;
//  - step: minimise ||J s + r||^2 + ||D s||^2, D_jj = sqrt(clamp(||J_j||^2, 1e-6, 1e32) / radius)
//    (the same linear least-squares problem Ceres' DENSE_QR solves, here by Householder QR;
//    with FitOptions::step_solver = kDenseNormalCholesky by Cholesky of its normal equations,
//    as Ceres' DENSE_NORMAL_CHOLESKY);
//  - candidate x+ = clamp(x + scaling * s) to the parameter bounds (Ceres projects onto the box;
//    the true x[0] are unbounded);
//  - step quality rho = (cost - cost+) / (model cost decrease); success if rho > 1e-3; radius
//    divided by max(1/3, 1 - (2 rho - 1)^3) on success (at most max_trust_region_radius), divided
//    by 2, 4, 8... on consecutive failures; five consecutive invalid steps are a failure;
//  - convergence: |x - x+| <= parameter_tolerance (|x| + parameter_tolerance); |cost - cost+| <=
//    function_tolerance * cost; max-norm of the projected gradient x - clamp(x - J'r) <=
//    gradient_tolerance; trust-region radius below 1e-32; and, when FitOptions::
//    scaled_step_tolerance > 0 (resampling refits), an undamped Gauss-Newton step from an
//    accepted point that moves every parameter j by at most that tolerance times
//    parameter_scale[j] (a statistical stopping rule, not one of Ceres').
// Refits of resampled data (FitOptions::step_solver = kDenseNormalCholesky together with
// scaled_step_tolerance > 0) add the geodesic acceleration of M. K. Transtrum and J. P. Sethna,
// "Improvements to the Levenberg-Marquardt algorithm for nonlinear least-squares minimization",
// arXiv:1201.5885 (2012), sec. 4 (also in GSL's gsl_multifit_nlinear, "lmaccel"): with v the
// Levenberg-Marquardt step, the second directional derivative of the residuals along v by a
// finite difference, r''_v = (2 / h) ((r(x + h v) - r(x)) / h - J v) with h = 0.1, gives the
// acceleration a = -(J'J + D'D / radius)^-1 J' r''_v (the same damped matrix, factored once)
// and the step v + a / 2, taken when 2 |a| / |v| <= 0.75 (their alpha), else v alone. The step
// then bends along a curved valley of the objective instead of leaving it: under errors in
// variables the orthogonal residuals of a poorly fitting model (Halsey, Peleg, van Genuchten
// on a wide humidity range) make such valleys, and a refit from the full-data solution crept
// along them in 100-200 short steps. It costs one residual evaluation (no Jacobian) per step.
// One deliberate difference: when the function tolerance ends the iteration, the candidate x+
// (one more step on, its cost within the tolerance of the cost at x) is returned instead of x.
// Near the optimum the cost stops resolving parameter changes (a 1e-9 parameter error changes
// it by about 1e-18 relative, its rounding is 1e-16), so where Ceres returns a point whose
// accuracy depends on rounding luck, this returns the refined one.
// Ceres also runs a projected line search on each step of a bounded problem; here a step that
// leaves the box is projected without it (the step quality test then judges the projected
// step), so the paths of bounded problems can differ from Ceres' by more than rounding.
// Errors in variables: point i with a fitted true x[0] = t_i has the residuals
// r_yi = (y_i - f(t_i; p)) / sigma_y_i and r_xi = (x0_i - t_i) / sigma_x0_i, and t_i enters no
// other residual. Its step is eliminated exactly: for a fixed parameter step s_p, the three rows
// of point i (y, x and its damping row) are minimised over s_ti in closed form (the variable
// projection of G. H. Golub and V. Pereyra, SIAM J. Numer. Anal. 10 (1973) 413, applied to one
// variable per point), which leaves a quadratic in a_i s_p alone: one row per point. The
// reduced problem has n + p rows and p columns however many x[0] are fitted; s_ti follows by
// back-substitution.
#pragma once

#include <Eigen/Core>
#include <utility>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/model.h"

namespace sorbtrace::fitters::internal {

// Outcome of DenseLevenbergMarquardt::Solve.
struct DenseSolveOutcome {
  bool converged = false;  // a convergence test was met
  bool failed = false;     // not evaluable at the start, or five consecutive invalid steps
  double cost = 0.0;       // 0.5 * weighted SSR (x terms included) at the returned point
  // Evaluations of the Jacobian point plus trust-region steps, counted as Ceres counts its
  // successful and unsuccessful steps (the start point is one successful step).
  int iterations = 0;
  const char* message = "";  // why it ended, in words
};

class DenseLevenbergMarquardt {
 public:
  // Uses options.max_iterations, the three tolerances, initial_trust_region_radius and (if
  // use_bounds) the model's parameter bounds. Squared loss only (the caller uses Ceres for
  // robust losses).
  DenseLevenbergMarquardt(const Model& model, const ModelContext& context,
                          const FitOptions& options);

  // Minimises the weighted SSR over `data` from *parameters (moved inside the bounds). Points
  // with eiv[i] != 0 have a fitted true x[0], started from and returned in (*x0_true)[i]
  // (x0_true may be nullptr when no point has one; its other entries are left alone). On return
  // *parameters holds the last accepted point.
  DenseSolveOutcome Solve(const std::vector<Observation>& data, const std::vector<char>& eiv,
                          std::vector<double>* parameters, std::vector<double>* x0_true);

  // Gauss-Newton normal matrix of the parameters at the point the last Solve returned (its
  // residuals and Jacobian are kept), every fitted true x[0] eliminated (Schur complement):
  // point i adds a_i' a_i, times c_i^2 / (b_i^2 + c_i^2) where it has a fitted x[0]
  // (a_i = dr_yi/dp, b_i = dr_yi/dt_i, c_i = dr_xi/dt_i). Its inverse is the parameter block
  // of (J'J)^-1, so resampling can studentise without another evaluation. Also returns the
  // weighted SSR (x terms included) at that point. False before any successful Solve.
  bool ParameterNormalMatrix(Eigen::MatrixXd* normal, double* weighted_ssr);

 private:
  using RowMajorMatrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
  enum class Evaluation { kResidualsAndJacobian, kResidualsOnly, kFailed };

  void Resize(int num_points, int num_true_x);
  void Clamp(Eigen::VectorXd* x) const;
  // Residuals and Jacobian at (x, t) into the candidate_* buffers; says which are finite.
  Evaluation EvaluateCandidate(const Eigen::VectorXd& x, const Eigen::VectorXd& t);
  // Makes the candidate's residuals and Jacobian the current ones (buffer swaps) and forms
  // the gradient J'r.
  void AcceptCandidate();
  double Cost(const Eigen::VectorXd& ry, const Eigen::VectorXd& rx) const;
  // Max-norm of (x, t) - clamp((x, t) - J'r).
  double ProjectedGradientMaxNorm() const;
  // FitOptions::scaled_step_tolerance: true when the undamped Gauss-Newton step from the
  // current point moves every parameter by at most the tolerance times its scale.
  bool GaussNewtonStepWithinScale();
  // The Levenberg-Marquardt step (step_x_, step_t_) for the given trust-region radius.
  void ComputeStep(double radius);
  // The eliminated true-x[0] steps step_t_ for the parameter step step_x_.
  void BackSubstituteTrueX0Steps(double radius);
  // Geodesic acceleration (see above) of the step just computed by the Cholesky path with the
  // damping 1 / radius: replaces (step_x_, step_t_) by v + a / 2 when the acceptance test
  // passes; false (step unchanged) when it does not or the residuals at x + h v are not finite.
  bool AccelerateStep(double radius);
  bool use_acceleration_ = false;
  bool step_accelerated_ = false;  // the last ComputeStep's acceleration passed the test
  // Normal equations N s = v of the reduced, Jacobi-scaled step problem at the current point
  // (every fitted true x[0] eliminated, its damping diagonal_t * inverse_radius included;
  // inverse_radius 0: undamped), N's lower triangle into normal_, v into normal_rhs_; the
  // parameters' damping is the caller's.
  void FormScaledNormalEquations(double inverse_radius);
  // Its sums over the points with the weights point_gamma_, point_beta_, for P parameters.
  template <int P>
  void AccumulateNormalEquations();
  // AccumulateNormalEquations<P> for the P equal to the parameter count; false if none is.
  template <int... P>
  bool AccumulateForFixedSize(std::integer_sequence<int, P...> sizes);
  bool use_scaled_step_test_ = false;

  const Model& model_;
  ModelContext context_;
  FitOptions options_;
  int num_parameters_ = 0;
  bool bounds_ordered_ = true;  // every lower bound <= its upper bound (else Ceres decides)
  Eigen::VectorXd lower_;
  Eigen::VectorXd upper_;

  // Problem layout (set by Solve).
  int num_points_ = -1;
  int num_true_x_ = -1;
  std::vector<int> point_of_true_x_;     // t index -> point index
  std::vector<Observation> evaluated_;   // the data with x[0] = t_i where fitted
  std::vector<double> observed_x0_;      // x[0] as observed, per fitted true x[0]
  Eigen::VectorXd x_residual_jacobian_;  // dr_xi / dt_i = -1 / sigma_x0_i

  // State and work storage (sized by Resize).
  Eigen::VectorXd x_, t_, candidate_x_, candidate_t_;
  Eigen::VectorXd ry_, rx_, candidate_ry_, candidate_rx_;  // y and x residuals
  RowMajorMatrix jacobian_, candidate_jacobian_;           // dr_y / dp, unscaled
  Eigen::VectorXd slope_, candidate_slope_;                // dr_yi / d x[0]_i, unscaled
  Eigen::VectorXd gradient_x_, gradient_t_;                // J'r, unscaled
  Eigen::VectorXd scaling_x_, scaling_t_;                  // Jacobi scaling
  Eigen::VectorXd diagonal_x_, diagonal_t_;  // clamped squared column norms of the scaled J
  Eigen::MatrixXd reduced_;                  // rows of the reduced problem in s_p (col-major)
  Eigen::VectorXd reduced_rhs_;
  Eigen::VectorXd step_x_, step_t_;  // scaled step
  Eigen::VectorXd model_ry_, model_rx_;
  // p x p work storage: the normal matrix of the stopping test (GaussNewtonStepWithinScale) and
  // of the kDenseNormalCholesky step, each filled before use (FormScaledNormalEquations).
  Eigen::MatrixXd normal_;
  Eigen::VectorXd normal_rhs_;
  // Geodesic acceleration: the Cholesky factor of the last damped step matrix, the residuals at
  // x + h v and the second directional derivative, the acceleration (scaled).
  Eigen::MatrixXd step_factor_;
  Eigen::VectorXd accel_x_, accel_t_, accel_ry_, second_derivative_;
  Eigen::VectorXd point_gamma_, point_beta_;  // per point (FormScaledNormalEquations)
};

}  // namespace sorbtrace::fitters::internal
