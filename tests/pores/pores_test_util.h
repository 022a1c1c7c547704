// Test helpers of the pores stage: fit-stage results built by hand (known parameters and
// covariances) so that the pores stage can be checked against closed-form values.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/model.h"
#include "pipeline/fit/fit_stage.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::pores::testing {

// A group of points (rh, u) with a common standard uncertainty.
inline fit::FitGroup MakeGroup(ingest::Branch branch, double temperature_K,
                               const std::vector<double>& rh, const std::vector<double>& u,
                               double sigma) {
  fit::FitGroup g;
  g.branch = branch;
  g.temperature_K = temperature_K;
  for (std::size_t i = 0; i < rh.size(); ++i) {
    fitters::Observation o;
    o.x[0] = rh[i];
    o.y = u[i];
    o.sigma_y = sigma;
    g.observations.push_back(o);
    g.point_indices.push_back(-1);
  }
  return g;
}

// A converged fit of `model_name` to group `group_index` with the given parameters/covariance.
inline fit::ModelFit MakeFit(const std::string& model_name, int group_index,
                             const std::vector<double>& parameters,
                             const Eigen::MatrixXd& covariance) {
  fit::ModelFit f;
  f.model_name = model_name;
  f.group_index = group_index;
  f.result.model_name = model_name;
  f.result.parameters = parameters;
  f.result.covariance = covariance;
  f.result.summary.termination = fitters::FitTermination::kConverged;
  f.result.summary.covariance_available = covariance.size() > 0;
  f.rank = 1;
  return f;
}

// GAB u(a) = X_m C K a / ((1 - K a)(1 - K a + C K a)), written out for the checks (the GAB
// equation: Guggenheim 1966, Anderson 1946, de Boer 1953).
inline double Gab(double x_m, double c, double k, double a) {
  return x_m * c * k * a / ((1.0 - k * a) * (1.0 - k * a + c * k * a));
}

}  // namespace sorbtrace::pores::testing
