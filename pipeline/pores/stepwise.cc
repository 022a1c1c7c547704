// The stepwise (BJH-type) pore-size distribution with JCGM 101 draws of the measured points
// and the significance merge of its steps (distribution.h, StepwisePoreDistribution).

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <numeric>
#include <string>
#include <vector>

#include "pipeline/physics/physics.h"
#include "pipeline/pores/distribution.h"
#include "pipeline/pores/modes.h"
#include "pipeline/pores/sampling.h"

namespace sorbtrace::pores::internal {
namespace {

constexpr double kNm = physics::kMetresPerNanometre;
// Two RH values closer than this are one measured step (RH is known to about 1e-3 at best).
constexpr double kSameRhFraction = 1e-9;
// An RH draw outside (0, 1) is drawn again (the measurand lies inside); after this many tries
// (only for a stated u(RH) far larger than the distance to the bound) it is put just inside.
constexpr int kMaxRhRedraws = 64;
constexpr double kRhInsideBound = 1e-9;

// One point (or node) of one draw: RH and moisture content.
struct Sample {
  double rh = 0.0;
  double u = 0.0;
};

// Points in 0 < RH < 1 with finite moisture, ascending in RH, equal RH averaged (the larger
// uncertainty kept, common parts averaged).
std::vector<MeasuredPoint> SortedMerged(const std::vector<MeasuredPoint>& points) {
  std::vector<MeasuredPoint> sorted;
  for (const MeasuredPoint& p : points) {
    if (p.rh_fraction > 0.0 && p.rh_fraction < 1.0 && std::isfinite(p.moisture_kg_per_kg)) {
      sorted.push_back(p);
    }
  }
  std::stable_sort(
      sorted.begin(), sorted.end(),
      [](const MeasuredPoint& a, const MeasuredPoint& b) { return a.rh_fraction < b.rh_fraction; });
  std::vector<MeasuredPoint> merged;
  std::vector<double> count;
  for (const MeasuredPoint& p : sorted) {
    if (merged.empty() || p.rh_fraction - merged.back().rh_fraction >= kSameRhFraction) {
      merged.push_back(p);
      count.push_back(1.0);
      continue;
    }
    MeasuredPoint& m = merged.back();
    const double c = count.back();
    m.moisture_kg_per_kg = (m.moisture_kg_per_kg * c + p.moisture_kg_per_kg) / (c + 1.0);
    m.u_moisture_kg_per_kg = std::max(m.u_moisture_kg_per_kg, p.u_moisture_kg_per_kg);
    m.u_rh_fraction = std::max(m.u_rh_fraction, p.u_rh_fraction);
    for (CommonPart& part : m.common) {
      part.moisture_kg_per_kg *= c / (c + 1.0);
      part.rh_fraction *= c / (c + 1.0);
    }
    for (CommonPart part : p.common) {
      part.moisture_kg_per_kg /= c + 1.0;
      part.rh_fraction /= c + 1.0;
      m.common.push_back(part);
    }
    count.back() += 1.0;
  }
  return merged;
}

// Nodes of the steps from samples ascending in RH: the RH of the smallest radius (moisture
// interpolated linearly in RH), the samples above it, up to rh_max (interpolated).
std::vector<Sample> BuildNodes(const std::vector<Sample>& sorted, double rh_min, double rh_max) {
  std::vector<Sample> nodes;
  auto interpolate = [&](std::size_t j, double rh) {
    const Sample& a = sorted[j - 1];
    const Sample& b = sorted[j];
    const double span = b.rh - a.rh;
    const double w = span > 0.0 ? (rh - a.rh) / span : 1.0;
    return Sample{rh, a.u + w * (b.u - a.u)};
  };
  for (std::size_t j = 0; j < sorted.size(); ++j) {
    const double rh_j = sorted[j].rh;
    if (rh_j < rh_min) continue;
    if (nodes.empty() && j > 0 && rh_j > rh_min) nodes.push_back(interpolate(j, rh_min));
    if (rh_j > rh_max) {
      if (j > 0 && sorted[j - 1].rh < rh_max) nodes.push_back(interpolate(j, rh_max));
      break;
    }
    nodes.push_back(sorted[j]);
  }
  return nodes;
}

// Log radius and cumulative film-corrected pore volume (from the lowest node) of a set of
// nodes; negative increments carried.
struct Profile {
  std::vector<double> log_r;
  std::vector<double> cumulative;
  GridVolumes volumes;
};
void MakeProfile(const std::vector<Sample>& nodes, const PoreRadiusMap& map, double rho,
                 Profile* p) {
  const std::size_t n = nodes.size();
  std::vector<double> radius(n), t(n), u(n);
  p->log_r.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    t[i] = map.FilmThickness_m(nodes[i].rh);
    radius[i] = map.KelvinRadius_m(nodes[i].rh) + t[i];
    u[i] = nodes[i].u;
    p->log_r[i] = std::log10(radius[i]);
  }
  FilmCorrectedVolumes(MakeStepGeometry(radius, t, rho), u, &p->volumes, false);
  p->cumulative.assign(n, 0.0);
  for (std::size_t i = 1; i < n; ++i) {
    p->cumulative[i] = p->cumulative[i - 1] + p->volumes.interval_volume_m3_per_kg[i - 1];
  }
}

// The profile's cumulative volume at x = log10 r: linear between its nodes, continued beyond
// them with the given densities (the nominal end steps': a draw's own end step can be very
// narrow when two drawn humidities come close, and its slope then meaningless).
double CumulativeAt(const Profile& p, double x, double slope_low, double slope_high) {
  const std::size_t n = p.log_r.size();
  if (x <= p.log_r[0]) return p.cumulative[0] + slope_low * (x - p.log_r[0]);
  if (x >= p.log_r[n - 1]) return p.cumulative[n - 1] + slope_high * (x - p.log_r[n - 1]);
  const std::size_t k = static_cast<std::size_t>(
                            std::upper_bound(p.log_r.begin(), p.log_r.end(), x) - p.log_r.begin()) -
                        1;
  const double x0 = p.log_r[k];
  const double x1 = p.log_r[k + 1];
  if (!(x1 > x0)) return p.cumulative[k + 1];
  return p.cumulative[k] + (p.cumulative[k + 1] - p.cumulative[k]) * (x - x0) / (x1 - x0);
}

// A draw's cumulative volume at x = log10 r of a nominal node: the value of the draw's node
// nearest to x, moved to x along the nominal profile (plus the nominal increment between the
// draw node's radius and x). A drawn point stands for the true state of the measured point:
// its volume belongs at its drawn radius, and the volume at the nominal radius differs from it
// by the pores between the two radii, as the measurement gives them. Reading the draw's own
// polyline at x instead (linear between its drawn nodes) shrinks that difference: a node
// drawn towards a neighbour widens the segment it moves into and flattens its slope, so the
// draws' spread of a step came out 13-16 % below the scatter of the steps of repeated
// measurements in the coverage test, most on narrow steps (RH 0.025 apart, u(RH) 0.003).
double DrawnCumulativeAt(const Profile& draw, const Profile& nominal, double x, double slope_low,
                         double slope_high) {
  const std::vector<double>& xs = draw.log_r;
  const auto above = std::lower_bound(xs.begin(), xs.end(), x);
  std::size_t j = static_cast<std::size_t>(above - xs.begin());
  if (j == xs.size() || (j > 0 && x - xs[j - 1] < xs[j] - x)) --j;
  return draw.cumulative[j] + CumulativeAt(nominal, x, slope_low, slope_high) -
         CumulativeAt(nominal, xs[j], slope_low, slope_high);
}

// Draws the points: independent parts per point, common parts once for all.
class PointSampler {
 public:
  PointSampler(const std::vector<MeasuredPoint>& points, std::size_t num_sources,
               std::uint64_t seed)
      : points_(points), z_common_(num_sources), normal_(seed) {
    for (const MeasuredPoint& p : points) {
      double common_u2 = 0.0;
      double common_rh2 = 0.0;
      for (const CommonPart& part : p.common) {
        common_u2 += part.moisture_kg_per_kg * part.moisture_kg_per_kg;
        common_rh2 += part.rh_fraction * part.rh_fraction;
      }
      independent_u_.push_back(
          std::sqrt(std::max(0.0, p.u_moisture_kg_per_kg * p.u_moisture_kg_per_kg - common_u2)));
      independent_rh_.push_back(
          std::sqrt(std::max(0.0, p.u_rh_fraction * p.u_rh_fraction - common_rh2)));
    }
  }
  bool any_uncertainty() const {
    for (std::size_t i = 0; i < points_.size(); ++i) {
      if (independent_u_[i] > 0.0 || independent_rh_[i] > 0.0 || !points_[i].common.empty()) {
        return true;
      }
    }
    return false;
  }
  // One draw of every point, ascending in RH.
  void Draw(std::vector<Sample>* out) {
    for (double& z : z_common_) z = normal_.Normal();
    out->resize(points_.size());
    for (std::size_t i = 0; i < points_.size(); ++i) {
      const MeasuredPoint& p = points_[i];
      double rh_shift = 0.0;
      double u = p.moisture_kg_per_kg + independent_u_[i] * normal_.Normal();
      for (const CommonPart& part : p.common) {
        const double z = z_common_[static_cast<std::size_t>(part.source)];
        rh_shift += part.rh_fraction * z;
        u += part.moisture_kg_per_kg * z;
      }
      double rh = p.rh_fraction + rh_shift + independent_rh_[i] * normal_.Normal();
      for (int k = 0; k < kMaxRhRedraws && !(rh > 0.0 && rh < 1.0); ++k) {
        rh = p.rh_fraction + rh_shift + independent_rh_[i] * normal_.Normal();
      }
      (*out)[i] = Sample{std::clamp(rh, kRhInsideBound, 1.0 - kRhInsideBound), u};
    }
    std::sort(out->begin(), out->end(),
              [](const Sample& a, const Sample& b) { return a.rh < b.rh; });
  }

