// Pore-size distributions: method "model" (fitted isotherm on a radius grid, Monte Carlo band)
// and method "stepwise" (measured points, BJH manner). Formulas in distribution.h.

#include "pipeline/pores/distribution.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <utility>

#include "pipeline/physics/physics.h"
#include "pipeline/pores/modes.h"
#include "pipeline/pores/sampling.h"

namespace sorbtrace::pores::internal {
namespace {

constexpr double kNm = physics::kMetresPerNanometre;

// Nodal density dV/dlog10 r from interval volumes on nodes x = log10 r: the mean of the two
// adjacent interval densities (the central difference of the cumulative volume), one-sided at
// the ends.
std::vector<double> NodalDensity(const std::vector<double>& log_r,
                                 const std::vector<double>& interval_volume) {
  const std::size_t n = log_r.size();
  std::vector<double> density(n, 0.0);
  if (n < 2) return density;
  std::vector<double> interval_density(n - 1);
  for (std::size_t k = 0; k + 1 < n; ++k) {
    interval_density[k] = interval_volume[k] / (log_r[k + 1] - log_r[k]);
  }
  density[0] = interval_density[0];
  density[n - 1] = interval_density[n - 2];
  for (std::size_t i = 1; i + 1 < n; ++i) {
    density[i] = 0.5 * (interval_density[i - 1] + interval_density[i]);
  }
  return density;
}

}  // namespace

StepGeometry MakeStepGeometry(const std::vector<double>& radius_m, const std::vector<double>& t_m,
                              double water_density_kg_per_m3) {
  StepGeometry g;
  const std::size_t n = radius_m.size();
  g.inverse_density_m3_per_kg = 1.0 / water_density_kg_per_m3;
  g.t0_m = n > 0 ? t_m[0] : 0.0;
  if (n < 2) return g;
  g.core_factor.resize(n - 1);
  g.dt_m.resize(n - 1);
  g.t_mean_m.resize(n - 1);
  g.two_over_r.resize(n - 1);
  g.two_over_r2.resize(n - 1);
  for (std::size_t k = 0; k + 1 < n; ++k) {
    // Interval k between node k (low) and k + 1 (high).
    const double r_p = 0.5 * (radius_m[k] + radius_m[k + 1]);
    const double r_core = r_p - t_m[k];
    g.core_factor[k] = r_core > 0.0 ? (r_p / r_core) * (r_p / r_core) : 0.0;
    g.dt_m[k] = t_m[k + 1] - t_m[k];
    g.t_mean_m[k] = 0.5 * (t_m[k + 1] + t_m[k]);
    g.two_over_r[k] = 2.0 / r_p;
    g.two_over_r2[k] = 2.0 / (r_p * r_p);
  }
  return g;
}

void FilmCorrectedVolumes(const StepGeometry& g, const std::vector<double>& u_kg_per_kg,
                          GridVolumes* out, bool clamp_negative) {
  const std::size_t n = u_kg_per_kg.size();
  out->interval_volume_m3_per_kg.assign(n > 0 ? n - 1 : 0, 0.0);
  out->total_m3_per_kg = 0.0;
  out->negative_steps = 0;
  out->adsorbed_m3_per_kg = 0.0;
  if (n < 2) return;
  // Running sums over the pores emptied so far: S1 = sum 2 V_j / r_j (wall area), S2 = sum 2
  // V_j / r_j^2, so that sum A_j (r_j - t) / r_j = S1 - t S2.
  double s1 = 0.0;
  double s2 = 0.0;
  for (std::size_t k = n - 1; k >= 1; --k) {
    const std::size_t i = k - 1;  // interval between nodes k - 1 and k
    const double dv = (u_kg_per_kg[k] - u_kg_per_kg[k - 1]) * g.inverse_density_m3_per_kg;
    const double film_thinning = g.dt_m[i] * (s1 - g.t_mean_m[i] * s2);
    double dv_p = g.core_factor[i] * (dv - film_thinning);
    if (dv_p < 0.0) {
      if (clamp_negative) dv_p = 0.0;
      ++out->negative_steps;
    }
    out->interval_volume_m3_per_kg[i] = dv_p;
    out->total_m3_per_kg += dv_p;
    s1 += dv_p * g.two_over_r[i];
    s2 += dv_p * g.two_over_r2[i];
  }
  // Film of thickness t_0 still held in the resolved pores at the lowest node:
  // sum V_j (1 - ((r_j - t_0) / r_j)^2) = t_0 S1 - t_0^2 S2 / 2.
  const double film_left = g.t0_m * s1 - 0.5 * g.t0_m * g.t0_m * s2;
  out->adsorbed_m3_per_kg = std::max(0.0, u_kg_per_kg[0] * g.inverse_density_m3_per_kg - film_left);
}

GridVolumes PoreVolumesFromIsotherm(const std::vector<double>& radius_m,
                                    const std::vector<double>& t_m,
                                    const std::vector<double>& u_kg_per_kg,
                                    double water_density_kg_per_m3, bool film_correction) {
  GridVolumes out;
  const std::size_t n = radius_m.size();
  if (n < 2) return out;
  if (film_correction) {
    FilmCorrectedVolumes(MakeStepGeometry(radius_m, t_m, water_density_kg_per_m3), u_kg_per_kg,
                         &out);
    return out;
  }
  out.interval_volume_m3_per_kg.assign(n - 1, 0.0);
  for (std::size_t k = 0; k + 1 < n; ++k) {
    out.interval_volume_m3_per_kg[k] =
        (u_kg_per_kg[k + 1] - u_kg_per_kg[k]) / water_density_kg_per_m3;
    out.total_m3_per_kg += out.interval_volume_m3_per_kg[k];
  }
  out.adsorbed_m3_per_kg = u_kg_per_kg[0] / water_density_kg_per_m3;
  return out;
}

PoreDistribution ModelPoreDistribution(const ModelCurve& curve, ingest::Branch branch,
                                       double rh_top_fraction, const PoreRadiusMap& map,
                                       const PoreOptions& options) {
  PoreDistribution d;
  d.method = "model";
  d.model_name = curve.name;
  d.branch = branch;
  d.temperature_K = map.temperature_K();
  d.meniscus = map.meniscus();
  d.film_description = map.film().description;
  CommonAssumptions(map, branch, options, &d);
  d.assumptions.push_back(fmt::format("moisture content from the fitted {} model", curve.name));
  d.assumptions.emplace_back(
      options.film_volume_correction
          ? "pore volumes corrected for the thinning film in emptied pores (BJH-type step on "
            "the radius grid)"
          : "V(r) = u(RH(r)) / rho_w: film water counted at the radius where it forms");

  const fitters::Model& model = *curve.model;
  const double rho = physics::LiquidWaterDensity_kg_per_m3(map.temperature_K());
  const double r_min = options.min_radius_m;
  const double r_top = map.PoreRadius_m(rh_top_fraction);
  double r_max = r_top;
  if (options.max_radius_m > 0.0) {
    r_max = options.max_radius_m;
    if (r_max > r_top) {
      d.assumptions.push_back(fmt::format(
          "radii above {:.3g} nm (RH {:.4f}, the highest resolved by the data) are extrapolated "
          "by the model",
          r_top / kNm, rh_top_fraction));
    }
  }
  d.resolved_radius_min_m = r_min;
  d.resolved_radius_max_m = r_max;
  d.band_source = "none";
  if (!(r_max > r_min)) {
    d.assumptions.push_back(fmt::format(
        "nothing resolved: the largest radius {:.3g} nm is not above the smallest {:.3g} nm",
        r_max / kNm, r_min / kNm));
    return d;
  }

  // Radius grid, RH(r), t(r): fixed for every parameter draw.
  const int n = options.grid_points;
  const std::size_t nn = static_cast<std::size_t>(n);
  std::vector<double> log_r(nn), radius(nn), rh(nn), t(nn), r_k(nn);
  const double log_lo = std::log10(r_min);
  const double log_hi = std::log10(r_max);
  for (std::size_t i = 0; i < nn; ++i) {
    log_r[i] = log_lo + (log_hi - log_lo) * static_cast<double>(i) / static_cast<double>(n - 1);
    radius[i] = std::pow(10.0, log_r[i]);
  }
  for (std::size_t i = 0; i < nn; ++i) {
    rh[i] = map.RhForPoreRadius(radius[i]);  // throws InputError when the film is too thick
    t[i] = map.FilmThickness_m(rh[i]);
    r_k[i] = map.KelvinRadius_m(rh[i]);
  }

  auto evaluate = [&](const double* params, std::vector<double>* u) {
    bool finite = true;
    for (std::size_t i = 0; i < nn; ++i) {
      const double x[fitters::kMaxInputs] = {rh[i], 0.0};
      (*u)[i] = model.Evaluate(params, x, curve.context);
      finite = finite && std::isfinite((*u)[i]);
    }
    return finite;
  };

  std::vector<double> u(nn);
  if (!evaluate(curve.parameters.data(), &u)) {
    d.assumptions.emplace_back("the model is not finite on the radius grid: no distribution");
    return d;
  }
  const GridVolumes nominal =
      PoreVolumesFromIsotherm(radius, t, u, rho, options.film_volume_correction);
  const std::vector<double> density = NodalDensity(log_r, nominal.interval_volume_m3_per_kg);
  std::vector<double> cumulative(nn, 0.0);
  for (std::size_t i = 1; i < nn; ++i) {
    cumulative[i] = cumulative[i - 1] + nominal.interval_volume_m3_per_kg[i - 1];
  }
  d.total_resolved_volume_m3_per_kg = nominal.total_m3_per_kg;
  d.adsorbed_volume_m3_per_kg = nominal.adsorbed_m3_per_kg;
  d.negative_steps_clamped = nominal.negative_steps;
  {
    const double x_one[fitters::kMaxInputs] = {1.0, 0.0};
    const double u_saturated = model.Evaluate(curve.parameters.data(), x_one, curve.context);
    if (std::isfinite(u_saturated) && u_saturated >= u[nn - 1]) {
      d.not_resolved_volume_m3_per_kg = (u_saturated - u[nn - 1]) / rho;
      d.assumptions.emplace_back(
          "volume not resolved: the model's moisture content at RH = 1 minus that at the largest "
          "resolved radius (an extrapolation)");
    }
  }

  // Parameter draws: the fit stage's bootstrap refits when present, else N(p, covariance).
  std::vector<std::vector<double>> draws;
  if (!curve.resampled_draws.empty() && options.band_draws > 0) {
    const std::size_t count =
        std::min(curve.resampled_draws.size(), static_cast<std::size_t>(options.band_draws));
    draws.assign(curve.resampled_draws.begin(),
                 curve.resampled_draws.begin() + static_cast<std::ptrdiff_t>(count));
    d.band_source = curve.resampled_source;
  } else if (options.band_draws > 0) {
    draws = MultivariateNormalDraws(curve.parameters, curve.covariance, options.band_draws,
                                    options.seed, model.info().parameters);
    if (!draws.empty()) d.band_source = "parameter covariance";
  }

  // Per-draw curves stored node-major (node i, draw k at [i * num_draws + k]) so that the
  // percentiles read contiguous memory.
  const std::size_t num_draws = draws.size();
  std::vector<double> density_by_node(nn * num_draws);
  std::vector<double> cumulative_by_node(nn * num_draws);
  std::vector<double> draw_total;
  std::vector<std::vector<DecadeFraction>> draw_decades;
  draw_total.reserve(num_draws);
  draw_decades.reserve(num_draws);
  std::vector<double> u_draw(nn);
  std::size_t used = 0;
  const StepGeometry geometry = MakeStepGeometry(radius, t, rho);
  GridVolumes g;
  for (const std::vector<double>& params : draws) {
    if (params.size() != curve.parameters.size()) continue;
    if (!evaluate(params.data(), &u_draw)) continue;
    if (options.film_volume_correction) {
      FilmCorrectedVolumes(geometry, u_draw, &g);
    } else {
      g = PoreVolumesFromIsotherm(radius, t, u_draw, rho, false);
    }
    const std::vector<double> dens = NodalDensity(log_r, g.interval_volume_m3_per_kg);
    double cum = 0.0;
    for (std::size_t i = 0; i < nn; ++i) {
      if (i > 0) cum += g.interval_volume_m3_per_kg[i - 1];
      density_by_node[i * num_draws + used] = dens[i];
      cumulative_by_node[i * num_draws + used] = cum;
    }
    draw_decades.push_back(DecadeFractions(log_r, g.interval_volume_m3_per_kg, g.total_m3_per_kg));
    draw_total.push_back(g.total_m3_per_kg);
    ++used;
  }
  d.band_draws_used = static_cast<int>(used);
  if (used == 0) d.band_source = "none";
  const DrawStatistics total_spread = DrawStatisticsOf(draw_total, options.band_confidence_level);
  d.u_total_resolved_volume_m3_per_kg = total_spread.standard_uncertainty;
  d.k_total_resolved_volume = total_spread.coverage_factor;

  const double tail = 0.5 * (1.0 - options.band_confidence_level);
  QuantileScratch scratch;
  auto band = [&](const std::vector<double>& by_node, std::size_t i, double* low, double* high) {
    QuantilePairOf(by_node.data() + i * num_draws, used, tail, 1.0 - tail, &scratch, low, high);
  };
  d.points.resize(nn);
  for (std::size_t i = 0; i < nn; ++i) {
    PoreDistributionPoint& p = d.points[i];
    p.radius_m = radius[i];
    p.kelvin_radius_m = r_k[i];
    p.film_thickness_m = t[i];
    p.rh_fraction = rh[i];
    p.cumulative_volume_m3_per_kg = cumulative[i];
    p.dv_dlogr_m3_per_kg = density[i];
    if (used == 0) {
      p.cumulative_low_m3_per_kg = p.cumulative_high_m3_per_kg = cumulative[i];
      p.dv_dlogr_low_m3_per_kg = p.dv_dlogr_high_m3_per_kg = density[i];
      continue;
    }
    band(density_by_node, i, &p.dv_dlogr_low_m3_per_kg, &p.dv_dlogr_high_m3_per_kg);
    band(cumulative_by_node, i, &p.cumulative_low_m3_per_kg, &p.cumulative_high_m3_per_kg);
  }
  std::vector<double> band_low(nn), band_high(nn);
  for (std::size_t i = 0; i < nn; ++i) {
    band_low[i] = d.points[i].dv_dlogr_low_m3_per_kg;
    band_high[i] = d.points[i].dv_dlogr_high_m3_per_kg;
  }
  DrawTable table;
  table.num_draws = used;
  table.value = [&](std::size_t k, std::size_t i) { return density_by_node[i * num_draws + k]; };
  // The two outermost nodes: the nodal density there is one-sided (NodalDensity), so a maximum
  // on them is an artefact of where the grid ends.
  constexpr std::size_t kGridEdgeNodes = 2;
  d.modes =
      ResolvedModes(log_r, density, band_low, band_high, table, kGridEdgeNodes, nullptr, options);
  d.decades = DecadeFractions(log_r, nominal.interval_volume_m3_per_kg, nominal.total_m3_per_kg);
  DecadeUncertainties(draw_decades, options.band_confidence_level, &d.decades);
  if (d.band_source != "none") {
    d.assumptions.push_back(fmt::format("band: {:g} % percentile interval over {} {}",
                                        100.0 * options.band_confidence_level, d.band_draws_used,
                                        d.band_source));
  }
  if (nominal.negative_steps > 0) {
    d.assumptions.push_back(fmt::format(
        "{} grid steps gave a negative pore volume (the model falls faster than the film "
        "thins) and were set to 0",
        nominal.negative_steps));
  }
  return d;
}

}  // namespace sorbtrace::pores::internal
