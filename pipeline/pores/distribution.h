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
  int negative_steps = 0;           // film-corrected steps < 0, set to 0
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
// into *out (resized) to avoid allocations in loops.
void FilmCorrectedVolumes(const StepGeometry& geometry, const std::vector<double>& u_kg_per_kg,
                          GridVolumes* out);

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

// One measured isotherm point.
struct MeasuredPoint {
  double rh_fraction = 0.0;
  double moisture_kg_per_kg = 0.0;
  double u_moisture_kg_per_kg = 0.0;  // standard; 0 = exact
};

// Method "stepwise": from the measured points, high RH down to options.min_radius_m.
PoreDistribution StepwisePoreDistribution(const std::vector<MeasuredPoint>& points,
                                          ingest::Branch branch, const PoreRadiusMap& map,
                                          const PoreOptions& options);

}  // namespace sorbtrace::pores::internal
