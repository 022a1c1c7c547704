// Must not compile (ctest structure_probe_later_stage): a library linking the reduce stage
// includes the public header of the fit stage, a later stage it does not link.
#include "pipeline/fit/fit_stage.h"
