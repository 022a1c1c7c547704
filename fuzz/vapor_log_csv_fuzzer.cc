#include "fuzz/data_file_fuzzer.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return sorbtrace::fuzz::RunDataFileTarget(
      sorbtrace::fuzz::Bytes(data, size),
      "[[dataset]]\nid = \"v\"\nmethod = \"vapor_log\"\nfile = \"data.csv\"\ntemperature_C = 25\n"
      "specimen = \"P2\"\n");
}
