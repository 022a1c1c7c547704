// Round trip through the fitting engine: data generated from each registered model (fixed
// generator state, 0.5 % relative noise with matching sigma_y) are fitted with FitModel, and
// every parameter is recovered within 3 standard errors.
#include <gtest/gtest.h>

#include <boost/math/distributions/chi_squared.hpp>
#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/registry.h"
#include "pipeline/physics/physics.h"
#include "tests/models/synthetic.h"
#include "tests/models/typical_parameters.h"

namespace sorbtrace::fitters {
namespace {

using testing::Grid;
using testing::TypicalParameters;

constexpr double kRelativeNoise = 0.005;  // 0.5 % of u: a good gravimetric isotherm
constexpr double kMaxStandardErrors = 3.0;
constexpr std::uint64_t kGeneratorState = 20261201;

// Capillary pressures log-spaced from 1 kPa (pressure plate) to 400 MPa (RH 0.05 at 23 degC),
// converted to RH as the fit stage does.
std::vector<double> RetentionDesign(int num_points, const ModelContext& context) {
  std::vector<double> rh;
  for (double log10_pc : Grid(3.0, std::log10(4e8), num_points))
    rh.push_back(physics::RhFromCapillaryPressure(std::pow(10.0, log10_pc), context.temperature_K));
  return rh;
}

std::vector<double> DesignFor(const Model& model, const ModelContext& context) {
  // The BET equation is fitted inside its default range; the retention curves span the whole
  // capillary-pressure range, with more points for more parameters.
  const std::string& name = model.name();
  if (name == "bet") return Grid(0.05, 0.35, 12);
  if (name == "vangenuchten" || name == "vangenuchten_free_m") return RetentionDesign(24, context);
  if (name == "durner2") return RetentionDesign(30, context);
  if (name == "durner3") return RetentionDesign(45, context);
  return Grid(0.05, 0.95, 18);
}

TEST(ModelRoundTripTest, EveryModelRecoversItsParameters) {
  const ModelContext context;
  std::uint64_t model_index = 0;  // one generator state per model, in registry order
  for (const Model* model : AllModels()) {
    SCOPED_TRACE(model->name());
    const std::vector<double>& truth = TypicalParameters().at(model->name());
    testing::NormalSource noise(kGeneratorState + model_index++);
    std::vector<Observation> points;
    for (double a : DesignFor(*model, context)) {
      Observation o;
      o.x[0] = a;
      const double f = model->Evaluate(truth.data(), o.x.data(), context);
      o.y = f * (1.0 + kRelativeNoise * noise.Normal());
      o.sigma_y = kRelativeNoise * f;
      points.push_back(o);
    }
    FitOptions options;
    options.weights = WeightConvention::kAbsolute;  // the sigmas are the true noise level
    const FitResult fit = FitModel(*model, points, context, options);
    ASSERT_TRUE(fit.ok()) << fit.summary.message;
    ASSERT_TRUE(fit.summary.covariance_available) << fit.summary.BriefReport();
    for (std::size_t i = 0; i < truth.size(); ++i) {
      const ParameterEstimate& e = fit.estimates[i];
      EXPECT_GT(e.standard_error, 0.0) << e.name;
      EXPECT_LE(std::abs(e.value - truth[i]), kMaxStandardErrors * e.standard_error)
          << e.name << " = " << e.value << " +- " << e.standard_error << ", true " << truth[i];
    }
    // Chi-square consistency of the weighted SSR with n - p degrees of freedom: inside the
    // central 99.9 % of the distribution (Boost.Math quantiles).
    const boost::math::chi_squared chi_square(fit.statistics.degrees_of_freedom);
    EXPECT_GT(fit.statistics.weighted_ssr, boost::math::quantile(chi_square, 0.0005));
    EXPECT_LT(fit.statistics.weighted_ssr, boost::math::quantile(chi_square, 0.9995));
  }
}

}  // namespace
}  // namespace sorbtrace::fitters
