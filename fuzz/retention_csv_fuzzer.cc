#include "fuzz/data_file_fuzzer.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  // A valid one-step desiccator file keeps the job complete; the retention file is fuzzed.
  sorbtrace::fuzz::WriteFile("d.csv",
                             "specimen,step,atmosphere,branch,weighed_at,mass_g\n"
                             "P1,1,NaCl,adsorption,2026-09-01T09:00,24.5\n"
                             "P1,1,NaCl,adsorption,2026-09-03T09:00,24.6\n");
  return sorbtrace::fuzz::RunDataFileTarget(
      sorbtrace::fuzz::Bytes(data, size),
      "[[dataset]]\nid = \"d\"\nmethod = \"desiccator\"\nfile = \"d.csv\"\ntemperature_C = 23\n"
      "[retention]\nfile = \"data.csv\"\ntemperature_C = 20\n");
}
