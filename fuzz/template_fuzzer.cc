// Report templates.
#include "fuzz/fuzz_support.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/report/report.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace sorbtrace;
  const auto path = fuzz::WriteFile("template.toml", fuzz::Bytes(data, size));
  try {
    (void)report::LoadTemplate(path);
  } catch (const InputError&) {
  }
  return 0;
}
