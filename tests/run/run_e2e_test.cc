// End-to-end tests of `make`, `verify` and `batch` on the real binary and a fresh copy of
// example_inputs/: outputs exist and are byte-identical across runs, the audit passes on a
// fresh output and fails (naming the file or quantity) after one byte of an input or one
// reported number changes, a batch with a broken job reports it without stopping the others,
// and a run killed half-way leaves the earlier output folder intact.
#include <gtest/gtest.h>
#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <string>
#include <thread>
#include <vector>

#include "pipeline/common/files.h"
#include "tests/common/e2e_support.h"

namespace sorbtrace {
namespace {

namespace fs = std::filesystem;

using CommandRun = e2e::Outcome;
using e2e::Sorbtrace;

// A fresh copy of example_inputs/ in a temporary folder, so tests never touch the originals.
class RunE2eTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    root_ = e2e::FreshDir("e2e", info->name());
    fs::copy(fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs", root_ / "inputs",
             fs::copy_options::recursive);
  }
  void TearDown() override { fs::remove_all(root_); }

  std::vector<fs::path> Jobs() const {
    std::vector<fs::path> jobs;
    for (const auto& entry : fs::directory_iterator(root_ / "inputs")) {
      if (fs::exists(entry.path() / "job.toml")) jobs.push_back(entry.path() / "job.toml");
    }
    std::sort(jobs.begin(), jobs.end());
    return jobs;
  }

  fs::path root_;
};

TEST_F(RunE2eTest, EveryDemoJobIssuesAFolderThatVerifies) {
  const auto jobs = Jobs();
  ASSERT_GE(jobs.size(), 3u) << "example_inputs/ should hold the demo scenarios";
  for (const auto& job : jobs) {
    const fs::path out = root_ / "out" / job.parent_path().filename();
    const CommandRun made = Sorbtrace("make " + job.string() + " --out " + out.string() + " -q");
    ASSERT_EQ(made.exit_code, 0) << job << "\n" << made.output;
    for (const char* name : {"datasheet.pdf", "results.json", "run.log"}) {
      EXPECT_TRUE(fs::exists(out / name)) << out / name;
    }
    EXPECT_LT(fs::file_size(out / "datasheet.pdf"), 500u * 1024u);  // issue target: < 500 KB
    const CommandRun verified = Sorbtrace("verify " + (out / "results.json").string());
    EXPECT_EQ(verified.exit_code, 0) << verified.output;
    EXPECT_NE(verified.output.find("0 mismatch"), std::string::npos) << verified.output;
  }
}

double Gab(double a, double xm, double c, double k) {
  return xm * c * k * a / ((1 - k * a) * (1 - k * a + c * k * a));
}

