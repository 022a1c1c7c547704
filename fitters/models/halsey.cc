#include "fitters/models/halsey.h"

#include <cmath>
#include <memory>

#include "fitters/autodiff_model.h"
#include "fitters/models/linear_fit.h"

namespace sorbtrace::fitters::models {

namespace {
// Lower bound of A: the equation takes ln(A), so the bound is a tiny positive number instead
// of 0 (where the value and its derivative are not finite). Far below any physical value.
constexpr double kMinPositive = 1e-12;
}  // namespace

ModelInfo HalseyEquation::Info() {
  ModelInfo info;
  info.name = "halsey";
  info.title = "Halsey";
  info.equation = "u = (A / (-ln a_w))^(1/B)";
  info.source = "G. Halsey, J. Chem. Phys. 16 (1948) 931";
  info.x_quantity = "rh_fraction";
  info.y_quantity = "moisture content, kg/kg dry basis";
  info.x_min = 0.0;
  info.x_max = 1.0;
  info.parameters = {
      {"A", "(kg/kg)^B", kMinPositive, 1000.0, "energy constant"},
      {"B", "1", 0.05, 20.0, "exponent"},
  };
  return info;
}

std::vector<std::vector<double>> HalseyEquation::StartingPoints(
    const std::vector<Observation>& observations, const ModelContext& /*context*/) {
  std::vector<double> t;
  std::vector<double> z;
  std::vector<double> w;
  for (const Observation& o : PositivePointsInside(observations, 0.0, 1.0)) {
    t.push_back(std::log(-std::log(o.x[0])));
    z.push_back(std::log(o.y));
    const double sigma_z = (o.sigma_y > 0.0 ? o.sigma_y : 1.0) / o.y;  // sigma(ln u) = sigma_u/u
    w.push_back(1.0 / (sigma_z * sigma_z));
  }
  std::vector<std::vector<double>> candidates;
  const LinearFit line = WeightedStraightLine(t, z, w);
  if (line.ok && line.coefficients[1] < 0.0) {
    const double b = -1.0 / line.coefficients[1];
    candidates.push_back({std::exp(line.coefficients[0] * b), b});
  }
  // Generic fallback: B = 2 and u = u_max at a_w = 0.9 (A = -ln(0.9) u_max^2).
  const double u_max = MaxResponse(observations);
  candidates.push_back({u_max > 0.0 ? -std::log(0.9) * u_max * u_max : 1e-3, 2.0});
  return CleanStartingPoints(candidates, Info());
}

std::vector<std::string> HalseyEquation::PhysicalFlags(const double* params) {
  std::vector<std::string> flags;
  if (params[0] <= 0.0) flags.emplace_back("A <= 0: no sorption");
  if (params[1] <= 0.0) flags.emplace_back("B <= 0: not a Halsey isotherm");
  return flags;
}

const Model& HalseyModel() {
  static const std::unique_ptr<Model> model = MakeAutoDiffModel<HalseyEquation>();
  return *model;
}

}  // namespace sorbtrace::fitters::models
