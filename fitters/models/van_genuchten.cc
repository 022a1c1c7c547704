#include "fitters/models/van_genuchten.h"

#include <algorithm>
#include <array>
#include <bit>
#include <cmath>
#include <cstdint>
#include <limits>
#include <memory>
#include <utility>

#include "fitters/autodiff_model.h"
#include "fitters/models/linear_fit.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::fitters::models {

namespace {

// Starting-value grids (common practice: n of soils and porous building materials lies
// between about 1.1 and 5; u_sat of hygroscopic data is above the largest measured u).
constexpr double kShapeStarts[] = {1.2, 1.5, 2.0, 3.0, 5.0};
constexpr double kSaturationMultiples[] = {1.05, 1.5, 3.0};
constexpr double kFallbackLog10Alpha = -7.0;  // 1/(10 MPa): air entry in the hygroscopic range

ParameterSpec SaturationSpec() {
  return {"u_sat", "kg/kg", 0.0, 10.0, "moisture content at capillary saturation (p_c = 0)"};
}
ParameterSpec Log10AlphaSpec() {
  return {"log10_alpha", "log10(1/Pa)", -12.0, 0.0,
          "log10 of alpha, the inverse air-entry capillary pressure"};
}

double Median(std::vector<double> values) {
  std::sort(values.begin(), values.end());
  const std::size_t mid = values.size() / 2;
  return values.size() % 2 == 1 ? values[mid] : 0.5 * (values[mid - 1] + values[mid]);
}

}  // namespace

double KelvinPressureFactor_Pa(double temperature_K) {
  // Memo of the last temperature (NaN never compares equal, so it is never served from here).
  thread_local double last_temperature_K = std::numeric_limits<double>::quiet_NaN();
  thread_local double last_factor_Pa = 0.0;
  if (temperature_K == last_temperature_K) return last_factor_Pa;
  const double factor_Pa = physics::LiquidWaterDensity_kg_per_m3(temperature_K) *
                           physics::kMolarGasConstant_J_per_mol_K * temperature_K /
                           physics::kMolarMassWater_kg_per_mol;
  last_temperature_K = temperature_K;
  last_factor_Pa = factor_Pa;
  return factor_Pa;
}

double LogKelvinPressureFactor(double kelvin_factor_Pa) {
  thread_local double last_factor_Pa = std::numeric_limits<double>::quiet_NaN();
  thread_local double last_log = 0.0;
  if (kelvin_factor_Pa == last_factor_Pa) return last_log;
  last_log = std::log(kelvin_factor_Pa);
  last_factor_Pa = kelvin_factor_Pa;
  return last_log;
}

double LogCapillaryPressureValue(double rh_fraction, double kelvin_factor_Pa, double* ln_rh) {
  struct Entry {
    double rh_fraction = std::numeric_limits<double>::quiet_NaN();  // never matches
    double kelvin_factor_Pa = std::numeric_limits<double>::quiet_NaN();
    double ln_rh = 0.0;
    double value = 0.0;
  };
  // Two-way set-associative, 2048 sets (4096 entries, 128 KiB per thread): a pore-size band
  // evaluates the model at 400 humidities per draw; a direct-mapped table of 1024 entries let
  // about a third of them evict each other on every draw (measured: 42 % misses, 0.34 million
  // extra logarithms per 400,000 evaluations); with two ways a miss needs three keys in one set.
  constexpr int kSetBits = 11;
  thread_local std::array<std::array<Entry, 2>, std::size_t{1} << kSetBits> table;
  // Fibonacci hashing of the bit pattern (Knuth's multiplicative constant 2^64 / golden ratio).
  const std::uint64_t bits = std::bit_cast<std::uint64_t>(rh_fraction);
  const std::size_t set =
      static_cast<std::size_t>((bits * 0x9E3779B97F4A7C15ULL) >> (64 - kSetBits));
  std::array<Entry, 2>& ways = table[set];
  const auto matches = [&](const Entry& e) {
    return e.rh_fraction == rh_fraction && e.kelvin_factor_Pa == kelvin_factor_Pa;
  };
  if (!matches(ways[0])) {
    if (matches(ways[1])) {
      std::swap(ways[0], ways[1]);  // most recently used first
    } else {
      ways[1] = ways[0];
      const double log_rh = std::log(rh_fraction);
      ways[0] = {rh_fraction, kelvin_factor_Pa, log_rh,
                 LogKelvinPressureFactor(kelvin_factor_Pa) + std::log(-log_rh)};
    }
  }
  const Entry& entry = ways[0];
  if (ln_rh != nullptr) *ln_rh = entry.ln_rh;
  return entry.value;
}

ModelInfo VanGenuchtenEquation::Info() {
  ModelInfo info;
  info.name = "vangenuchten";
  info.title = "van Genuchten retention curve (m = 1 - 1/n)";
  info.equation =
      "u = u_sat [1 + (alpha p_c)^n]^(-(1 - 1/n)), p_c = -(rho_w R T / M_w) ln(a_w), "
      "alpha = 10^log10_alpha";
  info.source = "M. Th. van Genuchten, Soil Sci. Soc. Am. J. 44 (1980) 892";
  info.x_quantity = "rh_fraction";
  info.y_quantity = "moisture content, kg/kg dry basis";
  info.x_min = 0.0;
  info.x_max = 1.0;
  info.parameters = {
      SaturationSpec(), Log10AlphaSpec(), {"n", "1", 1.0, 20.0, "pore-size distribution index"}};
  return info;
}

