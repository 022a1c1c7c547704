// Internal to the equilibrate stage: the two equilibrium criteria, on plain arrays so they can
// be tested without files.
#pragma once

#include <span>
#include <string>
#include <vector>

#include "pipeline/equilibrate/equilibrate.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::equilibrate::internal {

// ISO 12571 constant mass evaluated on the weighings of one step (see EquilibrateOptions).
struct ConstantMassResult {
  bool met = false;              // criterion holds at the last weighing of the step
  int first_met_index = -1;      // first weighing at which it held (-1: never)
  int chain_length = 0;          // weighings in the chain ending at the last weighing
  double change_fraction = 0.0;  // (max - min) / m_last over that chain (0 if length < 2)
  double last_change_g = 0.0;    // m_last - m(previous chain weighing), signed
  double chain_span_s = 0.0;     // time from the first to the last chain weighing
};
ConstantMassResult EvaluateConstantMass(std::span<const ingest::Weighing> weighings,
                                        const EquilibrateOptions& options);

// Indices (last weighing first) of the constant-mass chain ending at the last weighing: each
// the latest weighing at least (min_weighing_interval - tolerance) before the previous one;
// at most `length` members.
std::vector<int> ConstantMassChain(std::span<const ingest::Weighing> weighings, int length,
                                   const EquilibrateOptions& options);

// Least-squares slope of mass against time over the blocks [first, last] (inclusive) [g/s].
// Needs at least two blocks with different times (else returns 0).
double BlockSlope_g_per_s(std::span<const ingest::LogBlock> blocks, std::size_t first,
                          std::size_t last);

// Rate criterion on the block means of one log step.
struct RateCriterionResult {
  bool met = false;               // |dm/dt| / m_ref below the limit over the last window
  double first_met_time_s = 0.0;  // block time at which it first held (log time base)
  bool ever_met = false;
  double final_rate_fraction_per_min = 0.0;  // at the step end
  double final_slope_g_per_s = 0.0;
  std::size_t window_first = 0;  // first block of the final window
  bool window_complete = false;  // the step lasted at least one rate window
};
RateCriterionResult EvaluateRateCriterion(std::span<const ingest::LogBlock> blocks,
                                          double step_start_s, double reference_mass_g,
                                          const EquilibrateOptions& options);

}  // namespace sorbtrace::equilibrate::internal
