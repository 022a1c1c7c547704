#include "fitters/models/durner.h"

#include <algorithm>
#include <memory>
#include <utility>

#include "fitters/autodiff_model.h"
#include "fitters/models/linear_fit.h"

namespace sorbtrace::fitters::models {

namespace {

// Starting-value grid: the model is linear in c_i = u_sat w_i once the alphas and n's are fixed,
// so for each grid point (alpha1 above the van Genuchten alpha by kFirstOffsets_decades, equal
// decade spacing kSpacings_decades, one common n from kShapeGrid) the c_i follow from weighted
// linear least squares; candidates are ranked by weighted sum of squares (common practice:
// bimodal building materials show pore systems 0.5..3 decades apart).
constexpr double kFirstOffsets_decades[] = {0.0, 0.5, 1.0, 1.5, 2.0};
constexpr double kSpacings_decades[] = {0.5, 1.0, 1.5, 2.0, 3.0};
constexpr double kShapeGrid[] = {1.5, 2.0, 3.0};
constexpr double kMinWeight = 0.02;  // negative or zero c_i are replaced by this share
constexpr std::size_t kMaxStarts = 4;

ParameterSpec Log10Alpha1Spec() {
  return {"log10_alpha1", "log10(1/Pa)", -12.0, 0.0,
          "log10 of alpha of pore system 1 (the largest alpha)"};
}
ParameterSpec OffsetSpec(const std::string& index) {
  return {"dlog10_alpha" + index, "decades", 0.0, 12.0,
          "log10(alpha" + std::to_string(std::stoi(index) - 1) + " / alpha" + index +
              ") >= 0 (ordering)"};
}
ParameterSpec ShapeSpec(const std::string& index) {
  return {"n" + index, "1", 1.0, 20.0, "pore-size distribution index of system " + index};
}

template <typename Equation>
std::vector<std::vector<double>> RankAndClean(std::vector<std::vector<double>> candidates,
                                              const std::vector<Observation>& observations,
                                              const ModelContext& context) {
  std::vector<std::pair<double, std::vector<double>>> ranked;
  for (std::vector<double>& p : candidates) {
    const double cost = CandidateCost(observations, [&](const double* x) {
      return Equation::template Evaluate<double>(p.data(), x, context);
    });
    ranked.emplace_back(cost, std::move(p));
  }
  std::stable_sort(ranked.begin(), ranked.end(),
                   [](const auto& lhs, const auto& rhs) { return lhs.first < rhs.first; });
  std::vector<std::vector<double>> sorted;
  for (std::size_t i = 0; i < ranked.size() && i < kMaxStarts; ++i)
    sorted.push_back(std::move(ranked[i].second));
  return CleanStartingPoints(sorted, Equation::Info());
}

// Grid starts for num_systems (2 or 3) pore systems, in the parameter layout of durner2/3.
std::vector<std::vector<double>> GridStarts(int num_systems,
                                            const std::vector<Observation>& observations,
                                            const ModelContext& context) {
  const double factor = KelvinPressureFactor_Pa(context.temperature_K);
  const std::vector<std::vector<double>> vg = VanGenuchtenCandidates(observations, context, 1);
  const double centre = vg.empty() ? -7.0 : vg.front()[1];
  const double u_fallback = std::max(MaxResponse(observations), 1e-3);
  std::vector<std::vector<double>> candidates;
  for (double offset : kFirstOffsets_decades) {
    for (double spacing : kSpacings_decades) {
      for (double n : kShapeGrid) {
        const double m = 1.0 - 1.0 / n;
        std::vector<std::vector<double>> design;
        std::vector<double> y;
        std::vector<double> w;
        for (const Observation& o : observations) {
          std::vector<double> row;
          row.reserve(num_systems);
          for (int i = 0; i < num_systems; ++i)
            row.push_back(
                VanGenuchtenSaturationAtRh(o.x[0], centre + offset - i * spacing, n, m, factor));
          design.push_back(std::move(row));
          y.push_back(o.y);
          const double sigma = o.sigma_y > 0.0 ? o.sigma_y : 1.0;
          w.push_back(1.0 / (sigma * sigma));
        }
        std::vector<double> c(static_cast<std::size_t>(num_systems), u_fallback / num_systems);
        const LinearFit fit = WeightedLinearLeastSquares(design, y, w);
        if (fit.ok) c = fit.coefficients;
        double total = 0.0;
        for (double ci : c) total += std::max(ci, 0.0);
        if (!(total > 0.0)) total = u_fallback;
        for (double& ci : c) ci = std::max(ci, kMinWeight * total);
        total = 0.0;
        for (double ci : c) total += ci;
        const double log10_alpha1 = centre + offset;
        if (num_systems == 2) {
          candidates.push_back({total, c[0] / total, log10_alpha1, n, spacing, n});
        } else {
          const double w1 = c[0] / total;
          const double v2 = c[1] / (c[1] + c[2]);
          candidates.push_back({total, w1, v2, log10_alpha1, n, spacing, n, spacing, n});
        }
      }
    }
  }
  return candidates;
}

ModelInfo CommonInfo() {
  ModelInfo info;
  info.source = "W. Durner, Water Resour. Res. 30 (1994) 211";
  info.x_quantity = "rh_fraction";
  info.y_quantity = "moisture content, kg/kg dry basis";
  info.x_min = 0.0;
  info.x_max = 1.0;
  return info;
}

void FlagCommon(const double* params, int num_systems, const double* offsets,
                std::vector<std::string>* flags) {
  if (params[0] <= 0.0) flags->push_back("u_sat <= 0: no pore water at saturation");
  for (int i = 0; i < num_systems - 1; ++i)
    if (offsets[i] <= 0.0)
      flags->push_back("dlog10_alpha" + std::to_string(i + 2) +
                       " = 0: two pore systems coincide, their weights are not identifiable");
}

}  // namespace

ModelInfo Durner2Equation::Info() {
  ModelInfo info = CommonInfo();
  info.name = "durner2";
  info.title = "Durner bimodal retention curve";
  info.equation =
      "u = u_sat [w1 S(alpha1, n1) + (1 - w1) S(alpha2, n2)], S = [1 + (alpha p_c)^n]^(-(1-1/n)), "
      "alpha2 = alpha1 / 10^dlog10_alpha2";
  info.parameters = {
      {"u_sat", "kg/kg", 0.0, 10.0, "moisture content at capillary saturation (p_c = 0)"},
      {"w1", "1", 0.0, 1.0, "weight of pore system 1; w2 = 1 - w1"},
      Log10Alpha1Spec(),
      ShapeSpec("1"),
      OffsetSpec("2"),
      ShapeSpec("2"),
  };
  return info;
}

ModelInfo Durner3Equation::Info() {
  ModelInfo info = CommonInfo();
  info.name = "durner3";
  info.title = "Durner trimodal retention curve";
  info.equation =
      "u = u_sat sum_i w_i [1 + (alpha_i p_c)^n_i]^(-(1-1/n_i)), w2 = (1-w1) v2, "
      "w3 = (1-w1)(1-v2), alpha_(i+1) = alpha_i / 10^dlog10_alpha_(i+1)";
  info.parameters = {
      {"u_sat", "kg/kg", 0.0, 10.0, "moisture content at capillary saturation (p_c = 0)"},
      {"w1", "1", 0.0, 1.0, "weight of pore system 1"},
      {"v2", "1", 0.0, 1.0, "share of 1 - w1 given to system 2: w2 = (1-w1) v2, w3 = (1-w1)(1-v2)"},
      Log10Alpha1Spec(),
      ShapeSpec("1"),
      OffsetSpec("2"),
      ShapeSpec("2"),
      OffsetSpec("3"),
      ShapeSpec("3"),
  };
  return info;
}

std::vector<std::vector<double>> Durner2Equation::StartingPoints(
    const std::vector<Observation>& observations, const ModelContext& context) {
  return RankAndClean<Durner2Equation>(GridStarts(2, observations, context), observations, context);
}

std::vector<std::vector<double>> Durner3Equation::StartingPoints(
    const std::vector<Observation>& observations, const ModelContext& context) {
  return RankAndClean<Durner3Equation>(GridStarts(3, observations, context), observations, context);
}

std::vector<std::string> Durner2Equation::PhysicalFlags(const double* params) {
  std::vector<std::string> flags;
  const double offsets[] = {params[4]};
  FlagCommon(params, 2, offsets, &flags);
  if (params[1] <= 0.0 || params[1] >= 1.0)
    flags.emplace_back("w1 at 0 or 1: one pore system carries no water (unimodal curve)");
  return flags;
}

std::vector<std::string> Durner3Equation::PhysicalFlags(const double* params) {
  std::vector<std::string> flags;
  const double offsets[] = {params[5], params[7]};
  FlagCommon(params, 3, offsets, &flags);
  for (double w : Durner3Weights(params))
    if (w <= 0.0) {
      flags.emplace_back("a pore-system weight is 0: fewer than three systems carry water");
      break;
    }
  return flags;
}

std::vector<double> Durner3Weights(const double* params) {
  const double w1 = params[1];
  return {w1, (1.0 - w1) * params[2], (1.0 - w1) * (1.0 - params[2])};
}

const Model& Durner2Model() {
  static const std::unique_ptr<Model> model = MakeAutoDiffModel<Durner2Equation>();
  return *model;
}

const Model& Durner3Model() {
  static const std::unique_ptr<Model> model = MakeAutoDiffModel<Durner3Equation>();
  return *model;
}

}  // namespace sorbtrace::fitters::models
