// AutoDiffModel<Equation>: the Model implementation for every curve the engine fits. It
// turns an Equation (see fitters/model.h for the required members) into a Model whose
// residuals are ceres::AutoDiffCostFunction objects, and whose value, parameter gradient and
// x[0]-slope come from the same templated Evaluate() through ceres::Jet. Equation::Evaluate
// must therefore be written generically in T (use ceres::exp / ceres::log / ceres::pow etc.,
// or plain `using std::exp;` plus unqualified calls).
//
// Usage:
//   struct Linear {
//     static constexpr int kNumParameters = 2;
//     static constexpr int kNumInputs = 1;
//     static ModelInfo Info();
//     template <typename T>
//     static T Evaluate(const T* p, const T* x, const ModelContext&) { return p[0] + p[1] * x[0]; }
//     static std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>&,
//                                                            const ModelContext&);
//     static std::vector<std::string> PhysicalFlags(const double*) { return {}; }
//   };
//   std::unique_ptr<Model> model = MakeAutoDiffModel<Linear>();
#pragma once

#include <ceres/autodiff_cost_function.h>
#include <ceres/jet.h>

#include <algorithm>
#include <cmath>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters {

namespace internal {

// Holds an observation and context either by value (owned copy) or by pointer (referencing
// mode: the engine edits the data in place between solves).
class ObservationRef {
 public:
  ObservationRef(const Observation& observation, const ModelContext& context)
      : owned_observation_(observation), owned_context_(context) {
    observation_ = &*owned_observation_;
    context_ = &*owned_context_;
  }
  ObservationRef(const Observation* observation, const ModelContext* context)
      : observation_(observation), context_(context) {}
  ObservationRef(const ObservationRef&) = delete;
  ObservationRef& operator=(const ObservationRef&) = delete;

  const Observation& observation() const { return *observation_; }
  const ModelContext& context() const { return *context_; }

 private:
  std::optional<Observation> owned_observation_;
  std::optional<ModelContext> owned_context_;
  const Observation* observation_ = nullptr;
  const ModelContext* context_ = nullptr;
};

// A non-finite residual (or derivative) is reported to Ceres as a failed evaluation, so the
// solver shrinks its step quietly instead of logging the evaluation error.
inline bool ResidualIsFinite(double v) { return std::isfinite(v); }
template <typename T, int N>
bool ResidualIsFinite(const ceres::Jet<T, N>& v) {
  return ceres::isfinite(v);
}

// Residual (y - f(x; p)) / sigma_y.
template <typename Equation>
class ResidualFunctor {
 public:
  template <typename... Args>
  explicit ResidualFunctor(Args&&... args) : ref_(std::forward<Args>(args)...) {}

  template <typename T>
  bool operator()(const T* params, T* residual) const {
    const Observation& obs = ref_.observation();
    T x[kMaxInputs];
    for (int i = 0; i < kMaxInputs; ++i) x[i] = T(obs.x[static_cast<std::size_t>(i)]);
    const T f = Equation::template Evaluate<T>(params, x, ref_.context());
    residual[0] = (T(obs.y) - f) / obs.sigma_y;
    return ResidualIsFinite(residual[0]);
  }

 private:
  ObservationRef ref_;
};

// Errors in variables: residuals [(y - f(x0_true; p)) / sigma_y, (x0_obs - x0_true) / sigma_x0].
template <typename Equation>
class ErrorsInVariablesFunctor {
 public:
  template <typename... Args>
  explicit ErrorsInVariablesFunctor(Args&&... args) : ref_(std::forward<Args>(args)...) {}

  template <typename T>
  bool operator()(const T* params, const T* x0_true, T* residuals) const {
    const Observation& obs = ref_.observation();
    T x[kMaxInputs];
    x[0] = x0_true[0];
    for (int i = 1; i < kMaxInputs; ++i) x[i] = T(obs.x[static_cast<std::size_t>(i)]);
    const T f = Equation::template Evaluate<T>(params, x, ref_.context());
    residuals[0] = (T(obs.y) - f) / obs.sigma_y;
    residuals[1] = (T(obs.x[0]) - x0_true[0]) / obs.sigma_x0;
    return ResidualIsFinite(residuals[0]) && ResidualIsFinite(residuals[1]);
  }

