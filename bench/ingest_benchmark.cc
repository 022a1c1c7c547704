// Ingest stage: reading + segmenting a continuous vapour-sorption log.
// Issue target: 2,000,000 rows (~77 MB, 40 steps, one reading per second) read, segmented and
// block-averaged in under 0.6 s on one core with peak memory under 150 MB (aim 0.3 s, 64 MB).
// Compared with a plain fast-cpp-csv-parser loop (parse only, no checks) and with counting
// line ends (what `wc -l` does), the floor for any reader of the file.
//
// The log is generated on first use at $SORBTRACE_BENCH_LOG (default
// /tmp/sorbtrace_bench_vapor_log.csv) and reused while its size is unchanged.
#include <benchmark/benchmark.h>
#include <fcntl.h>
#include <libfccp/csv.h>
#include <unistd.h>

#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <string>
#include <vector>

#include "bench/vapor_log_generator.h"
#include "pipeline/ingest/ingest.h"

namespace {

const std::filesystem::path& LogPath() {
  static const std::filesystem::path path = [] {
    const char* env = std::getenv("SORBTRACE_BENCH_LOG");
    std::filesystem::path p = env != nullptr ? env : "/tmp/sorbtrace_bench_vapor_log.csv";
    std::error_code ec;
    if (!std::filesystem::exists(p, ec)) {
      sorbtrace::bench::WriteSyntheticVaporLog(p, sorbtrace::bench::SyntheticLogOptions{});
    }
    return p;
  }();
  return path;
}

void SetCounters(benchmark::State& state, std::int64_t rows) {
  const auto bytes = static_cast<std::int64_t>(std::filesystem::file_size(LogPath()));
  state.SetBytesProcessed(state.iterations() * bytes);
  state.SetItemsProcessed(state.iterations() * rows);
}

// The ingest reader: parse, validate, segment into steps, block means (10 s).
void BM_IngestReadVaporLog(benchmark::State& state) {
  sorbtrace::ingest::DataSetSpec dataset;
  dataset.id = "bench";
  dataset.method = sorbtrace::ingest::Method::kVaporLog;
  dataset.file = LogPath();
  dataset.specimen_id = "S1";
  sorbtrace::ingest::IngestOptions options;
  std::int64_t rows = 0;
  for (auto _ : state) {
    sorbtrace::ingest::IngestSummary summary;
    const auto log = sorbtrace::ingest::ReadVaporLog(dataset, options, &summary);
    rows = log.num_rows;
    benchmark::DoNotOptimize(log.steps.data());
    state.counters["steps"] = static_cast<double>(log.steps.size());
  }
  SetCounters(state, rows);
}
BENCHMARK(BM_IngestReadVaporLog)->Unit(benchmark::kMillisecond)->MinTime(2.0);

// Reference: fast-cpp-csv-parser reading the five numbers of every row, nothing else.
void BM_FastCppCsvParserReference(benchmark::State& state) {
  std::int64_t rows = 0;
  for (auto _ : state) {
    io::CSVReader<5> in(LogPath().string());
    in.read_header(io::ignore_no_column, "elapsed_s", "set_rh_percent", "measured_rh_percent",
                   "temperature_C", "mass_mg");
    double t = 0, set = 0, rh = 0, temperature = 0, mass = 0, sum = 0;
    rows = 0;
    while (in.read_row(t, set, rh, temperature, mass)) {
      sum += t + set + rh + temperature + mass;
      ++rows;
    }
    benchmark::DoNotOptimize(sum);
  }
  SetCounters(state, rows);
}
BENCHMARK(BM_FastCppCsvParserReference)->Unit(benchmark::kMillisecond)->MinTime(2.0);

// Floor: read the file in 1 MiB chunks and count line ends (what `wc -l` does).
void BM_CountLinesFloor(benchmark::State& state) {
  std::vector<char> buffer(std::size_t{1} << 20);
  std::int64_t lines = 0;
  for (auto _ : state) {
    const int fd = ::open(LogPath().c_str(), O_RDONLY);
    lines = 0;
    ssize_t got = 0;
    while ((got = ::read(fd, buffer.data(), buffer.size())) > 0) {
      const char* p = buffer.data();
      const char* end = p + got;
      while (
          (p = static_cast<const char*>(std::memchr(p, '\n', static_cast<std::size_t>(end - p))))) {
        ++lines;
        ++p;
      }
    }
    ::close(fd);
    benchmark::DoNotOptimize(lines);
  }
  SetCounters(state, lines);
}
BENCHMARK(BM_CountLinesFloor)->Unit(benchmark::kMillisecond)->MinTime(2.0);

}  // namespace

BENCHMARK_MAIN();
