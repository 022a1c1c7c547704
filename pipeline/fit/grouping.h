// Internal to the fit stage: sorting the reduced points into fit groups (one branch at one
// temperature) and the observations each model is fitted to.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/fit/fit_stage.h"
#include "pipeline/reduce/reduce.h"

namespace sorbtrace::fit::internal {

// Data sets (and retention specimens) whose mean temperatures lie within this span of the
// coldest member of a cluster are fitted together. Common practice: the climate tolerance of
// sorption tests is +-0.5 K (ISO 12571:2021, from memory), so such data sets were meant to be
// taken at one nominal temperature.
inline constexpr double kTemperatureMergeSpan_K = 0.5;

// Sorts the non-drying isotherm points (and, if options.include_retention_points, the
// retention points) of `reduced` into groups, ordered by temperature, then adsorption before
// desorption. Every point of ReducedIsotherms::points is fitted: the reduce stage has already
// left out the points not at equilibrium unless told to keep them (then they are flagged, and a
// warning here counts them per group). Several cycles of one branch are fitted together as one
// isotherm, with a factor per cycle (CycleFactors) for what the cycles do not share.
// Points that cannot be fitted (non-finite values, RH outside [0, 1]) are left out with a
// warning; non-positive moisture uncertainties are replaced (see grouping.cc) with a warning.
std::vector<FitGroup> BuildGroups(const reduce::ReducedIsotherms& reduced,
                                  const FitStageOptions& options,
                                  std::vector<Diagnostic>* warnings);

// The specimen factors of a group (fit_stage.h, SpecimenFactor) from the reduce stage's
// specimen terms: one per set of specimens of one data set that take part in the same points.
std::vector<SpecimenFactor> SpecimenFactors(const reduce::ReducedIsotherms& reduced,
                                            const FitGroup& group);

// The cycle factors of a group. A log with several adsorption/desorption cycles measures the
// same steps again, but not independently: a cycle differs from the next as a whole (a
// drifted balance zero, a specimen that has not returned to its state, conditioning of the
// material), an error common to every step of that cycle. It is treated as the specimen term
// is (reduce.h, fit_stage.h SpecimenFactor), with the cycle as the factor: per data set whose
// points in the group come from C >= 2 cycles, over the steps (by label) present in every
// cycle, on the log scale y_ci = ln u_ci with v_ci = (u_independent / u)^2,
//   w_i = 1 / mean_c v_ci,  W = sum_i w_i,  c_c = sum_i w_i (y_ci - mean_c y_ci) / W,
//   MS_C = sum_c c_c^2 / (C - 1),  E[MS_C] = sigma_c^2 + 1 / W  (the evaluated independent
//   parts taken as known, Type B, as the weights do),
//   sigma_c^2 = MS_C - 1 / W,  nu_c = sigma_c^4 / (MS_C^2 / (C - 1))  (Satterthwaite 1946);
// one factor per cycle (SpecimenFactor::is_cycle, id "cycle N"), u = sigma_c, weight 1 on every
// point of that cycle. None when sigma_c^2 <= 0 (the cycles agree within their uncertainties:
// they are then replicates in effect) or no step was measured in every cycle. With two
// cycles nu_c <= 1: a parameter dominated by the cycle term gets a large coverage factor, as
// a difference of two cycles supports.
std::vector<SpecimenFactor> CycleFactors(const reduce::ReducedIsotherms& reduced,
                                         const FitGroup& group);

// True for the retention-curve models (van Genuchten, Durner), which may also use the
// retention points of a group.
bool IsRetentionModel(const std::string& model_name);

// Indices into group.observations of the points a model is fitted to: retention points only
// for retention models, and only points with x_min <= x[0] <= x_max.
std::vector<int> SelectObservations(const FitGroup& group, bool retention_model, double x_min,
                                    double x_max);

// A 64-bit state for a random stream, a pure function of its inputs (SplitMix64 mixing:
// G. L. Steele, D. Lea, C. H. Flood, "Fast splittable pseudorandom number generators",
// OOPSLA 2014; constants from S. Vigna's reference splitmix64.c, from memory).
std::uint64_t StreamState(std::uint64_t base, int group_index, const std::string& model_name,
                          int purpose);

}  // namespace sorbtrace::fit::internal
