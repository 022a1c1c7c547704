// The model interface of the fitting engine: a curve y = f(x; p) with named, bounded
// parameters, differentiated automatically by Ceres. Isotherm models (fitters/models/*),
// the NIST StRD test models (tests/fitters) and anything else the engine fits implement it
// through AutoDiffModel<Equation> (fitters/autodiff_model.h).
//
// An Equation is a struct with:
//   static constexpr int kNumParameters;   // p
//   static constexpr int kNumInputs;       // 1 or 2 predictors
//   static ModelInfo Info();               // name, title, equation text, source, parameters
//   template <typename T>   // T = double or ceres::Jet: write it generically (using std::exp;
//   static T Evaluate(const T* params, const T* x, const ModelContext& context);  // exp(...))
//   static std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>&,
//                                                          const ModelContext&);
//   static std::vector<std::string> PhysicalFlags(const double* params);  // may return {}
#pragma once

#include <array>
#include <cmath>
#include <cstddef>
#include <limits>
#include <memory>
#include <string>
#include <vector>

namespace ceres {
class CostFunction;
}

namespace sorbtrace::fitters {

inline constexpr double kInfinity = std::numeric_limits<double>::infinity();

// One adjustable parameter: its symbol, unit, physical bounds and meaning.
struct ParameterSpec {
  std::string name;                 // symbol as printed, e.g. "X_m"
  std::string unit;                 // e.g. "kg/kg", "1", "1/Pa"
  double lower_bound = -kInfinity;  // enforced by the solver
  double upper_bound = kInfinity;
  std::string description;  // e.g. "monolayer moisture content"
};

// What a model is, for reports and the registry.
struct ModelInfo {
  std::string name;           // registry key, lower case, e.g. "gab", "durner2"
  std::string title;          // e.g. "Guggenheim-Anderson-de Boer (GAB)"
  std::string equation;       // plain-text equation as printed on the datasheet
  std::string source;         // citation of the published form
  std::string x_quantity;     // e.g. "rh_fraction"
  std::string y_quantity;     // e.g. "moisture content, kg/kg dry basis"
  double x_min = -kInfinity;  // default validity range in x[0] (e.g. BET 0.05..0.35)
  double x_max = kInfinity;
  std::vector<ParameterSpec> parameters;
};

// Fixed quantities a model needs besides x, e.g. the test temperature for the Kelvin
// conversion RH -> capillary pressure in retention models.
struct ModelContext {
  double temperature_K = 296.15;  // 23 degC, the usual test temperature (ISO 12571)
};

inline constexpr int kMaxInputs = 2;

// One measured point. For isotherms x[0] = rh_fraction and y = moisture content (kg/kg).
struct Observation {
  std::array<double, kMaxInputs> x{};  // predictor(s)
  double y = 0.0;                      // response
  double sigma_y = 1.0;                // standard uncertainty of y (weight 1/sigma_y^2), > 0
  double sigma_x0 = 0.0;               // standard uncertainty of x[0]; 0 = exact
};

// A fitted-curve model. Stateless and thread-safe; obtain one from the registry
// (fitters/registry.h) or from MakeAutoDiffModel<Equation>().
class Model {
 public:
  virtual ~Model() = default;
  virtual const ModelInfo& info() const = 0;
  const std::string& name() const { return info().name; }
  int num_parameters() const { return static_cast<int>(info().parameters.size()); }
  virtual int num_inputs() const = 0;

  // y = f(x; params).
  virtual double Evaluate(const double* params, const double* x,
                          const ModelContext& context) const = 0;
  // df/dparams at (x; params), written to gradient[0..p).
  virtual void Gradient(const double* params, const double* x, const ModelContext& context,
                        double* gradient) const = 0;
  // df/dx[0] at (x; params).
  virtual double SlopeInX0(const double* params, const double* x,
                           const ModelContext& context) const = 0;

  // Residual (y - f(x; p)) / sigma_y, one parameter block of size p. Caller owns it.
  virtual ceres::CostFunction* NewResidual(const Observation& observation,
                                           const ModelContext& context) const = 0;
  // Errors in variables: blocks (p, x0_true[1]); residuals
  // [(y - f(x0_true; p)) / sigma_y, (x0_obs - x0_true) / sigma_x0]. Caller owns it.
  virtual ceres::CostFunction* NewErrorsInVariablesResidual(const Observation& observation,
                                                            const ModelContext& context) const = 0;

  // As NewResidual / NewErrorsInVariablesResidual, but the cost function reads *observation
  // and *context at every evaluation instead of copying them, so the engine can change the
  // data in place and re-solve the same ceres::Problem (bootstrap, Monte Carlo). Both must
  // outlive the cost function. A model may return nullptr; the engine then rebuilds the
  // problem from NewResidual for every data set. AutoDiffModel implements both.
  virtual ceres::CostFunction* NewResidualReferencing(const Observation* /*observation*/,
                                                      const ModelContext* /*context*/) const {
    return nullptr;
  }
  virtual ceres::CostFunction* NewErrorsInVariablesResidualReferencing(
      const Observation* /*observation*/, const ModelContext* /*context*/) const {
    return nullptr;
  }

  // Weighted residuals r_i = (y_i - f(x_i; params)) / sigma_y_i of observations[0..count)
  // and, unless nullptr, their Jacobian dr_i / dparams_j row by row (jacobian[i * p + j]) and
  // their derivatives dr_i / dx_i[0] (x0_jacobian[i]; errors in variables): what the engine's
  // dense solver needs, in one call. Returns false if a value is not finite. The default uses
  // Evaluate, Gradient and SlopeInX0; AutoDiffModel evaluates them together.
  virtual bool WeightedResiduals(const double* params, const Observation* observations,
                                 std::size_t count, const ModelContext& context, double* residuals,
                                 double* jacobian, double* x0_jacobian) const {
    const std::size_t p = static_cast<std::size_t>(num_parameters());
    for (std::size_t i = 0; i < count; ++i) {
      const Observation& o = observations[i];
      residuals[i] = (o.y - Evaluate(params, o.x.data(), context)) / o.sigma_y;
      if (!std::isfinite(residuals[i])) return false;
      if (jacobian != nullptr) {
        double* row = jacobian + i * p;
        Gradient(params, o.x.data(), context, row);
        for (std::size_t j = 0; j < p; ++j) {
          row[j] = -row[j] / o.sigma_y;
          if (!std::isfinite(row[j])) return false;
        }
      }
      if (x0_jacobian != nullptr) {
        x0_jacobian[i] = -SlopeInX0(params, o.x.data(), context) / o.sigma_y;
        if (!std::isfinite(x0_jacobian[i])) return false;
      }
    }
    return true;
  }

  // Deterministic starting points (linearised forms first). Never empty.
  virtual std::vector<std::vector<double>> StartingPoints(
      const std::vector<Observation>& observations, const ModelContext& context) const = 0;
  // Human-readable flags for physically meaningless or doubtful values (e.g. "K >= 1").
  virtual std::vector<std::string> PhysicalFlags(const double* params) const = 0;
};

}  // namespace sorbtrace::fitters