// The demo data were generated from known GAB isotherms (example_inputs/truth.json, written
// by scripts/generate_examples.cc with its noise and kinetics). The issued results must
// recover that truth within their own reported expanded uncertainties (k = 2): the GAB
// parameters of every branch and temperature, and the moisture content at the reference
// conditions of the same temperature.
TEST_F(RunE2eTest, ResultsRecoverTheTruthBehindTheDemoDataWithinTheirUncertainties) {
  const auto truth = nlohmann::json::parse(ReadWholeFile(root_ / "inputs" / "truth.json"));
  int parameters_checked = 0;
  int references_checked = 0;
  for (const auto& scenario : truth["scenarios"]) {
    const std::string name = scenario["scenario"];
    const fs::path out = root_ / "out" / name;
    const CommandRun made = Sorbtrace("make " + (root_ / "inputs" / name / "job.toml").string() +
                                      " --out " + out.string() + " -q");
    ASSERT_EQ(made.exit_code, 0) << name << made.output;
    const auto results = nlohmann::json::parse(ReadWholeFile(out / "results.json"));
    const auto& groups = results["fits"]["groups"];
    auto truth_for = [&](const std::string& branch, double temperature_K) -> const nlohmann::json* {
      for (const auto& isotherm : scenario["isotherms"]) {
        if (isotherm["branch"] == branch &&
            std::abs(isotherm["temperature_C"].get<double>() + 273.15 - temperature_K) < 1.0) {
          return &isotherm["gab"];
        }
      }
      return nullptr;
    };
    for (const auto& fit : results["fits"]["models"]) {
      if (fit["model"] != "gab") continue;
      const auto& group = groups[fit["group_index"].get<size_t>()];
      const nlohmann::json* gab = truth_for(group["branch"], group["temperature_K"]);
      ASSERT_NE(gab, nullptr) << name << " " << group.dump();
      const double expected[3] = {(*gab)["xm_kg_per_kg"], (*gab)["c"], (*gab)["k"]};
      for (int i = 0; i < 3; ++i) {
        const auto& parameter = fit["parameters"][static_cast<size_t>(i)];
        EXPECT_LE(std::abs(parameter["value"].get<double>() - expected[i]),
                  parameter["expanded_uncertainty"].get<double>())
            << name << " " << group["label"] << " " << parameter["label"] << " = "
            << parameter["text"] << ", truth " << expected[i];
        ++parameters_checked;
      }
    }
    for (const auto& reference : results["pores"]["reference_moisture"]) {
      const nlohmann::json* gab = truth_for(reference["branch"], reference["temperature_K"]);
      if (gab == nullptr) continue;  // reference temperature not measured (e.g. 23 C vs 25 C)
      const double expected =
          Gab(reference["rh_fraction"], (*gab)["xm_kg_per_kg"], (*gab)["c"], (*gab)["k"]);
      EXPECT_LE(std::abs(reference["value"].get<double>() - expected),
                reference["expanded_uncertainty"].get<double>())
          << name << " " << reference["text"] << ", truth " << expected;
      ++references_checked;
    }
  }
  EXPECT_GE(parameters_checked, 3 * 8);  // 8 GAB fits across the four scenarios
  EXPECT_GE(references_checked, 4);
}

TEST_F(RunE2eTest, SameInputsGiveByteIdenticalOutputs) {
  const fs::path job = Jobs().front();
  ASSERT_EQ(
      Sorbtrace("make " + job.string() + " --out " + (root_ / "a").string() + " -q").exit_code, 0);
  ASSERT_EQ(
      Sorbtrace("make " + job.string() + " --out " + (root_ / "b").string() + " -q").exit_code, 0);
  for (const auto& entry : fs::directory_iterator(root_ / "a")) {
    const auto name = entry.path().filename();
    if (name == "results.json") continue;  // records the job path relative to the folder
    EXPECT_EQ(Sha256HexOfFile(entry.path()), Sha256HexOfFile(root_ / "b" / name)) << name;
  }
  // results.json differs only by the recorded relative job path when the folders differ in
  // name; both sit at the same depth here, so they are identical too.
  EXPECT_EQ(Sha256HexOfFile(root_ / "a" / "results.json"),
            Sha256HexOfFile(root_ / "b" / "results.json"));
}

// A lab runs `make` with a job path relative to its working folder; the auditor runs `verify`
// from elsewhere with an absolute path. Nothing recorded may depend on either working folder.
TEST_F(RunE2eTest, AuditPassesWhateverTheWorkingFoldersOfMakeAndVerify) {
  const fs::path job = Jobs().front();
  const fs::path relative_job = fs::relative(job, root_);
  const std::string make = "cd " + root_.string() + " && " + std::string(SORBTRACE_BINARY) +
                           " make " + relative_job.string() + " --out issued -q 2>&1";
  ASSERT_EQ(std::system(make.c_str()), 0);
  const CommandRun audit = Sorbtrace("verify " + (root_ / "issued" / "results.json").string());
  EXPECT_EQ(audit.exit_code, 0) << audit.output;
}

