#include "pipeline/common/cleanup.h"

#include <dirent.h>
#include <fcntl.h>
#include <limits.h>
#include <signal.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <array>
#include <atomic>
#include <cerrno>
#include <cstring>

namespace sorbtrace {
namespace {

// Registry sizes: a run holds at most a few temporary paths at once per worker (one staging
// folder, one temporary file), and `batch -j` runs at most 256 children (its option range).
constexpr int kMaxTemporaryPaths = 128;
constexpr int kMaxChildren = 256;

enum SlotState : int { kFree = 0, kFilling = 1, kReady = 2 };

struct PathSlot {
  std::atomic<int> state{kFree};
  TemporaryKind kind = TemporaryKind::kFile;
  char path[PATH_MAX] = {};
};

std::array<PathSlot, kMaxTemporaryPaths> path_slots;
std::array<std::atomic<pid_t>, kMaxChildren> child_slots{};

// Removes a flat folder (files only) and the folder itself; async-signal-safe.
void RemoveFlatFolder(const char* path) {
  const int fd = ::open(path, O_RDONLY | O_DIRECTORY | O_NOFOLLOW | O_CLOEXEC);
  if (fd >= 0) {
    alignas(8) char buffer[4096];
    for (;;) {
      const long got = ::syscall(SYS_getdents64, fd, buffer, sizeof buffer);
      if (got <= 0) break;
      for (long offset = 0; offset < got;) {
        // struct linux_dirent64: d_ino (8), d_off (8), d_reclen (2), d_type (1), d_name.
        unsigned short record_length = 0;
        std::memcpy(&record_length, buffer + offset + 16, sizeof record_length);
        const char* name = buffer + offset + 19;
        const bool dot = name[0] == '.' && (name[1] == '\0' || (name[1] == '.' && name[2] == '\0'));
        if (!dot) ::unlinkat(fd, name, 0);
        offset += record_length;
      }
    }
    ::close(fd);
  }
  ::rmdir(path);
}

void OnTerminatingSignal(int signal_number) {
  const int saved_errno = errno;
  for (auto& child : child_slots) {
    const pid_t pid = child.load();
    if (pid > 0) ::kill(pid, signal_number);
  }
  for (auto& slot : path_slots) {
    if (slot.state.load() != kReady) continue;
    if (slot.kind == TemporaryKind::kFolder) RemoveFlatFolder(slot.path);
    if (slot.kind == TemporaryKind::kFile) ::unlink(slot.path);
  }
  // Created parents last, deepest (registered last) first; rmdir keeps a non-empty one.
  for (auto slot = path_slots.rbegin(); slot != path_slots.rend(); ++slot) {
    if (slot->state.load() == kReady && slot->kind == TemporaryKind::kEmptyFolder) {
      ::rmdir(slot->path);
    }
  }
  errno = saved_errno;
  // SA_RESETHAND restored the default action; the signal is delivered again when the
  // handler returns and ends the process with the usual status.
  ::raise(signal_number);
}

}  // namespace

void InstallSignalCleanup() {
  struct sigaction action {};
  action.sa_handler = OnTerminatingSignal;
  sigemptyset(&action.sa_mask);
  action.sa_flags = SA_RESETHAND;
  for (const int signal_number : {SIGINT, SIGTERM, SIGHUP}) {
    ::sigaction(signal_number, &action, nullptr);
  }
  struct sigaction ignore {};
  ignore.sa_handler = SIG_IGN;
  sigemptyset(&ignore.sa_mask);
  ::sigaction(SIGXFSZ, &ignore, nullptr);
}

ScopedTemporaryPath::ScopedTemporaryPath(const std::filesystem::path& path, TemporaryKind kind) {
  const std::string text = std::filesystem::absolute(path).string();
  if (text.size() >= PATH_MAX) return;
  for (int i = 0; i < kMaxTemporaryPaths; ++i) {
    int expected = kFree;
    if (!path_slots[i].state.compare_exchange_strong(expected, kFilling)) continue;
    std::memcpy(path_slots[i].path, text.c_str(), text.size() + 1);
    path_slots[i].kind = kind;
    path_slots[i].state.store(kReady);
    slot_ = i;
    return;
  }
}

ScopedTemporaryPath::~ScopedTemporaryPath() {
  if (slot_ >= 0) path_slots[slot_].state.store(kFree);
}

ScopedChildProcess::ScopedChildProcess(pid_t pid) {
  for (int i = 0; i < kMaxChildren; ++i) {
    pid_t expected = 0;
    if (child_slots[i].compare_exchange_strong(expected, pid)) {
      slot_ = i;
      return;
    }
  }
}

ScopedChildProcess::~ScopedChildProcess() {
  if (slot_ >= 0) child_slots[slot_].store(0);
}

}  // namespace sorbtrace
