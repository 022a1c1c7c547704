// Data safety of the real binary: sorbtrace never deletes or overwrites a file it did not
// write, never reads anything but regular files, survives a crashing job in a batch, and
// leaves no partial output on a full disk or a stopping signal (README "Exit codes").
//
// Every test works in a fresh folder `root` holding the job folder (root/lab/job, a copy of
// example_inputs/lime_plaster_desiccator) and the working folder of the runs (root/lab, the
// parent of every output). Each case records the SHA-256 of every file under root before the
// run and asserts afterwards: the documented exit code, the message, that every earlier
// file is byte-identical and still there, and that no `.partial-` folder or `.tmp-` file
// remains. Every run goes through `timeout`, so a read that blocks fails the test instead of
// hanging it.
#include <gtest/gtest.h>
#include <signal.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <string>
#include <thread>
#include <vector>

#include "pipeline/common/files.h"
#include "tests/common/e2e_support.h"

namespace sorbtrace {
namespace {

namespace fs = std::filesystem;

constexpr char kJobId[] = "HBPL-2026-0307";  // [job] id of the copied example job

using e2e::Outcome;
using e2e::Shell;

class OutputSafetyTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    // The process id keeps concurrent runs (other build trees, ctest -j) apart.
    root_ = fs::temp_directory_path() /
            ("sorbtrace_safety_" + std::string(info->name()) + "_" + std::to_string(::getpid()));
    fs::remove_all(root_);
    lab_ = root_ / "lab";
    fs::create_directories(lab_);
    fs::copy(fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs" / "lime_plaster_desiccator",
             lab_ / "job", fs::copy_options::recursive);
  }
  void TearDown() override {
    std::error_code ec;
    fs::permissions(root_, fs::perms::owner_all, fs::perm_options::add, ec);
    fs::remove_all(root_, ec);
  }

  // Runs `sorbtrace ARGS` in `dir` (default lab/) with extra environment `env`, under a
  // 120 s timeout; `prefix` replaces the plain command start (e.g. a `bash -c` wrapper).
  Outcome Run(const std::string& args, const std::string& env = "",
              const fs::path& dir = {}) const {
    const std::string command = "cd '" + (dir.empty() ? lab_ : dir).string() + "' && " + env +
                                " timeout 120 '" + SORBTRACE_BINARY + "' " + args + " 2>&1";
    return Shell(command);
  }

  // SHA-256 of every regular file under root (symbolic links and FIFOs are not followed).
  std::map<std::string, std::string> Snapshot() const {
    std::map<std::string, std::string> files;
    for (const auto& entry : fs::recursive_directory_iterator(root_)) {
      if (entry.is_symlink() || !entry.is_regular_file()) continue;
      files[fs::relative(entry.path(), root_).generic_string()] = Sha256HexOfFile(entry.path());
    }
    return files;
  }

  // Every file of `before` is still there with the same bytes; no temporary leftovers.
  void ExpectIntact(const std::map<std::string, std::string>& before) const {
    const auto after = Snapshot();
    for (const auto& [name, digest] : before) {
      const auto found = after.find(name);
      ASSERT_NE(found, after.end()) << name << " was deleted";
      EXPECT_EQ(found->second, digest) << name << " was changed";
    }
    ExpectNoLeftovers();
  }

  void ExpectNoLeftovers() const {
    for (const auto& entry : fs::recursive_directory_iterator(root_)) {
      const std::string name = entry.path().filename().string();
      EXPECT_EQ(name.find(".partial-"), std::string::npos) << entry.path();
      EXPECT_EQ(name.find(".tmp-"), std::string::npos) << entry.path();
    }
  }

  // A refused run: exit 3, the message, nothing changed, nothing written.
  void ExpectRefused(const std::string& args, const std::string& message,
                     const std::string& env = "", const fs::path& dir = {}) const {
    const auto before = Snapshot();
    const Outcome run = Run(args, env, dir);
    EXPECT_EQ(run.exit_code, 3) << args << "\n" << run.output;
    EXPECT_NE(run.output.find(message), std::string::npos) << args << "\n" << run.output;
    EXPECT_EQ(run.output.find("internal error"), std::string::npos) << run.output;
    ExpectIntact(before);
    EXPECT_EQ(Snapshot().size(), before.size()) << args << ": a file was written";
  }

