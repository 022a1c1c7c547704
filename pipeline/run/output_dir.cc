// Output folders: what may be replaced, and the atomic swap.
//
// Safety rule: sorbtrace replaces an existing folder only if sorbtrace wrote it. Every
// output folder holds a marker file (kOutputMarkerName) naming the job id and every file
// the run wrote; an existing folder is replaced only if its marker is valid, names the same
// job id, and the folder holds nothing but the listed files. An empty folder may be used.
// Anything else — a folder of the user's documents, the job's own folder, an input file,
// ".", "..", "/", the home folder, a folder containing the current folder or any input —
// is refused with InputError (exit 3) before any work is written.
//
// Atomicity: everything is written into a fresh sibling folder first; then that folder is
// swapped in with renameat2(RENAME_EXCHANGE) (or renamed, when there was none), so a reader —
// or a run killed half-way — never sees a half-written or half-overwritten folder.
#include <fcntl.h>
#include <linux/fs.h>
#include <signal.h>
#include <sys/stat.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <atomic>
#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <memory>
#include <set>
#include <string>
#include <system_error>
#include <vector>

#include "pipeline/common/cleanup.h"
#include "pipeline/common/diagnostics.h"
#include "pipeline/common/files.h"
#include "pipeline/common/paths.h"
#include "pipeline/run/audit.h"
#include "pipeline/run/run.h"

namespace sorbtrace::run {
namespace {

namespace fs = std::filesystem;

std::atomic<unsigned> staging_counter{0};

constexpr char kMarkerHeader[] = "sorbtrace output folder";
// A marker is a few lines; anything much longer is not one of ours.
constexpr std::uintmax_t kMaxMarkerBytes = 64 * 1024;
// Long enough for any job id a lab uses, short enough for every file system's name limit
// (255 bytes on ext4/xfs/btrfs) with the staging prefix and suffix added.
constexpr size_t kMaxFolderNameChars = 100;

// glibc 2.36 declares renameat2 only with _GNU_SOURCE; the syscall is always there on Linux.
int ExchangePaths(const fs::path& a, const fs::path& b) {
  return static_cast<int>(
      ::syscall(SYS_renameat2, AT_FDCWD, a.c_str(), AT_FDCWD, b.c_str(), RENAME_EXCHANGE));
}

[[noreturn]] void Refuse(const fs::path& output_dir, const std::string& why) {
  throw InputError(SourceLocation{output_dir.string(), 0, 0},
                   "output folder refused: " + why + "; nothing was written",
                   "a new folder, an empty folder, or an output folder sorbtrace wrote for the "
                   "same job (holding " +
                       std::string(kOutputMarkerName) + ")");
}

// The job id as the marker's one-line field holds it.
std::string MarkerJobId(const std::string& job_id) {
  std::string id = job_id;
  for (char& c : id) {
    if (c == '\n' || c == '\r') c = ' ';
  }
  return id;
}

std::string MarkerText(const std::string& job_id, const std::vector<std::string>& files) {
  std::string text = std::string(kMarkerHeader) + "\njob_id: " + MarkerJobId(job_id) + "\n";
  for (const auto& name : files) text += "file: " + name + "\n";
  return text;
}

// Checks an existing folder against its marker (see the file comment).
void CheckExistingFolder(const fs::path& output_dir, const fs::path& target,
                         const std::string& job_id) {
  std::vector<std::string> entries;
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(target, ec)) {
    entries.push_back(entry.path().filename().string());
  }
  if (ec) Refuse(output_dir, "cannot list the existing folder (" + ec.message() + ")");
  if (entries.empty()) return;
  const fs::path marker = target / kOutputMarkerName;
  struct stat status {};
  if (::lstat(marker.c_str(), &status) != 0 || !S_ISREG(status.st_mode) ||
      static_cast<std::uintmax_t>(status.st_size) > kMaxMarkerBytes) {
    Refuse(output_dir, "it exists and was not written by sorbtrace (no " +
                           std::string(kOutputMarkerName) +
                           "); sorbtrace never replaces a folder it did not write");
  }
  const std::string text = ReadWholeFile(marker);
  std::set<std::string> listed;
  std::string marker_job_id;
  bool header_seen = false;
  size_t begin = 0;
  while (begin < text.size()) {
    size_t end = text.find('\n', begin);
    if (end == std::string::npos) end = text.size();
    const std::string line = text.substr(begin, end - begin);
    if (begin == 0) {
      header_seen = line == kMarkerHeader;
    } else if (line.rfind("job_id: ", 0) == 0) {
      marker_job_id = line.substr(8);
    } else if (line.rfind("file: ", 0) == 0) {
      listed.insert(line.substr(6));
    }
    begin = end + 1;
  }
  if (!header_seen) {
    Refuse(output_dir, std::string(kOutputMarkerName) + " is not a sorbtrace marker");
  }
  if (marker_job_id != MarkerJobId(job_id)) {
    Refuse(output_dir, "it holds the output of another job ('" + marker_job_id +
                           "'); choose another folder for job '" + job_id + "'");
  }
  for (const auto& name : entries) {
    if (name == kOutputMarkerName) continue;
    struct stat entry_status {};
    const fs::path entry = target / name;
    if (listed.count(name) == 0 || ::lstat(entry.c_str(), &entry_status) != 0 ||
        !S_ISREG(entry_status.st_mode)) {
      Refuse(output_dir, "it holds '" + name +
                             "', which sorbtrace did not write there; move it away or choose "
                             "another folder");
    }
  }
}

// Test hook (tests/bad_inputs/output_safety_test.cc): with $SORBTRACE_TEST_SIGNAL_WHILE_WRITING
// set to a signal number, the process sends itself that signal after the first file of the
// staging folder is written, so the cleanup on SIGINT/SIGTERM is tested at a known moment.
void RaiseTestSignalIfRequested() {
  const char* signal_text = std::getenv("SORBTRACE_TEST_SIGNAL_WHILE_WRITING");
  if (signal_text == nullptr) return;
  const int signal_number = std::atoi(signal_text);
  if (signal_number > 0) ::kill(::getpid(), signal_number);
}

}  // namespace