// The progress lines name the job as it was given: "folder/job.toml", or "job.toml" when make
// runs in the job's own folder (it printed "/job.toml").
TEST_F(RunE2eTest, ProgressLinesNameTheJobFile) {
  const fs::path job = Jobs().front();
  const CommandRun own = Sorbtrace(job.parent_path(), "make job.toml --out issued");
  ASSERT_EQ(own.exit_code, 0) << own.output;
  EXPECT_NE(own.output.find("[1/6] job.toml: ingest"), std::string::npos) << own.output;
  const std::string folder = job.parent_path().filename().string();
  const CommandRun given =
      Sorbtrace("make " + job.string() + " --out " + (root_ / "issued2").string());
  ASSERT_EQ(given.exit_code, 0) << given.output;
  EXPECT_NE(given.output.find("[1/6] " + folder + "/job.toml: ingest"), std::string::npos)
      << given.output;
}

// `check` and `make` run the same first stages in the same order (run::PrepareJob): check
// lists the inputs results.json records (job file, data files, template), in the same order.
TEST_F(RunE2eTest, CheckListsTheInputsResultsJsonRecords) {
  const fs::path job = Jobs().front();
  const fs::path out = root_ / "out";
  ASSERT_EQ(Sorbtrace("make " + job.string() + " --out " + out.string() + " -q").exit_code, 0);
  const CommandRun checked = Sorbtrace("check " + job.string() + " --json");
  ASSERT_EQ(checked.exit_code, 0) << checked.output;
  const auto check = nlohmann::json::parse(checked.output.substr(checked.output.find('{')));
  std::ifstream results_file(out / "results.json");
  const auto results = nlohmann::json::parse(results_file);
  std::vector<std::string> from_check;
  std::vector<std::string> from_results;
  for (const auto& input : check["inputs"]) from_check.push_back(input["role"]);
  for (const auto& input : results["inputs"]) from_results.push_back(input["role"]);
  EXPECT_EQ(from_check, from_results);
  ASSERT_GE(from_check.size(), 3u);
  EXPECT_EQ(from_check.back(), "template");
}

TEST_F(RunE2eTest, AuditFailsAfterOneInputByteChanges) {
  const fs::path job = Jobs().front();
  const fs::path out = root_ / "out";
  ASSERT_EQ(Sorbtrace("make " + job.string() + " --out " + out.string() + " -q").exit_code, 0);
  const auto results = nlohmann::json::parse(ReadWholeFile(out / "results.json"));
  // Change one byte of the first data file (a digit in its last line).
  std::string data_path;
  for (const auto& input : results["inputs"]) {
    if (input["role"] != "job" && input["role"] != "template") {
      data_path = input["path"];
      break;
    }
  }
  ASSERT_FALSE(data_path.empty());
  const fs::path data = job.parent_path() / data_path;
  std::string content = ReadWholeFile(data);
  const size_t digit = content.find_last_of("123456789");
  ASSERT_NE(digit, std::string::npos);
  content[digit] = content[digit] == '9' ? '8' : static_cast<char>(content[digit] + 1);
  std::ofstream(data, std::ios::binary) << content;
  const CommandRun verified = Sorbtrace("verify " + (out / "results.json").string());
  EXPECT_EQ(verified.exit_code, 5) << verified.output;
  EXPECT_NE(verified.output.find("CHANGED"), std::string::npos) << verified.output;
  EXPECT_NE(verified.output.find(fs::path(data_path).filename().string()), std::string::npos)
      << verified.output;
}

TEST_F(RunE2eTest, AuditFailsAfterOneReportedNumberChanges) {
  const fs::path job = Jobs().front();
  const fs::path out = root_ / "out";
  ASSERT_EQ(Sorbtrace("make " + job.string() + " --out " + out.string() + " -q").exit_code, 0);
  auto results = nlohmann::json::parse(ReadWholeFile(out / "results.json"));
  // Find the first fitted parameter value anywhere and nudge it by 1 %.
  std::string changed_pointer;
  const auto flat = results.flatten();
  for (const auto& [pointer, value] : flat.items()) {
    if (value.is_number_float() && pointer.find("/fits/") == 0 && value.get<double>() != 0.0) {
      changed_pointer = pointer;
      break;
    }
  }
  ASSERT_FALSE(changed_pointer.empty()) << "results.json has no /fits numbers";
  auto edited = flat;
  edited[changed_pointer] = flat[changed_pointer].get<double>() * 1.01;
  std::ofstream(out / "results.json") << edited.unflatten().dump(1);
  const CommandRun verified = Sorbtrace("verify " + (out / "results.json").string());
  EXPECT_EQ(verified.exit_code, 5) << verified.output;
  EXPECT_NE(verified.output.find("FAIL  " + changed_pointer), std::string::npos)
      << changed_pointer << "\n"
      << verified.output;
}