  // A user's own folder of documents.
  fs::path Documents() const {
    const fs::path docs = lab_ / "documents";
    fs::create_directories(docs / "letters");
    std::ofstream(docs / "thesis.txt") << "chapter 1\n";
    std::ofstream(docs / "letters" / "to_client.txt") << "Dear client\n";
    return docs;
  }

  // A second job folder `name` (copy of the example) with job id `id`.
  fs::path JobWithId(const fs::path& folder, const std::string& id) const {
    fs::copy(lab_ / "job", folder, fs::copy_options::recursive);
    std::string text = ReadWholeFile(folder / "job.toml");
    const std::string original = std::string("id = \"") + kJobId + "\"";
    text.replace(text.find(original), original.size(), "id = \"" + id + "\"");
    std::ofstream(folder / "job.toml", std::ios::trunc) << text;
    return folder;
  }

  fs::path root_;
  fs::path lab_;
};

// --- make --out: only folders sorbtrace wrote are replaced ------------------------------

TEST_F(OutputSafetyTest, MakeRefusesAFolderOfTheUsersDocuments) {
  Documents();
  ExpectRefused("make job/job.toml --out documents", "not written by sorbtrace");
  ExpectRefused("make job/job.toml --out documents/letters", "not written by sorbtrace");
  ExpectRefused("make job/job.toml --out " + (lab_ / "documents").string(),
                "not written by sorbtrace");
  // A folder holding only a hidden file is not empty either.
  fs::create_directories(lab_ / "hidden");
  std::ofstream(lab_ / "hidden" / ".settings") << "x";
  ExpectRefused("make job/job.toml --out hidden", "not written by sorbtrace");
}

TEST_F(OutputSafetyTest, MakeRefusesTheJobFolderTheCurrentFolderAndTheirParents) {
  ExpectRefused("make job/job.toml --out job", "input");
  ExpectRefused("make job/job.toml --out " + (lab_ / "job").string(), "input");
  ExpectRefused("make job/job.toml --out job/../job", "input");
  ExpectRefused("make job/job.toml --out .", "current folder");
  ExpectRefused("make job/job.toml --out ..", "current folder");
  ExpectRefused("make job/job.toml --out ./", "current folder");
  // Run inside the job folder with --out "$PWD", as the user did.
  ExpectRefused("make job.toml --out \"$PWD\"", "current folder", "", lab_ / "job");
  ExpectRefused("make job.toml --out ../", "current folder", "", lab_ / "job");
}

TEST_F(OutputSafetyTest, MakeRefusesAnInputFileAndPathsBelowIt) {
  ExpectRefused("make job/job.toml --out job/data/desiccator.csv", "input job/data/desiccator.csv");
  ExpectRefused("make job/job.toml --out job/job.toml", "input job/job.toml");
  ExpectRefused("make job/job.toml --out job/data", "input");
  // Below a regular file: neither an input nor creatable.
  std::ofstream(lab_ / "notes.txt") << "mine\n";
  ExpectRefused("make job/job.toml --out notes.txt", "existing file");
  ExpectRefused("make job/job.toml --out notes.txt/out", "is a file, not a folder");
}

TEST_F(OutputSafetyTest, MakeRefusesRootAndTheHomeFolder) {
  ExpectRefused("make job/job.toml --out /", "root folder");
  fs::create_directories(lab_ / "home" / "user");
  std::ofstream(lab_ / "home" / "user" / "diary.txt") << "private\n";
  const std::string home = "HOME='" + (lab_ / "home" / "user").string() + "'";
  ExpectRefused("make job/job.toml --out home/user", "home folder", home);
  ExpectRefused("make job/job.toml --out home", "home folder", home);
  ExpectRefused("make job/job.toml --out " + (lab_ / "home" / "user").string(), "home folder",
                home);
}

