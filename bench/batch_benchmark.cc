// Batch throughput (issue target: 200 demo-sized jobs, datasheets included, in under 60 s on
// the 2-core machine, and a speed-up of at least 1.8 from one to two workers).
// Copies one demo scenario 200 times into a temporary folder and runs the real binary's
// `batch` verb with 1 and 2 workers. Wall time is what counts (UseRealTime).
#include <benchmark/benchmark.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <string>

namespace {

namespace fs = std::filesystem;

constexpr int kNumJobs = 200;

fs::path PrepareJobs() {
  const fs::path root = fs::temp_directory_path() / "sorbtrace_batch_benchmark";
  const fs::path jobs = root / "jobs";
  if (fs::exists(jobs / ("job_" + std::to_string(kNumJobs - 1)))) return root;
  fs::remove_all(root);
  fs::create_directories(jobs);
  const char* scenario_env = std::getenv("SORBTRACE_BATCH_SCENARIO");
  const fs::path scenario = fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs" /
                            (scenario_env != nullptr ? scenario_env : "lime_plaster_desiccator");
  for (int i = 0; i < kNumJobs; ++i) {
    fs::copy(scenario, jobs / ("job_" + std::to_string(i)), fs::copy_options::recursive);
  }
  return root;
}

void BM_Batch200Jobs(benchmark::State& state) {
  const fs::path root = PrepareJobs();
  const std::string command = std::string(SORBTRACE_BINARY) + " batch " + (root / "jobs").string() +
                              " --out " + (root / "out").string() + " -q -j " +
                              std::to_string(state.range(0)) + " > /dev/null 2>&1";
  // Outputs of an earlier build may lack the batch marker, which `batch` then refuses to
  // write into; the benchmark's own output folder is started afresh.
  fs::remove_all(root / "out");
  for (auto _ : state) {
    const int status = std::system(command.c_str());
    if (status != 0) state.SkipWithError("batch failed");
  }
  state.counters["jobs"] = kNumJobs;
  state.counters["workers"] = static_cast<double>(state.range(0));
}
BENCHMARK(BM_Batch200Jobs)->Arg(1)->Arg(2)->Iterations(1)->UseRealTime()->Unit(benchmark::kSecond);

}  // namespace

BENCHMARK_MAIN();
