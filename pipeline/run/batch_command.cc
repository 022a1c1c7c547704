// `sorbtrace batch DIR`: every job file under a folder, each run as its own child process
// (`sorbtrace make JOB --out OUT/NAME`, started with posix_spawn from /proc/self/exe), at most
// -j at a time. Each job is independent and deterministic, so results are identical to
// one-by-one runs. A job that fails — or crashes — never stops the others: it is a failed
// row of summary.csv with its error.
//
// Output names: OUT/<job id as folder name> (OutputFolderName). Job files whose ids give the
// same folder name (the same id twice, or ids that differ only in replaced characters) are
// told apart by a suffix "-2", "-3", ... in the order of the job files' paths, and the
// message column of summary.csv says so. All names are single folders directly under OUT, so no
// output lies inside another. OUT itself must be new, empty, or an earlier batch output (marker
// .sorbtrace-batch), and must not be, contain or lie inside DIR, the current folder, the home
// folder or "/".
#include <fcntl.h>
#include <fmt/format.h>
#include <spawn.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <CLI/CLI.hpp>
#include <algorithm>
#include <atomic>
#include <cerrno>
#include <csignal>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <thread>
#include <vector>

#include "pipeline/common/cleanup.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"
#include "pipeline/common/paths.h"
#include "pipeline/run/commands.h"
#include "pipeline/run/console.h"
#include "pipeline/run/exit_status.h"
#include "pipeline/run/run.h"

extern char** environ;