TEST_F(OutputSafetyTest, MakeNamesItsDefaultFolderAfterTheJobIdAndReplacesOnlyItsOwnOutput) {
  // Two job files both called job.toml get two folders (named after their ids).
  JobWithId(lab_ / "second", "HBPL/2026:0999");
  ASSERT_EQ(Run("make job/job.toml -q").exit_code, 0);
  ASSERT_EQ(Run("make second/job.toml -q").exit_code, 0);
  const fs::path first_out = lab_ / "sorbtrace_output" / kJobId;
  const fs::path second_out = lab_ / "sorbtrace_output" / "HBPL_2026_0999";
  ASSERT_TRUE(fs::exists(first_out / "datasheet.pdf"));
  ASSERT_TRUE(fs::exists(second_out / "datasheet.pdf"));
  const std::string marker = ReadWholeFile(first_out / ".sorbtrace-output");
  EXPECT_EQ(marker.rfind("sorbtrace output folder\njob_id: HBPL-2026-0307\n", 0), 0u) << marker;
  EXPECT_NE(marker.find("file: results.json\n"), std::string::npos) << marker;

  // The same job again: its own folder is replaced, nothing else is touched.
  std::ofstream(lab_ / "sorbtrace_output" / "readme.txt") << "next to the outputs\n";
  const auto before = Snapshot();
  const Outcome again = Run("make job/job.toml -q");
  EXPECT_EQ(again.exit_code, 0) << again.output;
  ExpectIntact(before);

  // Another job into the first job's folder: refused.
  ExpectRefused("make second/job.toml --out sorbtrace_output/" + std::string(kJobId),
                "output of another job");
  // A file the user put into an output folder is never deleted by the next run.
  std::ofstream(first_out / "my_notes.txt") << "signed by hand\n";
  ExpectRefused("make job/job.toml -q", "my_notes.txt");
  fs::remove(first_out / "my_notes.txt");
  // A forged or damaged marker is not sorbtrace's.
  std::ofstream(first_out / ".sorbtrace-output", std::ios::trunc) << "hello\n";
  ExpectRefused("make job/job.toml -q", "not a sorbtrace marker");
}

// --- batch: output root and names -------------------------------------------------------

TEST_F(OutputSafetyTest, BatchRefusesOutputRootsThatCouldReplaceInputs) {
  fs::create_directories(lab_ / "jobs");
  fs::rename(lab_ / "job", lab_ / "jobs" / "a");
  ExpectRefused("batch jobs --out jobs -q", "job folder");
  ExpectRefused("batch jobs --out jobs/a -q", "job folder");
  ExpectRefused("batch jobs --out jobs/out -q", "job folder");
  ExpectRefused("batch jobs --out . -q", "current folder");
  ExpectRefused("batch jobs --out .. -q", "current folder");
  Documents();
  ExpectRefused("batch jobs --out documents -q", "not written by `sorbtrace batch`");
}

TEST_F(OutputSafetyTest, BatchGivesJobsMappingToOneFolderDistinctDisjointFolders) {
  // jobs/a.toml and jobs/a/job.toml: the same job id; jobs/c has id "X/1", jobs/d "X_1":
  // different ids that give the same folder name.
  fs::create_directories(lab_ / "jobs");
  fs::copy(lab_ / "job", lab_ / "jobs" / "a", fs::copy_options::recursive);
  std::string text = ReadWholeFile(lab_ / "job" / "job.toml");
  text.replace(text.find("\"data/"), 6, "\"a/data/");
  text.replace(text.find("\"lab_profile.toml\""), 18, "\"a/lab_profile.toml\"");
  std::ofstream(lab_ / "jobs" / "a.toml") << text;
  JobWithId(lab_ / "jobs" / "c", "X/1");
  JobWithId(lab_ / "jobs" / "d", "X_1");
  // As an editor on another system saves it: byte-order mark and CRLF line ends.
  std::string crlf = "\xEF\xBB\xBF";
  for (const char c : ReadWholeFile(lab_ / "jobs" / "d" / "job.toml")) {
    crlf += c == '\n' ? std::string("\r\n") : std::string(1, c);
  }
  std::ofstream(lab_ / "jobs" / "d" / "job.toml", std::ios::trunc | std::ios::binary) << crlf;
  const auto before = Snapshot();
  const Outcome run = Run("batch jobs --out bout -q -j 2");
  ASSERT_EQ(run.exit_code, 0) << run.output;
  ExpectIntact(before);
  const std::string summary = ReadWholeFile(lab_ / "bout" / "summary.csv");
  // Four rows, four different folders, each directly under bout/ and holding its datasheet.
  std::vector<std::string> folders;
  for (const std::string name : {kJobId, "HBPL-2026-0307-2", "X_1", "X_1-2"}) {
    EXPECT_NE(summary.find(",ok,0,bout/" + name + ","), std::string::npos) << name << summary;
    EXPECT_TRUE(fs::exists(lab_ / "bout" / name / "datasheet.pdf")) << name;
  }
  EXPECT_NE(summary.find("output folder renamed to HBPL-2026-0307-2"), std::string::npos)
      << summary;
  EXPECT_NE(summary.find("output folder renamed to X_1-2"), std::string::npos) << summary;
  // The second folder holds the job listed second in path order (jobs/a/job.toml < a.toml).
  const auto second =
      nlohmann::json::parse(ReadWholeFile(lab_ / "bout" / "HBPL-2026-0307-2" / "results.json"));
  EXPECT_NE(second["settings"]["job_file"].get<std::string>().find("a.toml"), std::string::npos);

  // The same batch again reuses its folders (byte-identical outputs).
  const std::string pdf = Sha256HexOfFile(lab_ / "bout" / "X_1-2" / "datasheet.pdf");
  ASSERT_EQ(Run("batch jobs --out bout -q -j 2").exit_code, 0);
  EXPECT_EQ(Sha256HexOfFile(lab_ / "bout" / "X_1-2" / "datasheet.pdf"), pdf);
}