 private:
  ObservationRef ref_;
};

}  // namespace internal

template <typename Equation>
class AutoDiffModel final : public Model {
 public:
  static constexpr int kNumParameters = Equation::kNumParameters;
  static_assert(kNumParameters > 0, "an Equation needs at least one parameter");
  static_assert(Equation::kNumInputs >= 1 && Equation::kNumInputs <= kMaxInputs,
                "an Equation has 1..kMaxInputs predictors");

  AutoDiffModel() : info_(Equation::Info()) {
    if (static_cast<int>(info_.parameters.size()) != kNumParameters) {
      throw std::logic_error("AutoDiffModel: Info() of model '" + info_.name + "' lists " +
                             std::to_string(info_.parameters.size()) +
                             " parameters, kNumParameters is " + std::to_string(kNumParameters));
    }
  }

  const ModelInfo& info() const override { return info_; }
  int num_inputs() const override { return Equation::kNumInputs; }

  double Evaluate(const double* params, const double* x,
                  const ModelContext& context) const override {
    double xs[kMaxInputs] = {};
    std::copy(x, x + Equation::kNumInputs, xs);
    return Equation::template Evaluate<double>(params, xs, context);
  }

  void Gradient(const double* params, const double* x, const ModelContext& context,
                double* gradient) const override {
    using Jet = ceres::Jet<double, kNumParameters>;
    Jet p[kNumParameters];
    for (int i = 0; i < kNumParameters; ++i) p[i] = Jet(params[i], i);
    Jet xs[kMaxInputs];
    for (int i = 0; i < Equation::kNumInputs; ++i) xs[i] = Jet(x[i]);
    const Jet f = Equation::template Evaluate<Jet>(p, xs, context);
    for (int i = 0; i < kNumParameters; ++i) gradient[i] = f.v[i];
  }

  double SlopeInX0(const double* params, const double* x,
                   const ModelContext& context) const override {
    using Jet = ceres::Jet<double, 1>;
    Jet p[kNumParameters];
    for (int i = 0; i < kNumParameters; ++i) p[i] = Jet(params[i]);
    Jet xs[kMaxInputs];
    xs[0] = Jet(x[0], 0);
    for (int i = 1; i < Equation::kNumInputs; ++i) xs[i] = Jet(x[i]);
    const Jet f = Equation::template Evaluate<Jet>(p, xs, context);
    return f.v[0];
  }

  // One Jet evaluation per point gives the value and the gradient (the residual and its row of
  // the Jacobian; with x0_jacobian one more Jet component for x[0]); without a Jacobian the
  // plain double evaluation.
  bool WeightedResiduals(const double* params, const Observation* observations, std::size_t count,
                         const ModelContext& context, double* residuals, double* jacobian,
                         double* x0_jacobian) const override {
    if (jacobian == nullptr && x0_jacobian == nullptr) {
      for (std::size_t i = 0; i < count; ++i) {
        const Observation& o = observations[i];
        residuals[i] = (o.y - Evaluate(params, o.x.data(), context)) / o.sigma_y;
        if (!std::isfinite(residuals[i])) return false;
      }
      return true;
    }
    if (x0_jacobian == nullptr) {
      return JetResiduals<kNumParameters>(params, observations, count, context, residuals, jacobian,
                                          nullptr);
    }
    return JetResiduals<kNumParameters + 1>(params, observations, count, context, residuals,
                                            jacobian, x0_jacobian);
  }

  ceres::CostFunction* NewResidual(const Observation& observation,
                                   const ModelContext& context) const override {
    return new ceres::AutoDiffCostFunction<internal::ResidualFunctor<Equation>, 1, kNumParameters>(
        new internal::ResidualFunctor<Equation>(observation, context));
  }

