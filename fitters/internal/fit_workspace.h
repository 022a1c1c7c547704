// One ceres::Problem over a data set, re-solved from many starts and for many resampled data
// sets without rebuilding it: the residuals read the observations by pointer (when the model
// supports it), so the data can be edited in place. Squared-loss problems with monotonic steps
// (with or without errors in variables) are solved by DenseLevenbergMarquardt (Ceres' method
// written out for small problems, internal/dense_solver.h) and by Ceres only if that solve
// fails numerically; the covariance always comes from the ceres::Problem. Internal to fitters/.
#pragma once

#include <ceres/ceres.h>

#include <Eigen/Cholesky>
#include <Eigen/Core>
#include <memory>
#include <string>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/internal/dense_solver.h"
#include "fitters/model.h"

namespace sorbtrace::fitters::internal {

// Outcome of one solve.
struct SolveOutcome {
  bool converged = false;  // Ceres reported CONVERGENCE
  bool failed = false;     // Ceres reported FAILURE (e.g. non-finite residuals)
  double cost = 0.0;       // 0.5 * sum of squared (robustified) residuals
  int iterations = 0;
  std::string message;
  bool dense = false;  // solved by DenseLevenbergMarquardt (else by ceres::Solve)
};

class FitWorkspace {
 public:
  FitWorkspace(const Model& model, std::vector<Observation> observations,
               const ModelContext& context, const FitOptions& options);
  FitWorkspace(const FitWorkspace&) = delete;
  FitWorkspace& operator=(const FitWorkspace&) = delete;

  int num_observations() const { return static_cast<int>(data_.size()); }
  int num_parameters() const { return static_cast<int>(parameters_.size()); }
  int num_errors_in_variables() const;
  // ErrorsInVariablesMask of the current data (fitter.h), computed when the data change.
  const std::vector<char>& errors_in_variables_mask() const { return eiv_; }

  // The data the residuals read. After editing call DataChanged().
  std::vector<Observation>& data() { return data_; }
  void DataChanged();

  // Solves from `start` (moved inside the bounds); x0_start gives the starting true x[0]
  // of every point for errors in variables (nullptr: the observed x[0]).
  SolveOutcome Solve(const std::vector<double>& start, const std::vector<double>* x0_start);

  // Current state (after Solve, the solution).
  const std::vector<double>& parameters() const { return parameters_; }
  const std::vector<double>& x0_true() const { return x0_true_; }
  void SetState(const std::vector<double>& parameters, const std::vector<double>* x0_true);

  // Moves a point inside the model bounds (if FitOptions::use_bounds).
  std::vector<double> ClampToBounds(std::vector<double> point) const;

  // (J'J)^-1 of the parameter block at the current state, unscaled, by ceres::Covariance
  // (dense SVD of the column-equilibrated Jacobian). False + *error if rank deficient.
  bool ComputeCovariance(Eigen::MatrixXd* covariance, std::string* error);

  // Unscaled (J'J)^-1 of the parameters and the weighted SSR (x terms included) at the
  // solution of the last Solve. When the dense solver solved, from the Jacobian it kept
  // (DenseLevenbergMarquardt::ParameterNormalMatrix: no evaluation, no ceres::Covariance),
  // with the same column-equilibrated rank test; otherwise by ComputeCovariance. False when
  // rank deficient or the last Solve failed. Used to studentise resampled refits.
  bool LastSolveCovariance(Eigen::MatrixXd* covariance, double* weighted_ssr);

 private:
  void Build();
  void SetStartingX0(const std::vector<double>* x0_start);

  const Model& model_;
  ModelContext context_;
  FitOptions options_;
  std::vector<Observation> data_;
  // The Ceres parameter blocks: state_ = [parameters, x0_true of every point]; parameters_ and
  // x0_true_ are copies kept in step with it.
  double* TrueX0Block(std::size_t i);
  void SyncToState();
  void SyncFromState();

  std::vector<double> parameters_;
  std::vector<double> x0_true_;  // one per point; a parameter block only where eiv_[i]
  std::vector<double> state_;
  std::vector<char> eiv_;    // point i fitted with errors in variables
  bool referencing_ = true;  // residuals read data_ by pointer
  std::unique_ptr<ceres::LossFunction> loss_;
  std::unique_ptr<ceres::Problem> problem_;
  ceres::Solver::Options solver_options_;
  // Set when the options allow the dense solver (used while no point has errors in variables).
  std::unique_ptr<DenseLevenbergMarquardt> dense_solver_;
  std::vector<double> dense_scratch_;     // the dense solver's iterate
  std::vector<double> dense_x0_scratch_;  // and its true x[0]
  // What the last Solve did: solved by the dense solver, failed, its cost.
  bool last_solve_dense_ = false;
  bool last_solve_failed_ = true;
  double last_solve_cost_ = 0.0;
  // Work storage of LastSolveCovariance (kept between calls: it runs for every refit).
  Eigen::MatrixXd normal_scratch_, scaled_scratch_, inverse_scratch_;
  Eigen::VectorXd scale_scratch_;
  Eigen::LLT<Eigen::MatrixXd> llt_scratch_;
};

}  // namespace sorbtrace::fitters::internal