TEST_F(OutputSafetyTest, BatchSurvivesACrashingJob) {
  fs::create_directories(lab_ / "jobs");
  JobWithId(lab_ / "jobs" / "b", "CRASH-1");
  JobWithId(lab_ / "jobs" / "c", "GOOD-3");
  fs::rename(lab_ / "job", lab_ / "jobs" / "a");
  // Under AddressSanitizer its SIGSEGV handler would turn the crash into exit 1 with a report;
  // handle_segv=0 keeps the real signal (the binary as shipped has no such handler).
  const std::string crash =
      "SORBTRACE_TEST_CRASH_JOB_ID=CRASH-1 ASAN_OPTIONS=handle_segv=0:detect_leaks=0";
  const auto before = Snapshot();
  const Outcome run = Run("batch jobs --out bout -q -j 2", crash);
  EXPECT_EQ(run.exit_code, 6) << run.output;
  ExpectIntact(before);
  const std::string summary = ReadWholeFile(lab_ / "bout" / "summary.csv");
  EXPECT_NE(summary.find("jobs/b/job.toml,CRASH-1,failed,70,"), std::string::npos) << summary;
  EXPECT_NE(summary.find("crashed (signal 11"), std::string::npos) << summary;
  EXPECT_NE(summary.find(std::string(",") + kJobId + ",ok,0,"), std::string::npos) << summary;
  EXPECT_NE(summary.find(",GOOD-3,ok,0,"), std::string::npos) << summary;
  EXPECT_TRUE(fs::exists(lab_ / "bout" / kJobId / "datasheet.pdf"));
  EXPECT_TRUE(fs::exists(lab_ / "bout" / "GOOD-3" / "datasheet.pdf"));
  EXPECT_FALSE(fs::exists(lab_ / "bout" / "CRASH-1"));
  // With one worker too; and the hook is inert outside a batch.
  EXPECT_EQ(Run("batch jobs --out bout1 -q -j 1", crash).exit_code, 6);
  EXPECT_EQ(Run("make jobs/b/job.toml --out single -q", crash).exit_code, 0);
}

