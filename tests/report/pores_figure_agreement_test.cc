// The pore-size figure and the pore table of every demo job say the same thing. The stages
// run in process on example_inputs/*/job.toml (run::PrepareJob, the fit and pores stages,
// report::BuildSheet, as `make` does); the test reads the Sheet the renderers read: the
// figure "pores" (its density and cumulative panels, one series per distribution, in
// distribution order) and the table "pore_quantities" (cells keyed by the headline
// quantities). For every distribution:
//  - the cumulative curve ends at the table's Kelvin-resolved pore volume (the stepwise curve
//    once ended half a bar short: 22.4 of 43.2 mm³/g on the lime demo, because it was drawn
//    through the bars' middles);
//  - the table cell prints that quantity exactly;
//  - each reported modal radius lies on the plotted maximum of the density: within the
//    radius span of the highest plotted level (a stepwise bar, or one grid point) widened by
//    the mode's expanded uncertainty and one grid step of the curve.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <string>
#include <variant>
#include <vector>

#include "pipeline/fit/fit_stage.h"
#include "pipeline/pores/pores.h"
#include "pipeline/report/sheet.h"
#include "pipeline/run/run.h"
#include "tests/common/e2e_support.h"

namespace sorbtrace::report::internal {
namespace {

namespace fs = std::filesystem;

using e2e::DemoJobFiles;

const FigureBlock* FindFigure(const Sheet& sheet, const std::string& name) {
  for (const Section& section : sheet.sections) {
    for (const Block& block : section.blocks) {
      const auto* f = std::get_if<FigureBlock>(&block);
      if (f != nullptr && f->name == name) return f;
    }
  }
  return nullptr;
}

const TableBlock* FindTable(const Sheet& sheet, const std::string& name) {
  for (const Section& section : sheet.sections) {
    for (const Block& block : section.blocks) {
      const auto* t = std::get_if<TableBlock>(&block);
      if (t != nullptr && t->name == name) return t;
    }
  }
  return nullptr;
}

const Quantity* FindQuantity(const Sheet& sheet, const std::string& key) {
  for (const Quantity& q : sheet.headline) {
    if (q.key == key) return &q;
  }
  return nullptr;
}

// The text of the table cell that prints quantity `key` ("" when no cell does).
std::string CellText(const TableBlock& table, const std::string& key) {
  for (const auto& row : table.rows) {
    for (const Cell& cell : row) {
      if (cell.key == key) return cell.text;
    }
  }
  return {};
}

TEST(PoresFigureAgreementTest, CurvesEndAtTheTableVolumeAndPeakAtTheTableMode) {
  const std::vector<fs::path> jobs = DemoJobFiles();
  ASSERT_GE(jobs.size(), 4u) << "the four demo scenarios of example_inputs/";
  int distributions_checked = 0;
  int modes_checked = 0;
  for (const fs::path& job : jobs) {
    SCOPED_TRACE(job.parent_path().filename().string());
    const fs::path out = fs::temp_directory_path() / "sorbtrace_pores_agreement";
    const run::PreparedJob prepared = run::PrepareJob(job, out, {});
    const fit::IsothermFits fits = fit::FitIsotherms(prepared.reduced, prepared.settings.fit);
    const pores::PoreAnalysis pa =
        pores::AnalysePores(prepared.reduced, fits, prepared.settings.pores);
    ReportInputs inputs;
    inputs.ingested = &prepared.ingested;
    inputs.equilibria = &prepared.equilibria;
    inputs.reduced = &prepared.reduced;
    inputs.fits = &fits;
    inputs.pores = &pa;
    inputs.effective_settings = prepared.settings.effective;
    const Sheet sheet = BuildSheet(inputs, prepared.settings.layout);

    if (pa.distributions.empty()) continue;
    const FigureBlock* figure = FindFigure(sheet, "pores");
    const TableBlock* table = FindTable(sheet, "pore_quantities");
    ASSERT_NE(figure, nullptr);
    ASSERT_NE(table, nullptr);
    ASSERT_EQ(figure->panels.size(), 2u);
    const plot::Figure& density = figure->panels[0];
    const plot::Figure& cumulative = figure->panels[1];
    ASSERT_EQ(density.series.size(), pa.distributions.size());
    ASSERT_EQ(cumulative.series.size(), pa.distributions.size());

    for (size_t d = 0; d < pa.distributions.size(); ++d) {
      const pores::PoreDistribution& pd = pa.distributions[d];
      const std::string tag = pd.method + "_" + BranchTemperatureKey(pd.branch, pd.temperature_K);
      SCOPED_TRACE(tag);
      const Quantity* volume = FindQuantity(sheet, "pore_volume_" + tag);
      ASSERT_NE(volume, nullptr);
      EXPECT_EQ(CellText(*table, volume->key), volume->text);
      // The curve rises with the radius; its end is the total (mm³/g, as plotted).
      const plot::Series& c = cumulative.series[d];
      ASSERT_FALSE(c.y.empty());
      const auto last = std::max_element(c.x.begin(), c.x.end()) - c.x.begin();
      EXPECT_NEAR(c.y[static_cast<size_t>(last)], volume->display_value,
                  1e-9 * std::abs(volume->display_value))
          << "cumulative curve end vs the table's pore volume";
      ++distributions_checked;

      // The modes against the plotted maximum of the density.
      const plot::Series& s = density.series[d];
      ASSERT_FALSE(s.y.empty());
      const double peak = *std::max_element(s.y.begin(), s.y.end());
      double peak_low = INFINITY, peak_high = 0.0;
      for (size_t i = 0; i < s.y.size(); ++i) {
        if (s.y[i] == peak) {
          peak_low = std::min(peak_low, s.x[i]);
          peak_high = std::max(peak_high, s.x[i]);
        }
      }
      // One grid step of the curve in log10 r (its widest spacing).
      double step = 0.0;
      for (size_t i = 1; i < s.x.size(); ++i) {
        if (s.x[i] > s.x[i - 1]) step = std::max(step, std::log10(s.x[i] / s.x[i - 1]));
      }
      if (pd.modes.size() != 1) continue;  // several modes: the first need not be the highest
      const Quantity* mode = FindQuantity(sheet, "modal_radius_" + tag + "_1");
      ASSERT_NE(mode, nullptr);
      EXPECT_EQ(CellText(*table, mode->key), mode->text);
      const double r = mode->display_value;
      const double u = mode->display_expanded_uncertainty;
      EXPECT_GE(std::log10(r + u), std::log10(peak_low) - step)
          << "mode " << r << " nm, plotted peak from " << peak_low << " to " << peak_high;
      EXPECT_LE(std::log10(std::max(r - u, 1e-12)), std::log10(peak_high) + step)
          << "mode " << r << " nm, plotted peak from " << peak_low << " to " << peak_high;
      ++modes_checked;
    }
  }
  // The demos hold model-based and stepwise distributions (adsorption and desorption) and at
  // least one resolved mode; only the lime plaster is a porous mineral, the wood-fibre and
  // excipient jobs omit the pore section (material_class).
  EXPECT_GE(distributions_checked, 4);
  EXPECT_GE(modes_checked, 1);
}

}  // namespace
}  // namespace sorbtrace::report::internal
