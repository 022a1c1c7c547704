// What the end-to-end tests share: running the real binary (SORBTRACE_BINARY) or a shell
// command, reading and writing files byte for byte, snapshots of a folder, fresh temporary
// folders, and the bad-input corpora (cases.tsv rows, the first located error of an output,
// and the check every corpus case must pass). Header only: the tests define SORBTRACE_BINARY
// and SORBTRACE_SOURCE_DIR (cmake/Sorbtrace.cmake).
#pragma once

#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

namespace sorbtrace::e2e {

namespace fs = std::filesystem;

struct Outcome {
  int exit_code = -1;        // as the shell reports it: 128 + n for a process ended by signal n
  std::string output;        // what the command wrote to stdout (and stderr where redirected)
  std::string error_output;  // stderr, when captured apart (ShellApart)
  // The command (or the shell) was ended by a signal: a crash, not an exit code.
  bool crashed() const { return exit_code < 0 || exit_code > 128; }
};

inline std::string ReadBytes(const fs::path& path);

// Runs `command` with /bin/sh and collects its stdout.
inline Outcome Shell(const std::string& command) {
  Outcome run;
  FILE* pipe = popen(command.c_str(), "r");
  if (pipe == nullptr) return run;
  char buffer[4096];
  size_t got = 0;
  while ((got = fread(buffer, 1, sizeof buffer, pipe)) > 0) run.output.append(buffer, got);
  const int status = pclose(pipe);
  run.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return run;
}

// Runs `command` with /bin/sh, stdout and stderr kept apart: stderr goes to `err_file` (replaced)
// and is returned in error_output.
inline Outcome ShellApart(const std::string& command, const fs::path& err_file) {
  Outcome run = Shell(command + " 2>'" + err_file.string() + "'");
  run.error_output = ReadBytes(err_file);
  return run;
}

// Runs `sorbtrace ARGUMENTS` inside `dir` (so messages name files as the job writes them),
// stdout and, unless with_stderr is false, stderr.
inline Outcome Sorbtrace(const fs::path& dir, const std::string& arguments,
                         bool with_stderr = true) {
  return Shell("cd '" + dir.string() + "' && '" + SORBTRACE_BINARY + "' " + arguments +
               (with_stderr ? " 2>&1" : " 2>/dev/null"));
}

// Runs `sorbtrace ARGUMENTS` in the current folder, stdout and stderr.
inline Outcome Sorbtrace(const std::string& arguments) {
  return Shell(std::string("'") + SORBTRACE_BINARY + "' " + arguments + " 2>&1");
}

inline std::string ReadBytes(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream out;
  out << in.rdbuf();
  return out.str();
}

// Writes `bytes` to `path` (its folder created), replacing the file.
inline void WriteBytes(const fs::path& path, const std::string& bytes) {
  if (path.has_parent_path()) fs::create_directories(path.parent_path());
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << bytes;
}

// Every regular file below `dir` with its bytes (symbolic links are not followed).
inline std::map<std::string, std::string> Snapshot(const fs::path& dir) {
  std::map<std::string, std::string> files;
  for (const auto& entry : fs::recursive_directory_iterator(dir)) {
    if (entry.is_regular_file() && !entry.is_symlink()) {
      files[fs::relative(entry.path(), dir).generic_string()] = ReadBytes(entry.path());
    }
  }
  return files;
}

// An empty folder of its own under the temporary folder: `prefix` names the test file, `name`
// the case; the process id keeps concurrent runs (other build trees, ctest -j) apart.
inline fs::path FreshDir(const std::string& prefix, const std::string& name) {
  const fs::path dir = fs::temp_directory_path() /
                       ("sorbtrace_" + prefix + "_" + name + "_" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

// FreshDir for the running test: `prefix` names the test file, the test's own name the case
// (ctest runs the tests of one file as parallel processes).
inline fs::path FreshTestDir(const std::string& prefix) {
  return FreshDir(prefix, ::testing::UnitTest::GetInstance()->current_test_info()->name());
}

// The demo jobs: example_inputs/<scenario>/job.toml of every scenario, sorted.
inline std::vector<fs::path> DemoJobFiles() {
  std::vector<fs::path> jobs;
  for (const auto& entry :
       fs::directory_iterator(fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs")) {
    if (fs::exists(entry.path() / "job.toml")) jobs.push_back(entry.path() / "job.toml");
  }
  std::sort(jobs.begin(), jobs.end());
  return jobs;
}

// ---- PDF text as a reader sees it (poppler-utils: pdfinfo, pdftotext) ----------------------

// The number of pages pdfinfo reports, -1 when it reports none (not a PDF, no pdfinfo).
inline int PdfPageCount(const fs::path& pdf) {
  static const std::regex pages(R"(Pages:\s+([0-9]+))");
  std::smatch m;
  const std::string info = Shell("pdfinfo '" + pdf.string() + "' 2>&1").output;
  return std::regex_search(info, m, pages) ? std::stoi(m[1]) : -1;
}

// The text of page `page` (1-based) with its layout (pdftotext -layout, UTF-8), as printed.
inline std::string PdfPageText(const fs::path& pdf, int page) {
  const std::string n = std::to_string(page);
  return Shell("pdftotext -q -layout -enc UTF-8 -f " + n + " -l " + n + " '" + pdf.string() +
               "' - 2>&1")
      .output;
}

// ---- Corpora of faulty inputs (tests/bad_inputs/corpus, tests/bad_inputs/plausibility) -----

// One row of a corpus's cases.tsv: case folder, verb (check|make), exit code, file named in
// the message, line, column (0 = not applicable), a substring of the message.
struct Case {
  std::string name;
  std::string verb;
  int exit_code = 0;
  std::string file;
  int line = 0;
  int column = 0;
  std::string substring;
};

// The rows of `cases_tsv` ('#' comment lines and the column-name line skipped).
inline std::vector<Case> LoadCases(const fs::path& cases_tsv) {
  std::vector<Case> cases;
  std::ifstream in(cases_tsv);
  std::string line;
  bool header = true;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    if (header) {  // the column names
      header = false;
      continue;
    }
    std::vector<std::string> fields;
    std::stringstream stream(line);
    std::string field;
    while (std::getline(stream, field, '\t')) fields.push_back(field);
    if (fields.size() != 7) {
      ADD_FAILURE() << cases_tsv << ": expected 7 tab-separated fields: " << line;
      continue;
    }
    cases.push_back({fields[0], fields[1], std::stoi(fields[2]), fields[3], std::stoi(fields[4]),
                     std::stoi(fields[5]), fields[6]});
  }
  return cases;
}

// The first "file[:line[:column]]: error: ..." line of an output.
struct Located {
  bool found = false;
  std::string file;
  int line = 0;
  int column = 0;
  std::string text;        // after "error: "
  std::string whole_line;  // the line as printed
};

inline Located FirstError(const std::string& output) {
  static const std::regex kError(R"(^(.+?)(?::(\d+))?(?::(\d+))?: error: (.*)$)");
  std::istringstream lines(output);
  std::string line;
  while (std::getline(lines, line)) {
    std::smatch match;
    if (std::regex_match(line, match, kError)) {
      return {true,
              match[1].str(),
              match[2].matched ? std::stoi(match[2].str()) : 0,
              match[3].matched ? std::stoi(match[3].str()) : 0,
              match[4].str(),
              line};
    }
  }
  return {};
}

// A test name from a case: "<case>_<verb>" with every other character than a letter or digit
// replaced by '_'.
inline std::string CaseName(const ::testing::TestParamInfo<Case>& info) {
  std::string name = info.param.name + "_" + info.param.verb;
  std::replace_if(
      name.begin(), name.end(),
      [](char ch) { return !std::isalnum(static_cast<unsigned char>(ch)); }, '_');
  return name;
}

// What every corpus case must do, run on a fresh copy of corpus/<case> with a file of the user
// beside it: exit with its code, print a message naming its file:line:column with the
// substring and "; expected " (docs/input-formats.md, "Messages"), write no output folder, and
// leave every file (inputs and the user's) byte-identical. `prefix` names the temporary folder.
inline void ExpectLocatedRefusal(const Case& c, const fs::path& corpus, const std::string& prefix) {
  const fs::path root = FreshDir(prefix, c.name + "_" + c.verb);
  const fs::path in = root / "in";
  ASSERT_TRUE(fs::is_directory(corpus / c.name)) << c.name;
  fs::copy(corpus / c.name, in, fs::copy_options::recursive);
  WriteBytes(root / "notes.txt", "a file of the user beside the output folder\n");
  const auto before = Snapshot(root);
  ASSERT_TRUE(before.count("in/job.toml")) << c.name << " has no job.toml";

  const fs::path out = root / "out";
  const std::string arguments =
      c.verb == "make" ? "make job.toml --out '" + out.string() + "' -q" : c.verb + " job.toml";
  const Outcome run = Sorbtrace(in, arguments);

  EXPECT_EQ(run.exit_code, c.exit_code) << run.output;
  const Located error = FirstError(run.output);
  ASSERT_TRUE(error.found) << "no 'file:line:column: error:' line in:\n" << run.output;
  EXPECT_EQ(fs::path(error.file).filename().string(), c.file) << run.output;
  EXPECT_EQ(error.line, c.line) << run.output;
  EXPECT_EQ(error.column, c.column) << run.output;
  EXPECT_NE(error.text.find(c.substring), std::string::npos) << "'" << c.substring << "' not in:\n"
                                                             << run.output;
  // docs/input-formats.md: every problem says what is wrong and what was expected.
  EXPECT_NE(error.text.find("; expected "), std::string::npos) << run.output;

  EXPECT_FALSE(fs::exists(out)) << "output folder created for a bad input";
  EXPECT_FALSE(fs::exists(in / "sorbtrace_output"));
  EXPECT_EQ(Snapshot(root), before) << "inputs changed or files were added";
  fs::remove_all(root);
}

}  // namespace sorbtrace::e2e
