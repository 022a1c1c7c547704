// End-to-end validity of every demo datasheet, on the real binary, read by the tools a reader
// or an archive would use:
//  - poppler (pdftotext, pdffonts, pdfinfo, pdftoppm) writes nothing to stderr: no syntax
//    warning such as libharu's "Invalid 'begincidrange' operator in ToUnicode CMap";
//  - `qpdf --check` exits 0 and prints no WARNING (qpdf's structural check of the xref, the
//    object streams and every stream's filter);
//  - the document information names the sheet title, the lab (the name printed in the page
//    header) or "sorbtrace", and the job id (the `[job] id` of the job file) as Subject; an
//    XMP metadata stream is present (pdfinfo "Metadata Stream: yes");
//  - every font is embedded and has a ToUnicode map (pdffonts "emb" and "uni" columns), and
//    the text reads back with its non-ASCII characters ("°C", "±");
//  - two runs on the same inputs give byte-identical PDFs.
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

#include "tests/common/e2e_support.h"

namespace sorbtrace::report {
namespace {

namespace fs = std::filesystem;

struct ToolRun {
  int exit_code = -1;
  std::string out;  // stdout
  std::string err;  // stderr, captured on its own
};

using e2e::ReadBytes;

// Runs `command` through sh with stderr to a file, so stdout and stderr are kept apart.
ToolRun RunTool(const std::string& command, const fs::path& scratch) {
  e2e::Outcome run = e2e::ShellApart(command, scratch / "stderr.txt");
  return {run.exit_code, std::move(run.output), std::move(run.error_output)};
}

// `[job] id = "..."` of a job file, read with a line scan (independent of the ingest code).
std::string JobId(const fs::path& job_file) {
  std::istringstream lines(ReadBytes(job_file));
  std::string line;
  bool in_job = false;
  static const std::regex table(R"(^\s*\[([^\]]*)\]\s*$)");
  static const std::regex id(R"re(^\s*id\s*=\s*"([^"]*)")re");
  std::smatch m;
  while (std::getline(lines, line)) {
    if (std::regex_search(line, m, table)) in_job = m[1] == "job";
    if (in_job && std::regex_search(line, m, id)) return m[1];
  }
  return {};
}

// The value of "Key:   value" in pdfinfo output, or "" if the key is absent.
std::string InfoField(const std::string& pdfinfo, const std::string& key) {
  std::istringstream lines(pdfinfo);
  std::string line;
  while (std::getline(lines, line)) {
    if (line.rfind(key + ":", 0) == 0) {
      const size_t start = line.find_first_not_of(' ', key.size() + 1);
      return start == std::string::npos ? "" : line.substr(start);
    }
  }
  return {};
}

using e2e::DemoJobFiles;

class PdfValidityE2eTest : public ::testing::Test {
 protected:
  void SetUp() override {
    root_ = fs::temp_directory_path() / "sorbtrace_pdf_validity_e2e";
    fs::remove_all(root_);
    fs::create_directories(root_);
  }
  void TearDown() override { fs::remove_all(root_); }
  fs::path root_;
};

TEST_F(PdfValidityE2eTest, EveryDemoSheetPassesPopplerAndQpdfAndIsReproducible) {
  const std::vector<fs::path> jobs = DemoJobFiles();
  ASSERT_GE(jobs.size(), 4u) << "the four demo scenarios of example_inputs/";
  for (const fs::path& job : jobs) {
    const std::string scenario = job.parent_path().filename().string();
    SCOPED_TRACE(scenario);
    const fs::path first = root_ / (scenario + "_1");
    const fs::path second = root_ / (scenario + "_2");
    for (const fs::path& out : {first, second}) {
      const ToolRun make = RunTool(std::string(SORBTRACE_BINARY) + " make '" + job.string() +
                                       "' --out '" + out.string() + "' -q",
                                   root_);
      ASSERT_EQ(make.exit_code, 0) << make.out << make.err;
    }
    const fs::path pdf = first / "datasheet.pdf";
    const std::string quoted = "'" + pdf.string() + "'";

    const ToolRun text = RunTool("pdftotext -enc UTF-8 " + quoted + " -", root_);
    EXPECT_EQ(text.exit_code, 0);
    EXPECT_EQ(text.err, "") << "pdftotext";
    EXPECT_NE(text.out.find("°C"), std::string::npos) << "degree sign extracted";
    EXPECT_NE(text.out.find("±"), std::string::npos) << "plus-minus sign extracted";

    const ToolRun fonts = RunTool("pdffonts " + quoted, root_);
    EXPECT_EQ(fonts.exit_code, 0);
    EXPECT_EQ(fonts.err, "") << "pdffonts";
    // Rows after the two header lines: "... emb sub uni object ID" -> "yes yes yes N 0".
    std::istringstream rows(fonts.out);
    std::string row;
    int font_rows = 0;
    static const std::regex flags(R"((yes|no)\s+(yes|no)\s+(yes|no)\s+\d+\s+\d+\s*$)");
    std::smatch m;
    while (std::getline(rows, row)) {
      if (!std::regex_search(row, m, flags)) continue;
      ++font_rows;
      EXPECT_EQ(m[1], "yes") << "embedded: " << row;
      EXPECT_EQ(m[3], "yes") << "ToUnicode: " << row;
    }
    EXPECT_GE(font_rows, 1) << fonts.out;

    const ToolRun info = RunTool("pdfinfo " + quoted, root_);
    EXPECT_EQ(info.exit_code, 0);
    EXPECT_EQ(info.err, "") << "pdfinfo";
    EXPECT_FALSE(InfoField(info.out, "Title").empty()) << info.out;
    EXPECT_NE(text.out.find(InfoField(info.out, "Title")), std::string::npos)
        << "the Title is the title printed on the sheet";
    const std::string author = InfoField(info.out, "Author");
    EXPECT_TRUE(author == "sorbtrace" ||
                (!author.empty() && text.out.find(author) != std::string::npos))
        << "Author is the lab printed in the header, or sorbtrace: " << author;
    // The report number: the job id, with " rev. N" for an amended report (ISO/IEC 17025:2017,
    // 7.8.8.3: an amended report is uniquely identified).
    const std::string subject = InfoField(info.out, "Subject");
    EXPECT_TRUE(subject == JobId(job) ||
                std::regex_match(subject, std::regex(JobId(job) + " rev\\. [1-9][0-9]*")))
        << subject;
    EXPECT_EQ(InfoField(info.out, "Creator").rfind("sorbtrace ", 0), 0u) << info.out;
    EXPECT_EQ(InfoField(info.out, "Metadata Stream"), "yes");

    const ToolRun pages = RunTool(
        "pdftoppm -r 12 -gray " + quoted + " '" + (root_ / (scenario + "_page")).string() + "'",
        root_);
    EXPECT_EQ(pages.exit_code, 0);
    EXPECT_EQ(pages.err, "") << "pdftoppm";

    const ToolRun check = RunTool("qpdf --check " + quoted, root_);
    EXPECT_EQ(check.exit_code, 0) << check.out << check.err;
    EXPECT_EQ(check.out.find("WARNING"), std::string::npos) << check.out;
    EXPECT_EQ(check.err.find("WARNING"), std::string::npos) << check.err;

    EXPECT_EQ(ReadBytes(pdf), ReadBytes(second / "datasheet.pdf"))
        << "two runs, byte-identical PDF";
  }
}

}  // namespace
}  // namespace sorbtrace::report
