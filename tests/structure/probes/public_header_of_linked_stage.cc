// Must compile (ctest structure_probe_public_header): a library linking the reduce stage
// includes its public header, so the two probes above fail for the rule and not the set-up.
#include "pipeline/reduce/reduce.h"

namespace sorbtrace::structure_probe {
int NumPoints(const reduce::ReducedIsotherms& reduced) {
  return static_cast<int>(reduced.points.size());
}
}  // namespace sorbtrace::structure_probe
