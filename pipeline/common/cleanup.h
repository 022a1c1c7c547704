// Cleanup of temporary outputs when the process is stopped by a signal.
//
// Every temporary file (`.NAME.tmp-PID-N`) and staging folder (`.NAME.partial-PID-N`) that
// sorbtrace creates is registered here while it exists. InstallSignalCleanup() installs
// handlers for SIGINT, SIGTERM and SIGHUP that forward the signal to registered child
// processes (`batch` runs each job in a child), remove the registered paths with
// async-signal-safe calls only (unlink, openat/getdents64/unlinkat, rmdir) and then end the
// process by the same signal (exit status 128 + signal number in a shell). SIGXFSZ (the
// file-size limit of `ulimit -f`) is ignored, so a write past the limit fails with EFBIG
// and is reported as an output error instead of killing the process.
//
// SIGKILL cannot be caught: after `kill -9` (or a power cut) `.*.tmp-*` files and
// `.*.partial-*` folders can remain next to the outputs. A previous output folder is never
// half-replaced (the swap is one rename), and the leftovers are never read by sorbtrace.
#pragma once

#include <sys/types.h>

#include <filesystem>

namespace sorbtrace {

// Installs the handlers described above; call once at the start of main().
void InstallSignalCleanup();

// What a registered path is, and how it is removed on a signal.
enum class TemporaryKind {
  kFile,         // unlinked
  kFolder,       // its files unlinked, then the folder (staging folders hold files only)
  kEmptyFolder,  // removed only if empty, after all others (parents created for an output)
};

// Registers `path` for removal on a signal while the object lives.
class ScopedTemporaryPath {
 public:
  ScopedTemporaryPath(const std::filesystem::path& path, TemporaryKind kind);
  ~ScopedTemporaryPath();
  ScopedTemporaryPath(const ScopedTemporaryPath&) = delete;
  ScopedTemporaryPath& operator=(const ScopedTemporaryPath&) = delete;

 private:
  int slot_ = -1;  // -1: registry full (the path is then only removed on normal paths)
};

// Registers a child process that receives the same signal as this one while the object
// lives.
class ScopedChildProcess {
 public:
  explicit ScopedChildProcess(pid_t pid);
  ~ScopedChildProcess();
  ScopedChildProcess(const ScopedChildProcess&) = delete;
  ScopedChildProcess& operator=(const ScopedChildProcess&) = delete;

 private:
  int slot_ = -1;
};

}  // namespace sorbtrace
