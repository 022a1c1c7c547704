#include "pipeline/common/files.h"

#include <fcntl.h>
#include <openssl/evp.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <atomic>
#include <cerrno>
#include <cstddef>
#include <cstring>
#include <limits>
#include <memory>
#include <random>
#include <stdexcept>
#include <system_error>

#include "pipeline/common/cleanup.h"
#include "pipeline/common/diagnostics.h"

namespace sorbtrace {
namespace {

std::string HexOf(const unsigned char* digest, unsigned int length) {
  static constexpr char kHex[] = "0123456789abcdef";
  std::string out;
  out.reserve(2 * length);
  for (unsigned int i = 0; i < length; ++i) {
    out.push_back(kHex[digest[i] >> 4]);
    out.push_back(kHex[digest[i] & 0x0f]);
  }
  return out;
}

struct EvpContextDeleter {
  void operator()(EVP_MD_CTX* context) const { EVP_MD_CTX_free(context); }
};

std::atomic<unsigned long> temp_counter{0};

std::string ProblemOfMode(mode_t mode) {
  if (S_ISDIR(mode)) return "is a folder, not a file";
  if (S_ISFIFO(mode)) return "is a FIFO (named pipe), not a file";
  if (S_ISCHR(mode) || S_ISBLK(mode)) return "is a device, not a file";
  if (S_ISSOCK(mode)) return "is a socket, not a file";
  return "is not a regular file";
}

std::string ProblemOfErrno(int error_number) {
  switch (error_number) {
    case ENOENT:
      return "not found";
    case ENOTDIR:
      return "not found (a part of the path is not a folder)";
    case ELOOP:
      return "is a symbolic-link loop (too many levels of symbolic links)";
    default:
      return "cannot be read (" + std::string(std::strerror(error_number)) + ")";
  }
}

// Opens a regular file for reading. O_NONBLOCK keeps open() from waiting for a writer on a
// FIFO; fstat on the descriptor then refuses everything that is not a regular file.
int OpenRegularFile(const std::filesystem::path& path, const std::string& display,
                    const std::string& expected) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_NONBLOCK | O_CLOEXEC);
  if (fd < 0) throw InputError(SourceLocation{display, 0, 0}, ProblemOfErrno(errno), expected);
  struct stat status {};
  if (::fstat(fd, &status) != 0 || !S_ISREG(status.st_mode)) {
    const std::string problem = ProblemOfMode(status.st_mode);
    ::close(fd);
    throw InputError(SourceLocation{display, 0, 0}, problem, expected);
  }
  ::fcntl(fd, F_SETFL, ::fcntl(fd, F_GETFL) & ~O_NONBLOCK);
  return fd;
}

class FileDescriptor {
 public:
  explicit FileDescriptor(int fd) : fd_(fd) {}
  ~FileDescriptor() {
    if (fd_ >= 0) ::close(fd_);
  }
  FileDescriptor(const FileDescriptor&) = delete;
  FileDescriptor& operator=(const FileDescriptor&) = delete;
  int get() const { return fd_; }

 private:
  int fd_;
};

// Reads the descriptor in chunks, handing each to `consume`, until the end of the file or
// until `consume` returns false.
template <typename Consume>
void ReadChunks(int fd, const std::string& display, const std::string& expected,
                Consume&& consume) {
  std::array<char, 1 << 16> buffer{};
  for (;;) {
    const ssize_t got = ::read(fd, buffer.data(), buffer.size());
    if (got == 0) return;
    if (got < 0) {
      if (errno == EINTR) continue;
      throw InputError(SourceLocation{display, 0, 0},
                       "read failed (" + std::string(std::strerror(errno)) + ")", expected);
    }
    if (!consume(buffer.data(), static_cast<size_t>(got))) return;
  }
}

constexpr char kAnyRegularFile[] = "an existing, readable regular file";

bool WriteAll(int fd, std::string_view content) {
  while (!content.empty()) {
    const ssize_t put = ::write(fd, content.data(), content.size());
    if (put < 0) {
      if (errno == EINTR) continue;
      return false;
    }
    content.remove_prefix(static_cast<size_t>(put));
  }
  return true;
}

}  // namespace

std::string RegularFileProblem(const std::filesystem::path& path) {
  struct stat status {};
  if (::stat(path.c_str(), &status) != 0) return ProblemOfErrno(errno);
  if (!S_ISREG(status.st_mode)) return ProblemOfMode(status.st_mode);
  return {};
}