std::string OutputFolderName(const std::string& job_id) {
  std::string name;
  for (const char c : job_id) {
    const bool safe = (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') ||
                      c == '-' || c == '_' || c == '.';
    name += safe ? c : '_';
    if (name.size() == kMaxFolderNameChars) break;
  }
  // No hidden names, no "." or "..".
  if (!name.empty() && name.front() == '.') name.front() = '_';
  return name.empty() ? std::string("job") : name;
}

void CheckOutputFolder(const fs::path& output_dir, const std::string& job_id,
                       const std::vector<fs::path>& inputs) {
  if (output_dir.empty()) Refuse(output_dir, "the folder name is empty");
  const fs::path target = ResolvedPath(output_dir);
  if (target == target.root_path()) Refuse(output_dir, "it is the root folder");
  if (const char* home = std::getenv("HOME"); home != nullptr && *home != '\0') {
    if (IsSameOrInside(ResolvedPath(home), target)) {
      Refuse(output_dir, "it is or contains the home folder " + std::string(home));
    }
  }
  std::error_code ec;
  const fs::path cwd = ResolvedPath(fs::current_path(ec));
  if (!ec && IsSameOrInside(cwd, target)) {
    Refuse(output_dir,
           "it is or contains the current folder (as `--out .` or `--out ..` "
           "would); name a sub-folder instead");
  }
  for (const auto& input : inputs) {
    const fs::path resolved = ResolvedPath(input);
    if (IsSameOrInside(resolved, target)) {
      Refuse(output_dir, "it is or contains the input " + input.string());
    }
  }
  // The folder itself, or the first part of its path that exists.
  struct stat status {};
  if (::lstat(target.c_str(), &status) == 0) {
    if (S_ISLNK(status.st_mode)) Refuse(output_dir, "it is a symbolic link");
    if (!S_ISDIR(status.st_mode)) {
      Refuse(output_dir, "it is an existing file, not a folder sorbtrace wrote");
    }
    CheckExistingFolder(output_dir, target, job_id);
    return;
  }
  if (errno != ENOENT && errno != ENOTDIR) {
    Refuse(output_dir, "it cannot be examined (" + std::string(std::strerror(errno)) + ")");
  }
  for (fs::path ancestor = target.parent_path();; ancestor = ancestor.parent_path()) {
    if (::stat(ancestor.c_str(), &status) == 0) {
      if (!S_ISDIR(status.st_mode)) {
        Refuse(output_dir, ancestor.string() + " is a file, not a folder");
      }
      return;
    }
    if (ancestor == ancestor.root_path()) return;
  }
}

void WriteOutputDirectory(const RunResult& result, const fs::path& output_dir) {
  CheckOutputFolder(output_dir, result.job.job_id, result.input_files);
  const fs::path target = ResolvedPath(output_dir);
  // Folders created for the output are removed again (if still empty) when writing fails.
  std::vector<fs::path> created;
  struct stat probe {};
  for (fs::path missing = target.parent_path();
       ::stat(missing.c_str(), &probe) != 0 && errno == ENOENT && missing != missing.root_path();
       missing = missing.parent_path()) {
    created.push_back(missing);
  }
  auto remove_created = [&created] {
    for (const auto& folder : created) ::rmdir(folder.c_str());  // deepest first
  };
  std::vector<std::unique_ptr<ScopedTemporaryPath>> created_registered;
  for (auto folder = created.rbegin(); folder != created.rend(); ++folder) {  // outermost first
    created_registered.push_back(
        std::make_unique<ScopedTemporaryPath>(*folder, TemporaryKind::kEmptyFolder));
  }
  const fs::path staging = target.parent_path() / ("." + target.filename().string() + ".partial-" +
                                                   std::to_string(::getpid()) + "-" +
                                                   std::to_string(staging_counter.fetch_add(1)));
  std::error_code ec;
  fs::create_directories(target.parent_path(), ec);
  if (ec) {
    remove_created();
    throw OutputError(WriteFailureMessage(target.parent_path(), ec.value()));
  }
  const ScopedTemporaryPath registered(staging, TemporaryKind::kFolder);
  if (::mkdir(staging.c_str(), 0755) != 0) {
    const int error_number = errno;
    remove_created();
    throw OutputError(WriteFailureMessage(target, error_number));
  }
  try {
    std::vector<std::string> names;
    std::vector<std::pair<std::string, std::string>> written;  // for the manifest
    auto write = [&](const std::string& name, const std::string& content) {
      WriteFileAtomically(staging / name, content);
      names.push_back(name);
      written.emplace_back(name, content);
    };
    if (!result.artifacts.pdf.empty()) write("datasheet.pdf", result.artifacts.pdf);
    RaiseTestSignalIfRequested();
    if (!result.artifacts.html.empty()) write("datasheet.html", result.artifacts.html);
    write("results.json", result.artifacts.results_json);
    for (const auto& [name, content] : result.artifacts.csv_files) write(name, content);
    write("run.log", result.log);
    const std::string manifest = OutputManifestText(written);
    write(kOutputManifestName, manifest);
    WriteFileAtomically(staging / kOutputMarkerName, MarkerText(result.job.job_id, names));
  } catch (...) {
    fs::remove_all(staging, ec);
    remove_created();
    throw;
  }
  struct stat status {};
  if (::lstat(target.c_str(), &status) == 0) {
    if (ExchangePaths(staging, target) != 0) {
      const int error_number = errno;
      fs::remove_all(staging, ec);
      throw OutputError(WriteFailureMessage(target, error_number));
    }
    fs::remove_all(staging, ec);  // now holds the previous output (checked: ours only)
  } else if (::rename(staging.c_str(), target.c_str()) != 0) {
    const int error_number = errno;
    fs::remove_all(staging, ec);
    remove_created();
    throw OutputError(WriteFailureMessage(target, error_number));
  }
}

}  // namespace sorbtrace::run
