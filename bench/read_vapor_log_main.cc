// read_vapor_log LOG.csv: reads one vapour-sorption log with the ingest reader and prints its
// steps; for measuring wall time and peak memory of a single run (/usr/bin/time -v).
#include <cstdio>
#include <exception>

#include "pipeline/ingest/ingest.h"

int main(int argc, char** argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: %s LOG.csv\n", argv[0]);
    return 2;
  }
  sorbtrace::ingest::DataSetSpec dataset;
  dataset.id = "log";
  dataset.method = sorbtrace::ingest::Method::kVaporLog;
  dataset.file = argv[1];
  try {
    sorbtrace::ingest::IngestSummary summary;
    const auto log = sorbtrace::ingest::ReadVaporLog(dataset, {}, &summary);
    std::printf("%lld rows, %zu steps, %zu warnings\n", static_cast<long long>(log.num_rows),
                log.steps.size(), summary.warnings.size());
    for (const auto& step : log.steps) {
      std::printf("step %2d  set %.3f  %-10s cycle %d  lines %lld..%lld  blocks %zu\n",
                  step.step_index, step.set_rh_fraction,
                  std::string(sorbtrace::ingest::BranchName(step.branch)).c_str(), step.cycle,
                  static_cast<long long>(step.first_line), static_cast<long long>(step.last_line),
                  step.blocks.size());
    }
  } catch (const std::exception& error) {
    std::fprintf(stderr, "%s\n", error.what());
    return 3;
  }
  return 0;
}