void RequireRegularFile(const std::filesystem::path& path, const std::string& display,
                        const std::string& expected) {
  const std::string problem = RegularFileProblem(path);
  if (!problem.empty()) throw InputError(SourceLocation{display, 0, 0}, problem, expected);
}

std::string WriteFailureMessage(const std::filesystem::path& path, int error_number) {
  std::string message = "cannot write " + path.string() + ": " + std::strerror(error_number);
  switch (error_number) {
    case ENOSPC:
    case EDQUOT:
      message += " (the disk or the quota is full; free space and run again)";
      break;
    case EFBIG:
      message += " (the file-size limit, `ulimit -f`, was reached)";
      break;
    case EROFS:
    case EACCES:
    case EPERM:
      message += " (the output folder is not writable; choose another with --out)";
      break;
    default:
      break;
  }
  return message;
}

void WriteFileAtomically(const std::filesystem::path& path, std::string_view content) {
  const std::filesystem::path directory =
      path.has_parent_path() ? path.parent_path() : std::filesystem::path(".");
  // Unique temporary name in the same directory (rename is atomic within a file system).
  std::string temp_name = "." + path.filename().string() + ".tmp-" + std::to_string(::getpid()) +
                          "-" + std::to_string(temp_counter.fetch_add(1));
  const std::filesystem::path temp_path = directory / temp_name;
  const ScopedTemporaryPath registered(temp_path, TemporaryKind::kFile);
  const int fd = ::open(temp_path.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0644);
  if (fd < 0) throw OutputError(WriteFailureMessage(path, errno));
  int error_number = 0;
  if (!WriteAll(fd, content) || ::fsync(fd) != 0) error_number = errno;
  if (::close(fd) != 0 && error_number == 0) error_number = errno;
  if (error_number == 0 && ::rename(temp_path.c_str(), path.c_str()) != 0) error_number = errno;
  if (error_number != 0) {
    ::unlink(temp_path.c_str());
    throw OutputError(WriteFailureMessage(path, error_number));
  }
}

std::string ReadRegularFileUpTo(const std::filesystem::path& path, const std::string& display,
                                std::size_t max_bytes, const std::string& expected) {
  const FileDescriptor fd(OpenRegularFile(path, display, expected));
  std::string content;
  if (max_bytes == 0) return content;
  ReadChunks(fd.get(), display, expected, [&](const char* data, size_t size) {
    content.append(data, std::min(size, max_bytes - content.size()));
    return content.size() < max_bytes;
  });
  return content;
}

std::string ReadWholeFile(const std::filesystem::path& path) {
  return ReadRegularFileUpTo(path, path.string(), std::numeric_limits<std::size_t>::max(),
                             kAnyRegularFile);
}

std::string Sha256Hex(std::string_view bytes) {
  std::unique_ptr<EVP_MD_CTX, EvpContextDeleter> context(EVP_MD_CTX_new());
  std::array<unsigned char, EVP_MAX_MD_SIZE> digest{};
  unsigned int length = 0;
  if (!context || EVP_DigestInit_ex(context.get(), EVP_sha256(), nullptr) != 1 ||
      EVP_DigestUpdate(context.get(), bytes.data(), bytes.size()) != 1 ||
      EVP_DigestFinal_ex(context.get(), digest.data(), &length) != 1) {
    throw std::runtime_error("SHA-256 failed");
  }
  return HexOf(digest.data(), length);
}

std::string Sha256HexOfFile(const std::filesystem::path& path) {
  const FileDescriptor fd(OpenRegularFile(path, path.string(), kAnyRegularFile));
  std::unique_ptr<EVP_MD_CTX, EvpContextDeleter> context(EVP_MD_CTX_new());
  if (!context || EVP_DigestInit_ex(context.get(), EVP_sha256(), nullptr) != 1) {
    throw std::runtime_error("SHA-256 init failed");
  }
  ReadChunks(fd.get(), path.string(), kAnyRegularFile, [&](const char* data, size_t size) {
    if (EVP_DigestUpdate(context.get(), data, size) != 1) {
      throw std::runtime_error("SHA-256 update failed");
    }
    return true;
  });
  std::array<unsigned char, EVP_MAX_MD_SIZE> digest{};
  unsigned int length = 0;
  if (EVP_DigestFinal_ex(context.get(), digest.data(), &length) != 1) {
    throw std::runtime_error("SHA-256 final failed");
  }
  return HexOf(digest.data(), length);
}

}  // namespace sorbtrace
