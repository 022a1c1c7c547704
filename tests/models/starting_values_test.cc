// Starting-value heuristics: the linearised forms recover the exact parameters from noise-free
// data, and every model offers admissible starts even for poor data.
#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "fitters/models/bet.h"
#include "fitters/models/gab.h"
#include "fitters/registry.h"
#include "tests/models/synthetic.h"
#include "tests/models/typical_parameters.h"

namespace sorbtrace::fitters {
namespace {

using testing::Grid;
using testing::TypicalParameters;

std::vector<Observation> NoiseFree(const Model& model, const std::vector<double>& params,
                                   const std::vector<double>& rh) {
  testing::NormalSource unused(1);
  return testing::Synthesize(model, params, rh, ModelContext{}, 0.0, 0.0, 1.0, &unused);
}

void ExpectFirstStartIs(const Model& model, const std::vector<double>& truth,
                        const std::vector<double>& rh) {
  const std::vector<std::vector<double>> starts =
      model.StartingPoints(NoiseFree(model, truth, rh), ModelContext{});
  ASSERT_FALSE(starts.empty());
  ASSERT_EQ(starts.front().size(), truth.size());
  for (std::size_t i = 0; i < truth.size(); ++i)
    EXPECT_NEAR(starts.front()[i], truth[i], 1e-8 * std::abs(truth[i]))
        << model.name() << " " << model.info().parameters[i].name;
}

TEST(ModelStartingValuesTest, GabQuadraticRecoversExactParameters) {
  double x_m = 0.0;
  double c = 0.0;
  double k = 0.0;
  const std::vector<double> rh = Grid(0.1, 0.9, 9);
  ASSERT_TRUE(models::GabLinearisedEstimate(NoiseFree(models::GabModel(), {0.05, 10.0, 0.8}, rh),
                                            &x_m, &c, &k));
  EXPECT_NEAR(x_m, 0.05, 1e-12);
  EXPECT_NEAR(c, 10.0, 1e-9);
  EXPECT_NEAR(k, 0.8, 1e-12);
  ExpectFirstStartIs(models::GabModel(), {0.05, 10.0, 0.8}, rh);
  ExpectFirstStartIs(models::GabModel(), {0.12, 35.0, 0.65}, rh);
  ExpectFirstStartIs(models::GabModel(), {0.02, 3.0, 0.95}, rh);
}

TEST(ModelStartingValuesTest, BetLinearPlotRecoversExactParameters) {
  const std::vector<double> rh = Grid(0.05, 0.35, 7);
  double x_m = 0.0;
  double c = 0.0;
  ASSERT_TRUE(models::BetLinearEstimate(NoiseFree(models::BetModel(), {0.05, 10.0}, rh), &x_m, &c));
  EXPECT_NEAR(x_m, 0.05, 1e-12);
  EXPECT_NEAR(c, 10.0, 1e-9);
  ExpectFirstStartIs(models::BetModel(), {0.05, 10.0}, rh);
  ExpectFirstStartIs(models::BetModel(), {0.03, 80.0}, rh);
}

TEST(ModelStartingValuesTest, LinearisedEmpiricalFormsAreExact) {
  const std::vector<double> rh = Grid(0.1, 0.9, 9);
  for (const char* name : {"oswin", "halsey", "henderson"})
    ExpectFirstStartIs(*FindModel(name), TypicalParameters().at(name), rh);
}

TEST(ModelStartingValuesTest, GabLinearisationFailsCleanlyOnLinearData) {
  // u proportional to a_w: a/u constant, the quadratic has alpha = beta = 0 and no GAB solution.
  std::vector<Observation> points;
  for (double a : Grid(0.1, 0.9, 9)) {
    Observation o;
    o.x[0] = a;
    o.y = 0.1 * a;
    points.push_back(o);
  }
  double x_m = 0.0;
  double c = 0.0;
  double k = 0.0;
  EXPECT_FALSE(models::GabLinearisedEstimate(points, &x_m, &c, &k));
  EXPECT_FALSE(models::GabModel().StartingPoints(points, ModelContext{}).empty());
}

bool InsideBounds(const Model& model, const std::vector<double>& p) {
  for (std::size_t i = 0; i < p.size(); ++i) {
    const ParameterSpec& spec = model.info().parameters[i];
    if (!std::isfinite(p[i]) || p[i] < spec.lower_bound || p[i] > spec.upper_bound) return false;
  }
  return true;
}

TEST(ModelStartingValuesTest, EveryModelOffersAdmissibleStarts) {
  std::vector<Observation> zeros(5);
  for (std::size_t i = 0; i < zeros.size(); ++i) zeros[i].x[0] = 0.1 + 0.2 * static_cast<double>(i);
  for (const Model* model : AllModels()) {
    SCOPED_TRACE(model->name());
    const std::vector<Observation> good =
        NoiseFree(*model, TypicalParameters().at(model->name()), Grid(0.05, 0.95, 12));
    for (const std::vector<Observation>* data :
         {&good, static_cast<const std::vector<Observation>*>(&zeros)}) {
      const std::vector<std::vector<double>> starts = model->StartingPoints(*data, ModelContext{});
      ASSERT_FALSE(starts.empty());
      for (const std::vector<double>& s : starts) {
        ASSERT_EQ(static_cast<int>(s.size()), model->num_parameters());
        EXPECT_TRUE(InsideBounds(*model, s));
      }
    }
    EXPECT_FALSE(model->StartingPoints({}, ModelContext{}).empty());
  }
}

}  // namespace
}  // namespace sorbtrace::fitters
