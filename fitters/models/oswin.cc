#include "fitters/models/oswin.h"

#include <cmath>
#include <memory>

#include "fitters/autodiff_model.h"
#include "fitters/models/linear_fit.h"

namespace sorbtrace::fitters::models {

ModelInfo OswinEquation::Info() {
  ModelInfo info;
  info.name = "oswin";
  info.title = "Oswin";
  info.equation = "u = A (a_w / (1 - a_w))^B";
  info.source = "C. R. Oswin, J. Soc. Chem. Ind. 65 (1946) 419";
  info.x_quantity = "rh_fraction";
  info.y_quantity = "moisture content, kg/kg dry basis";
  info.x_min = 0.0;
  info.x_max = 1.0;
  info.parameters = {
      {"A", "kg/kg", 0.0, 10.0, "moisture content at a_w = 0.5"},
      {"B", "1", 0.0, 10.0, "shape exponent"},
  };
  return info;
}

std::vector<std::vector<double>> OswinEquation::StartingPoints(
    const std::vector<Observation>& observations, const ModelContext& /*context*/) {
  std::vector<double> t;
  std::vector<double> z;
  std::vector<double> w;
  for (const Observation& o : PositivePointsInside(observations, 0.0, 1.0)) {
    t.push_back(std::log(o.x[0] / (1.0 - o.x[0])));
    z.push_back(std::log(o.y));
    const double sigma_z = (o.sigma_y > 0.0 ? o.sigma_y : 1.0) / o.y;  // sigma(ln u) = sigma_u/u
    w.push_back(1.0 / (sigma_z * sigma_z));
  }
  std::vector<std::vector<double>> candidates;
  const LinearFit line = WeightedStraightLine(t, z, w);
  if (line.ok) candidates.push_back({std::exp(line.coefficients[0]), line.coefficients[1]});
  const double u_max = MaxResponse(observations);
  candidates.push_back({u_max > 0.0 ? 0.3 * u_max : 0.05, 0.5});  // generic sigmoid, B = 0.5
  return CleanStartingPoints(candidates, Info());
}

std::vector<std::string> OswinEquation::PhysicalFlags(const double* params) {
  std::vector<std::string> flags;
  if (params[0] <= 0.0) flags.emplace_back("A <= 0: no sorption");
  if (params[1] <= 0.0) flags.emplace_back("B <= 0: moisture content does not rise with a_w");
  return flags;
}

const Model& OswinModel() {
  static const std::unique_ptr<Model> model = MakeAutoDiffModel<OswinEquation>();
  return *model;
}

}  // namespace sorbtrace::fitters::models
