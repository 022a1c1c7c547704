#include "fitters/models/peleg.h"

#include <algorithm>
#include <cmath>
#include <memory>
#include <utility>

#include "fitters/autodiff_model.h"
#include "fitters/models/linear_fit.h"

namespace sorbtrace::fitters::models {

namespace {

// Exponent grid for the starts (spanning the bounds; published n1 ~ 0.2..0.9, n2 ~ 2..15 for
// foods: common practice).
constexpr double kConcaveStarts[] = {0.2, 0.4, 0.6, 0.8};
constexpr double kConvexStarts[] = {2.0, 4.0, 8.0, 16.0};
constexpr std::size_t kMaxStarts = 4;

}  // namespace

ModelInfo PelegEquation::Info() {
  ModelInfo info;
  info.name = "peleg";
  info.title = "Peleg";
  info.equation = "u = k1 a_w^n1 + k2 a_w^n2 (n1 < 1 < n2)";
  info.source = "M. Peleg, J. Food Process Eng. 16 (1993) 21";
  info.x_quantity = "rh_fraction";
  info.y_quantity = "moisture content, kg/kg dry basis";
  info.x_min = 0.0;
  info.x_max = 1.0;
  info.parameters = {
      {"k1", "kg/kg", 0.0, 10.0, "coefficient of the concave term"},
      {"n1", "1", 0.0, 1.0, "exponent of the concave term (< 1)"},
      {"k2", "kg/kg", 0.0, 10.0, "coefficient of the convex term"},
      {"n2", "1", 1.0, 50.0, "exponent of the convex term (> 1)"},
  };
  return info;
}

std::vector<std::vector<double>> PelegEquation::StartingPoints(
    const std::vector<Observation>& observations, const ModelContext& context) {
  const std::vector<Observation> points = PositivePointsInside(observations, 0.0, 1.0 + 1e-12);
  std::vector<std::pair<double, std::vector<double>>> ranked;
  for (double n1 : kConcaveStarts) {
    for (double n2 : kConvexStarts) {
      std::vector<std::vector<double>> design;
      std::vector<double> y;
      std::vector<double> w;
      for (const Observation& o : points) {
        design.push_back({std::pow(o.x[0], n1), std::pow(o.x[0], n2)});
        y.push_back(o.y);
        const double sigma = o.sigma_y > 0.0 ? o.sigma_y : 1.0;
        w.push_back(1.0 / (sigma * sigma));
      }
      const LinearFit fit = WeightedLinearLeastSquares(design, y, w);
      if (!fit.ok) continue;
      // Negative coefficients are outside the bounds: move them to a small positive share.
      const double scale = std::max(MaxResponse(observations), 1e-6);
      const double k1 = std::max(fit.coefficients[0], 1e-3 * scale);
      const double k2 = std::max(fit.coefficients[1], 1e-3 * scale);
      std::vector<double> p = {k1, n1, k2, n2};
      const double cost = CandidateCost(observations, [&](const double* x) {
        return PelegEquation::Evaluate<double>(p.data(), x, context);
      });
      ranked.emplace_back(cost, std::move(p));
    }
  }
  std::stable_sort(ranked.begin(), ranked.end(),
                   [](const auto& lhs, const auto& rhs) { return lhs.first < rhs.first; });
  std::vector<std::vector<double>> candidates;
  for (std::size_t i = 0; i < ranked.size() && i < kMaxStarts; ++i)
    candidates.push_back(ranked[i].second);
  return CleanStartingPoints(candidates, Info());
}

std::vector<std::string> PelegEquation::PhysicalFlags(const double* params) {
  std::vector<std::string> flags;
  if (params[0] < 0.0 || params[2] < 0.0) flags.emplace_back("negative Peleg coefficient");
  if (params[1] >= 1.0 || params[3] <= 1.0)
    flags.emplace_back("n1 < 1 < n2 not strict: the two terms are not separated");
  return flags;
}

const Model& PelegModel() {
  static const std::unique_ptr<Model> model = MakeAutoDiffModel<PelegEquation>();
  return *model;
}

}  // namespace sorbtrace::fitters::models