 private:
  const std::vector<MeasuredPoint>& points_;
  std::vector<double> independent_u_;
  std::vector<double> independent_rh_;
  std::vector<double> z_common_;
  NormalSource normal_;
};

// Step increments of every draw on the nominal nodes, step-major: [step * num_draws + draw].
struct StepDraws {
  std::size_t num_steps = 0;
  std::size_t num_draws = 0;
  std::vector<double> increment;
  double at(std::size_t step, std::size_t draw) const { return increment[step * num_draws + draw]; }
};

// The standard uncertainty of the RH of a nominal node: that of the merged point it is (0 for a
// node interpolated at a radius limit, whose radius is fixed).
double NodeRhUncertainty(const std::vector<MeasuredPoint>& merged, double rh) {
  for (const MeasuredPoint& p : merged) {
    if (p.rh_fraction == rh) return p.u_rh_fraction;
  }
  return 0.0;
}

// The density with which the nominal profile is continued beyond its end node `end` (0 or the
// last node; nodes: the nominal nodes' RH) for a drawn end node moved to it: the mean density of
// the nominal steps from the end node to the first node at least 2 u(RH) of the end node away
// in RH (k = 2, common practice), or to the other end. The end step alone (an earlier rule) can
// be narrower than the end node's drawn spread when two measured humidities come close (0.99803
// and 0.99804 in the coverage test): its density is then scatter over a tiny width, and draws
// continued with it stated the pore volume's u 30-170 times its scatter in 5 of 1200 replicates.
double EndDensity(const Profile& nominal, const std::vector<Sample>& nodes,
                  const std::vector<MeasuredPoint>& merged, std::size_t end) {
  const std::size_t n = nodes.size();
  const double reach = 2.0 * NodeRhUncertainty(merged, nodes[end].rh);
  std::size_t other = end == 0 ? 1 : n - 2;
  if (end == 0) {
    while (other + 1 < n && nodes[other].rh - nodes[0].rh < reach) ++other;
  } else {
    while (other > 0 && nodes[end].rh - nodes[other].rh < reach) --other;
  }
  const std::size_t lo = std::min(end, other);
  const std::size_t hi = std::max(end, other);
  const double width = nominal.log_r[hi] - nominal.log_r[lo];
  return width > 0.0 ? (nominal.cumulative[hi] - nominal.cumulative[lo]) / width : 0.0;
}

StepDraws DrawSteps(const std::vector<MeasuredPoint>& merged, std::size_t num_sources,
                    const Profile& nominal, const std::vector<Sample>& nominal_nodes, double rh_min,
                    double rh_max, const PoreRadiusMap& map, double rho,
                    const PoreOptions& options) {
  const std::vector<double>& nominal_log_r = nominal.log_r;
  StepDraws out;
  out.num_steps = nominal_log_r.size() - 1;
  const double slope_low = EndDensity(nominal, nominal_nodes, merged, 0);
  const double slope_high = EndDensity(nominal, nominal_nodes, merged, nominal_log_r.size() - 1);
  PointSampler sampler(merged, num_sources, options.seed);
  if (!sampler.any_uncertainty() || options.band_draws <= 0) return out;
  std::vector<std::vector<double>> by_draw;
  std::vector<Sample> samples;
  Profile profile;
  for (int k = 0; k < options.band_draws; ++k) {
    sampler.Draw(&samples);
    const std::vector<Sample> nodes = BuildNodes(samples, rh_min, rh_max);
    if (nodes.size() < 2) continue;
    MakeProfile(nodes, map, rho, &profile);
    std::vector<double> steps(out.num_steps);
    double below = DrawnCumulativeAt(profile, nominal, nominal_log_r[0], slope_low, slope_high);
    for (std::size_t s = 0; s < out.num_steps; ++s) {
      const double above =
          DrawnCumulativeAt(profile, nominal, nominal_log_r[s + 1], slope_low, slope_high);
      steps[s] = above - below;
      below = above;
    }
    by_draw.push_back(std::move(steps));
  }
  out.num_draws = by_draw.size();
  out.increment.resize(out.num_steps * out.num_draws);
  for (std::size_t k = 0; k < out.num_draws; ++k) {
    for (std::size_t s = 0; s < out.num_steps; ++s)
      out.increment[s * out.num_draws + k] = by_draw[k][s];
  }
  return out;
}

// A bar of the histogram: steps [first, last] merged.
struct Block {
  std::size_t first = 0;
  std::size_t last = 0;
};

class Blocks {
 public:
  Blocks(const std::vector<double>& log_r, const std::vector<double>& increment,
         const StepDraws& draws, double confidence_level)
      : log_r_(log_r),
        increment_(increment),
        draws_(draws),
        tail_(0.5 * (1.0 - confidence_level)),
        boundary_tail_(tail_ /
                       static_cast<double>(std::max<std::size_t>(1, increment.size() - 1))) {
    for (std::size_t s = 0; s < increment.size(); ++s) blocks_.push_back({s, s});
  }
  const std::vector<Block>& blocks() const { return blocks_; }
  double Width(std::size_t b) const {
    return log_r_[blocks_[b].last + 1] - log_r_[blocks_[b].first];
  }
  double Volume(std::size_t b) const {
    double v = 0.0;
    for (std::size_t s = blocks_[b].first; s <= blocks_[b].last; ++s) v += increment_[s];
    return v;
  }
  double DrawVolume(std::size_t b, std::size_t k) const {
    double v = 0.0;
    for (std::size_t s = blocks_[b].first; s <= blocks_[b].last; ++s) v += draws_.at(s, k);
    return v;
  }
  // Percentile interval of the block's volume excludes 0; |z| = |V| / sd for the order.
  bool Significant(std::size_t b, double* z) const {
    column_.resize(draws_.num_draws);
    for (std::size_t k = 0; k < draws_.num_draws; ++k) column_[k] = DrawVolume(b, k);
    const double sd = StandardDeviation(column_);
    *z = sd > 0.0 ? std::abs(Volume(b)) / sd : std::numeric_limits<double>::infinity();
    double low = 0.0;
    double high = 0.0;
    QuantilePair(column_, tail_, 1.0 - tail_, &low, &high);
    return low > 0.0 || high < 0.0;
  }
  // Percentile interval of the difference of the two blocks' densities excludes 0 at the
  // family-wise level; *z as above.
  bool Distinguishable(std::size_t a, std::size_t b, double* z) const {
    column_.resize(draws_.num_draws);
    const double wa = Width(a);
    const double wb = Width(b);
    for (std::size_t k = 0; k < draws_.num_draws; ++k) {
      column_[k] = DrawVolume(a, k) / wa - DrawVolume(b, k) / wb;
    }
    const double sd = StandardDeviation(column_);
    const double difference = Volume(a) / wa - Volume(b) / wb;
    *z = sd > 0.0 ? std::abs(difference) / sd : std::numeric_limits<double>::infinity();
    double low = 0.0;
    double high = 0.0;
    QuantilePair(column_, boundary_tail_, 1.0 - boundary_tail_, &low, &high);
    return low > 0.0 || high < 0.0;
  }
  // One merge (distribution.h, part 3); false when none is left to do.
  bool MergeOnce() {
    std::vector<std::pair<double, std::size_t>> candidates;
    for (std::size_t b = 0; b < blocks_.size(); ++b) {
      double z = 0.0;
      if (!Significant(b, &z)) candidates.emplace_back(z, b);
    }
    std::sort(candidates.begin(), candidates.end());
    for (const auto& [z_block, b] : candidates) {
      std::size_t partner = blocks_.size();
      double best_z = std::numeric_limits<double>::infinity();
      for (std::size_t n : {b - 1, b + 1}) {  // b - 1 wraps to SIZE_MAX for b = 0
        if (n >= blocks_.size()) continue;
        double z = 0.0;
        if (!Distinguishable(b, n, &z) && z < best_z) {
          best_z = z;
          partner = n;
        }
      }
      if (partner == blocks_.size()) continue;
      Merge(std::min(b, partner));
      return true;
    }
    // Then the pair of neighbouring bars least distinguishable, if not distinguishable.
    std::size_t pair = blocks_.size();
    double best_z = std::numeric_limits<double>::infinity();
    for (std::size_t b = 0; b + 1 < blocks_.size(); ++b) {
      double z = 0.0;
      if (!Distinguishable(b, b + 1, &z) && z < best_z) {
        best_z = z;
        pair = b;
      }
    }
    if (pair == blocks_.size()) return false;
    Merge(pair);
    return true;
  }