  ceres::CostFunction* NewErrorsInVariablesResidual(const Observation& observation,
                                                    const ModelContext& context) const override {
    return new ceres::AutoDiffCostFunction<internal::ErrorsInVariablesFunctor<Equation>, 2,
                                           kNumParameters, 1>(
        new internal::ErrorsInVariablesFunctor<Equation>(observation, context));
  }

  ceres::CostFunction* NewResidualReferencing(const Observation* observation,
                                              const ModelContext* context) const override {
    return new ceres::AutoDiffCostFunction<internal::ResidualFunctor<Equation>, 1, kNumParameters>(
        new internal::ResidualFunctor<Equation>(observation, context));
  }

  ceres::CostFunction* NewErrorsInVariablesResidualReferencing(
      const Observation* observation, const ModelContext* context) const override {
    return new ceres::AutoDiffCostFunction<internal::ErrorsInVariablesFunctor<Equation>, 2,
                                           kNumParameters, 1>(
        new internal::ErrorsInVariablesFunctor<Equation>(observation, context));
  }

  // The Equation's points; if it offers none, one point with every parameter at 1 (moved
  // inside the bounds), so the result is never empty.
  std::vector<std::vector<double>> StartingPoints(const std::vector<Observation>& observations,
                                                  const ModelContext& context) const override {
    std::vector<std::vector<double>> points = Equation::StartingPoints(observations, context);
    std::erase_if(points, [](const std::vector<double>& point) {
      return static_cast<int>(point.size()) != kNumParameters;
    });
    if (points.empty()) {
      std::vector<double> point(kNumParameters, 1.0);
      for (int i = 0; i < kNumParameters; ++i) {
        const ParameterSpec& spec = info_.parameters[static_cast<std::size_t>(i)];
        point[static_cast<std::size_t>(i)] =
            std::clamp(1.0, spec.lower_bound, std::max(spec.lower_bound, spec.upper_bound));
      }
      points.push_back(std::move(point));
    }
    return points;
  }

  std::vector<std::string> PhysicalFlags(const double* params) const override {
    return Equation::PhysicalFlags(params);
  }

 private:
  // WeightedResiduals by ceres::Jet<double, N>: components 0..p-1 the parameters, component p
  // (when N = p + 1) x[0].
  template <int N>
  bool JetResiduals(const double* params, const Observation* observations, std::size_t count,
                    const ModelContext& context, double* residuals, double* jacobian,
                    double* x0_jacobian) const {
    using Jet = ceres::Jet<double, N>;
    Jet p[kNumParameters];
    for (int j = 0; j < kNumParameters; ++j) p[j] = Jet(params[j], j);
    for (std::size_t i = 0; i < count; ++i) {
      const Observation& o = observations[i];
      Jet xs[kMaxInputs];
      for (int k = 0; k < Equation::kNumInputs; ++k) xs[k] = Jet(o.x[static_cast<std::size_t>(k)]);
      if constexpr (N > kNumParameters) xs[0] = Jet(o.x[0], N - 1);
      const Jet f = Equation::template Evaluate<Jet>(p, xs, context);
      residuals[i] = (o.y - f.a) / o.sigma_y;
      if (!std::isfinite(residuals[i])) return false;
      if (jacobian != nullptr) {
        double* row = jacobian + i * static_cast<std::size_t>(kNumParameters);
        for (int j = 0; j < kNumParameters; ++j) {
          row[j] = -f.v[j] / o.sigma_y;
          if (!std::isfinite(row[j])) return false;
        }
      }
      if (x0_jacobian != nullptr) {
        x0_jacobian[i] = -f.v[N - 1] / o.sigma_y;
        if (!std::isfinite(x0_jacobian[i])) return false;
      }
    }
    return true;
  }

  ModelInfo info_;
};

// A new model of the given Equation.
template <typename Equation>
std::unique_ptr<Model> MakeAutoDiffModel() {
  return std::make_unique<AutoDiffModel<Equation>>();
}

}  // namespace sorbtrace::fitters
