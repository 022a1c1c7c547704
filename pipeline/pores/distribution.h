// Internal to the pores stage: the two pore-size distribution methods.
//
// Both work on the same state model of a set of cylindrical pores at relative humidity RH:
// pores with r_p <= r(RH) = r_K(RH) + t(RH) are full, wider pores carry a film of thickness
// t(RH) on their walls. Going down in RH from one node (r_hi, t_hi) to the next (r_lo, t_lo),
// the water released is
//   dV = V_p (r_c / r_p)^2 + dt * sum_j A_j (r_j - t_mean) / r_j,   r_c = r_p - t_lo,
// the cores of the pores that empty in the step (mean radius r_p; r_c = r_K + dt for the pore
// at the upper edge) plus the thinning dt = t_hi - t_lo of the film in the pores emptied
// before (A_j = 2 V_j / r_j, the wall area of a cylinder; (r_j - t_mean) / r_j turns it into
// the film's mid surface). Solved for the pore volume:
//   dV_p = (r_p / r_c)^2 (dV - dt * sum_j A_j (r_j - t_mean) / r_j),
// which is the step of Barrett, Joyner & Halenda (1951) J. Am. Chem. Soc. 73, 373 (BJH
// write dV_p = (r_p / (r_K + dt))^2 (dV - dt sum A_p)) with the film's curvature kept.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

#include "fitters/model.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/pores/kelvin_film.h"
#include "pipeline/pores/pores.h"

namespace sorbtrace::pores::internal {

// Pore volumes [m3/kg] between consecutive radii (radius_m ascending, film thickness t_m and
// moisture content u_kg_per_kg at the same nodes).
struct GridVolumes {
  std::vector<double> interval_volume_m3_per_kg;  // size n - 1: pores in [r_k, r_k+1]
  double adsorbed_m3_per_kg = 0.0;  // below radius_m[0] (with the film correction: minus the
                                    // film still held in the resolved pores)
  double total_m3_per_kg = 0.0;     // sum of the intervals
  int negative_steps = 0;           // film-corrected steps < 0 (set to 0 when clamped)
};
GridVolumes PoreVolumesFromIsotherm(const std::vector<double>& radius_m,
                                    const std::vector<double>& t_m,
                                    const std::vector<double>& u_kg_per_kg,
                                    double water_density_kg_per_m3, bool film_correction);

// The parts of the film-corrected step that depend only on the grid (radii, film), computed
// once for all parameter draws.
struct StepGeometry {
  std::vector<double> core_factor;  // (r_p / r_c)^2, 0 where r_c <= 0
  std::vector<double> dt_m;         // t_hi - t_lo
  std::vector<double> t_mean_m;     // (t_hi + t_lo) / 2
  std::vector<double> two_over_r;   // 2 / r_p
  std::vector<double> two_over_r2;  // 2 / r_p^2
  double t0_m = 0.0;                // film at the lowest node
  double inverse_density_m3_per_kg = 0.0;
};
StepGeometry MakeStepGeometry(const std::vector<double>& radius_m, const std::vector<double>& t_m,
                              double water_density_kg_per_m3);
// As PoreVolumesFromIsotherm with film_correction = true, on a precomputed geometry; writes
// into *out (resized) to avoid allocations in loops. clamp_negative: a step whose pore volume
// comes out < 0 is set to 0 (the model method, where it means the model falls faster than the
// film thins); false carries it (the stepwise method: clamping the scatter of measured points
// from below biases the volume up).
void FilmCorrectedVolumes(const StepGeometry& geometry, const std::vector<double>& u_kg_per_kg,
                          GridVolumes* out, bool clamp_negative = true);

// A fitted isotherm u(RH) with what is needed for its band.
struct ModelCurve {
  const fitters::Model* model = nullptr;
  std::string name;
  std::vector<double> parameters;
  Eigen::MatrixXd covariance;  // may be empty: no band
  // Refits of resampled data from the fit stage, preferred when present: its JCGM 101 Monte
  // Carlo draws (the stated input uncertainties propagated through the fit), else its
  // bootstrap draws; resampled_source names them for the band's caption.
  std::vector<std::vector<double>> resampled_draws;
  std::string resampled_source = "bootstrap draws";
  fitters::ModelContext context;
};

// Method "model": on a log-radius grid from options.min_radius_m to the radius resolved by
// rh_top_fraction (or options.max_radius_m), RH(r) from the map, u(RH(r)) from the model.
PoreDistribution ModelPoreDistribution(const ModelCurve& curve, ingest::Branch branch,
                                       double rh_top_fraction, const PoreRadiusMap& map,
                                       const PoreOptions& options);

// A part of a measured point's uncertainty that it shares with other points of the same
// isotherm (drawn once per draw for all of them): e.g. the dry mass of the specimen, common to
// every step it was weighed at, or the temperature error of a data set acting on every RH.
struct CommonPart {
  int source = 0;                   // index into StepwisePoreDistribution's common_sources
  double moisture_kg_per_kg = 0.0;  // signed contribution c_i u(x_i) to the moisture content
  double rh_fraction = 0.0;         // signed contribution to the RH
};

// One measured isotherm point. u_* are the combined standard uncertainties (all parts); the
// parts in `common` are included in them, the rest is independent from point to point.
struct MeasuredPoint {
  MeasuredPoint() = default;
  MeasuredPoint(double rh, double moisture, double u_moisture)
      : rh_fraction(rh), moisture_kg_per_kg(moisture), u_moisture_kg_per_kg(u_moisture) {}

