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

// The volume fractions per decade of measured steps (DecadeFractions of the steps, each spread
// uniformly in log r), corrected for where a step that crosses a decade boundary puts its
// volume, with the uncertainty of that split. The measured points give the cumulative volume
// at the step's nodes only; how the step's volume v divides at the boundary depends on the
// density within the step. The split is read from the shape-preserving piecewise cubic Hermite
// interpolant of the cumulative volume over all step nodes (Fritsch & Carlson 1980; monotone
// where the steps are, so no step's part leaves [0, v]; it follows the steps' densities on
// either side into the step, where the uniform spread ignores them), and the difference d from
// the uniform spread bounds its model error: rectangular, u = |d| / sqrt(3) (JCGM 100:2008
// 4.3.7; the difference of two models of the same quantity as the bound of the model error,
// common practice). The corrected volume moves between the two decades and u / total enters
// both fractions in quadrature with the draws' spread, so DecadeUncertainties must have been
// applied before; a decade with a split term is stated with the sheet's k (coverage_factor
// 0). Measured in tests/pores/stepwise_coverage_test.cc with RH steps of 0.05 (0.19 in log10
// r at the 10 nm boundary, beside an 8 nm mode): the uniform spread alone covered the true
// fractions in 0.80 of the checks (the 1-10 nm fraction 0.023 low on average, sd 0.024); the
// midpoint of the two models 0.89; the interpolant with this u 0.94, bias -0.009, u / sd 1.02.
void SplitAtDecadeBoundaries(const std::vector<double>& step_log_r,
                             const std::vector<double>& step_volume, double total,
                             std::vector<DecadeFraction>* decades);

// Each decade's u(volume fraction) and coverage factor from the draws' fractions: the half-width
// of their central 68.27 % interval and U / u of their probabilistically symmetric interval at
// coverage_probability (DrawStatisticsOf, pipeline/common/draw_statistics.h; the draws' standard
// deviation and 1.96 for normal draws).
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
// nominal curve and in each draw; u(r) and k of the draws' positions (DrawStatisticsOf at
// options.band_confidence_level: percentile-based, finite also for draws without a variance,
// the standard deviation for normal draws). For a
// histogram of measured steps (step_width_log_r: the width in log10 r of each node's bar, a
// step or merged steps; log_r then holds the bars' middles) the vertex is the mode of grouped
// data (modes.cc, HistogramVertex: the neighbours read as bars of the highest bar's width, the
// position kept inside that bar), in the nominal histogram and in each draw; the stepwise
// method replaces that position and its u by the maximum of its smoothed step density within
// the mode's window (stepwise.cc, SmoothedModePositions).
// windows (may be null): for each reported mode, the nodes L and R of its window.
struct ModeWindow {
  std::size_t left = 0;
  std::size_t right = 0;
};
std::vector<ModalRadius> ResolvedModes(
    const std::vector<double>& log_r, const std::vector<double>& density,
    const std::vector<double>& band_low, const std::vector<double>& band_high,
    const DrawTable& draws, std::size_t edge_nodes, const std::vector<double>* step_width_log_r,
    const PoreOptions& options, std::vector<ModeWindow>* windows = nullptr);

// The assumptions printed beside every distribution: geometry and meniscus, Kelvin radius and
// water properties, film, micropores, pore-water density.
void CommonAssumptions(const PoreRadiusMap& map, ingest::Branch branch, const PoreOptions& options,
                       PoreDistribution* d);

}  // namespace sorbtrace::pores::internal