 private:
  void Merge(std::size_t left) {
    blocks_[left].last = blocks_[left + 1].last;
    blocks_.erase(blocks_.begin() + static_cast<std::ptrdiff_t>(left + 1));
  }

  const std::vector<double>& log_r_;
  const std::vector<double>& increment_;
  const StepDraws& draws_;
  double tail_;           // per step: is its volume significant
  double boundary_tail_;  // per boundary between bars, family-wise (Bonferroni over the
                          // num_steps - 1 boundaries; distribution.h, part 3)
  std::vector<Block> blocks_;
  mutable std::vector<double> column_;
};

// The density of the measured steps smoothed with a fourth-order kernel: each step's volume
// spread uniformly over its width in log10 r (the ends continued at the end steps' densities),
// convolved with K_h(x) = K(x / h) / h, K(z) = (3 - z^2) phi(z) / 2, the fourth-order kernel
// built on the normal density phi (Wand & Jones 1995, Kernel Smoothing, 2.8, from memory: its
// second moment is 0, so the shift of a smoothed peak is O(h^4), where the normal kernel's is
// O(h^2); the peaks of dV/dlog r are skewed in log r and the normal kernel moved the 8 nm mode
// of the coverage test 0.036 in log10 r at h = w / 2). With the node densities' jumps
// d_j = rho_j - rho_(j-1) at the interior nodes x_j and z_j = (x - x_j) / h:
//   f_h(x) = rho_0 + sum_j d_j (Phi(z_j) + z_j phi(z_j) / 2),
//   f_h'(x) = sum_j d_j K(z_j) / h,   f_h''(x) = sum_j d_j z_j phi(z_j) (z_j^2 - 5) / (2 h^2).
// Mode scans the grid x_g = lo + g (hi - lo) / cells, spacing at most h / 4, with the kernel's
// values at every (x_g, x_j) computed once, so each draw costs one sum per grid point.
class SmoothedSteps {
 public:
  SmoothedSteps(const std::vector<double>& log_r, double h, double lo, double hi)
      : log_r_(log_r), h_(h), lo_(lo), hi_(hi) {
    const std::size_t n = log_r.size();
    cells_ = std::max(1, static_cast<int>(std::ceil((hi - lo) / (kGridPerWidth * h))));
    table_.assign(static_cast<std::size_t>(cells_ + 1) * n, 0.0);
    for (int g = 0; g <= cells_; ++g) {
      for (std::size_t j = 1; j + 1 < n; ++j) {
        table_[static_cast<std::size_t>(g) * n + j] = Cdf((GridX(g) - log_r[j]) / h);
      }
    }
  }
  // The steps' volumes: increment(s) of step s.
  template <typename Increment>
  void SetSteps(Increment increment) {
    jump_.assign(log_r_.size(), 0.0);
    double previous = 0.0;
    for (std::size_t s = 0; s + 1 < log_r_.size(); ++s) {
      const double rho = increment(s) / (log_r_[s + 1] - log_r_[s]);
      if (s == 0) base_ = rho;
      if (s > 0) jump_[s] = rho - previous;
      previous = rho;
    }
  }
  // The position of the largest f_h on [lo, hi]: the best grid point, refined by safeguarded
  // Newton steps on f_h' within the grid cells beside it.
  double Mode() const {
    const std::size_t n = log_r_.size();
    double x = lo_;
    double best = -std::numeric_limits<double>::infinity();
    for (int g = 0; g <= cells_; ++g) {
      double f = base_;
      const double* row = table_.data() + static_cast<std::size_t>(g) * n;
      for (std::size_t j = 1; j + 1 < n; ++j) f += jump_[j] * row[j];
      if (f > best) {
        best = f;
        x = GridX(g);
      }
    }
    const double spacing = (hi_ - lo_) / cells_;
    double a = std::max(lo_, x - spacing);
    double b = std::min(hi_, x + spacing);
    if (!(Slope(a) > 0.0 && Slope(b) < 0.0)) return x;  // at an end of [lo, hi]
    for (int iteration = 0; iteration < kMaxNewtonSteps; ++iteration) {
      const double slope = Slope(x);
      (slope > 0.0 ? a : b) = x;
      const double curvature = Curvature(x);
      const double newton = curvature < 0.0 ? x - slope / curvature : a;
      const double next = newton > a && newton < b ? newton : 0.5 * (a + b);
      if (std::abs(next - x) < kModeTolerance) return next;
      x = next;
    }
    return x;
  }