TEST_F(OutputSafetyTest, BatchReportsJobFilesThatAreNotRegularFiles) {
  fs::create_directories(lab_ / "jobs");
  fs::rename(lab_ / "job", lab_ / "jobs" / "a");
  ASSERT_EQ(::mkfifo((lab_ / "jobs" / "pipe.toml").c_str(), 0644), 0);
  fs::create_symlink("loop_b.toml", lab_ / "jobs" / "loop_a.toml");
  fs::create_symlink("loop_a.toml", lab_ / "jobs" / "loop_b.toml");
  fs::create_directory_symlink("..", lab_ / "jobs" / "a" / "up");  // a folder loop
  const Outcome run = Run("batch jobs --out bout -q");
  EXPECT_EQ(run.exit_code, 6) << run.output;
  const std::string summary = ReadWholeFile(lab_ / "bout" / "summary.csv");
  EXPECT_NE(summary.find("jobs/pipe.toml: is a FIFO"), std::string::npos) << summary;
  EXPECT_NE(summary.find("jobs/loop_a.toml: is a symbolic-link loop"), std::string::npos)
      << summary;
  EXPECT_NE(summary.find(std::string(",") + kJobId + ",ok,0,"), std::string::npos) << summary;
  EXPECT_EQ(summary.find("internal error"), std::string::npos) << summary;
}

// --- verify ----------------------------------------------------------------------------

class VerifySafetyTest : public OutputSafetyTest {
 protected:
  void SetUp() override {
    OutputSafetyTest::SetUp();
    const Outcome issued = Run("make job/job.toml --out issued -q");
    ASSERT_EQ(issued.exit_code, 0) << issued.output;
  }
};

TEST_F(VerifySafetyTest, ReportNeverOverwritesAnInputOrAForeignFile) {
  ExpectRefused("verify issued/results.json --report job/job.toml", "is the input");
  ExpectRefused("verify issued/results.json --report issued/results.json", "is the input");
  ExpectRefused("verify issued/results.json --report job/data/desiccator.csv", "is the input");
  // A hard link to the job file is the job file.
  ASSERT_EQ(::link((lab_ / "job" / "job.toml").c_str(), (lab_ / "job_link.toml").c_str()), 0);
  ExpectRefused("verify issued/results.json --report job_link.toml", "is the input");
  std::ofstream(lab_ / "notes.txt") << "mine\n";
  ExpectRefused("verify issued/results.json --report notes.txt", "not a report");
  fs::create_directories(lab_ / "folder");
  ExpectRefused("verify issued/results.json --report folder", "not a regular file");
  // A new file, and then the same report again (its own earlier report is replaced).
  for (int i = 0; i < 2; ++i) {
    const Outcome run = Run("verify issued/results.json --report report.txt");
    EXPECT_EQ(run.exit_code, 0) << run.output;
    EXPECT_EQ(ReadWholeFile(lab_ / "report.txt").rfind("sorbtrace verification report\n", 0), 0u);
  }
  ExpectNoLeftovers();
}

TEST_F(VerifySafetyTest, ExitCodeMatchesTheVerdict) {
  fs::copy(lab_ / "job", lab_ / "moved", fs::copy_options::recursive);
  // The job at another place, named with --job: same numbers, verdict pass, exit 0.
  Outcome run = Run("verify issued/results.json --job moved/job.toml");
  EXPECT_EQ(run.exit_code, 0) << run.output;
  EXPECT_NE(run.output.find(", 0 mismatch(es)"), std::string::npos) << run.output;
  // One recorded number changed: the edited results.json no longer matches outputs.sha256 and
  // the number no longer matches its recomputation, "2 mismatch(es)" with exit 5, with and
  // without --job.
  auto results = nlohmann::json::parse(ReadWholeFile(lab_ / "issued" / "results.json"));
  std::string pointer;
  const nlohmann::json flat = results.flatten();
  for (const auto& [key, value] : flat.items()) {
    if (value.is_number_float() && key.rfind("/fits/", 0) == 0 && value.get<double>() != 0.0) {
      pointer = key;
      break;
    }
  }
  ASSERT_FALSE(pointer.empty());
  const nlohmann::json::json_pointer where(pointer);
  results[where] = results[where].get<double>() * 1.01;
  std::ofstream(lab_ / "issued" / "results.json", std::ios::trunc) << results.dump(1);
  for (const std::string job : {"", " --job moved/job.toml", " --job job/job.toml"}) {
    run = Run("verify issued/results.json" + job);
    EXPECT_EQ(run.exit_code, 5) << job << run.output;
    EXPECT_NE(run.output.find(", 2 mismatch(es)"), std::string::npos) << job << run.output;
    EXPECT_NE(run.output.find("FAIL  output results.json  sha256 CHANGED"), std::string::npos)
        << job << run.output;
  }
}