  double rh_fraction = 0.0;
  double moisture_kg_per_kg = 0.0;
  double u_moisture_kg_per_kg = 0.0;  // standard; 0 = exact
  double u_rh_fraction = 0.0;         // standard; 0 = exact
  std::vector<CommonPart> common;
};

// Method "stepwise" (BJH-type): from the measured points, high RH down to
// options.min_radius_m, in five parts.
// 1. Steps. Points in 0 < RH < 1 sorted by RH (equal RH averaged); nodes from the RH of
//    options.min_radius_m (moisture content interpolated linearly in RH) up to the highest
//    point (or options.max_radius_m); the film-corrected step of distribution's header gives
//    the pore volume of each step. Negative increments are carried, not set to 0: the sum of
//    the increments is then the film-corrected difference of the end points, unbiased by the
//    scatter of the points between them.
// 2. Draws (JCGM 101:2008, 6.4.7 / 7.2): options.band_draws times, each point's RH and moisture
//    content are drawn from normal distributions with their stated standard uncertainties (the
//    independent parts per point; each common part once per draw for every point that shares
//    it; an RH draw outside (0, 1) is drawn again), the steps are rebuilt at the drawn RH
//    (Kelvin radius and film of the drawn humidity) and the draw's cumulative volume is read at
//    the nominal nodes: the value of the draw's node nearest to the nominal node, moved to it
//    along the nominal profile (the drawn point stands for the true state of the measured one;
//    reading the draw's own polyline instead flattened its slopes and stated the steps' u
//    13-16 % low). Each step's increment thus has draws; every reported uncertainty is a
//    standard deviation (or percentile band) over them.
// 3. Regularisation. A step (or block of merged steps) is significant when the percentile
//    interval of its increment at options.band_confidence_level excludes 0. The least
//    significant block that is not significant is merged with the neighbouring block whose
//    density dV/dlog r it is least distinguishable from, provided the two are not
//    distinguishable (the percentile interval of the difference of their densities over the
//    draws contains 0, at the family-wise level: each of the num_steps - 1 boundaries is
//    tested with tail probability (1 - options.band_confidence_level) / 2 / (num_steps - 1),
//    Bonferroni; per boundary at 95 % about one zig-zag of noise per isotherm survived as a
//    narrow spike that became a mode; with 1000 draws and 24 steps each tail is read between
//    its second and third most extreme draw, Hyndman & Fan type 7); repeated until every remaining
//    insignificant block differs from all its neighbours. Then neighbouring bars whose
//    densities cannot be told apart (same test) are merged, least distinguishable pair first,
//    until every boundary is significant. A
//    merged block spreads its volume uniformly in log r over its width (a
//    histogram bar); scatter that would zig-zag from step to step merges, a gap or a low tail
//    that differs from its neighbours is kept (and not smeared with their volume).
// 4. Modes: which modes are resolved is ResolvedModes' (modes.h), the rule of the model method,
//    on the bars. Each is reported at the maximum, between the middles of its two valley bars,
//    of the density of the measured steps smoothed with a fourth-order kernel of the width of
//    the mode's bar (stepwise.cc, SmoothedModePositions): a smooth function of the steps, so
//    the same estimator on every draw's steps gives its noise term; with rectangular terms for
//    the smoothing (the change when the kernel's width is halved) and for the position within
//    the measured step that holds the mode.
// 5. Total volume and band from the bars, decade fractions from the measured steps (a wide bar
//    would move volume across a decade boundary), each with its spread over the draws; a step
//    that crosses a decade boundary is split there by the shape-preserving cubic of the
//    cumulative volume, the difference from a uniform spread in log r the bound of that
//    split's error (SplitAtDecadeBoundaries, modes.h).
// common_sources names the CommonPart sources (may be empty).
PoreDistribution StepwisePoreDistribution(const std::vector<MeasuredPoint>& points,
                                          ingest::Branch branch, const PoreRadiusMap& map,
                                          const PoreOptions& options,
                                          const std::vector<std::string>& common_sources = {});

}  // namespace sorbtrace::pores::internal
