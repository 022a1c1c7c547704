// Modes, decade fractions and common assumptions of the pore-size distributions (modes.h).

#include "pipeline/pores/modes.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <string>

#include "pipeline/common/draw_statistics.h"
#include "pipeline/physics/physics.h"
#include "pipeline/pores/sampling.h"

namespace sorbtrace::pores::internal {
namespace {

constexpr double kNm = physics::kMetresPerNanometre;

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

// The mode of grouped data within its highest bar, as the shift from the bar's middle (log10 r):
// width w of the highest bar, y_peak its density, y_left and y_right the densities read next to
// it. Written from the bar's lower edge L it is the interpolation formula for the mode of
// grouped data, L + w (y_peak - y_left) / ((y_peak - y_left) + (y_peak - y_right)), with
// frequency densities (e.g. Kendall & Stuart, The Advanced Theory of Statistics, vol. 1, from
// memory); from the middle, the vertex of the parabola through the three densities placed one
// bar width apart, i.e. the quadratic whose means over three adjacent windows of width w are
// the three densities: for a density quadratic about its peak the exact mode, whatever the
// widths of the neighbouring bars. 0 where the bar is not above its neighbours; at most w / 2.
double GroupedDataModeShift(double width, double y_left, double y_peak, double y_right) {
  const double rise = y_peak - y_left;
  const double fall = y_peak - y_right;
  if (!(rise + fall > 0.0)) return 0.0;
  return std::clamp(0.5 * width * (rise - fall) / (rise + fall), -0.5 * width, 0.5 * width);
}

// The mode of a histogram at its highest bar i (interior; mid, width: the bars' middles and
// widths in log10 r, y their densities): GroupedDataModeShift, which reads each
// neighbour's density as that of the window of the highest bar's width next to it, not at the
// neighbour's own middle: the parabola through unevenly spaced middles (ParabolaVertex) has its
// vertex pulled towards the far middle of a wide neighbour (a wide, nearly empty tail bar beside
// the peak moved an 8 nm mode to 16 nm in the stepwise coverage test).
Peak HistogramVertex(const double* mid, const double* width, const double* y, std::size_t i) {
  const double w = width[i];
  const double shift = GroupedDataModeShift(w, y[i - 1], y[i], y[i + 1]);
  const double slope = (y[i + 1] - y[i - 1]) / (2.0 * w);
  const double curvature = (y[i - 1] - 2.0 * y[i] + y[i + 1]) / (w * w);
  return Peak{mid[i] + shift, y[i] + slope * shift + 0.5 * curvature * shift * shift};
}

std::string BranchWords(ingest::Branch branch) { return std::string(ingest::BranchName(branch)); }

}  // namespace

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

namespace {

// The slope at node k of the shape-preserving piecewise cubic Hermite interpolant through
// (x, y) (Fritsch & Carlson 1980, SIAM J. Numer. Anal. 17, 238, with the weighted harmonic mean
// of Fritsch & Butland 1984, SIAM J. Sci. Stat. Comput. 5, 300): 0 where the neighbouring
// secants differ in sign, the end secant at the ends.
double MonotoneSlope(const std::vector<double>& x, const std::vector<double>& y, std::size_t k) {
  const std::size_t n = x.size();
  const auto secant = [&](std::size_t j) { return (y[j + 1] - y[j]) / (x[j + 1] - x[j]); };
  if (k == 0) return secant(0);
  if (k + 1 == n) return secant(n - 2);
  const double before = secant(k - 1);
  const double after = secant(k);
  if (!(before * after > 0.0)) return 0.0;
  const double h0 = x[k] - x[k - 1];
  const double h1 = x[k + 1] - x[k];
  const double w0 = 2.0 * h1 + h0;
  const double w1 = h1 + 2.0 * h0;
  return (w0 + w1) / (w0 / before + w1 / after);
}

// That interpolant on [x[s], x[s + 1]] at x0.
double MonotoneCubicAt(const std::vector<double>& x, const std::vector<double>& y, std::size_t s,
                       double x0) {
  const double h = x[s + 1] - x[s];
  const double t = (x0 - x[s]) / h;
  const double t2 = t * t;
  const double t3 = t2 * t;
  return (2.0 * t3 - 3.0 * t2 + 1.0) * y[s] + (t3 - 2.0 * t2 + t) * h * MonotoneSlope(x, y, s) +
         (-2.0 * t3 + 3.0 * t2) * y[s + 1] + (t3 - t2) * h * MonotoneSlope(x, y, s + 1);
}

}  // namespace

void SplitAtDecadeBoundaries(const std::vector<double>& step_log_r,
                             const std::vector<double>& step_volume, double total,
                             std::vector<DecadeFraction>* decades) {
  const std::size_t n = step_log_r.size();
  if (n < 3 || step_volume.size() + 1 != n || !(total > 0.0) || decades->empty()) return;
  std::vector<double> cumulative(n, 0.0);
  for (std::size_t s = 0; s + 1 < n; ++s) cumulative[s + 1] = cumulative[s] + step_volume[s];
  for (std::size_t d = 0; d + 1 < decades->size(); ++d) {
    DecadeFraction& left = (*decades)[d];
    DecadeFraction& right = (*decades)[d + 1];
    const double boundary = std::log10(left.radius_high_m);
    const auto above = std::upper_bound(step_log_r.begin(), step_log_r.end(), boundary);
    if (above == step_log_r.begin() || above == step_log_r.end()) continue;
    const std::size_t s = static_cast<std::size_t>(above - step_log_r.begin()) - 1;
    const double x0 = step_log_r[s];
    const double x1 = step_log_r[s + 1];
    if (!(boundary > x0 && x1 > x0)) continue;  // on a node: nothing to split
    const double v = step_volume[s];
    const double uniform = v * (boundary - x0) / (x1 - x0);
    const double shaped =
        std::clamp(MonotoneCubicAt(step_log_r, cumulative, s, boundary) - cumulative[s],
                   std::min(0.0, v), std::max(0.0, v));
    const double shift = (shaped - uniform) / total;
    const double u = std::abs(shaped - uniform) / std::sqrt(3.0) / total;
    left.volume_fraction += shift;
    right.volume_fraction -= shift;
    for (DecadeFraction* f : {&left, &right}) {
      f->u_volume_fraction = std::hypot(f->u_volume_fraction, u);
      f->coverage_factor = 0.0;
    }
  }
}

std::vector<ModalRadius> ResolvedModes(
    const std::vector<double>& log_r, const std::vector<double>& density,
    const std::vector<double>& band_low, const std::vector<double>& band_high,
    const DrawTable& draws, std::size_t edge_nodes, const std::vector<double>* step_width_log_r,
    const PoreOptions& options, std::vector<ModeWindow>* windows) {
  const bool histogram = step_width_log_r != nullptr && step_width_log_r->size() == density.size();
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
  const auto vertex = [&](const double* y, std::size_t at) {
    return histogram ? HistogramVertex(log_r.data(), step_width_log_r->data(), y, at)
                     : ParabolaVertex(log_r.data(), y, at);
  };
  std::vector<double> column_y(n), radii;
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
      radii.push_back(std::pow(10.0, vertex(column_y.data(), best).x));
    }
    if (draws.num_draws > 0 &&
        static_cast<double>(missing) >
            (1.0 - options.band_confidence_level) * static_cast<double>(draws.num_draws)) {
      continue;
    }
    const Peak nominal = vertex(density.data(), i);
    ModalRadius mode;
    mode.radius_m = std::pow(10.0, nominal.x);
    mode.dv_dlogr_m3_per_kg = nominal.y;
    const DrawStatistics spread = DrawStatisticsOf(radii, options.band_confidence_level);
    mode.u_radius_m = spread.standard_uncertainty;
    mode.coverage_factor = spread.coverage_factor;
    modes.push_back(mode);
    if (windows != nullptr) windows->push_back({left, right});
  }
  return modes;
}

void DecadeUncertainties(const std::vector<std::vector<DecadeFraction>>& draw_decades,
                         double coverage_probability, std::vector<DecadeFraction>* decades) {
  std::vector<double> values;
  for (std::size_t k = 0; k < decades->size(); ++k) {
    values.clear();
    for (const std::vector<DecadeFraction>& draw : draw_decades) {
      if (k < draw.size()) values.push_back(draw[k].volume_fraction);
    }
    const DrawStatistics spread = DrawStatisticsOf(values, coverage_probability);
    (*decades)[k].u_volume_fraction = spread.standard_uncertainty;
    (*decades)[k].coverage_factor = spread.coverage_factor;
  }
}

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

}  // namespace sorbtrace::pores::internal
