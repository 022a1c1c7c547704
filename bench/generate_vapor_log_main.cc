// generate_vapor_log OUT.csv [ROWS] [STEPS]: writes the synthetic benchmark log (to /tmp,
// never committed).
#include <cstdio>
#include <cstdlib>
#include <exception>

#include "bench/vapor_log_generator.h"

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: %s OUT.csv [ROWS] [STEPS]\n", argv[0]);
    return 2;
  }
  sorbtrace::bench::SyntheticLogOptions options;
  if (argc > 2) options.num_rows = std::atoll(argv[2]);
  if (argc > 3) options.num_steps = std::atoi(argv[3]);
  if (options.num_rows < 1 || options.num_steps < 1) {
    std::fprintf(stderr, "ROWS and STEPS must be positive\n");
    return 2;
  }
  try {
    const auto bytes = sorbtrace::bench::WriteSyntheticVaporLog(argv[1], options);
    std::printf("%s: %lld rows, %llu bytes\n", argv[1], static_cast<long long>(options.num_rows),
                static_cast<unsigned long long>(bytes));
  } catch (const std::exception& error) {
    std::fprintf(stderr, "%s\n", error.what());
    return 1;
  }
  return 0;
}
