// Must not compile (ctest structure_probe_internal_header): a library linking the pores stage
// includes an internal header of the fit stage, which pores links.
#include "pipeline/fit/grouping.h"
