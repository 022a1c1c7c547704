// One fuzz target per data-file reader; they differ only in the job file that points at the
// fuzzed file. The job declares the specimens used by example_inputs/ and the test fixtures,
// so seeds from there reach deep into the readers.
#pragma once

#include <string>

#include "fuzz/fuzz_support.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::fuzz {

inline const char* kSpecimens = R"(
[[specimen]]
id = "P1"
dry_mass_g = 24.0
[[specimen]]
id = "P2"
dry_mass_g = 30.0
[[specimen]]
id = "P3"
dry_mass_g = 20.0
[[specimen]]
id = "S1"
dry_mass_g = 10.0
[[specimen]]
id = "S2"
dry_mass_g = 10.0
[[specimen]]
id = "S3"
dry_mass_g = 10.0
)";

inline int RunDataFileTarget(std::string_view bytes, const std::string& dataset_section) {
  WriteFile("data.csv", bytes);
  const std::string job = std::string(
                              "[job]\nid = \"FUZZ\"\nissue_date = \"2026-12-01\"\n"
                              "[material]\nname = \"fuzz\"\n[measurement]\n") +
                          kSpecimens + dataset_section;
  const auto job_path = WriteFile("job.toml", job);
  try {
    const ingest::JobSpec spec = ingest::LoadJobSpec(job_path);
    (void)ingest::Ingest(spec, ingest::IngestOptions{});
  } catch (const InputError&) {
    // Rejected with a located diagnostic: the expected outcome for bad bytes.
  }
  return 0;
}

}  // namespace sorbtrace::fuzz