ModelInfo VanGenuchtenFreeMEquation::Info() {
  ModelInfo info;
  info.name = "vangenuchten_free_m";
  info.title = "van Genuchten retention curve (free m)";
  info.equation =
      "u = u_sat [1 + (alpha p_c)^n]^(-m), p_c = -(rho_w R T / M_w) ln(a_w), "
      "alpha = 10^log10_alpha";
  info.source = "M. Th. van Genuchten, Soil Sci. Soc. Am. J. 44 (1980) 892";
  info.x_quantity = "rh_fraction";
  info.y_quantity = "moisture content, kg/kg dry basis";
  info.x_min = 0.0;
  info.x_max = 1.0;
  info.parameters = {SaturationSpec(),
                     Log10AlphaSpec(),
                     {"n", "1", 0.05, 20.0, "pore-size distribution index"},
                     {"m", "1", 0.001, 20.0, "shape exponent"}};
  return info;
}

std::vector<std::vector<double>> VanGenuchtenCandidates(
    const std::vector<Observation>& observations, const ModelContext& context,
    std::size_t max_candidates) {
  const double factor = KelvinPressureFactor_Pa(context.temperature_K);
  const std::vector<Observation> points = PositivePointsInside(observations, 0.0, 1.0);
  const double u_max = MaxResponse(observations);
  std::vector<std::pair<double, std::vector<double>>> ranked;
  for (double multiple : kSaturationMultiples) {
    const double u_sat = u_max > 0.0 ? multiple * u_max : 0.1;
    for (double n : kShapeStarts) {
      const double m = 1.0 - 1.0 / n;
      std::vector<double> log10_alphas;
      for (const Observation& o : points) {
        const double s_e = o.y / u_sat;
        if (!(s_e > 0.0 && s_e < 1.0)) continue;
        const double p_c = -factor * std::log(o.x[0]);
        // Linearised van Genuchten: alpha p_c = (S_e^(-1/m) - 1)^(1/n).
        const double alpha_pc = std::pow(std::pow(s_e, -1.0 / m) - 1.0, 1.0 / n);
        if (alpha_pc > 0.0 && std::isfinite(alpha_pc) && p_c > 0.0)
          log10_alphas.push_back(std::log10(alpha_pc / p_c));
      }
      const double log10_alpha = log10_alphas.empty() ? kFallbackLog10Alpha : Median(log10_alphas);
      std::vector<double> p = {u_sat, log10_alpha, n};
      const double cost = CandidateCost(observations, [&](const double* x) {
        return VanGenuchtenEquation::Evaluate<double>(p.data(), x, context);
      });
      ranked.emplace_back(cost, std::move(p));
    }
  }
  std::stable_sort(ranked.begin(), ranked.end(),
                   [](const auto& lhs, const auto& rhs) { return lhs.first < rhs.first; });
  std::vector<std::vector<double>> candidates;
  for (std::size_t i = 0; i < ranked.size() && i < max_candidates; ++i)
    candidates.push_back(ranked[i].second);
  return candidates;
}

std::vector<std::vector<double>> VanGenuchtenEquation::StartingPoints(
    const std::vector<Observation>& observations, const ModelContext& context) {
  return CleanStartingPoints(VanGenuchtenCandidates(observations, context, 3), Info());
}

std::vector<std::vector<double>> VanGenuchtenFreeMEquation::StartingPoints(
    const std::vector<Observation>& observations, const ModelContext& context) {
  std::vector<std::vector<double>> candidates;
  for (const std::vector<double>& p : VanGenuchtenCandidates(observations, context, 3))
    candidates.push_back({p[0], p[1], p[2], 1.0 - 1.0 / p[2]});
  return CleanStartingPoints(candidates, Info());
}

std::vector<std::string> VanGenuchtenEquation::PhysicalFlags(const double* params) {
  std::vector<std::string> flags;
  if (params[0] <= 0.0) flags.emplace_back("u_sat <= 0: no pore water at saturation");
  if (params[2] <= 1.0) flags.emplace_back("n <= 1: m = 1 - 1/n <= 0, the curve is flat");
  return flags;
}

std::vector<std::string> VanGenuchtenFreeMEquation::PhysicalFlags(const double* params) {
  std::vector<std::string> flags;
  if (params[0] <= 0.0) flags.emplace_back("u_sat <= 0: no pore water at saturation");
  if (params[2] <= 0.0) flags.emplace_back("n <= 0: not a retention curve");
  if (params[3] <= 0.0) flags.emplace_back("m <= 0: not a retention curve");
  return flags;
}

const Model& VanGenuchtenModel() {
  static const std::unique_ptr<Model> model = MakeAutoDiffModel<VanGenuchtenEquation>();
  return *model;
}

const Model& VanGenuchtenFreeMModel() {
  static const std::unique_ptr<Model> model = MakeAutoDiffModel<VanGenuchtenFreeMEquation>();
  return *model;
}

}  // namespace sorbtrace::fitters::models
