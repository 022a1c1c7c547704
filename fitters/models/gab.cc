#include "fitters/models/gab.h"

#include <cmath>
#include <memory>

#include "fitters/autodiff_model.h"
#include "fitters/models/linear_fit.h"

namespace sorbtrace::fitters::models {

namespace {

// Defaults when the quadratic gives nothing usable: C and K typical of hygroscopic building
// and food materials (Timmermann, Chirife & Iglesias, J. Food Eng. 48 (2001) 19: common
// practice), X_m from u(0.9) = X_m * 3.4 at C = 10, K = 0.8 (computed from the GAB equation).
constexpr double kDefaultC = 10.0;
constexpr double kDefaultK = 0.8;
constexpr double kDefaultMaxResponsePerMonolayer = 3.4;

// Lewicki (1997): a sigmoid type II GAB curve with X_m within +-15.5 % of the true monolayer
// needs 0.24 < K <= 1 and C >= 5.67 (from memory).
constexpr double kLewickiMinK = 0.24;
constexpr double kLewickiMinC = 5.67;

}  // namespace

ModelInfo GabEquation::Info() {
  ModelInfo info;
  info.name = "gab";
  info.title = "Guggenheim-Anderson-de Boer (GAB)";
  info.equation = "u = X_m C K a_w / ((1 - K a_w) (1 - K a_w + C K a_w))";
  info.source =
      "E. A. Guggenheim, Applications of Statistical Mechanics, Clarendon, Oxford (1966); "
      "R. B. Anderson, J. Am. Chem. Soc. 68 (1946) 686; J. H. de Boer, The Dynamical Character "
      "of Adsorption, Clarendon, Oxford (1953)";
  info.x_quantity = "rh_fraction";
  info.y_quantity = "moisture content, kg/kg dry basis";
  info.x_min = 0.0;
  info.x_max = 1.0;
  info.parameters = {
      {"X_m", "kg/kg", 0.0, 10.0, "monolayer moisture content"},
      {"C", "1", 0.0, 1.0e6, "Guggenheim constant (monolayer sorption energy)"},
      {"K", "1", 0.0, 1.5, "multilayer factor (K = 1: BET)"},
  };
  return info;
}

bool GabLinearisedEstimate(const std::vector<Observation>& observations, double* x_m, double* c,
                           double* k) {
  const std::vector<Observation> points = PositivePointsInside(observations, 0.0, 1.0);
  std::vector<std::vector<double>> design;
  std::vector<double> z;
  std::vector<double> weights;
  for (const Observation& o : points) {
    const double a = o.x[0];
    const double u = o.y;
    design.push_back({a * a, a, 1.0});
    z.push_back(a / u);
    // sigma(a/u) = a sigma_u / u^2 (first-order propagation).
    const double sigma_z = a * (o.sigma_y > 0.0 ? o.sigma_y : 1.0) / (u * u);
    weights.push_back(1.0 / (sigma_z * sigma_z));
  }
  const LinearFit fit = WeightedLinearLeastSquares(design, z, weights);
  if (!fit.ok) return false;
  const double alpha = fit.coefficients[0];
  const double beta = fit.coefficients[1];
  const double gamma = fit.coefficients[2];
  const double discriminant = beta * beta - 4.0 * alpha * gamma;
  if (!(discriminant > 0.0) || !(gamma > 0.0)) return false;
  const double monolayer = 1.0 / std::sqrt(discriminant);
  const double multilayer = (1.0 / monolayer - beta) / (2.0 * gamma);
  if (!(multilayer > 0.0)) return false;
  const double guggenheim = 1.0 / (monolayer * multilayer * gamma);
  if (!(guggenheim > 0.0) || !std::isfinite(guggenheim)) return false;
  // Reject values outside the parameter bounds: they come from a nearly degenerate quadratic
  // (e.g. u proportional to a_w), not from a GAB-shaped curve.
  const ModelInfo info = GabEquation::Info();
  const double values[] = {monolayer, guggenheim, multilayer};
  for (std::size_t i = 0; i < 3; ++i)
    if (values[i] > info.parameters[i].upper_bound) return false;
  *x_m = monolayer;
  *c = guggenheim;
  *k = multilayer;
  return true;
}

std::vector<std::vector<double>> GabEquation::StartingPoints(
    const std::vector<Observation>& observations, const ModelContext& /*context*/) {
  std::vector<std::vector<double>> candidates;
  double x_m = 0.0;
  double c = 0.0;
  double k = 0.0;
  if (GabLinearisedEstimate(observations, &x_m, &c, &k)) candidates.push_back({x_m, c, k});
  const double u_max = MaxResponse(observations);
  const double x_m_default = u_max > 0.0 ? u_max / kDefaultMaxResponsePerMonolayer : 0.05;
  candidates.push_back({x_m_default, kDefaultC, kDefaultK});
  return CleanStartingPoints(candidates, Info());
}

std::vector<std::string> GabEquation::PhysicalFlags(const double* params) {
  const double c = params[1];
  const double k = params[2];
  std::vector<std::string> flags;
  if (params[0] <= 0.0) flags.emplace_back("X_m <= 0: no monolayer capacity");
  if (c <= 0.0) flags.emplace_back("C <= 0: physically meaningless Guggenheim constant");
  if (k >= 1.0)
    flags.emplace_back(
        "K >= 1: the multilayer factor implies unbounded sorption at a_w = 1/K <= 1 "
        "(physically doubtful)");
  if (c > 0.0 && k > 0.0 && k < 1.0 && (k <= kLewickiMinK || c < kLewickiMinC))
    flags.emplace_back(
        "outside 0.24 < K <= 1, C >= 5.67 (Lewicki, Int. J. Food Sci. Technol. 32 (1997) 553; "
        "from memory): the curve is not a sigmoid type II isotherm and X_m may differ from the "
        "true monolayer by more than 15.5 %");
  return flags;
}

const Model& GabModel() {
  static const std::unique_ptr<Model> model = MakeAutoDiffModel<GabEquation>();
  return *model;
}

}  // namespace sorbtrace::fitters::models