 private:
  static double Normal(double z) {
    return std::exp(-0.5 * z * z) / std::sqrt(2.0 * std::numbers::pi);
  }
  // The kernel's integral from -infinity to z: Phi(z) + z phi(z) / 2.
  static double Cdf(double z) {
    if (z < -kKernelReach) return 0.0;
    if (z > kKernelReach) return 1.0;
    return 0.5 * std::erfc(-z / std::sqrt(2.0)) + 0.5 * z * Normal(z);
  }
  double GridX(int g) const { return lo_ + (hi_ - lo_) * g / cells_; }
  double Slope(double x) const {
    double slope = 0.0;
    for (std::size_t j = 1; j + 1 < log_r_.size(); ++j) {
      const double z = (x - log_r_[j]) / h_;
      if (std::abs(z) <= kKernelReach) slope += jump_[j] * 0.5 * (3.0 - z * z) * Normal(z);
    }
    return slope / h_;
  }
  double Curvature(double x) const {
    double curvature = 0.0;
    for (std::size_t j = 1; j + 1 < log_r_.size(); ++j) {
      const double z = (x - log_r_[j]) / h_;
      if (std::abs(z) <= kKernelReach) curvature += jump_[j] * 0.5 * z * (z * z - 5.0) * Normal(z);
    }
    return curvature / (h_ * h_);
  }