TEST_F(VerifySafetyTest, RecordedInputsOutsideTheJobFolderAreNotOpened) {
  std::ofstream(lab_ / "outside.txt") << "SECRET-LINE\n";
  auto results = nlohmann::json::parse(ReadWholeFile(lab_ / "issued" / "results.json"));
  for (const std::string& path : std::vector<std::string>{
           "../outside.txt", (lab_ / "outside.txt").string(), "data/../../outside.txt"}) {
    auto edited = results;
    for (auto& input : edited["inputs"]) {
      if (input.value("role", std::string()) == "desiccator") input["path"] = path;
    }
    std::ofstream(lab_ / "issued" / "results.json", std::ios::trunc) << edited.dump(1);
    const Outcome refused = Run("verify issued/results.json");
    EXPECT_EQ(refused.exit_code, 3) << path << refused.output;
    EXPECT_NE(refused.output.find("outside the job folder"), std::string::npos) << refused.output;
    EXPECT_EQ(refused.output.find("SECRET"), std::string::npos) << refused.output;
    // Named by the auditor: it is hashed (and differs from the recorded data file).
    const Outcome allowed = Run("verify issued/results.json --allow-input outside.txt");
    EXPECT_EQ(allowed.exit_code, 5) << path << allowed.output;
    EXPECT_NE(allowed.output.find("CHANGED"), std::string::npos) << allowed.output;
    EXPECT_EQ(allowed.output.find("SECRET"), std::string::npos) << allowed.output;
  }
}

TEST_F(VerifySafetyTest, HostileResultsFilesAreRefusedNotCrashedOn) {
  const auto results = nlohmann::json::parse(ReadWholeFile(lab_ / "issued" / "results.json"));
  auto write = [&](const nlohmann::json& edited) {
    std::ofstream(lab_ / "issued" / "results.json", std::ios::trunc) << edited.dump(1);
  };
  // A template recorded with an absolute or escaping path is not opened either.
  for (const std::string& path : std::vector<std::string>{"/etc/hostname", "../../outside.toml"}) {
    auto edited = results;
    for (auto& input : edited["inputs"]) {
      if (input.value("role", std::string()) == "template") input["path"] = path;
    }
    write(edited);
    const Outcome run = Run("verify issued/results.json");
    EXPECT_EQ(run.exit_code, 3) << path << run.output;
    EXPECT_NE(run.output.find("outside the job folder"), std::string::npos) << run.output;
  }
  // Wrong types where strings belong: bad input (3) naming the field, never a crash.
  auto edited = results;
  edited["inputs"][0]["role"] = 7;
  write(edited);
  Outcome run = Run("verify issued/results.json");
  EXPECT_EQ(run.exit_code, 3) << run.output;
  EXPECT_NE(run.output.find("inputs[0].role is not a string"), std::string::npos) << run.output;
  edited = results;
  edited["settings"]["job_file"] = 42;
  write(edited);
  run = Run("verify issued/results.json");
  EXPECT_EQ(run.exit_code, 3) << run.output;
  // Nesting far beyond any results.json: refused with its place.
  std::ofstream(lab_ / "issued" / "results.json", std::ios::trunc)
      << std::string(100000, '[') << std::string(100000, ']');
  run = Run("verify issued/results.json");
  EXPECT_EQ(run.exit_code, 3) << run.output;
  EXPECT_NE(run.output.find("issued/results.json:1:65: error: nesting deeper than 64"),
            std::string::npos)
      << run.output;
}

// --- only regular files are read --------------------------------------------------------

