// End-to-end tests of the rendered outputs against each other and of the HTML report in a
// real browser, on the real binary and every demo job:
//  - the PDF, the HTML report, results.json and the CSV companions agree cell by cell:
//    every table of the sheet (results.json "sheet") is the HTML table of the same name as
//    Chromium's DOM holds it; every number cell (numeric column or a cell naming a
//    Quantity) is in the PDF's text (pdftotext); every headline value of results.json is
//    the HTML cell that names it; the "as printed" RH and moisture of every combined point
//    in equilibrium_table.csv is the equilibrium table's cell with its unit; every
//    parameter of fit_parameters.csv is printed in the model table as "name = value ± U";
//  - headless Chromium renders datasheet.html: a non-blank screenshot at desktop and phone
//    widths, no console error, one <svg> per figure panel inside its <figure>, every text
//    of an SVG inside its viewBox, the text of every headline value in the DOM;
//  - accessibility basics (WCAG 2.1): one h1, headings without skipped levels (1.3.1),
//    header cells with scope (1.3.1), a title for every figure and a label for every
//    figure group (1.1.1), text colours with at least 4.5:1 contrast on white (1.4.3);
//  - self-contained and deterministic: no script, link, import or fetched source; two runs
//    give byte-identical files;
//  - the template decides the outputs: outputs = ["html"] writes datasheet.html and no PDF,
//    and the output marker lists what was written.
// Chromium (Debian package `chromium`, installed by scripts/install-deps.sh) is looked up on
// PATH; where it is absent the browser tests are skipped with a message saying so.
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>
#include <zlib.h>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
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
using Json = nlohmann::json;

const std::vector<std::string> kScenarios = {"excipient_powder_25C", "lime_plaster_desiccator",
                                             "wood_fibre_board_23C_40C", "wood_fibre_board_vapour"};