  static constexpr double kKernelReach = 10.0;   // (3 - z^2) phi(z) / 2 < 1e-20 beyond
  static constexpr double kGridPerWidth = 0.25;  // grid spacing h / 4: K has one maximum
                                                 // per h (common practice for a bracketing scan)
  static constexpr int kMaxNewtonSteps = 60;
  static constexpr double kModeTolerance = 1e-10;  // in log10 r
  const std::vector<double>& log_r_;
  double h_ = 0.0;
  double lo_ = 0.0;
  double hi_ = 0.0;
  int cells_ = 1;
  std::vector<double> table_;  // Cdf((x_g - x_j) / h) at [g * nodes + j]
  double base_ = 0.0;
  std::vector<double> jump_;
};

// The reported position of every resolved stepwise mode and its u, in log10 r (u(r) = r ln(10)
// u(log10 r)); which modes are resolved is ResolvedModes' (modes.h) and stays so. The position is
// the maximum of the smoothed density of the measured steps (SmoothedSteps) between the middles
// of the mode's two valley bars (ModeWindow), with h the standard deviation of the mode's bar
// (its width w_b / sqrt(12): the kernel resolves what the bar resolves; the bars are as narrow
// as the draws let them be, so h follows the noise). A smooth function of the steps (its shift
// linear in their errors for small errors), so its JCGM 101 draws are consistent: each draw's
// steps on the nominal nodes go through the same estimator (same h, same window). Three
// components in quadrature:
//  - noise: DrawStatisticsOf of the draws' positions;
//  - smoothing: the change d of the position when h is halved, rectangular over +-|d|
//    (JCGM 100:2008 4.3.7): u = |d| / sqrt(3);
//  - resolution: the measured points give the cumulative volume only at the step nodes, so
//    where within the measured step w_s that holds the mode the density peaks is read from the
//    neighbouring steps alone; rectangular over the middle half of that step,
//    u = w_s / sqrt(48) (JCGM 100:2008 4.3.7; w_s: the step that holds the bars' mode of
//    grouped data). The half-width w_s / 4 is a choice measured in
//    tests/pores/stepwise_coverage_test.cc, not a published rule: without it the 8 / 15 nm modes
//    were covered in 0.81-0.89, with the whole step (w_s / sqrt(12), the earlier rule) or a
//    triangle over it (w_s / sqrt(24)) their u / sd reached 1.3-1.9 and 1.5-1.6 at RH steps of
//    0.05.
// The mode's u is a combination with rectangular model terms (GUM 5.1.2), not the spread of the
// draws alone: stated with the sheet's k (ModalRadius::coverage_factor 0). Replaces the mode of
// grouped data on the nominal bars, whose draws could not move the highest bar and whose
// merge evaluated per draw over-dispersed (an arg-max-type estimate: Sen, Banerjee & Woodroofe
// 2010, Ann. Statist. 38, from memory); the numbers are in the coverage test.
void SmoothedModePositions(const std::vector<double>& step_log_r,
                           const std::vector<double>& step_volume, const std::vector<double>& edges,
                           const std::vector<double>& mid, const std::vector<ModeWindow>& windows,
                           const StepDraws& draws, double coverage_probability,
                           std::vector<ModalRadius>* modes) {
  const double ln10 = std::log(10.0);
  const double kernel_per_bar_width = 1.0 / std::sqrt(12.0);  // sd of a uniform bar / its width
  const double resolution_per_step = 1.0 / std::sqrt(48.0);   // rectangle over +- w_s / 4
  const auto index_below = [](const std::vector<double>& nodes, double x, std::size_t count) {
    const auto above = std::upper_bound(nodes.begin(), nodes.end(), x);
    const std::size_t at =
        above == nodes.begin() ? 0 : static_cast<std::size_t>(above - nodes.begin()) - 1;
    return std::min(at, count - 1);
  };
  std::vector<double> positions(draws.num_draws);
  for (std::size_t m = 0; m < modes->size(); ++m) {
    ModalRadius& mode = (*modes)[m];
    const double x_bars = std::log10(mode.radius_m);
    const std::size_t b = index_below(edges, x_bars, mid.size());
    const double h = kernel_per_bar_width * (edges[b + 1] - edges[b]);
    const double lo = mid[windows[m].left];
    const double hi = mid[windows[m].right];
    const auto nominal_step = [&](std::size_t s) { return step_volume[s]; };
    SmoothedSteps smoothed(step_log_r, h, lo, hi);
    smoothed.SetSteps(nominal_step);
    const double x = smoothed.Mode();
    SmoothedSteps half(step_log_r, 0.5 * h, lo, hi);
    half.SetSteps(nominal_step);
    const double u_smoothing = std::abs(half.Mode() - x) / std::sqrt(3.0);
    for (std::size_t k = 0; k < draws.num_draws; ++k) {
      smoothed.SetSteps([&](std::size_t s) { return draws.at(s, k); });
      positions[k] = smoothed.Mode();
    }
    const double u_noise =
        draws.num_draws > 0 ? DrawStatisticsOf(positions, coverage_probability).standard_uncertainty
                            : 0.0;
    const std::size_t s = index_below(step_log_r, x_bars, step_volume.size());
    const double u_resolution = resolution_per_step * (step_log_r[s + 1] - step_log_r[s]);
    mode.radius_m = std::pow(10.0, x);
    mode.u_radius_m =
        mode.radius_m * ln10 *
        std::sqrt(u_noise * u_noise + u_smoothing * u_smoothing + u_resolution * u_resolution);
    mode.coverage_factor = 0.0;
  }
}

void StepwiseAssumptions(std::size_t num_steps, std::size_t num_blocks, int negative_steps,
                         const StepDraws& draws, const std::vector<std::string>& common_sources,
                         const PoreOptions& options, PoreDistribution* d) {
  d->assumptions.emplace_back(
      "stepwise from the measured points, high RH down, each step corrected for the thinning "
      "film in pores emptied before (Barrett, Joyner & Halenda 1951); negative step volumes "
      "are carried, not set to 0");
  if (draws.num_draws == 0) {
    d->assumptions.emplace_back("no uncertainty stated for the points: no band, steps not merged");
    return;
  }
  d->assumptions.push_back(fmt::format(
      "band and uncertainties: {} Monte Carlo draws (JCGM 101) of every point's RH and moisture "
      "content from their standard uncertainties{}; {:g} % percentile band",
      draws.num_draws,
      common_sources.empty() ? std::string()
                             : fmt::format(", {} shared part(s) drawn once per draw for all points",
                                           common_sources.size()),
      100.0 * options.band_confidence_level));
  d->assumptions.push_back(fmt::format(
      "{} measured steps shown as {} bars: a step whose volume is not significant at {:g} % is "
      "merged with the neighbour whose density it cannot be told from",
      num_steps, num_blocks, 100.0 * options.band_confidence_level));
  if (negative_steps > 0) {
    d->assumptions.push_back(fmt::format(
        "{} steps gave a negative pore volume (scatter, or film thinning larger than the step), "
        "carried as measured",
        negative_steps));
  }
}

}  // namespace

