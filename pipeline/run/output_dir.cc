// Atomic output folders: everything is written into a fresh sibling folder first; then that
// folder is swapped in with renameat2(RENAME_EXCHANGE) (or renamed, when there was none), so a
// reader — or a run killed half-way — never sees a half-written or half-overwritten folder.
#include <fcntl.h>
#include <linux/fs.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <atomic>
#include <cerrno>
#include <cstring>
#include <filesystem>
#include <stdexcept>
#include <string>

#include "pipeline/common/files.h"
#include "pipeline/run/run.h"

namespace sorbtrace::run {
namespace {

std::atomic<unsigned> staging_counter{0};

// glibc 2.36 declares renameat2 only with _GNU_SOURCE; the syscall is always there on Linux.
int ExchangePaths(const std::filesystem::path& a, const std::filesystem::path& b) {
  return static_cast<int>(
      ::syscall(SYS_renameat2, AT_FDCWD, a.c_str(), AT_FDCWD, b.c_str(), RENAME_EXCHANGE));
}

}  // namespace

void WriteOutputDirectory(const RunResult& result, const std::filesystem::path& output_dir) {
  namespace fs = std::filesystem;
  const fs::path target = fs::absolute(output_dir).lexically_normal();
  fs::create_directories(target.parent_path());
  const fs::path staging = target.parent_path() / ("." + target.filename().string() + ".partial-" +
                                                   std::to_string(::getpid()) + "-" +
                                                   std::to_string(staging_counter.fetch_add(1)));
  fs::remove_all(staging);
  fs::create_directories(staging);
  try {
    WriteFileAtomically(staging / "datasheet.pdf", result.artifacts.pdf);
    WriteFileAtomically(staging / "results.json", result.artifacts.results_json);
    for (const auto& [name, content] : result.artifacts.csv_files) {
      WriteFileAtomically(staging / name, content);
    }
    WriteFileAtomically(staging / "run.log", result.log);
  } catch (...) {
    fs::remove_all(staging);
    throw;
  }
  if (fs::exists(target)) {
    if (ExchangePaths(staging, target) != 0) {
      const std::string reason = std::strerror(errno);
      fs::remove_all(staging);
      throw std::runtime_error("cannot replace " + target.string() + ": " + reason);
    }
    fs::remove_all(staging);  // now holds the previous output
  } else {
    fs::rename(staging, target);
  }
}

}  // namespace sorbtrace::run
