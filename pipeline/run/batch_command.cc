// `sorbtrace batch DIR`: every job file under a folder, in parallel on a pool of worker
// threads. Each job is independent and deterministic, so results are identical to one-by-one
// runs. One failing job never stops the others; it is reported in summary.csv with its error.
#include <toml++/toml.h>

#include <CLI/CLI.hpp>
#include <algorithm>
#include <atomic>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <thread>
#include <vector>

#include "pipeline/common/bounded_input.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"
#include "pipeline/run/commands.h"
#include "pipeline/run/console.h"
#include "pipeline/run/run.h"

namespace sorbtrace::run {
namespace {

struct BatchArguments {
  std::string input_dir;
  std::string output_dir = "sorbtrace_batch";
  int workers = 0;  // 0 = all cores
  bool quiet = false;
  bool verbose = false;
};

struct JobOutcome {
  std::string job_file;
  std::string output_dir;
  std::string job_id;
  int exit_code = 0;
  std::string message;
  nlohmann::json headline;  // results.json "headline", when the job succeeded
};

// A job file is a .toml file with a [job] table (templates and other TOML are skipped).
bool IsJobFile(const std::filesystem::path& path) {
  if (path.extension() != ".toml") return false;
  try {
    const toml::table root = ParseTomlFile(path, "a TOML job file");  // size and nesting bounded
    return root.contains("job");
  } catch (const InputError&) {
    return true;  // a broken job file is still a job: it is run and reported as bad input
  }
}

std::string CsvField(const std::string& text) {
  if (text.find_first_of(",\"\n") == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) {
    if (c == '"') out += '"';
    out += c == '\n' ? ' ' : c;
  }
  return out + "\"";
}

// results.json "headline" is a list of {key, value, unit, expanded_uncertainty, text}; the
// summary gets two columns per key: the value in its SI unit and its expanded uncertainty.
std::string Summary(const std::vector<JobOutcome>& outcomes) {
  std::vector<std::string> keys;
  std::vector<std::string> units;
  for (const auto& outcome : outcomes) {
    if (!outcome.headline.is_array()) continue;
    for (const auto& item : outcome.headline) {
      const std::string key = item.value("key", "");
      if (key.empty() || std::find(keys.begin(), keys.end(), key) != keys.end()) continue;
      keys.push_back(key);
      units.push_back(item.value("unit", ""));
    }
  }
  std::string csv = "job_file,job_id,status,exit_code,output_dir";
  for (size_t i = 0; i < keys.size(); ++i) {
    const std::string unit = units[i].empty() || units[i] == "1" ? "" : " [" + units[i] + "]";
    csv += "," + CsvField(keys[i] + unit) + "," + CsvField(keys[i] + " U" + unit);
  }
  csv += ",message\n";
  auto number = [](const nlohmann::json& value) {
    return value.is_number() ? value.dump() : std::string();
  };
  for (const auto& outcome : outcomes) {
    csv += CsvField(outcome.job_file) + "," + CsvField(outcome.job_id) + "," +
           (outcome.exit_code == 0 ? "ok" : "failed") + "," + std::to_string(outcome.exit_code) +
           "," + CsvField(outcome.output_dir);
    for (const auto& key : keys) {
      std::string value;
      std::string uncertainty;
      if (outcome.headline.is_array()) {
        for (const auto& item : outcome.headline) {
          if (item.value("key", "") != key) continue;
          value = item.contains("value") ? number(item["value"]) : "";
          if (value.empty() && item.contains("text")) value = item["text"].get<std::string>();
          uncertainty =
              item.contains("expanded_uncertainty") ? number(item["expanded_uncertainty"]) : "";
        }
      }
      csv += "," + CsvField(value) + "," + CsvField(uncertainty);
    }
    csv += "," + CsvField(outcome.message) + "\n";
  }
  return csv;
}

int Batch(const BatchArguments& args) {
  namespace fs = std::filesystem;
  Console console(args.quiet ? Verbosity::kQuiet
                             : (args.verbose ? Verbosity::kVerbose : Verbosity::kNormal));
  if (!fs::is_directory(args.input_dir)) {
    throw InputError(SourceLocation{args.input_dir, 0, 0}, "not a folder",
                     "a folder holding job files (*.toml with a [job] table)");
  }
  std::vector<fs::path> jobs;
  for (const auto& entry : fs::recursive_directory_iterator(args.input_dir)) {
    if (entry.is_regular_file() && IsJobFile(entry.path())) jobs.push_back(entry.path());
  }
  std::sort(jobs.begin(), jobs.end());
  if (jobs.empty()) {
    throw InputError(SourceLocation{args.input_dir, 0, 0}, "no job files found",
                     "at least one *.toml file with a [job] table");
  }
  const fs::path out_root = args.output_dir;
  std::vector<JobOutcome> outcomes(jobs.size());
  std::atomic<size_t> next{0};
  std::atomic<size_t> done{0};
  const unsigned cores = std::max(1u, std::thread::hardware_concurrency());
  const size_t workers = std::min(
      jobs.size(), static_cast<size_t>(args.workers > 0 ? args.workers : static_cast<int>(cores)));

  auto work = [&] {
    for (size_t i = next.fetch_add(1); i < jobs.size(); i = next.fetch_add(1)) {
      JobOutcome& outcome = outcomes[i];
      const fs::path relative = fs::relative(jobs[i], args.input_dir);
      fs::path name = relative.parent_path() / relative.stem();
      if (relative.stem() == "job" && !relative.parent_path().empty())
        name = relative.parent_path();
      const fs::path out = out_root / name;
      outcome.job_file = jobs[i].string();
      outcome.output_dir = out.string();
      try {
        RunOptions options;
        options.output_dir = out;
        const RunResult result = RunJob(jobs[i], options);
        WriteOutputDirectory(result, out);
        outcome.job_id = result.job.job_id;
        const auto parsed = nlohmann::json::parse(result.artifacts.results_json);
        if (parsed.contains("headline")) outcome.headline = parsed["headline"];
        outcome.message = std::to_string(result.warnings.size()) + " warning(s)";
      } catch (const InputError& error) {
        outcome.exit_code = static_cast<int>(ExitCode::kBadInput);
        outcome.message = error.what();
      } catch (const ComputationError& error) {
        outcome.exit_code = static_cast<int>(ExitCode::kFitFailure);
        outcome.message = std::string("fit failure: ") + error.what();
      } catch (const std::exception& error) {
        outcome.exit_code = static_cast<int>(ExitCode::kInternal);
        outcome.message = std::string("internal error: ") + error.what();
      }
      const size_t finished = done.fetch_add(1) + 1;
      console.Stage("batch", (outcome.exit_code == 0 ? "ok " : "FAILED ") + outcome.job_file,
                    static_cast<int>(finished) - 1, static_cast<int>(jobs.size()));
      if (outcome.exit_code != 0 && console.verbosity() != Verbosity::kQuiet) {
        console.Line("sorbtrace: batch: " + outcome.job_file + ": " + outcome.message);
      }
    }
  };
  std::vector<std::thread> pool;
  for (size_t w = 0; w < workers; ++w) pool.emplace_back(work);
  for (auto& thread : pool) thread.join();
  console.Finish();

  fs::create_directories(out_root);
  WriteFileAtomically(out_root / "summary.csv", Summary(outcomes));
  const auto failed = std::count_if(outcomes.begin(), outcomes.end(),
                                    [](const JobOutcome& o) { return o.exit_code != 0; });
  std::printf("%s\n", (out_root / "summary.csv").string().c_str());
  std::fprintf(stderr, "sorbtrace: batch: %zu job(s), %zu ok, %ld failed, %zu worker(s)\n",
               jobs.size(), jobs.size() - static_cast<size_t>(failed), static_cast<long>(failed),
               workers);
  return failed == 0 ? static_cast<int>(ExitCode::kOk) : static_cast<int>(ExitCode::kBatchPartial);
}

}  // namespace

void AddBatchCommand(CLI::App& app, int& exit_code) {
  auto args = std::make_shared<BatchArguments>();
  CLI::App* command = app.add_subcommand("batch", "Run every job file under a folder in parallel");
  command->add_option("dir", args->input_dir, "Folder searched recursively for job files")
      ->required();
  command->add_option("-o,--out", args->output_dir,
                      "Output root (one folder per job + summary.csv)");
  command->add_option("-j,--jobs", args->workers, "Worker threads (default: all cores)")
      ->check(CLI::Range(0, 256));
  command->add_flag("-q,--quiet", args->quiet, "No progress on stderr");
  command->add_flag("-v,--verbose", args->verbose, "Every failure and timing on stderr");
  command->callback([args, &exit_code] {
    try {
      exit_code = Batch(*args);
    } catch (const InputError& error) {
      std::fprintf(stderr, "%s\n", error.what());
      exit_code = static_cast<int>(ExitCode::kBadInput);
    }
  });
}

}  // namespace sorbtrace::run
