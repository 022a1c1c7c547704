// Internal to the pores stage: what both distribution methods report from a density and its
// draws: the resolved modes (one rule for the model-based and the stepwise method), the volume
// fractions per decade with their uncertainties, and the assumptions common to both.
#pragma once

#include <cstddef>
#include <functional>
#include <vector>

#include "pipeline/ingest/ingest.h"
#include "pipeline/pores/kelvin_film.h"
#include "pipeline/pores/pores.h"

namespace sorbtrace::pores::internal {

// Volume fraction per decade of radius, from interval volumes between nodes edges_log_r
// (log10 r ascending), each interval's volume spread uniformly in log r. Empty unless
// total > 0.
std::vector<DecadeFraction> DecadeFractions(const std::vector<double>& edges_log_r,
                                            const std::vector<double>& interval_volume,
                                            double total);

// Each decade's u(volume fraction) from the draws' fractions: u = U / k of their
// probabilistically symmetric interval at coverage_probability (DrawStatisticsOf,
// pipeline/common/draw_statistics.h; the draws' standard deviation for normal draws).
void DecadeUncertainties(const std::vector<std::vector<DecadeFraction>>& draw_decades,
                         double coverage_probability, std::vector<DecadeFraction>* decades);

// The per-draw curves of a distribution: value(k, i) of draw k at node i.
struct DrawTable {
  std::size_t num_draws = 0;
  std::function<double(std::size_t, std::size_t)> value;
};

// Modal radii (see ModalRadius in pores.h), the one rule of both methods: every interior local
// maximum i of the nominal dV/dlog r at least options.mode_min_relative_height of the largest
// value, with its window [L, R] bounded by the lowest nominal value towards the neighbouring
// maximum (or the grid end) on each side. Reported only when resolved:
//  - not at the grid edge: i is none of the edge_nodes outermost nodes on either side;
//  - standing out from both neighbouring valleys by more than its uncertainty: the band's lower
//    limit at i lies above its upper limit at L and at R (band_low/high: the percentile band
//    at options.band_confidence_level);
//  - present in the draws: in at least options.band_confidence_level of the draws the maximum
//    of that draw over [L, R] lies inside the window (not on L or R).
// Position: the vertex of the parabola through the maximum and its two neighbours, in the
// nominal curve and in each draw; u(r) = U / k of the draws' positions (DrawStatisticsOf at
// options.band_confidence_level: percentile-based, finite also for draws without a variance,
// the standard deviation for normal draws). For a
// histogram of measured steps (step_width_log_r: the width in log10 r of each node's bar, a
// step or merged steps) the position within the bar is not known beyond what the bars show, so
// u(r) also holds the resolution term r ln(10) w / sqrt(12), w the bar's width (rectangular
// distribution over the bar, JCGM 100:2008 F.2.2.1; the bar's width, not the spacing of the
// bar middles, which differs on uneven RH schedules), combined with the spread over the draws.
std::vector<ModalRadius> ResolvedModes(const std::vector<double>& log_r,
                                       const std::vector<double>& density,
                                       const std::vector<double>& band_low,
                                       const std::vector<double>& band_high, const DrawTable& draws,
                                       std::size_t edge_nodes,
                                       const std::vector<double>* step_width_log_r,
                                       const PoreOptions& options);

// The assumptions printed beside every distribution: geometry and meniscus, Kelvin radius and
// water properties, film, micropores, pore-water density.
void CommonAssumptions(const PoreRadiusMap& map, ingest::Branch branch, const PoreOptions& options,
                       PoreDistribution* d);

}  // namespace sorbtrace::pores::internal
