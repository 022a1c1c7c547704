// The job file: ingest's sections and the stage settings of the run stage, then the data file
// it points at (a valid desiccator file) through the rest of `check`.
#include "fuzz/data_file_fuzzer.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace sorbtrace;
  fuzz::WriteFile("data.csv",
                  "specimen,step,atmosphere,branch,weighed_at,mass_g\n"
                  "P1,1,NaCl,adsorption,2026-09-01T09:00,24.5\n"
                  "P1,1,NaCl,adsorption,2026-09-03T09:00,24.6\n");
  fuzz::CheckJob(fuzz::WriteFile("job.toml", fuzz::Bytes(data, size)));
  return 0;
}
