// Page layout of the demo datasheets, on the real binary, read as a reader sees the pages
// (pdftoppm for the ink, pdftotext for the lines):
//  - full template: no page before the last is more than 45 % empty (the content area below
//    its lowest ink), and no page carries fewer than kMinContentLines lines of its own
//    besides the running header and footer (no lone bullet, line or table row);
//  - summary template (templates/summary.toml): one page for every demo job (pdfinfo Pages),
//    nothing set past the bottom of the content area (every word above the footer rule except
//    the footer's own), and the sign-off block on the page.
#include <gtest/gtest.h>

#include <algorithm>
#include <filesystem>
#include <regex>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "tests/common/e2e_support.h"
#include "tests/report/pdf_tools.h"

namespace sorbtrace::report {
namespace {

namespace fs = std::filesystem;

// Rendering and page geometry of the test [pt, A4 = 595.276 x 841.890 pt, ISO 216].
constexpr int kDpi = 30;
constexpr double kA4Height_pt = 841.890;
constexpr double kPointsPerMm = 72.0 / 25.4;
// Document's running header and footer bands (pipeline/report/document.cc).
constexpr double kHeaderBand_pt = 34.0;
constexpr double kFooterBand_pt = 22.0;
// A page (other than the last) may leave at most this share of its content area empty.
constexpr double kMaxEmptyShare = 0.45;
constexpr int kMinContentLines = 3;
// Words of the footer line (its two texts, a report number of up to three words).
constexpr int kMaxFooterWords = 16;

using e2e::ReadBytes;

// margin_mm of a template file (its [template] table), by a line scan.
double TemplateMargin_mm(const fs::path& file) {
  static const std::regex margin(R"(^\s*margin_mm\s*=\s*([0-9.]+))");
  std::istringstream lines(ReadBytes(file));
  std::string line;
  std::smatch m;
  while (std::getline(lines, line)) {
    if (std::regex_search(line, m, margin)) return std::stod(m[1]);
  }
  return 0.0;
}

std::vector<fs::path> DemoFolders() {
  std::vector<fs::path> folders;
  for (const fs::path& job : e2e::DemoJobFiles()) folders.push_back(job.parent_path());
  return folders;
}

// The non-empty lines of one page (pdftotext -layout), header and footer left out: the
// header's two lines are the first two, the footer's the last one.
std::vector<std::string> ContentLines(const fs::path& pdf, int page) {
  const std::string text = e2e::PdfPageText(pdf, page);
  std::vector<std::string> lines;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) {
    if (line.find_first_not_of(" \f\t") != std::string::npos) lines.push_back(line);
  }
  if (lines.size() < 3) return {};
  return {lines.begin() + 2, lines.end() - 1};
}

class LayoutE2eTest : public ::testing::Test {
 protected:
  void SetUp() override { root_ = e2e::FreshTestDir("layout_e2e"); }
  void TearDown() override { fs::remove_all(root_); }
  fs::path root_;
};

TEST_F(LayoutE2eTest, FullSheetsHaveNoNearEmptyPagesAndNoLoneLines) {
  const std::vector<fs::path> demos = DemoFolders();
  ASSERT_GE(demos.size(), 4u);
  const double margin_pt =
      TemplateMargin_mm(fs::path(SORBTRACE_SOURCE_DIR) / "templates/full.toml") * kPointsPerMm;
  ASSERT_GT(margin_pt, 0.0);
  for (const fs::path& demo : demos) {
    SCOPED_TRACE(demo.filename().string());
    const fs::path out = root_ / demo.filename();
    const e2e::Outcome made = e2e::Sorbtrace("make '" + (demo / "job.toml").string() + "' --out '" +
                                             out.string() + "' -q");
    ASSERT_EQ(made.exit_code, 0) << made.output;
    const fs::path pdf = out / "datasheet.pdf";
    const std::vector<testing::GreyImage> pages = testing::RenderPages(pdf, kDpi);
    ASSERT_EQ(static_cast<int>(pages.size()), e2e::PdfPageCount(pdf));
    for (size_t i = 0; i < pages.size(); ++i) {
      const int page = static_cast<int>(i) + 1;
      const testing::GreyImage& p = pages[i];
      const double px_per_pt = p.height / kA4Height_pt;
      const int top = static_cast<int>((margin_pt + kHeaderBand_pt) * px_per_pt) + 1;
      const int bottom = p.height - static_cast<int>((margin_pt + kFooterBand_pt) * px_per_pt) - 1;
      ASSERT_LT(top, bottom);
      int lowest_ink = top;
      for (int y = top; y < bottom; ++y) {
        if (p.InkFraction(0, y, p.width, y + 1, 200) > 0.0) lowest_ink = y;
      }
      const double empty = static_cast<double>(bottom - lowest_ink) / (bottom - top);
      if (i + 1 < pages.size()) {
        EXPECT_LE(empty, kMaxEmptyShare) << "page " << page << " of " << pages.size();
      }
      EXPECT_GE(static_cast<int>(ContentLines(pdf, page).size()), kMinContentLines)
          << "page " << page;
    }
  }
}

TEST_F(LayoutE2eTest, SummaryTemplateFitsOnePageForEveryDemo) {
  const fs::path summary = fs::path(SORBTRACE_SOURCE_DIR) / "templates/summary.toml";
  const double margin_pt = TemplateMargin_mm(summary) * kPointsPerMm;
  ASSERT_GT(margin_pt, 0.0);
  // Words may end at the content area's bottom (the footer band's top) and not below it.
  const double content_bottom_from_top = kA4Height_pt - margin_pt - kFooterBand_pt;
  for (const fs::path& demo : DemoFolders()) {
    SCOPED_TRACE(demo.filename().string());
    // The demo copied with `template = "summary"` (its data files beside it, as in the demo).
    const fs::path job_folder = root_ / demo.filename();
    fs::copy(demo, job_folder, fs::copy_options::recursive);
    const std::string job = ReadBytes(job_folder / "job.toml");
    const std::string changed = std::regex_replace(job, std::regex(R"re(template\s*=\s*"full")re"),
                                                   "template = \"summary\"");
    ASSERT_NE(changed, job) << "the demo job names the full template";
    e2e::WriteBytes(job_folder / "job.toml", changed);
    const fs::path out = root_ / (demo.filename().string() + "_out");
    const e2e::Outcome made = e2e::Sorbtrace("make '" + (job_folder / "job.toml").string() +
                                             "' --out '" + out.string() + "' -q");
    ASSERT_EQ(made.exit_code, 0) << made.output;
    const fs::path pdf = out / "datasheet.pdf";
    EXPECT_EQ(e2e::PdfPageCount(pdf), 1);
    // Every word (pdftotext -bbox: yMax from the top of the page) ends above the footer band,
    // except the footer's own words.
    const std::string bbox =
        e2e::Shell("pdftotext -bbox -enc UTF-8 '" + pdf.string() + "' - 2>&1").output;
    static const std::regex word(
        R"re(<word xMin="[^"]+" yMin="([^"]+)" xMax="[^"]+" yMax="([^"]+)">([^<]*)</word>)re");
    int words = 0;
    std::string footer;  // the words below the content area: the footer line only
    int footer_words = 0;
    for (auto it = std::sregex_iterator(bbox.begin(), bbox.end(), word);
         it != std::sregex_iterator(); ++it) {
      const double y_min = std::stod((*it)[1]);
      const double y_max = std::stod((*it)[2]);
      ++words;
      if (y_min > content_bottom_from_top) {
        footer += (*it)[3].str() + " ";
        ++footer_words;
        continue;
      }
      EXPECT_LE(y_max, content_bottom_from_top + 1.0)
          << "\"" << (*it)[3] << "\" runs past the content area";
    }
    EXPECT_GT(words, 100);
    // "Results apply to the specimens tested." and "Report <id> · page 1 of 1": a line set
    // below the content area would add its words here.
    EXPECT_NE(footer.find("page 1 of 1"), std::string::npos) << footer;
    EXPECT_LE(footer_words, kMaxFooterWords) << footer;
    const std::string text = testing::CollapseSpaces(
        e2e::Shell("pdftotext -enc UTF-8 '" + pdf.string() + "' - 2>&1").output);
    EXPECT_NE(text.find("Approved for issue"), std::string::npos);
    EXPECT_NE(text.find("Cautions"), std::string::npos);
  }
}

}  // namespace
}  // namespace sorbtrace::report