namespace sorbtrace::run {
namespace {

namespace fs = std::filesystem;

constexpr char kBatchMarkerName[] = ".sorbtrace-batch";
constexpr char kBatchMarkerHeader[] = "sorbtrace batch output folder";
// A job file is a few kilobytes; a bigger .toml is still run (and judged by `make`), but
// not scanned for its id here.
constexpr size_t kMaxScannedJobBytes = 4 * 1024 * 1024;
// Descriptor number of the status pipe in a child, above 0-2 and any descriptor the child
// opens before it writes its status.
constexpr int kChildStatusFd = 3;

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

// A job found in DIR, before it runs.
struct PlannedJob {
  fs::path job_file;
  std::string job_id;       // as scanned from the [job] table; empty if not found
  std::string folder_name;  // under OUT; empty when the job is refused
  std::string refusal;      // why it is not run (exit 3), empty if it runs
  std::string note;         // e.g. a disambiguated folder name
};

std::string Trimmed(const std::string& line) {
  const size_t begin = line.find_first_not_of(" \t\r");
  if (begin == std::string::npos) return {};
  const size_t end = line.find_last_not_of(" \t\r");
  return line.substr(begin, end - begin + 1);
}

// The value of `key = "text"` or `key = 'text'` (no escapes), if `line` is that assignment.
bool QuotedValue(const std::string& line, const std::string& key, std::string* value) {
  if (line.rfind(key, 0) != 0) return false;
  const std::string rest = Trimmed(line.substr(key.size()));
  if (rest.empty() || rest[0] != '=') return false;
  const std::string quoted = Trimmed(rest.substr(1));
  if (quoted.size() < 2 || (quoted[0] != '"' && quoted[0] != '\'')) return false;
  const size_t close = quoted.find(quoted[0], 1);
  if (close == std::string::npos) return false;
  *value = quoted.substr(1, close - 1);
  return value->find('\\') == std::string::npos || quoted[0] == '\'';
}

// Line scan of a .toml file (no TOML parser: a hostile file must not be able to crash the
// batch process itself): is it a job file (a [job] table or job.* keys), and its job id.
// Templates and other TOML files are skipped; a job file that is broken is still run and
// reported by its child.
bool ScanJobFile(const fs::path& path, std::string* job_id) {
  std::string text =
      ReadRegularFileUpTo(path, path.string(), kMaxScannedJobBytes + 1, "a TOML job file");
  if (text.size() > kMaxScannedJobBytes) return true;        // run: its child refuses it, located
  if (text.rfind("\xEF\xBB\xBF", 0) == 0) text.erase(0, 3);  // UTF-8 byte-order mark
  bool is_job = false;
  bool in_job_table = false;
  size_t begin = 0;
  while (begin < text.size()) {
    size_t end = text.find('\n', begin);
    if (end == std::string::npos) end = text.size();
    const std::string line = Trimmed(text.substr(begin, end - begin));
    begin = end + 1;
    if (line.empty() || line[0] == '#') continue;
    if (line[0] == '[') {
      std::string header;
      for (char c : line.substr(0, line.find(']') + 1)) {
        if (c != ' ' && c != '\t') header += c;
      }
      in_job_table = header == "[job]";
      is_job = is_job || in_job_table;
      continue;
    }
    std::string value;
    if (in_job_table && job_id->empty() && QuotedValue(line, "id", &value)) *job_id = value;
    if (line.rfind("job.", 0) == 0 || line.rfind("job ", 0) == 0 || line.rfind("job=", 0) == 0) {
      is_job = true;
      if (job_id->empty() && QuotedValue(line, "job.id", &value)) *job_id = value;
    }
  }
  return is_job;
}

// Every .toml under `dir` (symbolic links to folders are not followed, so a link loop
// cannot make the walk endless), sorted by path. A .toml entry that is not a regular file
// (FIFO, device, symbolic-link loop) becomes a refused job naming what it is.
std::vector<PlannedJob> FindJobs(const fs::path& dir) {
  std::vector<PlannedJob> jobs;
  std::error_code ec;
  fs::recursive_directory_iterator it(dir, fs::directory_options::skip_permission_denied, ec);
  for (; !ec && it != fs::recursive_directory_iterator(); it.increment(ec)) {
    const fs::path& path = it->path();
    if (path.extension() != ".toml") continue;
    std::error_code status_error;
    if (fs::is_directory(path, status_error)) continue;
    PlannedJob job;
    job.job_file = path;
    try {
      if (!ScanJobFile(path, &job.job_id)) continue;
    } catch (const InputError& error) {  // a FIFO, device, link loop, unreadable file
      job.refusal =
          path.string() + ": " + error.diagnostic().message + "; expected a TOML job file";
    }
    jobs.push_back(job);
  }
  if (ec) {
    throw InputError(SourceLocation{dir.string(), 0, 0},
                     "cannot walk the folder (" + ec.message() + ")",
                     "a readable folder of job files");
  }
  std::sort(jobs.begin(), jobs.end(),
            [](const PlannedJob& a, const PlannedJob& b) { return a.job_file < b.job_file; });
  return jobs;
}

// Output folder names: see the file comment.
void AssignFolderNames(std::vector<PlannedJob>& jobs) {
  std::map<std::string, const PlannedJob*> taken;  // folder name -> job holding it
  for (auto& job : jobs) {
    if (!job.refusal.empty()) continue;
    const std::string base = job.job_id.empty()
                                 ? "unnamed-" + OutputFolderName(job.job_file.generic_string())
                                 : OutputFolderName(job.job_id);
    std::string name = base;
    for (int suffix = 2; taken.count(name) != 0; ++suffix) {
      name = base + "-" + std::to_string(suffix);
    }
    if (name != base) {
      const PlannedJob& holder = *taken[base];
      job.note = fmt::format("output folder renamed to {}: {} belongs to {} ({}job id '{}')", name,
                             base, holder.job_file.string(),
                             holder.job_id == job.job_id ? "same " : "", holder.job_id);
    }
    taken[name] = &job;
    job.folder_name = name;
  }
}

[[noreturn]] void RefuseRoot(const fs::path& out, const std::string& why) {
  throw InputError(SourceLocation{out.string(), 0, 0},
                   "batch output folder refused: " + why + "; nothing was written",
                   "a new or empty folder outside the job folder, or an earlier batch output "
                   "(holding " +
                       std::string(kBatchMarkerName) + ")");
}

// Checks OUT (see the file comment) and creates it with its marker.
void PrepareOutputRoot(const fs::path& out, const fs::path& input_dir) {
  const fs::path target = ResolvedPath(out);
  const fs::path inputs = ResolvedPath(input_dir);
  if (target == target.root_path()) RefuseRoot(out, "it is the root folder");
  if (const char* home = std::getenv("HOME"); home != nullptr && *home != '\0') {
    if (IsSameOrInside(ResolvedPath(home), target))
      RefuseRoot(out, "it is or contains the home folder");
  }
  std::error_code ec;
  if (IsSameOrInside(ResolvedPath(fs::current_path(ec)), target)) {
    RefuseRoot(out, "it is or contains the current folder; name a sub-folder instead");
  }
  if (IsSameOrInside(inputs, target) || IsSameOrInside(target, inputs)) {
    RefuseRoot(out, "it is, contains or lies inside the job folder " + input_dir.string() +
                        " (outputs could replace inputs)");
  }
  struct stat status {};
  if (::lstat(target.c_str(), &status) == 0) {
    if (!S_ISDIR(status.st_mode)) RefuseRoot(out, "it exists and is not a folder");
    const bool empty = fs::is_empty(target, ec);
    const fs::path marker = target / kBatchMarkerName;
    struct stat marker_status {};
    const bool marked = ::lstat(marker.c_str(), &marker_status) == 0 &&
                        S_ISREG(marker_status.st_mode) &&
                        ReadWholeFile(marker).rfind(kBatchMarkerHeader, 0) == 0;
    if (!empty && !marked) {
      RefuseRoot(out, "it exists, is not empty and was not written by `sorbtrace batch`");
    }
    if (marked) return;
  }
  fs::create_directories(target, ec);
  if (ec) throw OutputError(WriteFailureMessage(target, ec.value()));
  WriteFileAtomically(target / kBatchMarkerName, std::string(kBatchMarkerHeader) + "\n");
}

// Runs `sorbtrace make` on one job in a child process and reads its status.
void RunChild(const PlannedJob& job, const fs::path& out, JobOutcome& outcome) {
  int pipe_fds[2];
  if (::pipe2(pipe_fds, O_CLOEXEC) != 0) {
    throw OutputError(std::string("cannot create a pipe: ") + std::strerror(errno));
  }
  // Both ends well above the child's status descriptor, so dup2 always clears close-on-exec.
  const int read_fd = ::fcntl(pipe_fds[0], F_DUPFD_CLOEXEC, 10);
  const int write_fd = ::fcntl(pipe_fds[1], F_DUPFD_CLOEXEC, 10);
  ::close(pipe_fds[0]);
  ::close(pipe_fds[1]);
  const std::string self = "/proc/self/exe";
  std::vector<std::string> argv_text = {
      "sorbtrace",  "make",    job.job_file.string(), "--out",
      out.string(), "--quiet", "--status-fd",         std::to_string(kChildStatusFd)};
  std::vector<char*> argv;
  argv.reserve(argv_text.size() + 1);
  for (auto& arg : argv_text) argv.push_back(arg.data());
  argv.push_back(nullptr);
  posix_spawn_file_actions_t actions;
  posix_spawn_file_actions_init(&actions);
  posix_spawn_file_actions_addopen(&actions, 1, "/dev/null", O_WRONLY, 0);
  posix_spawn_file_actions_addopen(&actions, 2, "/dev/null", O_WRONLY, 0);
  posix_spawn_file_actions_adddup2(&actions, write_fd, kChildStatusFd);
  pid_t pid = 0;
  const int spawned = ::posix_spawn(&pid, self.c_str(), &actions, nullptr, argv.data(), environ);
  posix_spawn_file_actions_destroy(&actions);
  ::close(write_fd);
  if (spawned != 0) {
    ::close(read_fd);
    outcome.exit_code = static_cast<int>(ExitCode::kOutputError);
    outcome.message = std::string("cannot start a child process: ") + std::strerror(spawned);
    return;
  }
  const ScopedChildProcess registered(pid);
  std::string status_text;
  char buffer[4096];
  for (;;) {
    const ssize_t got = ::read(read_fd, buffer, sizeof buffer);
    if (got < 0 && errno == EINTR) continue;
    if (got <= 0) break;
    status_text.append(buffer, static_cast<size_t>(got));
  }
  ::close(read_fd);
  int wait_status = 0;
  while (::waitpid(pid, &wait_status, 0) < 0 && errno == EINTR) {
  }
  if (WIFSIGNALED(wait_status)) {
    const int signal_number = WTERMSIG(wait_status);
    outcome.exit_code = static_cast<int>(ExitCode::kInternal);
    outcome.message = "the job crashed (signal " + std::to_string(signal_number) + ", " +
                      strsignal(signal_number) + "); its output folder was not written";
    return;
  }
  const auto status = nlohmann::json::parse(status_text, nullptr, false);
  if (!status.is_object() || !status.contains("exit_code")) {
    outcome.exit_code = static_cast<int>(ExitCode::kInternal);
    outcome.message = "the job ended with exit code " + std::to_string(WEXITSTATUS(wait_status)) +
                      " without reporting its outcome";
    return;
  }
  outcome.exit_code = status.value("exit_code", static_cast<int>(ExitCode::kInternal));
  outcome.job_id = status.value("job_id", outcome.job_id);
  outcome.message = status.value("message", "");
  if (status.contains("headline")) outcome.headline = status["headline"];
}

// Spreadsheets run a cell that starts with = + - @ (or tab / carriage return) as a formula;
// such text cells get a leading apostrophe (OWASP "CSV Injection" rule).
std::string CsvText(const std::string& text) {
  const bool formula = !text.empty() && std::string("=+-@\t\r").find(text[0]) != std::string::npos;
  return formula ? "'" + text : text;
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
    csv += CsvField(CsvText(outcome.job_file)) + "," + CsvField(CsvText(outcome.job_id)) + "," +
           (outcome.exit_code == 0 ? "ok" : "failed") + "," + std::to_string(outcome.exit_code) +
           "," + CsvField(CsvText(outcome.output_dir));
    for (const auto& key : keys) {
      std::string value;
      std::string uncertainty;
      if (outcome.headline.is_array()) {
        for (const auto& item : outcome.headline) {
          if (item.value("key", "") != key) continue;
          value = item.contains("value") ? number(item["value"]) : "";
          if (value.empty() && item.contains("text") && item["text"].is_string()) {
            value = CsvText(item["text"].get<std::string>());
          }
          uncertainty =
              item.contains("expanded_uncertainty") ? number(item["expanded_uncertainty"]) : "";
        }
      }
      csv += "," + CsvField(value) + "," + CsvField(uncertainty);
    }
    csv += "," + CsvField(CsvText(outcome.message)) + "\n";
  }
  return csv;
}

int Batch(const BatchArguments& args) {
  Console console(args.quiet ? Verbosity::kQuiet
                             : (args.verbose ? Verbosity::kVerbose : Verbosity::kNormal));
  std::error_code ec;
  const std::string problem =
      fs::is_directory(args.input_dir, ec)
          ? ""
          : (RegularFileProblem(args.input_dir).empty() ? "is a file, not a folder"
                                                        : RegularFileProblem(args.input_dir));
  if (!problem.empty()) {
    throw InputError(SourceLocation{args.input_dir, 0, 0}, problem,
                     "a folder holding job files (*.toml with a [job] table)");
  }
  std::vector<PlannedJob> jobs = FindJobs(args.input_dir);
  if (jobs.empty()) {
    throw InputError(SourceLocation{args.input_dir, 0, 0}, "no job files found",
                     "at least one *.toml file with a [job] table");
  }
  AssignFolderNames(jobs);
  const fs::path out_root = args.output_dir;
  PrepareOutputRoot(out_root, args.input_dir);

  std::vector<JobOutcome> outcomes(jobs.size());
  std::atomic<size_t> next{0};
  std::atomic<size_t> done{0};
  const unsigned cores = std::max(1u, std::thread::hardware_concurrency());
  const size_t workers = std::min(
      jobs.size(), static_cast<size_t>(args.workers > 0 ? args.workers : static_cast<int>(cores)));

  auto work = [&] {
    for (size_t i = next.fetch_add(1); i < jobs.size(); i = next.fetch_add(1)) {
      const PlannedJob& job = jobs[i];
      JobOutcome& outcome = outcomes[i];
      outcome.job_file = job.job_file.string();
      outcome.job_id = job.job_id;
      if (!job.refusal.empty()) {
        outcome.exit_code = static_cast<int>(ExitCode::kBadInput);
        outcome.message = job.refusal;
      } else {
        const fs::path out = out_root / job.folder_name;
        outcome.output_dir = out.string();
        try {
          RunChild(job, out, outcome);
        } catch (const std::exception& error) {
          outcome.exit_code = static_cast<int>(ExitCode::kOutputError);
          outcome.message = error.what();
        }
        if (!job.note.empty()) outcome.message = job.note + "; " + outcome.message;
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
  command
      ->add_option("-j,--jobs", args->workers,
                   "Jobs run at once, each in its own process (default: all cores)")
      ->check(CLI::Range(0, 256));
  command->add_flag("-q,--quiet", args->quiet, "No progress on stderr");
  command->add_flag("-v,--verbose", args->verbose, "Every failure and timing on stderr");
  command->callback([args, &exit_code] {
    try {
      exit_code = Batch(*args);
    } catch (const std::exception& error) {
      exit_code = ReportFailure(error);
    }
  });
}

}  // namespace sorbtrace::run
