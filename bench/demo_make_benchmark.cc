// Whole-job speed: `sorbtrace make` of each demo job (example_inputs/), the real binary, into a
// temporary output folder, with the bootstrap and Monte Carlo refits on the default
// `[fit] threads = 0` (the cores, at most 2). Target (issue 13): every demo job no slower in
// wall time on the 2-core machine than before the honest-uncertainty work (33ebd4a, quiet
// machine, /usr/bin/time, minimum of 3, wall / user s: excipient 0.29 / 0.27, lime 0.25 / 0.24,
// wood 23/40 degC 0.62 / 0.60, wood vapour 1.40 / 1.36). Main at c2d6bbe (one thread, quiet):
// 0.33 / 0.29, 0.35 / 0.31, 0.74 / 0.70, 0.64 / 0.60. Two threads (this code), measured
// 2026-12-03 only on the shared machine at load average 10-12, where wall times are stretched
// about 5x: excipient 1.61 / 0.36 (before 1.96, main 2.22), lime 1.21 / 0.35 (1.52, 2.10),
// wood 23/40 2.95 / 0.92 (3.47, 4.27), wood vapour 2.63 / 0.75 (10.78, 3.74); threads = 1 and
// 2 take the same user CPU (lime 0.29 / 0.30, wood 23/40 0.76 / 0.76 s). The calling thread
// does 79 % of the lime job's CPU, 68-72 % of the others' (perf samples per thread), which
// puts the quiet-machine wall near 0.24, 0.27, 0.50 and 0.45 s: lime stays above its 0.25 s,
// its extra time since 33ebd4a being in the one-thread report and pore stages. Reports the
// wall time per run (real time, not pinned to one core) and, as counters, the user and system
// CPU seconds the child used (getrusage(RUSAGE_CHILDREN) before and after), since a shared
// machine stretches wall time.
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
