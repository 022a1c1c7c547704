// One fuzz target per data-file reader; they differ only in the job file that points at the
// fuzzed file. The job declares the specimens used by example_inputs/ and the test fixtures,
// so seeds from there reach deep into the readers. Each input goes through what
// `sorbtrace check` runs (job, stage settings, ingest, equilibria, moisture contents), so the
// stages after the readers also see every odd-but-valid file; check maps only InputError to
// exit code 3, anything else escaping is a finding (exit code 70 in the binary).
#pragma once

#include <string>

#include "fuzz/fuzz_support.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/run/run.h"

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

// The work of `sorbtrace check JOB` (pipeline/run/check_command.cc) without the printing:
// run::PrepareJob, the same stage order as check and make.
inline void CheckJob(const std::filesystem::path& job_path) {
  try {
    run::PrepareJob(job_path, {}, {});
  } catch (const InputError&) {
    // Rejected with a located diagnostic: the expected outcome for bad bytes.
  }
}

inline int RunDataFileTarget(std::string_view bytes, const std::string& dataset_section) {
  WriteFile("data.csv", bytes);
  const std::string job = std::string(
                              "[job]\nid = \"FUZZ\"\nissue_date = \"2026-12-01\"\n"
                              "[material]\nname = \"fuzz\"\n[measurement]\n") +
                          kSpecimens + dataset_section;
  const auto job_path = WriteFile("job.toml", job);
  CheckJob(job_path);
  return 0;
}

}  // namespace sorbtrace::fuzz