// The issued files themselves are checked: `make` writes outputs.sha256 (sha256sum format)
// beside results.json, `verify` fails when one byte of the datasheet changes or the manifest
// is gone, and passes wherever the whole output folder is moved.
TEST_F(RunE2eTest, AuditChecksTheIssuedFilesWhereverTheFolderIsMoved) {
  const fs::path job = Jobs().front();
  const fs::path out = root_ / "out";
  ASSERT_EQ(Sorbtrace("make " + job.string() + " --out " + out.string() + " -q").exit_code, 0);
  const std::string manifest = ReadWholeFile(out / "outputs.sha256");
  for (const fs::path& file : fs::directory_iterator(out)) {
    const std::string name = file.filename().string();
    if (name == "outputs.sha256" || name == ".sorbtrace-output") continue;
    EXPECT_NE(manifest.find(Sha256HexOfFile(file) + "  " + name + "\n"), std::string::npos)
        << name << "\n"
        << manifest;
  }

  const fs::path moved = root_ / "archive" / "2026" / "issued";
  fs::create_directories(moved.parent_path());
  fs::rename(out, moved);
  const CommandRun audit =
      Sorbtrace("verify " + (moved / "results.json").string() + " --job " + job.string());
  EXPECT_EQ(audit.exit_code, 0) << audit.output;
  EXPECT_NE(audit.output.find("pass  output datasheet.pdf  sha256 as issued"), std::string::npos)
      << audit.output;

  std::string pdf = ReadWholeFile(moved / "datasheet.pdf");
  pdf[pdf.size() / 2] = static_cast<char>(pdf[pdf.size() / 2] ^ 0x01);
  std::ofstream(moved / "datasheet.pdf", std::ios::binary) << pdf;
  const CommandRun tampered =
      Sorbtrace("verify " + (moved / "results.json").string() + " --job " + job.string());
  EXPECT_EQ(tampered.exit_code, 5) << tampered.output;
  EXPECT_NE(tampered.output.find("FAIL  output datasheet.pdf  sha256 CHANGED"), std::string::npos)
      << tampered.output;

  fs::remove(moved / "outputs.sha256");
  const CommandRun unlisted =
      Sorbtrace("verify " + (moved / "results.json").string() + " --job " + job.string());
  EXPECT_EQ(unlisted.exit_code, 5) << unlisted.output;
  EXPECT_NE(unlisted.output.find("FAIL  outputs outputs.sha256"), std::string::npos)
      << unlisted.output;
}

TEST_F(RunE2eTest, BatchReportsABrokenJobAndFinishesTheOthers) {
  const fs::path batch = root_ / "batch";
  fs::create_directories(batch);
  for (const auto& job : Jobs()) {
    fs::copy(job.parent_path(), batch / job.parent_path().filename(), fs::copy_options::recursive);
  }
  fs::create_directories(batch / "zz_broken");
  std::ofstream(batch / "zz_broken" / "job.toml")
      << "[job]\nid = \"BROKEN-1\"\nissue_date = \"2026-11-30\"\n[material]\nname = \"x\"\n"
         "[measurement]\n[[specimen]]\nid = \"S1\"\ndry_mass_g = 1.0\n"
         "[[dataset]]\nid = \"d\"\nmethod = \"desiccator\"\nfile = \"missing.csv\"\n"
         "temperature_C = 23\n";
  const CommandRun run =
      Sorbtrace("batch " + batch.string() + " --out " + (root_ / "bout").string() + " -q -j 2");
  EXPECT_EQ(run.exit_code, 6) << run.output;
  const std::string summary = ReadWholeFile(root_ / "bout" / "summary.csv");
  size_t ok_rows = 0;
  for (size_t at = summary.find(",ok,"); at != std::string::npos; at = summary.find(",ok,", at + 1))
    ++ok_rows;
  EXPECT_EQ(ok_rows, Jobs().size()) << summary;
  EXPECT_NE(summary.find("missing.csv"), std::string::npos) << summary;
  EXPECT_NE(summary.find(",failed,3,"), std::string::npos) << summary;
  // Every finished job's folder is named after its job id (the [job] id of its file).
  for (const auto& job : Jobs()) {
    const std::string text = ReadWholeFile(job);
    const size_t id_at = text.find("\nid = \"");
    ASSERT_NE(id_at, std::string::npos) << job;
    const size_t begin = id_at + 7;
    const std::string id = text.substr(begin, text.find('"', begin) - begin);
    EXPECT_TRUE(fs::exists(root_ / "bout" / id / "datasheet.pdf")) << id;
    EXPECT_NE(summary.find("," + (root_ / "bout" / id).string() + ","), std::string::npos) << id;
  }
}

