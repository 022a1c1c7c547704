// results.json as `sorbtrace verify` reads it (run::ReadResultsFile: bounded read, nesting scan,
// JSON parser, type checks of the fields verify looks up), then what verify does with it before
// re-running the job: the recorded inputs are looked up and every leaf is compared
// (run::CompareResults walks the whole tree, here against itself).
#include <nlohmann/json.hpp>

#include "fuzz/fuzz_support.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/run/audit.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace sorbtrace;
  const auto path = fuzz::WriteFile("results.json", fuzz::Bytes(data, size));
  try {
    const nlohmann::json results = run::ReadResultsFile(path);
    (void)results["settings"]["job_file"].get<std::string>();
    for (const auto& input : results["inputs"]) {
      (void)input.value("role", "");
      (void)input.value("path", "");
      (void)input.value("sha256", "");
    }
    (void)run::CompareResults(results, results);
  } catch (const InputError&) {
    // Refused with a diagnostic naming the file: the expected outcome for bad bytes.
  }
  return 0;
}
