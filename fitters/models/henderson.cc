#include "fitters/models/henderson.h"

#include <cmath>
#include <memory>

#include "fitters/autodiff_model.h"
#include "fitters/models/linear_fit.h"

namespace sorbtrace::fitters::models {

namespace {
// Lower bound of k: the equation takes ln(k), so the bound is a tiny positive number instead
// of 0 (where the value and its derivative are not finite). Far below any physical value.
constexpr double kMinPositive = 1e-12;
}  // namespace

ModelInfo HendersonEquation::Info() {
  ModelInfo info;
  info.name = "henderson";
  info.title = "Henderson (isothermal form)";
  info.equation = "u = (-ln(1 - a_w) / k)^(1/n)";
  info.source = "S. M. Henderson, Agric. Eng. 33 (1952) 29";
  info.x_quantity = "rh_fraction";
  info.y_quantity = "moisture content, kg/kg dry basis";
  info.x_min = 0.0;
  info.x_max = 1.0;
  info.parameters = {
      {"k", "(kg/kg)^-n", kMinPositive, 1.0e6, "constant (includes the temperature factor)"},
      {"n", "1", 0.05, 20.0, "exponent"},
  };
  return info;
}

std::vector<std::vector<double>> HendersonEquation::StartingPoints(
    const std::vector<Observation>& observations, const ModelContext& /*context*/) {
  std::vector<double> t;
  std::vector<double> z;
  std::vector<double> w;
  for (const Observation& o : PositivePointsInside(observations, 0.0, 1.0)) {
    t.push_back(std::log(-std::log1p(-o.x[0])));
    z.push_back(std::log(o.y));
    const double sigma_z = (o.sigma_y > 0.0 ? o.sigma_y : 1.0) / o.y;  // sigma(ln u) = sigma_u/u
    w.push_back(1.0 / (sigma_z * sigma_z));
  }
  std::vector<std::vector<double>> candidates;
  const LinearFit line = WeightedStraightLine(t, z, w);
  if (line.ok && line.coefficients[1] > 0.0) {
    const double n = 1.0 / line.coefficients[1];
    candidates.push_back({std::exp(-line.coefficients[0] * n), n});
  }
  // Generic fallback: n = 1.5 and u = u_max at a_w = 0.9 (k = -ln(0.1) / u_max^1.5).
  const double u_max = MaxResponse(observations);
  candidates.push_back({u_max > 0.0 ? -std::log(0.1) / std::pow(u_max, 1.5) : 100.0, 1.5});
  return CleanStartingPoints(candidates, Info());
}

std::vector<std::string> HendersonEquation::PhysicalFlags(const double* params) {
  std::vector<std::string> flags;
  if (params[0] <= 0.0) flags.emplace_back("k <= 0: not a Henderson isotherm");
  if (params[1] <= 0.0) flags.emplace_back("n <= 0: not a Henderson isotherm");
  return flags;
}

const Model& HendersonModel() {
  static const std::unique_ptr<Model> model = MakeAutoDiffModel<HendersonEquation>();
  return *model;
}

}  // namespace sorbtrace::fitters::models
