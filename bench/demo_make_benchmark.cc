// Whole-job speed: `sorbtrace make` of each demo job (example_inputs/), the real binary, into a
// temporary output folder. Target (issue 13): the four demo jobs together no slower than before
// the honest-uncertainty work, 2.66 s user CPU on the 2-core machine (excipient 0.28 s, lime
// 0.25 s, wood 23/40 degC 0.65 s, wood vapour 1.48 s; measured with /usr/bin/time). Reports the
// wall time per run and, as counters, the user and system CPU seconds the child used
// (getrusage(RUSAGE_CHILDREN) before and after), since a shared machine stretches wall time.
#include <benchmark/benchmark.h>
#include <sys/resource.h>

#include <cstdlib>
#include <filesystem>
#include <string>

namespace {

namespace fs = std::filesystem;

double ChildrenSeconds(bool user) {
  rusage usage{};
  getrusage(RUSAGE_CHILDREN, &usage);
  const timeval& t = user ? usage.ru_utime : usage.ru_stime;
  return static_cast<double>(t.tv_sec) + 1e-6 * static_cast<double>(t.tv_usec);
}

void BM_MakeDemoJob(benchmark::State& state, const char* scenario) {
  const fs::path job = fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs" / scenario / "job.toml";
  const fs::path out =
      fs::temp_directory_path() / (std::string("sorbtrace_demo_make_benchmark_") + scenario);
  // The benchmark's own output folder (sorbtrace replaces it only when it wrote it).
  fs::remove_all(out);
  const std::string command = std::string(SORBTRACE_BINARY) + " make " + job.string() + " --out " +
                              out.string() + " -q > /dev/null 2>&1";
  const double user_before = ChildrenSeconds(true);
  const double system_before = ChildrenSeconds(false);
  for (auto _ : state) {
    if (std::system(command.c_str()) != 0) state.SkipWithError("make failed");
  }
  const double runs = static_cast<double>(state.iterations());
  state.counters["user_s"] = (ChildrenSeconds(true) - user_before) / runs;
  state.counters["system_s"] = (ChildrenSeconds(false) - system_before) / runs;
}
BENCHMARK_CAPTURE(BM_MakeDemoJob, excipient, "excipient_powder_25C")
    ->Iterations(3)
    ->UseRealTime()
    ->Unit(benchmark::kSecond);
BENCHMARK_CAPTURE(BM_MakeDemoJob, lime, "lime_plaster_desiccator")
    ->Iterations(3)
    ->UseRealTime()
    ->Unit(benchmark::kSecond);
BENCHMARK_CAPTURE(BM_MakeDemoJob, wood_23_40, "wood_fibre_board_23C_40C")
    ->Iterations(3)
    ->UseRealTime()
    ->Unit(benchmark::kSecond);
BENCHMARK_CAPTURE(BM_MakeDemoJob, wood_vapour, "wood_fibre_board_vapour")
    ->Iterations(3)
    ->UseRealTime()
    ->Unit(benchmark::kSecond);

}  // namespace

BENCHMARK_MAIN();