std::string Slurp(const fs::path& file) {
  std::ifstream in(file, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

void Spit(const fs::path& file, const std::string& bytes) {
  std::ofstream out(file, std::ios::binary);
  out << bytes;
}

// Runs a shell command; returns its exit code and puts stdout in *output.
int Shell(const std::string& command, std::string* output = nullptr) {
  e2e::Outcome run = e2e::Shell(command);
  if (output != nullptr) *output = std::move(run.output);
  return run.exit_code;
}

bool HaveChromium() { return Shell("command -v chromium >/dev/null 2>&1") == 0; }

// Headless Chromium on a local file, with a fresh profile under the test's folder and a
// generous time limit (a cold start on a loaded 2-core machine takes several seconds).
// Returns the exit code; stdout in *out, stderr (the browser's log) in *log.
int Chromium(const fs::path& work, const std::string& arguments, const fs::path& page,
             std::string* out, std::string* log) {
  static int run = 0;
  const fs::path profile = work / ("chromium-profile-" + std::to_string(++run));
  const fs::path log_file = work / ("chromium-" + std::to_string(run) + ".log");
  const std::string command =
      "timeout 180 chromium --headless --no-sandbox --disable-gpu "
      "--no-first-run --disable-extensions --enable-logging=stderr "
      "--v=0 --user-data-dir=" +
      profile.string() + " " + arguments + " file://" + page.string() + " 2>" + log_file.string();
  const int code = Shell(command, out);
  *log = Slurp(log_file);
  return code;
}

// &amp; &lt; &gt; &quot; &apos; and <br> back to text.
std::string Unescape(std::string text) {
  text = std::regex_replace(text, std::regex("<br>"), "\n");
  const std::vector<std::pair<std::string, std::string>> entities = {
      {"&lt;", "<"},   {"&gt;", ">"},   {"&quot;", "\""},
      {"&apos;", "'"}, {"&nbsp;", " "}, {"&amp;", "&"}};
  for (const auto& [from, to] : entities) {
    for (size_t pos = 0; (pos = text.find(from, pos)) != std::string::npos; pos += to.size()) {
      text.replace(pos, from.size(), to);
    }
  }
  return text;
}

// The tables of an HTML document by their data-table name: rows of unescaped cell texts
// (header row excluded).
std::map<std::string, std::vector<std::vector<std::string>>> HtmlTables(const std::string& html) {
  std::map<std::string, std::vector<std::vector<std::string>>> tables;
  static const std::regex row_re(R"(<tr>([\s\S]*?)</tr>)");
  static const std::regex cell_re(R"(<td[^>]*>([\s\S]*?)</td>)");
  const std::string open = "<table data-table=\"";
  for (size_t at = html.find(open); at != std::string::npos; at = html.find(open, at + 1)) {
    const size_t name_end = html.find('"', at + open.size());
    const size_t end = html.find("</table>", at);
    if (name_end == std::string::npos || end == std::string::npos) break;
    const std::string body = html.substr(at, end - at);
    auto& rows = tables[html.substr(at + open.size(), name_end - at - open.size())];
    for (auto r = std::sregex_iterator(body.begin(), body.end(), row_re);
         r != std::sregex_iterator(); ++r) {
      const std::string row = (*r)[1];
      std::vector<std::string> cells;
      for (auto c = std::sregex_iterator(row.begin(), row.end(), cell_re);
           c != std::sregex_iterator(); ++c) {
        cells.push_back(Unescape((*c)[1]));
      }
      if (!cells.empty()) rows.push_back(cells);
    }
  }
  return tables;
}

// The cells naming a Quantity, in document order: (data-key, text).
std::vector<std::pair<std::string, std::string>> KeyedCells(const std::string& html) {
  std::vector<std::pair<std::string, std::string>> cells;
  static const std::regex keyed(R"re(<td[^>]*data-key="([^"]*)"[^>]*>([\s\S]*?)</td>)re");
  for (auto c = std::sregex_iterator(html.begin(), html.end(), keyed); c != std::sregex_iterator();
       ++c) {
    cells.emplace_back((*c)[1], Unescape((*c)[2]));
  }
  return cells;
}

// A CSV text cell as printed: the quote that keeps a spreadsheet from running a cell that
// starts with "-" or "=" as a formula (OWASP CSV injection, csv.cc) removed.
std::string CsvPrinted(const std::string& field) {
  return field.size() > 1 && field[0] == '\'' ? field.substr(1) : field;
}

// RFC 4180 CSV: rows of fields (quoted fields may hold commas, quotes and line breaks).
std::vector<std::vector<std::string>> ParseCsv(const std::string& text) {
  std::vector<std::vector<std::string>> rows(1);
  std::string field;
  bool quoted = false;
  for (size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (quoted) {
      if (c == '"' && i + 1 < text.size() && text[i + 1] == '"') {
        field += '"';
        ++i;
      } else if (c == '"') {
        quoted = false;
      } else {
        field += c;
      }
    } else if (c == '"') {
      quoted = true;
    } else if (c == ',') {
      rows.back().push_back(field);
      field.clear();
    } else if (c == '\n') {
      rows.back().push_back(field);
      field.clear();
      rows.emplace_back();
    } else {
      field += c;
    }
  }
  if (rows.back().empty()) rows.pop_back();
  return rows;
}

size_t Column(const std::vector<std::string>& header, const std::string& name) {
  for (size_t i = 0; i < header.size(); ++i) {
    if (header[i] == name) return i;
  }
  ADD_FAILURE() << "no CSV column " << name;
  return 0;
}

class HtmlE2eTest : public ::testing::Test {
 protected:
  // Every demo job made once for the whole suite.
  static void SetUpTestSuite() {
    root_ = fs::temp_directory_path() / ("sorbtrace_html_e2e_" + std::to_string(::getpid()));
    fs::remove_all(root_);
    fs::create_directories(root_);
    for (const std::string& scenario : kScenarios) {
      const fs::path job =
          fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs" / scenario / "job.toml";
      std::string output;
      made_[scenario] = Shell(std::string(SORBTRACE_BINARY) + " make " + job.string() + " --out " +
                                  (root_ / scenario).string() + " -q 2>&1",
                              &output);
    }
  }
  static void TearDownTestSuite() {
    if (std::getenv("SORBTRACE_KEEP_TEST_FILES") == nullptr) fs::remove_all(root_);
  }
  static fs::path Out(const std::string& scenario) {
    EXPECT_EQ(made_[scenario], 0) << scenario;
    return root_ / scenario;
  }
  // Chromium's DOM of a scenario's datasheet.html (cached).
  static const std::string& Dom(const std::string& scenario) {
    std::string& dom = doms_[scenario];
    if (dom.empty()) {
      std::string log;
      const int code = Chromium(root_, "--dump-dom", Out(scenario) / "datasheet.html", &dom, &log);
      EXPECT_EQ(code, 0) << scenario << "\n" << log;
      ExpectNoConsoleError(log, scenario);
    }
    return dom;
  }
  static void ExpectNoConsoleError(const std::string& log, const std::string& where) {
    EXPECT_EQ(log.find("Uncaught"), std::string::npos) << where << "\n" << log;
    EXPECT_EQ(log.find("CONSOLE"), std::string::npos) << where << "\n" << log;
  }

  static fs::path root_;
  static std::map<std::string, int> made_;
  static std::map<std::string, std::string> doms_;
};

fs::path HtmlE2eTest::root_;
std::map<std::string, int> HtmlE2eTest::made_;
std::map<std::string, std::string> HtmlE2eTest::doms_;

// The sheet's tables (results.json) against the HTML file and the PDF text.
void ExpectTablesAgree(const Json& sheet, const std::string& html, const std::string& pdf_text,
                       const std::string& where) {
  const auto tables = HtmlTables(html);
  int numbers = 0;
  for (const Json& section : sheet["sections"]) {
    for (const Json& table : section["tables"]) {
      const std::string name = table["name"];
      ASSERT_TRUE(tables.count(name)) << where << ": no HTML table " << name;
      const auto& rows = tables.at(name);
      ASSERT_EQ(rows.size(), table["rows"].size()) << where << " " << name;
      for (size_t r = 0; r < rows.size(); ++r) {
        const Json& cells = table["rows"][r];
        ASSERT_EQ(rows[r].size(), cells.size()) << where << " " << name << " row " << r;
        for (size_t c = 0; c < cells.size(); ++c) {
          const std::string text = cells[c]["text"];
          EXPECT_EQ(rows[r][c], text) << where << " " << name << " row " << r << " col " << c;
          // Numbers: single-line cells of numeric columns and cells naming a Quantity.
          const bool number =
              cells[c].contains("key") || (name == "equilibria" && c >= 2 && c <= 7);
          if (number && text.find('\n') == std::string::npos && text.size() < 40) {
            EXPECT_NE(pdf_text.find(testing::CollapseSpaces(text)), std::string::npos)
                << where << ": PDF lacks " << text;
            ++numbers;
          }
        }
      }
    }
  }
  EXPECT_GE(numbers, 20) << where;
}

// equilibrium_table.csv and fit_parameters.csv against the sheet's tables.
void ExpectCsvAgrees(const Json& results, const fs::path& out, const std::string& where) {
  std::map<std::string, const Json*> tables;
  for (const Json& section : results["sheet"]["sections"]) {
    for (const Json& table : section["tables"]) tables[table["name"]] = &table;
  }
  const std::string unit = results["report"]["moisture_unit"];
  const auto eq = ParseCsv(Slurp(out / "equilibrium_table.csv"));
  ASSERT_GT(eq.size(), 1u);
  const size_t record = Column(eq[0], "record");
  const size_t rh = Column(eq[0], "rh_as_printed");
  const size_t moisture = Column(eq[0], "moisture_as_printed");
  ASSERT_TRUE(tables.count("equilibria")) << where;
  const Json& rows = (*tables["equilibria"])["rows"];
  size_t point = 0;
  for (size_t i = 1; i < eq.size(); ++i) {
    if (eq[i][record] != "combined") continue;
    ASSERT_LT(point, rows.size()) << where;
    EXPECT_EQ(CsvPrinted(eq[i][rh]), rows[point][4]["text"].get<std::string>() + " %") << where;
    std::string cell = rows[point][5]["text"];
    cell = cell.substr(0, cell.find(" (k = "));  // a point's own k follows its value
    EXPECT_EQ(CsvPrinted(eq[i][moisture]), cell + " " + unit) << where << " point " << point;
    ++point;
  }
  EXPECT_EQ(point, rows.size()) << where;
  ASSERT_TRUE(tables.count("models")) << where;
  std::string printed;
  for (const Json& row : (*tables["models"])["rows"])
    printed += row[1]["text"].get<std::string>() + "\n";
  const auto fits = ParseCsv(Slurp(out / "fit_parameters.csv"));
  ASSERT_GT(fits.size(), 1u);
  const size_t parameter = Column(fits[0], "parameter");
  const size_t as_printed = Column(fits[0], "as_printed");
  const size_t converged = Column(fits[0], "converged");
  for (size_t i = 1; i < fits.size(); ++i) {
    if (fits[i][converged] == "yes" && fits[i][as_printed].empty()) {
      // Not identifiable from its data: the table gives the reason, no values.
      EXPECT_NE(printed.find("not identifiable from these data"), std::string::npos) << where;
      continue;
    }
    if (fits[i][converged] != "yes") {
      // Not converged: no values, in the table as in the CSV.
      EXPECT_TRUE(fits[i][as_printed].empty()) << where << ": " << fits[i][as_printed];
      EXPECT_NE(printed.find("not converged: no parameters reported"), std::string::npos) << where;
      continue;
    }
    const std::string line = fits[i][parameter] + " = " + CsvPrinted(fits[i][as_printed]);
    EXPECT_NE(printed.find(line), std::string::npos) << where << ": model table lacks " << line;
  }
}

TEST_F(HtmlE2eTest, PdfHtmlJsonAndCsvAgreeCellByCellOnEveryDemoJob) {
  for (const std::string& scenario : kScenarios) {
    const fs::path out = Out(scenario);
    const Json results = Json::parse(Slurp(out / "results.json"));
    const std::string html = Slurp(out / "datasheet.html");
    const std::string pdf = testing::CollapseSpaces(testing::PdfText(out / "datasheet.pdf"));
    ASSERT_TRUE(results.contains("sheet")) << scenario;
    // Through the Sheet (the HTML file as written) ...
    ExpectTablesAgree(results["sheet"], html, pdf, scenario + " (file)");
    // The headline values are the summary's cells naming them, by key (keys are unique; the
    // one-page summary folds the best-model rows into one, so not every key has a cell).
    std::map<std::string, std::string> printed_by_key;
    for (const auto& [key, text] : KeyedCells(html)) printed_by_key.emplace(key, text);
    size_t matched = 0;
    std::set<std::string> keys;
    for (const Json& q : results["headline"]) {
      const std::string key = q["key"].get<std::string>();
      EXPECT_TRUE(keys.insert(key).second) << scenario << ": headline key repeats: " << key;
      const auto cell = printed_by_key.find(key);
      if (cell == printed_by_key.end()) continue;
      // The Quantity's text is the cell, with a value's own coverage factor where it differs
      // from the sheet's (Student-t from nu_eff): "0.773 ± 0.055 % (k = 3.3)".
      EXPECT_EQ(cell->second, q["text"].get<std::string>()) << scenario << " " << key;
      const double k = q["coverage_factor"].get<double>();
      const bool shows_k = cell->second.find(" (k = ") != std::string::npos;
      // The sheet's k is results.json "report" "coverage_factor" (2 on the demos); a k is
      // printed with two significant digits (JCGM 100:2008, 7.2.6), so one that differs from
      // 2 by half a unit of the second digit (0.05) or more reads differently.
      const double sheet_k = results["report"]["coverage_factor"].get<double>();
      EXPECT_EQ(shows_k,
                std::abs(k - sheet_k) >= 0.05 && q["standard_uncertainty"].get<double>() > 0.0)
          << scenario << " " << key << ": " << cell->second;
      ++matched;
    }
    EXPECT_GE(matched, 5u) << scenario;
    ExpectCsvAgrees(results, out, scenario);
    // ... and through the DOM the browser built from it.
    if (HaveChromium())
      ExpectTablesAgree(results["sheet"], Dom(scenario), pdf, scenario + " (DOM)");
  }
}

// Minimal PNG reader (ISO/IEC 15948:2004): 8-bit RGB or RGBA, not interlaced — what
// Chromium writes for screenshots. Returns the fraction of pixels that are not white.
double InkFractionOfPng(const std::string& png) {
  if (png.size() < 33 || png.compare(1, 3, "PNG") != 0) return -1.0;
  auto u32 = [&](size_t at) {
    return (static_cast<uint32_t>(static_cast<unsigned char>(png[at])) << 24) |
           (static_cast<uint32_t>(static_cast<unsigned char>(png[at + 1])) << 16) |
           (static_cast<uint32_t>(static_cast<unsigned char>(png[at + 2])) << 8) |
           static_cast<uint32_t>(static_cast<unsigned char>(png[at + 3]));
  };
  const uint32_t width = u32(16), height = u32(20);
  const int depth = static_cast<unsigned char>(png[24]);
  const int colour = static_cast<unsigned char>(png[25]);
  const int interlace = static_cast<unsigned char>(png[28]);
  if (depth != 8 || (colour != 2 && colour != 6) || interlace != 0) return -1.0;
  const size_t channels = colour == 6 ? 4 : 3;
  std::string idat;
  for (size_t at = 8; at + 8 <= png.size();) {
    const uint32_t length = u32(at);
    const std::string type = png.substr(at + 4, 4);
    if (type == "IDAT") idat += png.substr(at + 8, length);
    at += 12 + length;
  }
  const size_t stride = width * channels;
  std::vector<unsigned char> raw((stride + 1) * height);
  uLongf raw_size = raw.size();
  if (uncompress(raw.data(), &raw_size, reinterpret_cast<const Bytef*>(idat.data()), idat.size()) !=
      Z_OK) {
    return -1.0;
  }
  std::vector<unsigned char> previous(stride, 0), current(stride);
  size_t ink = 0;
  for (uint32_t y = 0; y < height; ++y) {
    const unsigned char filter = raw[y * (stride + 1)];
    for (size_t i = 0; i < stride; ++i) {
      const int x = raw[y * (stride + 1) + 1 + i];
      const int a = i >= channels ? current[i - channels] : 0;
      const int b = previous[i];
      const int c = i >= channels ? previous[i - channels] : 0;
      int predictor = 0;
      if (filter == 1) predictor = a;
      if (filter == 2) predictor = b;
      if (filter == 3) predictor = (a + b) / 2;
      if (filter == 4) {
        const int p = a + b - c, pa = std::abs(p - a), pb = std::abs(p - b), pc = std::abs(p - c);
        predictor = pa <= pb && pa <= pc ? a : (pb <= pc ? b : c);
      }
      current[i] = static_cast<unsigned char>((x + predictor) & 0xFF);
    }
    for (size_t px = 0; px < width; ++px) {
      const unsigned char* p = &current[px * channels];
      if (p[0] < 235 || p[1] < 235 || p[2] < 235) ++ink;
    }
    previous = current;
  }
  return static_cast<double>(ink) / (static_cast<double>(width) * height);
}

TEST_F(HtmlE2eTest, ChromiumRendersTheReportAtDesktopAndPhoneWidths) {
  if (!HaveChromium()) GTEST_SKIP() << "chromium is not installed (scripts/install-deps.sh)";
  const fs::path page = Out("wood_fibre_board_23C_40C") / "datasheet.html";
  for (const std::string size : {"1200,1600", "390,844"}) {
    const fs::path shot = root_ / ("shot-" + size.substr(0, size.find(',')) + ".png");
    std::string out, log;
    const int code = Chromium(
        root_, "--screenshot=" + shot.string() + " --window-size=" + size + " --hide-scrollbars",
        page, &out, &log);
    ASSERT_EQ(code, 0) << log;
    ExpectNoConsoleError(log, size);
    const double ink = InkFractionOfPng(Slurp(shot));
    // A page of text and a table: some ink, far from all (a blank or black page fails).
    EXPECT_GT(ink, 0.01) << size;
    EXPECT_LT(ink, 0.6) << size;
  }
}

TEST_F(HtmlE2eTest, FiguresAreInlineSvgInsideTheirFramesAndHeadlinesAreInTheDom) {
  if (!HaveChromium()) GTEST_SKIP() << "chromium is not installed (scripts/install-deps.sh)";
  for (const std::string& scenario : kScenarios) {
    const Json results = Json::parse(Slurp(Out(scenario) / "results.json"));
    const std::string& dom = Dom(scenario);
    size_t panels = 0;
    for (const Json& section : results["sheet"]["sections"]) {
      for (const Json& f : section["figures"]) panels += f["panels"].get<size_t>();
    }
    ASSERT_GE(panels, 3u) << scenario;
    // Scanned with find, not std::regex: an SVG body is hundreds of kilobytes and
    // libstdc++'s recursive matcher would overflow the stack on it.
    size_t found = 0;
    for (size_t at = dom.find("<svg"); at != std::string::npos; at = dom.find("<svg", at + 4)) {
      ++found;
      const size_t end = dom.find("</svg>", at);
      ASSERT_NE(end, std::string::npos) << scenario;
      const std::string svg = dom.substr(at, end - at);
      const size_t box = svg.find("viewBox=\"0 0 ");
      ASSERT_NE(box, std::string::npos) << scenario;
      std::istringstream dims(svg.substr(box + 13, 40));
      double w = 0.0, h = 0.0;
      dims >> w >> h;
      ASSERT_GT(w, 100.0) << scenario;
      ASSERT_GT(h, 100.0) << scenario;
      const size_t open_end = svg.find('>');
      EXPECT_EQ(svg.compare(open_end + 1, 6, "<title"), 0) << scenario << ": untitled figure";
      EXPECT_NE(svg.find("<path"), std::string::npos) << scenario;
      // Inside a <figure>: the last figure tag before it is an opening one.
      EXPECT_GT(dom.rfind("<figure", at), dom.rfind("</figure>", at) + 1) << scenario;
      for (size_t t = svg.find("<text x=\""); t != std::string::npos;
           t = svg.find("<text x=\"", t + 9)) {
        double x = -1.0, y = -1.0;
        ASSERT_EQ(std::sscanf(svg.c_str() + t, "<text x=\"%lf\" y=\"%lf\"", &x, &y), 2);
        EXPECT_TRUE(x >= 0.0 && x <= w && y >= 0.0 && y <= h)
            << scenario << " " << svg.substr(t, 60);
      }
    }
    EXPECT_EQ(found, panels) << scenario << ": one titled <svg> per figure panel";
    const std::string text = Unescape(dom);
    for (const Json& q : results["headline"]) {
      EXPECT_NE(text.find(q["text"].get<std::string>()), std::string::npos)
          << scenario << " " << q["key"];
    }
  }
}

// WCAG 2.1 relative luminance and contrast ratio of a "#rrggbb" colour against white.
double ContrastOnWhite(const std::string& hex) {
  double luminance = 0.0;
  const double weights[3] = {0.2126, 0.7152, 0.0722};
  for (int i = 0; i < 3; ++i) {
    const double c = std::stoi(hex.substr(1 + 2 * i, 2), nullptr, 16) / 255.0;
    const double linear = c <= 0.03928 ? c / 12.92 : std::pow((c + 0.055) / 1.055, 2.4);
    luminance += weights[i] * linear;
  }
  return 1.05 / (luminance + 0.05);
}

TEST_F(HtmlE2eTest, AccessibilityBasicsAndSelfContainedFile) {
  // WCAG 2.1's own example values: black on white 21:1, #777777 on white 4.48:1.
  EXPECT_NEAR(ContrastOnWhite("#000000"), 21.0, 1e-9);
  EXPECT_NEAR(ContrastOnWhite("#777777"), 4.48, 0.01);
  for (const std::string& scenario : kScenarios) {
    const std::string html = Slurp(Out(scenario) / "datasheet.html");
    static const std::regex heading(R"(<h([1-6])[ >])");
    int previous = 0, h1 = 0;
    for (auto h = std::sregex_iterator(html.begin(), html.end(), heading);
         h != std::sregex_iterator(); ++h) {
      const int level = std::stoi((*h)[1]);
      if (previous == 0) {
        EXPECT_EQ(level, 1) << scenario << ": the first heading is h1";
      }
      EXPECT_LE(level, previous + 1) << scenario << ": heading level skipped";
      h1 += level == 1;
      previous = level;
    }
    EXPECT_EQ(h1, 1) << scenario;
    static const std::regex th(R"(<th( [^>]*)?>)");
    int headers = 0;
    for (auto t = std::sregex_iterator(html.begin(), html.end(), th); t != std::sregex_iterator();
         ++t) {
      EXPECT_NE(t->str().find("scope="), std::string::npos) << scenario << " " << t->str();
      ++headers;
    }
    EXPECT_GE(headers, 10) << scenario;
    static const std::regex svg_open(R"(<svg [^>]*>)");
    for (auto s = std::sregex_iterator(html.begin(), html.end(), svg_open);
         s != std::sregex_iterator(); ++s) {
      EXPECT_EQ(html.compare(static_cast<size_t>(s->position() + s->length()), 6, "<title"), 0)
          << scenario;
      EXPECT_NE(s->str().find("role=\"img\""), std::string::npos) << scenario;
    }
    static const std::regex figure(R"(<figure [^>]*>)");
    for (auto f = std::sregex_iterator(html.begin(), html.end(), figure);
         f != std::sregex_iterator(); ++f) {
      EXPECT_NE(f->str().find("aria-label=\""), std::string::npos) << scenario;
    }
    static const std::regex colour(R"(--(ink|slate|accent): (#[0-9a-f]{6}))");
    int colours = 0;
    for (auto c = std::sregex_iterator(html.begin(), html.end(), colour);
         c != std::sregex_iterator(); ++c, ++colours) {
      EXPECT_GE(ContrastOnWhite((*c)[2]), 4.5) << scenario << " " << c->str();
    }
    EXPECT_EQ(colours, 3) << scenario;
    // Self-contained: nothing to run, nothing fetched. The one image allowed is the laboratory
    // logo inlined as a data: URI (RFC 2397) with its text alternative.
    // The logo's tag is cut out with find, not std::regex: libstdc++'s regex recurses once per
    // character and overflows the stack on a base64 text of kilobytes (seen under ASan).
    std::string rest = html;
    const std::string logo_start = "<img class=\"logo\" src=\"data:image/";
    const std::string::size_type img = rest.find(logo_start);
    if (img != std::string::npos) {
      const std::string::size_type close = rest.find('>', img);  // base64 holds no '>'
      ASSERT_NE(close, std::string::npos) << scenario;
      const std::string tag = rest.substr(img, close + 1 - img);
      const std::string::size_type data = tag.find(";base64,");
      ASSERT_NE(data, std::string::npos) << scenario;
      const std::string media = tag.substr(logo_start.size(), data - logo_start.size());
      EXPECT_TRUE(media == "png" || media == "jpeg") << scenario << " " << media;
      const std::string::size_type quote = tag.find('"', data);
      ASSERT_NE(quote, std::string::npos) << scenario;
      const std::string text = tag.substr(data + 8, quote - data - 8);
      EXPECT_FALSE(text.empty()) << scenario;
      EXPECT_EQ(text.find_first_not_of(
                    "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/="),
                std::string::npos)
          << scenario;
      EXPECT_TRUE(std::regex_match(tag.substr(quote), std::regex(R"re(" alt="[^"]+">)re")))
          << scenario << " " << tag.substr(quote);
      rest.erase(img, close + 1 - img);
    }
    for (const char* token : {"<script", "<link", "@import", " src=", "url(http", "<img"}) {
      EXPECT_EQ(rest.find(token), std::string::npos) << scenario << " " << token;
    }
  }
}

TEST_F(HtmlE2eTest, TheHtmlIsByteIdenticalOnASecondRun) {
  const std::string scenario = "lime_plaster_desiccator";
  const fs::path job = fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs" / scenario / "job.toml";
  const fs::path again = root_ / "again";
  ASSERT_EQ(Shell(std::string(SORBTRACE_BINARY) + " make " + job.string() + " --out " +
                  again.string() + " -q >/dev/null 2>&1"),
            0);
  const std::string first = Slurp(Out(scenario) / "datasheet.html");
  ASSERT_GT(first.size(), 10000u);
  EXPECT_TRUE(first == Slurp(again / "datasheet.html"));
}

TEST_F(HtmlE2eTest, TheTemplateDecidesWhichOutputsAreWritten) {
  const fs::path dir = root_ / "html_only_job";
  fs::remove_all(dir);
  fs::copy(fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs/wood_fibre_board_vapour", dir,
           fs::copy_options::recursive);
  Spit(dir / "html.toml", "[template]\nname = \"html\"\n[layout]\noutputs = [\"html\"]\n");
  Spit(dir / "bad.toml", "[template]\nname = \"bad\"\n[layout]\noutputs = [\"pdf\", \"docx\"]\n");
  std::string job = Slurp(dir / "job.toml");
  job.replace(job.find("template = \"full\""), 17, "template = \"html.toml\"");
  Spit(dir / "job.toml", job);
  std::string output;
  ASSERT_EQ(Shell(std::string(SORBTRACE_BINARY) + " make " + (dir / "job.toml").string() +
                      " --out " + (root_ / "html_only").string() + " -q 2>&1",
                  &output),
            0)
      << output;
  EXPECT_TRUE(fs::exists(root_ / "html_only/datasheet.html"));
  EXPECT_FALSE(fs::exists(root_ / "html_only/datasheet.pdf"));
  const std::string marker = Slurp(root_ / "html_only/.sorbtrace-output");
  EXPECT_NE(marker.find("file: datasheet.html"), std::string::npos) << marker;
  EXPECT_EQ(marker.find("datasheet.pdf"), std::string::npos) << marker;
  job.replace(job.find("template = \"html.toml\""), 22, "template = \"bad.toml\"");
  Spit(dir / "job.toml", job);
  EXPECT_EQ(Shell(std::string(SORBTRACE_BINARY) + " make " + (dir / "job.toml").string() +
                      " --out " + (root_ / "bad").string() + " -q 2>&1",
                  &output),
            3);
  EXPECT_NE(output.find("bad.toml:4:"), std::string::npos) << output;
  EXPECT_NE(output.find("\"docx\""), std::string::npos) << output;
  EXPECT_FALSE(fs::exists(root_ / "bad"));
}

}  // namespace
}  // namespace sorbtrace::report