TEST_F(VerifySafetyTest, NonRegularInputsAreNamedAndNeverRead) {
  const fs::path data = lab_ / "job" / "data" / "desiccator.csv";
  const std::string saved = ReadWholeFile(data);
  fs::remove(data);
  struct Variant {
    std::string name;
    std::string message;      // of verify, which hashes the recorded path
    std::string job_message;  // of check and make
  };
  // A link to /dev/zero is named as what it is (a device) before the data-path policy looks
  // where it points.
  for (const Variant& variant :
       {Variant{"fifo", "is a FIFO", "is a FIFO"}, Variant{"zero", "is a device", "is a device"},
        Variant{"folder", "is a folder", "is a folder"},
        Variant{"loop", "symbolic-link loop", "symbolic-link loop"}}) {
    if (variant.name == "fifo") {
      ASSERT_EQ(::mkfifo(data.c_str(), 0644), 0);
    }
    if (variant.name == "zero") fs::create_symlink("/dev/zero", data);
    if (variant.name == "folder") fs::create_directory(data);
    if (variant.name == "loop") fs::create_symlink("desiccator.csv", data);
    for (const std::string verb : {"check job/job.toml", "make job/job.toml --out fresh -q"}) {
      const Outcome run = Run(verb);
      EXPECT_EQ(run.exit_code, 3) << variant.name << " " << verb << run.output;
      EXPECT_NE(run.output.find("job/job.toml:48:"), std::string::npos) << run.output;
      EXPECT_NE(run.output.find(variant.job_message), std::string::npos) << run.output;
      EXPECT_EQ(run.output.find("not found"), std::string::npos) << run.output;
    }
    EXPECT_FALSE(fs::exists(lab_ / "fresh"));
    // verify: the input is no longer the recorded file (exit 5), named as what it is.
    const Outcome audit = Run("verify issued/results.json");
    EXPECT_EQ(audit.exit_code, 5) << variant.name << audit.output;
    EXPECT_NE(audit.output.find(variant.message), std::string::npos) << audit.output;
    fs::remove(data);
  }
  std::ofstream(data) << saved;
  // The job file and results.json themselves.
  ASSERT_EQ(::mkfifo((lab_ / "pipe.toml").c_str(), 0644), 0);
  fs::create_symlink("/dev/zero", lab_ / "zero.json");
  fs::create_symlink("self.toml", lab_ / "self.toml");
  for (const std::string verb : {"check ", "make --out fresh -q "}) {
    for (const auto& [file, message] :
         std::map<std::string, std::string>{{"pipe.toml", "is a FIFO"},
                                            {"self.toml", "is a symbolic-link loop"},
                                            {"job", "is a folder"}}) {
      const Outcome run = Run(verb + file);
      EXPECT_EQ(run.exit_code, 3) << verb << file << run.output;
      EXPECT_NE(run.output.find(file + ": error: " + message), std::string::npos) << run.output;
    }
  }
  EXPECT_FALSE(fs::exists(lab_ / "fresh"));
  const Outcome zero = Run("verify zero.json");
  EXPECT_EQ(zero.exit_code, 3) << zero.output;
  EXPECT_NE(zero.output.find("is a device"), std::string::npos) << zero.output;
  const Outcome pipe = Run("verify pipe.toml");
  EXPECT_EQ(pipe.exit_code, 3) << pipe.output;
  EXPECT_NE(pipe.output.find("is a FIFO"), std::string::npos) << pipe.output;
}

// --- full disk and signals --------------------------------------------------------------

TEST_F(OutputSafetyTest, FileSizeLimitIsAnOutputErrorWithNoPartialOutput) {
  ASSERT_EQ(Run("make job/job.toml --out issued -q").exit_code, 0);
  const auto before = Snapshot();
  // ulimit -f counts 1024-byte blocks in bash: 50 KiB, less than one datasheet.
  const std::string limited = "bash -c \"ulimit -f 50; exec '" + std::string(SORBTRACE_BINARY) +
                              "' make job/job.toml --out ";
  for (const std::string out : {"issued", "fresh", "new/deeper/folder"}) {
    const Outcome run =
        Shell("cd '" + lab_.string() + "' && timeout 120 " + limited + out + " -q\" 2>&1");
    EXPECT_EQ(run.exit_code, 7) << out << run.output;
    EXPECT_NE(run.output.find("File too large"), std::string::npos) << run.output;
    EXPECT_EQ(run.output.find("internal error"), std::string::npos) << run.output;
    ExpectIntact(before);
    EXPECT_EQ(Snapshot().size(), before.size());
  }
  EXPECT_FALSE(fs::exists(lab_ / "fresh"));
  EXPECT_FALSE(fs::exists(lab_ / "new"));
  // A batch under the same limit: every job is a failed row with exit 7; summary written.
  fs::create_directories(lab_ / "jobs");
  fs::copy(lab_ / "job", lab_ / "jobs" / "a", fs::copy_options::recursive);
  const Outcome batch =
      Shell("cd '" + lab_.string() + "' && timeout 120 bash -c \"ulimit -f 50; exec '" +
            std::string(SORBTRACE_BINARY) + "' batch jobs --out bout -q\" 2>&1");
  EXPECT_EQ(batch.exit_code, 6) << batch.output;
  const std::string summary = ReadWholeFile(lab_ / "bout" / "summary.csv");
  EXPECT_NE(summary.find(",failed,7,"), std::string::npos) << summary;
  EXPECT_NE(summary.find("File too large"), std::string::npos) << summary;
  ExpectNoLeftovers();
}