TEST_F(RunE2eTest, KilledRunLeavesTheEarlierOutputIntact) {
  const fs::path job = Jobs().front();
  const fs::path out = root_ / "out";
  ASSERT_EQ(Sorbtrace("make " + job.string() + " --out " + out.string() + " -q").exit_code, 0);
  const std::string before = Sha256HexOfFile(out / "results.json");
  const std::string pdf_before = Sha256HexOfFile(out / "datasheet.pdf");
  // A slow variant of the same job: the most resamples the settings allow, killed after a moment.
  std::string text = ReadWholeFile(job);
  const fs::path slow = job.parent_path() / "slow.toml";
  if (text.find("[fit]") != std::string::npos) {
    text.replace(text.find("[fit]"), 5,
                 "[fit]\nbootstrap_resamples = 10000\nmonte_carlo_draws = 10000");
  } else {
    text += "\n[fit]\nbootstrap_resamples = 10000\nmonte_carlo_draws = 10000\n";
  }
  std::ofstream(slow) << text;
  const pid_t child = fork();
  if (child == 0) {
    execl(SORBTRACE_BINARY, SORBTRACE_BINARY, "make", slow.c_str(), "--out", out.c_str(), "-q",
          static_cast<char*>(nullptr));
    _exit(127);
  }
  std::this_thread::sleep_for(std::chrono::milliseconds(400));
  kill(child, SIGKILL);
  int status = 0;
  waitpid(child, &status, 0);
  ASSERT_TRUE(WIFSIGNALED(status)) << "the slow run finished before it could be killed";
  EXPECT_EQ(Sha256HexOfFile(out / "results.json"), before);
  EXPECT_EQ(Sha256HexOfFile(out / "datasheet.pdf"), pdf_before);
}

TEST_F(RunE2eTest, BadJobGivesExitThreeAndWritesNothing) {
  const fs::path job = root_ / "bad.toml";
  std::ofstream(job) << "[job]\nid = \"B\"\nissue_date = \"2026-11-30\"\n[fit]\nnot_a_key = 1\n";
  const CommandRun run =
      Sorbtrace("make " + job.string() + " --out " + (root_ / "nothing").string());
  EXPECT_EQ(run.exit_code, 3) << run.output;
  EXPECT_NE(run.output.find("bad.toml:"), std::string::npos) << run.output;
  EXPECT_FALSE(fs::exists(root_ / "nothing"));
}

TEST_F(RunE2eTest, VersionAndHelpOfEveryVerb) {
  EXPECT_EQ(Sorbtrace("--version").exit_code, 0);
  for (const char* verb : {"make", "check", "verify", "batch", "calc"}) {
    const CommandRun help = Sorbtrace(std::string(verb) + " --help");
    EXPECT_EQ(help.exit_code, 0) << verb;
    EXPECT_NE(help.output.find("Usage"), std::string::npos) << verb << help.output;
  }
  EXPECT_EQ(Sorbtrace("frobnicate").exit_code, 2);
}

}  // namespace
}  // namespace sorbtrace
