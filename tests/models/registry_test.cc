// The model registry, model metadata, and the automatic derivatives of every registered model
// against central finite differences.
#include "fitters/registry.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <functional>
#include <set>
#include <string>
#include <vector>

#include "tests/models/typical_parameters.h"

namespace sorbtrace::fitters {
namespace {

using testing::TypicalParameters;

TEST(ModelRegistryTest, ListsTheIsothermModels) {
  const std::vector<std::string> expected = {
      "gab",   "bet",    "bet_n",     "vangenuchten", "vangenuchten_free_m", "durner2", "durner3",
      "oswin", "halsey", "henderson", "peleg"};
  EXPECT_EQ(ModelNames(), expected);
  EXPECT_EQ(AllModels().size(), expected.size());
}

TEST(ModelRegistryTest, FindsByExactKey) {
  for (const std::string& name : ModelNames()) {
    const Model* model = FindModel(name);
    ASSERT_NE(model, nullptr) << name;
    EXPECT_EQ(model->name(), name);
    EXPECT_EQ(model, FindModel(name));  // singletons
  }
  EXPECT_EQ(FindModel("GAB"), nullptr);
  EXPECT_EQ(FindModel(""), nullptr);
  EXPECT_EQ(FindModel("langmuir"), nullptr);
}

TEST(ModelRegistryTest, MetadataIsComplete) {
  std::set<std::string> names;
  for (const Model* model : AllModels()) {
    const ModelInfo& info = model->info();
    SCOPED_TRACE(info.name);
    EXPECT_TRUE(names.insert(info.name).second);
    EXPECT_FALSE(info.title.empty());
    EXPECT_FALSE(info.equation.empty());
    EXPECT_FALSE(info.source.empty());
    EXPECT_EQ(info.x_quantity, "rh_fraction");
    EXPECT_EQ(info.y_quantity, "moisture content, kg/kg dry basis");
    EXPECT_LT(info.x_min, info.x_max);
    EXPECT_GE(info.x_min, 0.0);
    EXPECT_LE(info.x_max, 1.0);
    EXPECT_EQ(model->num_inputs(), 1);
    std::set<std::string> parameter_names;
    for (const ParameterSpec& spec : info.parameters) {
      EXPECT_FALSE(spec.name.empty());
      EXPECT_FALSE(spec.unit.empty());
      EXPECT_FALSE(spec.description.empty());
      EXPECT_LT(spec.lower_bound, spec.upper_bound) << spec.name;
      EXPECT_TRUE(parameter_names.insert(spec.name).second) << spec.name;
    }
    ASSERT_TRUE(TypicalParameters().contains(info.name)) << "add the model to typical_parameters.h";
    const std::vector<double>& p = TypicalParameters().at(info.name);
    ASSERT_EQ(static_cast<int>(p.size()), model->num_parameters());
    for (std::size_t i = 0; i < p.size(); ++i) {
      EXPECT_GT(p[i], info.parameters[i].lower_bound) << info.parameters[i].name;
      EXPECT_LT(p[i], info.parameters[i].upper_bound) << info.parameters[i].name;
    }
    EXPECT_TRUE(model->PhysicalFlags(p.data()).empty()) << model->PhysicalFlags(p.data()).front();
  }
}

// Central difference with step h = relative_step max(|v|, 1e-2): with relative_step = 1e-6
// truncation O(h^2 f''') and rounding O(eps f / h) both stay near 1e-10 relative, so 1e-6
// relative agreement is a sharp test. Near saturation some equations are evaluated to only
// about 1e-11 relative (bet_n, see bet.h), so there a step of 1e-4 and 1e-5 agreement are used.
double CentralDifference(const std::function<double(double)>& f, double v,
                         double relative_step = 1e-6) {
  const double h = relative_step * std::max(std::abs(v), 1e-2);
  return (f(v + h) - f(v - h)) / (2.0 * h);
}

TEST(ModelDerivativeTest, ParameterGradientMatchesFiniteDifferences) {
  const ModelContext context;
  for (const Model* model : AllModels()) {
    SCOPED_TRACE(model->name());
    std::vector<double> p = TypicalParameters().at(model->name());
    const double x_max = std::min(model->info().x_max, 0.97);
    const double x_min = std::max(model->info().x_min, 0.03);
    std::vector<double> activities;
    for (int k = 0; k < 7; ++k) activities.push_back(x_min + (x_max - x_min) * k / 6.0);
    if (model->info().x_max >= 1.0) {  // near saturation, where retention curves live
      activities.push_back(0.999);
      activities.push_back(0.99999);
    }
    for (double a : activities) {
      const double x[kMaxInputs] = {a, 0.0};
      const bool near_saturation = a > 0.99;
      const double tolerance = near_saturation ? 1e-5 : 1e-6;
      std::vector<double> gradient(p.size());
      model->Gradient(p.data(), x, context, gradient.data());
      for (std::size_t j = 0; j < p.size(); ++j) {
        const double numeric = CentralDifference(
            [&](double v) {
              std::vector<double> q = p;
              q[j] = v;
              return model->Evaluate(q.data(), x, context);
            },
            p[j], near_saturation ? 1e-4 : 1e-6);
        // Scale: the derivative itself, or f / p_j where the derivative is tiny (rounding of f
        // limits the difference quotient to about eps |f| / h there).
        const double f = model->Evaluate(p.data(), x, context);
        const double scale =
            std::max(std::abs(numeric), std::abs(f) / std::max(std::abs(p[j]), 1e-2));
        EXPECT_NEAR(gradient[j], numeric, tolerance * scale)
            << model->info().parameters[j].name << " at a_w " << x[0];
      }
    }
  }
}

TEST(ModelDerivativeTest, SlopeInActivityMatchesFiniteDifferences) {
  const ModelContext context;
  for (const Model* model : AllModels()) {
    SCOPED_TRACE(model->name());
    const std::vector<double> p = TypicalParameters().at(model->name());
    for (double a : {0.05, 0.2, 0.45, 0.7, 0.9}) {
      const double x[kMaxInputs] = {a, 0.0};
      const double numeric = CentralDifference(
          [&](double v) {
            const double xv[kMaxInputs] = {v, 0.0};
            return model->Evaluate(p.data(), xv, context);
          },
          a);
      EXPECT_NEAR(model->SlopeInX0(p.data(), x, context), numeric,
                  1e-6 * std::max(std::abs(numeric), 1e-8))
          << "a_w " << a;
      EXPECT_GT(model->SlopeInX0(p.data(), x, context), 0.0) << "isotherms rise with a_w";
    }
  }
}

}  // namespace
}  // namespace sorbtrace::fitters