// sysfs refuses new folders even to root (EPERM), so this holds whoever runs the tests.
TEST_F(OutputSafetyTest, UnwritableOutputFolderIsAnOutputError) {
  if (!fs::is_directory("/sys/kernel")) GTEST_SKIP() << "no sysfs at /sys";
  const auto before = Snapshot();
  for (const std::string args :
       {"make job/job.toml --out /sys/sorbtrace_test_out -q",
        "batch job --out /sys/sorbtrace_test_batch -q", "make job/job.toml --out issued -q"}) {
    if (args.find("issued") != std::string::npos) {
      // Then verify's report into the same place.
      ASSERT_EQ(Run(args).exit_code, 0);
      const Outcome run = Run("verify issued/results.json --report /sys/sorbtrace_test_report.txt");
      EXPECT_EQ(run.exit_code, 7) << run.output;
      EXPECT_NE(run.output.find("not writable"), std::string::npos) << run.output;
      continue;
    }
    const Outcome run = Run(args);
    EXPECT_EQ(run.exit_code, 7) << args << run.output;
    EXPECT_NE(run.output.find("output error: cannot write /sys/sorbtrace_test_"), std::string::npos)
        << run.output;
    EXPECT_NE(run.output.find("not writable"), std::string::npos) << run.output;
    EXPECT_EQ(run.output.find("internal error"), std::string::npos) << run.output;
    ExpectIntact(before);
  }
}

TEST_F(OutputSafetyTest, StoppingSignalsLeaveNoTemporaryFiles) {
  ASSERT_EQ(Run("make job/job.toml --out issued -q").exit_code, 0);
  const auto before = Snapshot();
  // At a known moment: after the first file of the staging folder is written.
  for (const auto& [signal_number, name] :
       std::map<int, std::string>{{SIGINT, "SIGINT"}, {SIGTERM, "SIGTERM"}, {SIGHUP, "SIGHUP"}}) {
    const std::string env = "SORBTRACE_TEST_SIGNAL_WHILE_WRITING=" + std::to_string(signal_number);
    for (const std::string out : {"issued", "fresh", "new/deeper/folder"}) {
      const Outcome run = Run("make job/job.toml --out " + out + " -q", env);
      EXPECT_EQ(run.exit_code, 128 + signal_number) << name << " " << out << run.output;
      ExpectIntact(before);
      EXPECT_EQ(Snapshot().size(), before.size()) << name;
    }
    EXPECT_FALSE(fs::exists(lab_ / "fresh")) << name;
    EXPECT_FALSE(fs::exists(lab_ / "new")) << name << ": created parent folders remain";
  }
  // From outside, at moments spread over a run (about one second on the reference machine).
  for (int delay_ms : {50, 200, 400, 600, 800, 1000}) {
    const pid_t child = fork();
    if (child == 0) {
      // The same arguments as the first run (run.log records the job path as given).
      if (::chdir(lab_.c_str()) != 0) _exit(127);
      execl(SORBTRACE_BINARY, SORBTRACE_BINARY, "make", "job/job.toml", "--out", "issued", "-q",
            static_cast<char*>(nullptr));
      _exit(127);
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(delay_ms));
    kill(child, SIGTERM);
    int status = 0;
    waitpid(child, &status, 0);
    EXPECT_TRUE(WIFSIGNALED(status) || (WIFEXITED(status) && WEXITSTATUS(status) == 0));
    ExpectIntact(before);  // the run is deterministic: a finished run rewrites the same bytes
  }
}

}  // namespace
}  // namespace sorbtrace