PoreDistribution StepwisePoreDistribution(const std::vector<MeasuredPoint>& points,
                                          ingest::Branch branch, const PoreRadiusMap& map,
                                          const PoreOptions& options,
                                          const std::vector<std::string>& common_sources) {
  PoreDistribution d;
  d.method = "stepwise";
  d.branch = branch;
  d.temperature_K = map.temperature_K();
  d.meniscus = map.meniscus();
  d.film_description = map.film().description;
  d.band_source = "none";
  CommonAssumptions(map, branch, options, &d);

  const std::vector<MeasuredPoint> merged = SortedMerged(points);
  const double rh_min = map.RhForPoreRadius(options.min_radius_m);
  const double rh_max = options.max_radius_m > 0.0 ? map.RhForPoreRadius(options.max_radius_m)
                                                   : std::numeric_limits<double>::infinity();
  std::vector<Sample> nominal_samples;
  nominal_samples.reserve(merged.size());
  for (const MeasuredPoint& p : merged)
    nominal_samples.push_back({p.rh_fraction, p.moisture_kg_per_kg});
  const std::vector<Sample> nodes = BuildNodes(nominal_samples, rh_min, rh_max);
  if (nodes.size() < 2) {
    d.assumptions.emplace_back(
        "fewer than two measured points above the smallest radius: nothing resolved");
    return d;
  }
  const double rho = physics::LiquidWaterDensity_kg_per_m3(map.temperature_K());
  Profile nominal;
  MakeProfile(nodes, map, rho, &nominal);
  const std::vector<double>& log_r = nominal.log_r;
  const std::vector<double>& increment = nominal.volumes.interval_volume_m3_per_kg;
  const std::size_t num_steps = increment.size();
  d.resolved_radius_min_m = std::pow(10.0, log_r.front());
  d.resolved_radius_max_m = std::pow(10.0, log_r.back());
  d.total_resolved_volume_m3_per_kg = nominal.volumes.total_m3_per_kg;
  d.adsorbed_volume_m3_per_kg = nominal.volumes.adsorbed_m3_per_kg;
  d.negative_steps_carried = nominal.volumes.negative_steps;

  const StepDraws draws =
      DrawSteps(merged, common_sources.size(), nominal, nodes, rh_min, rh_max, map, rho, options);
  Blocks blocks(log_r, increment, draws, options.band_confidence_level);
  if (draws.num_draws > 0) {
    while (blocks.MergeOnce()) {
    }
    d.band_source = "measurement uncertainty";
    d.band_draws_used = static_cast<int>(draws.num_draws);
  }
  const std::size_t nb = blocks.blocks().size();

  // Bars: nominal, and per draw (bar-major).
  std::vector<double> edges(nb + 1), volume(nb), width(nb), mid(nb), density(nb);
  std::vector<double> draw_volume(nb * draws.num_draws);
  for (std::size_t b = 0; b < nb; ++b) {
    edges[b] = log_r[blocks.blocks()[b].first];
    width[b] = blocks.Width(b);
    mid[b] = edges[b] + 0.5 * width[b];
    volume[b] = blocks.Volume(b);
    density[b] = volume[b] / width[b];
    for (std::size_t k = 0; k < draws.num_draws; ++k) {
      draw_volume[b * draws.num_draws + k] = blocks.DrawVolume(b, k);
    }
  }
  edges[nb] = log_r.back();

  // Per draw: the bars' densities and cumulative volumes (band), the total and the decade
  // fractions, these from the measured steps (not the bars: a wide bar spread uniformly over a
  // decade boundary would move volume across it).
  std::vector<double> draw_total(draws.num_draws, 0.0);
  std::vector<double> draw_density(nb * draws.num_draws);
  std::vector<double> draw_cumulative(nb * draws.num_draws);
  std::vector<std::vector<DecadeFraction>> draw_decades;
  std::vector<double> step_volumes(num_steps);
  for (std::size_t k = 0; k < draws.num_draws; ++k) {
    double below = 0.0;
    for (std::size_t b = 0; b < nb; ++b) {
      const double v = draw_volume[b * draws.num_draws + k];
      draw_density[b * draws.num_draws + k] = v / width[b];
      draw_cumulative[b * draws.num_draws + k] = below + 0.5 * v;
      below += v;
    }
    draw_total[k] = below;
    for (std::size_t st = 0; st < num_steps; ++st) step_volumes[st] = draws.at(st, k);
    draw_decades.push_back(DecadeFractions(log_r, step_volumes, below));
  }
  const DrawStatistics total_spread = DrawStatisticsOf(draw_total, options.band_confidence_level);
  d.u_total_resolved_volume_m3_per_kg = total_spread.standard_uncertainty;
  d.k_total_resolved_volume = total_spread.coverage_factor;

  const double tail = 0.5 * (1.0 - options.band_confidence_level);
  QuantileScratch scratch;
  d.points.resize(nb);
  double below = 0.0;
  for (std::size_t b = 0; b < nb; ++b) {
    PoreDistributionPoint& p = d.points[b];
    p.radius_m = std::pow(10.0, mid[b]);
    p.rh_fraction = map.RhForPoreRadius(p.radius_m);
    p.kelvin_radius_m = map.KelvinRadius_m(p.rh_fraction);
    p.film_thickness_m = map.FilmThickness_m(p.rh_fraction);
    p.cumulative_volume_m3_per_kg = below + 0.5 * volume[b];
    below += volume[b];
    p.dv_dlogr_m3_per_kg = density[b];
    if (draws.num_draws == 0) {
      p.cumulative_low_m3_per_kg = p.cumulative_high_m3_per_kg = p.cumulative_volume_m3_per_kg;
      p.dv_dlogr_low_m3_per_kg = p.dv_dlogr_high_m3_per_kg = density[b];
      continue;
    }
    const std::size_t at = b * draws.num_draws;
    QuantilePairOf(draw_density.data() + at, draws.num_draws, tail, 1.0 - tail, &scratch,
                   &p.dv_dlogr_low_m3_per_kg, &p.dv_dlogr_high_m3_per_kg);
    QuantilePairOf(draw_cumulative.data() + at, draws.num_draws, tail, 1.0 - tail, &scratch,
                   &p.cumulative_low_m3_per_kg, &p.cumulative_high_m3_per_kg);
  }

  std::vector<double> band_low(nb), band_high(nb);
  for (std::size_t b = 0; b < nb; ++b) {
    band_low[b] = d.points[b].dv_dlogr_low_m3_per_kg;
    band_high[b] = d.points[b].dv_dlogr_high_m3_per_kg;
  }
  DrawTable table;
  table.num_draws = draws.num_draws;
  table.value = [&](std::size_t k, std::size_t i) { return draw_density[i * draws.num_draws + k]; };
  // Each bar is a measured step or a merged block: only the outermost bars are edges.
  constexpr std::size_t kStepEdgeNodes = 1;
  std::vector<ModeWindow> windows;
  d.modes = ResolvedModes(mid, density, band_low, band_high, table, kStepEdgeNodes, &width, options,
                          &windows);
  SmoothedModePositions(log_r, increment, edges, mid, windows, draws, options.band_confidence_level,
                        &d.modes);
  d.decades = DecadeFractions(log_r, increment, d.total_resolved_volume_m3_per_kg);
  DecadeUncertainties(draw_decades, options.band_confidence_level, &d.decades);
  SplitAtDecadeBoundaries(log_r, increment, d.total_resolved_volume_m3_per_kg, &d.decades);

  // The measured steps, each with its bar.
  std::vector<double> column(draws.num_draws);
  for (std::size_t b = 0; b < nb; ++b) {
    double z = 0.0;
    const bool significant = draws.num_draws > 0 && blocks.Significant(b, &z);
    for (std::size_t s = blocks.blocks()[b].first; s <= blocks.blocks()[b].last; ++s) {
      PoreStep step;
      step.radius_low_m = std::pow(10.0, log_r[s]);
      step.radius_high_m = std::pow(10.0, log_r[s + 1]);
      step.rh_low_fraction = nodes[s].rh;
      step.rh_high_fraction = nodes[s + 1].rh;
      step.volume_m3_per_kg = increment[s];
      for (std::size_t k = 0; k < draws.num_draws; ++k) column[k] = draws.at(s, k);
      step.u_volume_m3_per_kg =
          DrawStatisticsOf(column, options.band_confidence_level).standard_uncertainty;
      step.bar = static_cast<int>(b);
      step.bar_significant = significant;
      d.steps.push_back(step);
    }
  }
  StepwiseAssumptions(num_steps, nb, d.negative_steps_carried, draws, common_sources, options, &d);
  d.assumptions.push_back(fmt::format("{} measured steps between {:.3g} nm and {:.3g} nm",
                                      num_steps, d.resolved_radius_min_m / kNm,
                                      d.resolved_radius_max_m / kNm));
  return d;
}

}  // namespace sorbtrace::pores::internal
