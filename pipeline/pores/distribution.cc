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
#include "pipeline/pores/sampling.h"

namespace sorbtrace::pores::internal {
namespace {

constexpr double kNm = 1e-9;
// Two RH values closer than this are one measured step (RH is known to about 1e-3 at best).
constexpr double kSameRhFraction = 1e-9;

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

// Volume fraction per decade of radius, from interval volumes between nodes edges_log_r
// (log10 r ascending), each interval's volume spread uniformly in log r.
std::vector<DecadeFraction> DecadeFractions(const std::vector<double>& edges_log_r,
                                            const std::vector<double>& interval_volume,
                                            double total) {
  std::vector<DecadeFraction> decades;
  if (edges_log_r.size() < 2 || !(total > 0.0)) return decades;
  const double lo = edges_log_r.front();
  const double hi = edges_log_r.back();
  for (double d = std::floor(lo); d < hi; d += 1.0) {
    const double a = std::max(d, lo);
    const double b = std::min(d + 1.0, hi);
    double volume = 0.0;
    for (std::size_t k = 0; k + 1 < edges_log_r.size(); ++k) {
      const double x0 = edges_log_r[k];
      const double x1 = edges_log_r[k + 1];
      const double overlap = std::min(b, x1) - std::max(a, x0);
      if (overlap > 0.0 && x1 > x0) volume += interval_volume[k] * overlap / (x1 - x0);
    }
    DecadeFraction fraction;
    fraction.radius_low_m = std::pow(10.0, a);
    fraction.radius_high_m = std::pow(10.0, b);
    fraction.volume_fraction = volume / total;
    decades.push_back(fraction);
  }
  return decades;
}

// A local maximum of y over x.
struct Peak {
  double x = 0.0;
  double y = 0.0;
};

// Vertex of the parabola through (x, y) at i - 1, i, i + 1 (i interior): the refined
// position of a local maximum at node i; (x[i], y[i]) where the curvature is not negative.
Peak ParabolaVertex(const double* x, const double* y, std::size_t i) {
  const double h0 = x[i] - x[i - 1];
  const double h1 = x[i + 1] - x[i];
  const double d0 = (y[i] - y[i - 1]) / h0;
  const double d1 = (y[i + 1] - y[i]) / h1;
  const double curvature = (d1 - d0) / (0.5 * (h0 + h1));  // second derivative
  Peak peak{x[i], y[i]};
  if (curvature < 0.0) {
    const double slope_at_i = (d0 * h1 + d1 * h0) / (h0 + h1);
    const double shift = std::clamp(-slope_at_i / curvature, -h0, h1);
    peak.x = x[i] + shift;
    peak.y = y[i] + slope_at_i * shift + 0.5 * curvature * shift * shift;
  }
  return peak;
}

// The per-draw curves of a distribution: value(k, i) of draw k at node i.
struct DrawTable {
  std::size_t num_draws = 0;
  std::function<double(std::size_t, std::size_t)> value;
};

// Modal radii (see ModalRadius in pores.h): every interior local maximum i of the nominal
// dV/dlog r at least options.mode_min_relative_height of the largest value, with its window
// [L, R] bounded by the lowest nominal value towards the neighbouring maximum (or the grid end)
// on each side. Reported only when resolved:
//  - not at the grid edge: i is neither of the two outermost nodes on either side;
//  - not a wiggle smaller than the band: the band's lower limit at i lies above its upper limit
//    at L and at R;
//  - present in the draws: in at least the band's confidence level of the draws the maximum of
//    that draw over [L, R] lies inside the window (not on L or R).
// Its position in each draw is the parabola vertex of that draw's maximum in the window, and
// u(r) is the standard deviation of those radii (the spread over the draws; without draws 0).
// edge_nodes: nodes at each end where no mode is reported. step_resolution: the nodes are
// the mid-points of measured steps (stepwise method), which cannot place a mode finer than a
// step: u(r) also holds the resolution term r ln(10) w / sqrt(12), w the width in log10 r of
// the step at the maximum (rectangular distribution over the step, JCGM 100:2008 F.2.2.1).
std::vector<ModalRadius> ResolvedModes(const std::vector<double>& log_r,
                                       const std::vector<double>& density,
                                       const std::vector<double>& band_low,
                                       const std::vector<double>& band_high, const DrawTable& draws,
                                       std::size_t edge_nodes, bool step_resolution,
                                       const PoreOptions& options) {
  std::vector<ModalRadius> modes;
  const std::size_t n = density.size();
  if (n < 2 * edge_nodes + 1 || n < 3) return modes;
  const double y_max = *std::max_element(density.begin(), density.end());
  if (!(y_max > 0.0)) return modes;
  std::vector<std::size_t> peaks;
  for (std::size_t i = 1; i + 1 < n; ++i) {
    if (density[i] > density[i - 1] && density[i] >= density[i + 1] &&
        density[i] >= options.mode_min_relative_height * y_max) {
      peaks.push_back(i);
    }
  }
  const auto lowest = [&](std::size_t from, std::size_t to) {  // argmin on [from, to]
    std::size_t best = from;
    for (std::size_t j = from; j <= to; ++j) {
      if (density[j] < density[best]) best = j;
    }
    return best;
  };
  std::vector<double> column_x(n), column_y(n), radii;
  for (std::size_t m = 0; m < peaks.size(); ++m) {
    const std::size_t i = peaks[m];
    if (i < edge_nodes || i + edge_nodes >= n) continue;
    const std::size_t left = lowest(m > 0 ? peaks[m - 1] : 0, i);
    const std::size_t right = lowest(i, m + 1 < peaks.size() ? peaks[m + 1] : n - 1);
    if (!(band_low[i] > band_high[left] && band_low[i] > band_high[right])) continue;
    radii.clear();
    std::size_t missing = 0;
    for (std::size_t k = 0; k < draws.num_draws; ++k) {
      std::size_t best = left;
      for (std::size_t j = left; j <= right; ++j) {
        column_y[j] = draws.value(k, j);
        if (column_y[j] > column_y[best]) best = j;
      }
      if (best == left || best == right) {
        ++missing;
        continue;
      }
      radii.push_back(std::pow(10.0, ParabolaVertex(log_r.data(), column_y.data(), best).x));
    }
    if (draws.num_draws > 0 &&
        static_cast<double>(missing) >
            (1.0 - options.band_confidence_level) * static_cast<double>(draws.num_draws)) {
      continue;
    }
    const Peak nominal = ParabolaVertex(log_r.data(), density.data(), i);
    ModalRadius mode;
    mode.radius_m = std::pow(10.0, nominal.x);
    mode.dv_dlogr_m3_per_kg = nominal.y;
    mode.u_radius_m = StandardDeviation(radii);
    if (step_resolution) {
      const double width = 0.5 * (log_r[i + 1] - log_r[i - 1]);
      const double u_resolution = mode.radius_m * std::log(10.0) * width / std::sqrt(12.0);
      mode.u_radius_m = std::hypot(mode.u_radius_m, u_resolution);
    }
    modes.push_back(mode);
  }
  return modes;
}

// The standard deviation of each decade's volume fraction over the draws' fractions.
void DecadeUncertainties(const std::vector<std::vector<DecadeFraction>>& draw_decades,
                         std::vector<DecadeFraction>* decades) {
  std::vector<double> values;
  for (std::size_t k = 0; k < decades->size(); ++k) {
    values.clear();
    for (const std::vector<DecadeFraction>& draw : draw_decades) {
      if (k < draw.size()) values.push_back(draw[k].volume_fraction);
    }
    (*decades)[k].u_volume_fraction = StandardDeviation(values);
  }
}

std::string BranchWords(ingest::Branch branch) { return std::string(ingest::BranchName(branch)); }

void CommonAssumptions(const PoreRadiusMap& map, ingest::Branch branch, const PoreOptions& options,
                       PoreDistribution* d) {
  d->assumptions.push_back(
      fmt::format("{} pores; the {} branch is read with a {} meniscus (Cohan 1938)",
                  options.geometry == PoreGeometry::kOpenCylinder ? "open-ended cylindrical"
                                                                  : "closed-ended cylindrical",
                  BranchWords(branch), physics::MeniscusName(map.meniscus())));
  d->assumptions.push_back(fmt::format(
      "r_p = r_K + t, Kelvin radius from the IAPWS surface tension and Kell density of water at "
      "{:.2f} degC, contact angle {:g} rad",
      physics::KelvinToCelsius(map.temperature_K()), options.contact_angle_rad));
  d->assumptions.push_back(map.film().description);
  d->assumptions.push_back(fmt::format(
      "pores below {:g} nm are not Kelvin-resolved (micropores): their water is reported as "
      "adsorbed",
      options.min_radius_m / kNm));
  d->assumptions.emplace_back(
      "pore water at the density of bulk liquid water at the test temperature");
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
                          GridVolumes* out) {
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
      dv_p = 0.0;
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
  d.u_total_resolved_volume_m3_per_kg = StandardDeviation(draw_total);

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
      ResolvedModes(log_r, density, band_low, band_high, table, kGridEdgeNodes, false, options);
  d.decades = DecadeFractions(log_r, nominal.interval_volume_m3_per_kg, nominal.total_m3_per_kg);
  DecadeUncertainties(draw_decades, &d.decades);
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

PoreDistribution StepwisePoreDistribution(const std::vector<MeasuredPoint>& points,
                                          ingest::Branch branch, const PoreRadiusMap& map,
                                          const PoreOptions& options) {
  PoreDistribution d;
  d.method = "stepwise";
  d.branch = branch;
  d.temperature_K = map.temperature_K();
  d.meniscus = map.meniscus();
  d.film_description = map.film().description;
  d.band_source = "none";
  CommonAssumptions(map, branch, options, &d);
  d.assumptions.emplace_back(
      "stepwise from the measured points, high RH down, each step corrected for the thinning "
      "film in pores emptied before (Barrett, Joyner & Halenda 1951)");

  // Measured points inside 0 < RH < 1, ascending in RH, equal RH merged (mean).
  std::vector<MeasuredPoint> sorted;
  for (const MeasuredPoint& p : points) {
    if (p.rh_fraction > 0.0 && p.rh_fraction < 1.0 && std::isfinite(p.moisture_kg_per_kg)) {
      sorted.push_back(p);
    }
  }
  std::sort(sorted.begin(), sorted.end(), [](const MeasuredPoint& a, const MeasuredPoint& b) {
    return a.rh_fraction < b.rh_fraction;
  });
  std::vector<MeasuredPoint> merged;
  std::vector<int> merged_count;
  for (const MeasuredPoint& p : sorted) {
    if (!merged.empty() && p.rh_fraction - merged.back().rh_fraction < kSameRhFraction) {
      MeasuredPoint& m = merged.back();
      const double c = static_cast<double>(merged_count.back());
      m.moisture_kg_per_kg = (m.moisture_kg_per_kg * c + p.moisture_kg_per_kg) / (c + 1.0);
      m.u_moisture_kg_per_kg = std::max(m.u_moisture_kg_per_kg, p.u_moisture_kg_per_kg);
      ++merged_count.back();
    } else {
      merged.push_back(p);
      merged_count.push_back(1);
    }
  }

  // Nodes between min_radius (interpolated) and the highest point (or max_radius).
  const double r_min = options.min_radius_m;
  struct Node {
    double rh, u, u_u;
  };
  std::vector<Node> nodes;
  const double rh_min = map.RhForPoreRadius(r_min);
  const double rh_max = options.max_radius_m > 0.0 ? map.RhForPoreRadius(options.max_radius_m)
                                                   : std::numeric_limits<double>::infinity();
  auto interpolate = [&](std::size_t j, double rh) {
    const MeasuredPoint& a = merged[j - 1];
    const MeasuredPoint& b = merged[j];
    const double w = (rh - a.rh_fraction) / (b.rh_fraction - a.rh_fraction);
    return Node{rh, a.moisture_kg_per_kg + w * (b.moisture_kg_per_kg - a.moisture_kg_per_kg),
                std::max(a.u_moisture_kg_per_kg, b.u_moisture_kg_per_kg)};
  };
  for (std::size_t j = 0; j < merged.size(); ++j) {
    const double rh_j = merged[j].rh_fraction;
    if (rh_j < rh_min) continue;
    if (nodes.empty() && j > 0 && rh_j > rh_min) nodes.push_back(interpolate(j, rh_min));
    if (rh_j > rh_max) {
      if (j > 0 && merged[j - 1].rh_fraction < rh_max) nodes.push_back(interpolate(j, rh_max));
      break;
    }
    nodes.push_back(Node{rh_j, merged[j].moisture_kg_per_kg, merged[j].u_moisture_kg_per_kg});
  }
  if (nodes.size() < 2) {
    d.assumptions.emplace_back(
        "fewer than two measured points above the smallest radius: nothing "
        "resolved");
    return d;
  }
  const std::size_t n = nodes.size();
  std::vector<double> radius(n), t(n), u(n), log_r(n);
  for (std::size_t i = 0; i < n; ++i) {
    radius[i] = map.PoreRadius_m(nodes[i].rh);
    t[i] = map.FilmThickness_m(nodes[i].rh);
    u[i] = nodes[i].u;
    log_r[i] = std::log10(radius[i]);
  }
  d.resolved_radius_min_m = radius.front();
  d.resolved_radius_max_m = radius.back();
  const double rho = physics::LiquidWaterDensity_kg_per_m3(map.temperature_K());
  const GridVolumes nominal = PoreVolumesFromIsotherm(radius, t, u, rho, true);
  d.total_resolved_volume_m3_per_kg = nominal.total_m3_per_kg;
  d.adsorbed_volume_m3_per_kg = nominal.adsorbed_m3_per_kg;
  d.negative_steps_clamped = nominal.negative_steps;

  // One point per step, at the geometric-mean radius of the step.
  std::vector<double> mid_log_r(n - 1), density(n - 1);
  auto step_density = [&](const GridVolumes& g, std::vector<double>* out) {
    for (std::size_t k = 0; k + 1 < n; ++k) {
      (*out)[k] = g.interval_volume_m3_per_kg[k] / (log_r[k + 1] - log_r[k]);
    }
  };
  step_density(nominal, &density);
  for (std::size_t k = 0; k + 1 < n; ++k) mid_log_r[k] = 0.5 * (log_r[k] + log_r[k + 1]);

  // Monte Carlo over the measured moisture contents (their standard uncertainties).
  std::vector<std::vector<double>> draw_density;
  std::vector<std::vector<double>> draw_cumulative;
  std::vector<double> draw_total;
  std::vector<std::vector<DecadeFraction>> draw_decades;
  bool any_uncertainty = false;
  for (const Node& node : nodes) any_uncertainty = any_uncertainty || node.u_u > 0.0;
  if (any_uncertainty && options.band_draws > 0) {
    NormalSource normal(options.seed);
    std::vector<double> u_draw(n);
    std::vector<double> dens(n - 1);
    for (int k = 0; k < options.band_draws; ++k) {
      for (std::size_t i = 0; i < n; ++i) u_draw[i] = u[i] + nodes[i].u_u * normal.Normal();
      const GridVolumes g = PoreVolumesFromIsotherm(radius, t, u_draw, rho, true);
      step_density(g, &dens);
      std::vector<double> cum(n - 1);
      double below = 0.0;
      for (std::size_t s = 0; s + 1 < n; ++s) {
        cum[s] = below + 0.5 * g.interval_volume_m3_per_kg[s];
        below += g.interval_volume_m3_per_kg[s];
      }
      draw_decades.push_back(
          DecadeFractions(log_r, g.interval_volume_m3_per_kg, g.total_m3_per_kg));
      draw_total.push_back(g.total_m3_per_kg);
      draw_density.push_back(dens);
      draw_cumulative.push_back(std::move(cum));
    }
    d.band_source = "measurement uncertainty";
    d.band_draws_used = options.band_draws;
  }
  d.u_total_resolved_volume_m3_per_kg = StandardDeviation(draw_total);

  const double tail = 0.5 * (1.0 - options.band_confidence_level);
  std::vector<double> column(draw_density.size());
  double below = 0.0;
  d.points.resize(n - 1);
  for (std::size_t k = 0; k + 1 < n; ++k) {
    PoreDistributionPoint& p = d.points[k];
    p.radius_m = std::pow(10.0, mid_log_r[k]);
    p.rh_fraction = map.RhForPoreRadius(p.radius_m);
    p.kelvin_radius_m = map.KelvinRadius_m(p.rh_fraction);
    p.film_thickness_m = map.FilmThickness_m(p.rh_fraction);
    // Cumulative volume of the pores below the middle of the step.
    p.cumulative_volume_m3_per_kg = below + 0.5 * nominal.interval_volume_m3_per_kg[k];
    below += nominal.interval_volume_m3_per_kg[k];
    p.dv_dlogr_m3_per_kg = density[k];
    if (draw_density.empty()) {
      p.cumulative_low_m3_per_kg = p.cumulative_high_m3_per_kg = p.cumulative_volume_m3_per_kg;
      p.dv_dlogr_low_m3_per_kg = p.dv_dlogr_high_m3_per_kg = density[k];
      continue;
    }
    for (std::size_t j = 0; j < draw_density.size(); ++j) column[j] = draw_density[j][k];
    p.dv_dlogr_low_m3_per_kg = Quantile(column, tail);
    p.dv_dlogr_high_m3_per_kg = Quantile(column, 1.0 - tail);
    for (std::size_t j = 0; j < draw_cumulative.size(); ++j) column[j] = draw_cumulative[j][k];
    p.cumulative_low_m3_per_kg = Quantile(column, tail);
    p.cumulative_high_m3_per_kg = Quantile(column, 1.0 - tail);
  }
  std::vector<double> band_low(n - 1), band_high(n - 1);
  for (std::size_t k = 0; k + 1 < n; ++k) {
    band_low[k] = d.points[k].dv_dlogr_low_m3_per_kg;
    band_high[k] = d.points[k].dv_dlogr_high_m3_per_kg;
  }
  DrawTable table;
  table.num_draws = draw_density.size();
  table.value = [&](std::size_t k, std::size_t i) { return draw_density[k][i]; };
  // Each node is a measured step: only the outermost steps are edges.
  constexpr std::size_t kStepEdgeNodes = 1;
  d.modes =
      ResolvedModes(mid_log_r, density, band_low, band_high, table, kStepEdgeNodes, true, options);
  d.decades = DecadeFractions(log_r, nominal.interval_volume_m3_per_kg, nominal.total_m3_per_kg);
  DecadeUncertainties(draw_decades, &d.decades);
  if (!draw_density.empty()) {
    d.assumptions.push_back(fmt::format(
        "band: {:g} % percentile interval over {} draws of the measured moisture contents",
        100.0 * options.band_confidence_level, d.band_draws_used));
  }
  if (nominal.negative_steps > 0) {
    d.assumptions.push_back(fmt::format(
        "{} steps gave a negative pore volume (scatter, or film thinning larger than the step) "
        "and were set to 0",
        nominal.negative_steps));
  }
  d.assumptions.push_back(fmt::format("{} measured steps between {:.3g} nm and {:.3g} nm", n - 1,
                                      radius.front() / kNm, radius.back() / kNm));
  return d;
}

}  // namespace sorbtrace::pores::internal
