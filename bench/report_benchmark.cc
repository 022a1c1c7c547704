// Report stage: one full composition of the invented fixture (7-page datasheet with five
// figures, results JSON, three CSV files) and the one-page summary. Target: < 100 ms for the
// full sheet on one core; the PDF stays below 500 KB (reported as a counter).
#include <benchmark/benchmark.h>

#include "pipeline/report/report.h"
#include "tests/report/report_fixture.h"

namespace {

using sorbtrace::report::ComposeReport;
using sorbtrace::report::LoadTemplate;
using sorbtrace::report::ReportOptions;

void Compose(benchmark::State& state, const char* template_file) {
  const auto fixture = sorbtrace::report::testing::MakeReportFixture();
  const auto layout = LoadTemplate(template_file);
  ReportOptions options;
  options.font_directory = SORBTRACE_DEFAULT_FONT_DIR;
  options.document_date = "2026-10-15";
  size_t pdf_bytes = 0;
  int pages = 0;
  for (auto _ : state) {
    const auto artifacts = ComposeReport(fixture.Inputs(), layout, options);
    pdf_bytes = artifacts.pdf.size();
    pages = artifacts.num_pages;
    benchmark::DoNotOptimize(artifacts.results_json.data());
  }
  state.counters["pdf_kB"] = static_cast<double>(pdf_bytes) / 1024.0;
  state.counters["pages"] = pages;
}

void BM_ComposeFullDatasheet(benchmark::State& state) {
  Compose(state, SORBTRACE_SOURCE_DIR "/templates/full.toml");
}
BENCHMARK(BM_ComposeFullDatasheet)->Unit(benchmark::kMillisecond);

void BM_ComposeSummarySheet(benchmark::State& state) {
  Compose(state, SORBTRACE_SOURCE_DIR "/templates/summary.toml");
}
BENCHMARK(BM_ComposeSummarySheet)->Unit(benchmark::kMillisecond);

}  // namespace

BENCHMARK_MAIN();
