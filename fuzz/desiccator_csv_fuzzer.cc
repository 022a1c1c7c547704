#include "fuzz/data_file_fuzzer.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return sorbtrace::fuzz::RunDataFileTarget(
      sorbtrace::fuzz::Bytes(data, size),
      "[[dataset]]\nid = \"d\"\nmethod = \"desiccator\"\nfile = \"data.csv\"\ntemperature_C = "
      "23\n");
}
