#include "fitters/models/bet.h"

#include <algorithm>
#include <cmath>
#include <memory>
#include <utility>

#include "fitters/autodiff_model.h"
#include "fitters/models/linear_fit.h"

namespace sorbtrace::fitters::models {

namespace {

// Fallback when the linear plot gives nothing usable: C = 10 (common practice for water on
// hygroscopic solids), X_m from u(0.35) = 1.30 X_m at C = 10 (computed from the BET equation).
constexpr double kDefaultC = 10.0;
constexpr double kDefaultMaxResponsePerMonolayer = 1.30;
// Upper end of the default BET range, used by bet_n to take its BET start from low-a_w points.
constexpr double kBetRangeHigh = 0.35;
constexpr double kBetRangeLow = 0.05;
// Layer numbers tried as starting values of bet_n (spread over the bounds 1..50 on a log scale).
constexpr double kLayerStarts[] = {2.0, 4.0, 8.0, 16.0, 32.0};

std::vector<ParameterSpec> BetParameters() {
  return {
      {"X_m", "kg/kg", 0.0, 10.0, "monolayer moisture content"},
      {"C", "1", 0.0, 1.0e6, "BET constant (net first-layer sorption energy)"},
  };
}

}  // namespace

ModelInfo BetEquation::Info() {
  ModelInfo info;
  info.name = "bet";
  info.title = "Brunauer-Emmett-Teller (BET)";
  info.equation = "u = X_m C a_w / ((1 - a_w) (1 - a_w + C a_w))";
  info.source = "S. Brunauer, P. H. Emmett, E. Teller, J. Am. Chem. Soc. 60 (1938) 309";
  info.x_quantity = "rh_fraction";
  info.y_quantity = "moisture content, kg/kg dry basis";
  info.x_min = kBetRangeLow;
  info.x_max = kBetRangeHigh;
  info.parameters = BetParameters();
  return info;
}

ModelInfo BetNLayerEquation::Info() {
  ModelInfo info;
  info.name = "bet_n";
  info.title = "n-layer BET";
  info.equation =
      "u = X_m C a_w (1 - (n+1) a_w^n + n a_w^(n+1)) / ((1 - a_w) (1 + (C-1) a_w - C a_w^(n+1)))";
  info.source = "S. Brunauer, P. H. Emmett, E. Teller, J. Am. Chem. Soc. 60 (1938) 309";
  info.x_quantity = "rh_fraction";
  info.y_quantity = "moisture content, kg/kg dry basis";
  info.x_min = 0.0;
  info.x_max = 1.0;
  info.parameters = BetParameters();
  info.parameters.push_back({"n", "1", 1.0, 50.0, "number of adsorbed layers (continuous)"});
  return info;
}

bool BetLinearEstimate(const std::vector<Observation>& observations, double* x_m, double* c) {
  const std::vector<Observation> points = PositivePointsInside(observations, 0.0, 1.0);
  std::vector<double> a_values;
  std::vector<double> z;
  std::vector<double> weights;
  for (const Observation& o : points) {
    const double a = o.x[0];
    const double u = o.y;
    a_values.push_back(a);
    z.push_back(a / (u * (1.0 - a)));
    // sigma(z) = a sigma_u / (u^2 (1 - a)) (first-order propagation).
    const double sigma_z = a * (o.sigma_y > 0.0 ? o.sigma_y : 1.0) / (u * u * (1.0 - a));
    weights.push_back(1.0 / (sigma_z * sigma_z));
  }
  const LinearFit line = WeightedStraightLine(a_values, z, weights);
  if (!line.ok) return false;
  const double intercept = line.coefficients[0];
  const double slope = line.coefficients[1];
  if (!(intercept > 0.0) || !(slope + intercept > 0.0)) return false;
  *x_m = 1.0 / (slope + intercept);
  *c = 1.0 + slope / intercept;
  return *c > 0.0 && std::isfinite(*c);
}

std::vector<std::vector<double>> BetEquation::StartingPoints(
    const std::vector<Observation>& observations, const ModelContext& /*context*/) {
  std::vector<std::vector<double>> candidates;
  double x_m = 0.0;
  double c = 0.0;
  if (BetLinearEstimate(observations, &x_m, &c)) candidates.push_back({x_m, c});
  const double u_max = MaxResponse(observations);
  candidates.push_back({u_max > 0.0 ? u_max / kDefaultMaxResponsePerMonolayer : 0.05, kDefaultC});
  return CleanStartingPoints(candidates, Info());
}

std::vector<std::vector<double>> BetNLayerEquation::StartingPoints(
    const std::vector<Observation>& observations, const ModelContext& context) {
  // BET start from the low-a_w points (where n-layer and infinite BET agree), else from all.
  std::vector<Observation> low;
  for (const Observation& o : observations)
    if (o.x[0] <= kBetRangeHigh) low.push_back(o);
  double x_m = 0.0;
  double c = 0.0;
  const bool have_linear = (low.size() >= 3 && BetLinearEstimate(low, &x_m, &c)) ||
                           BetLinearEstimate(observations, &x_m, &c);
  if (!have_linear) {
    const double u_max = MaxResponse(observations);
    x_m = u_max > 0.0 ? u_max / kDefaultMaxResponsePerMonolayer : 0.05;
    c = kDefaultC;
  }
  // Rank the layer numbers by how well they fit all points; best first.
  std::vector<std::pair<double, std::vector<double>>> ranked;
  for (double n : kLayerStarts) {
    std::vector<double> p = {x_m, c, n};
    const double cost = CandidateCost(observations, [&](const double* x) {
      return BetNLayerEquation::Evaluate<double>(p.data(), x, context);
    });
    ranked.emplace_back(cost, std::move(p));
  }
  std::stable_sort(ranked.begin(), ranked.end(),
                   [](const auto& lhs, const auto& rhs) { return lhs.first < rhs.first; });
  std::vector<std::vector<double>> candidates;
  candidates.reserve(ranked.size());
  for (auto& [cost, p] : ranked) candidates.push_back(std::move(p));
  return CleanStartingPoints(candidates, Info());
}

std::vector<std::string> BetEquation::PhysicalFlags(const double* params) {
  std::vector<std::string> flags;
  if (params[0] <= 0.0) flags.emplace_back("X_m <= 0: no monolayer capacity");
  if (params[1] <= 0.0)
    flags.emplace_back("C <= 0: negative BET intercept, the BET model does not apply");
  return flags;
}

std::vector<std::string> BetNLayerEquation::PhysicalFlags(const double* params) {
  std::vector<std::string> flags = BetEquation::PhysicalFlags(params);
  const double n = params[2];
  if (n <= 1.0) flags.emplace_back("n <= 1: monolayer only (Langmuir limit)");
  if (n >= 50.0)
    flags.emplace_back("n >= 50: layer number not determined (infinite-layer BET limit)");
  return flags;
}

RouquerolCriteria CheckRouquerolCriteria(double monolayer_kg_per_kg, double c,
                                         const std::vector<Observation>& points,
                                         const RouquerolOptions& options) {
  RouquerolCriteria result;
  std::vector<std::pair<double, double>> sorted;  // (a_w, u)
  for (const Observation& o : points)
    if (std::isfinite(o.x[0]) && std::isfinite(o.y)) sorted.emplace_back(o.x[0], o.y);
  std::stable_sort(sorted.begin(), sorted.end());

  // 1. C > 0.
  result.c_positive = c > 0.0;
  if (!result.c_positive) result.messages.emplace_back("criterion 1 failed: C <= 0");

  // 2. u (1 - a_w) increasing with a_w.
  result.monotonic = sorted.size() >= 2;
  for (std::size_t i = 1; i < sorted.size(); ++i) {
    const double previous = sorted[i - 1].second * (1.0 - sorted[i - 1].first);
    const double current = sorted[i].second * (1.0 - sorted[i].first);
    if (!(current > previous)) result.monotonic = false;
  }
  if (!result.monotonic)
    result.messages.emplace_back(
        "criterion 2 failed: u (1 - a_w) does not increase monotonically over the fitted points");

  // 3. a_w at u = X_m inside the range: first crossing of the measured u through X_m.
  for (std::size_t i = 1; i < sorted.size(); ++i) {
    const auto [a0, u0] = sorted[i - 1];
    const auto [a1, u1] = sorted[i];
    if ((u0 - monolayer_kg_per_kg) * (u1 - monolayer_kg_per_kg) <= 0.0 && u1 != u0) {
      result.measured_rh_at_monolayer = a0 + (monolayer_kg_per_kg - u0) * (a1 - a0) / (u1 - u0);
      break;
    }
  }
  result.monolayer_in_range = std::isfinite(result.measured_rh_at_monolayer);
  if (!result.monolayer_in_range)
    result.messages.emplace_back(
        "criterion 3 failed: the measured moisture content does not pass through X_m inside the "
        "fitted a_w range");

  // 4. 1/(sqrt(C) + 1) against the measured a_w at X_m.
  if (result.c_positive) result.bet_rh_at_monolayer = 1.0 / (std::sqrt(c) + 1.0);
  if (result.c_positive && result.monolayer_in_range && result.measured_rh_at_monolayer > 0.0) {
    result.relative_difference =
        std::abs(result.bet_rh_at_monolayer - result.measured_rh_at_monolayer) /
        result.measured_rh_at_monolayer;
    result.monolayer_position_consistent = result.relative_difference <= options.relative_tolerance;
  }
  if (!result.monolayer_position_consistent)
    result.messages.emplace_back(
        "criterion 4 failed: 1/(sqrt(C) + 1) does not match the a_w at u = X_m within the "
        "tolerance");
  return result;
}

const Model& BetModel() {
  static const std::unique_ptr<Model> model = MakeAutoDiffModel<BetEquation>();
  return *model;
}

const Model& BetNLayerModel() {
  static const std::unique_ptr<Model> model = MakeAutoDiffModel<BetNLayerEquation>();
  return *model;
}

}  // namespace sorbtrace::fitters::models
