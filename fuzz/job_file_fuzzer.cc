// The job file: ingest's sections and the stage settings of the run stage.
#include "fuzz/fuzz_support.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/run/run.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace sorbtrace;
  fuzz::WriteFile("data.csv",
                  "specimen,step,atmosphere,branch,weighed_at,mass_g\n"
                  "P1,1,NaCl,adsorption,2026-09-01T09:00,24.5\n"
                  "P1,1,NaCl,adsorption,2026-09-03T09:00,24.6\n");
  const auto job_path = fuzz::WriteFile("job.toml", fuzz::Bytes(data, size));
  try {
    const ingest::JobSpec spec = ingest::LoadJobSpec(job_path);
    (void)run::LoadJobSettings(job_path, spec, fuzz::WorkDir() / "out");
  } catch (const InputError&) {
  }
  return 0;
}
