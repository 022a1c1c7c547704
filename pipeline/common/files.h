// File helpers used by every stage that reads or writes: the one place that decides which
// paths may be read as inputs (regular files only), atomic writes (temp file + rename, so
// no partial output is ever left behind) and SHA-256 digests of inputs.
//
// Reading rule: only regular files are inputs (symbolic links are followed). A folder, a
// FIFO, a device such as /dev/zero, a socket or a symbolic-link loop is refused with a
// message saying which of these it is, never read (a FIFO or /dev/zero would block or
// never end). Files are opened with O_NONBLOCK and checked with fstat on the open
// descriptor, so the check and the read concern the same file.
#pragma once

#include <cstddef>
#include <filesystem>
#include <string>
#include <string_view>

namespace sorbtrace {

// Why `path` cannot be read as an input file: empty for a regular file, else a phrase such
// as "not found", "is a folder", "is a FIFO (named pipe)", "is a device, not a file",
// "is a symbolic-link loop", "cannot be read (Permission denied)".
std::string RegularFileProblem(const std::filesystem::path& path);

// Throws InputError at {display, 0, 0} "<display> <problem>" unless `path` is a regular
// file. `expected` says what should be there (e.g. "a TOML job file").
void RequireRegularFile(const std::filesystem::path& path, const std::string& display,
                        const std::string& expected);

// Writes `content` to `path` atomically: a temporary file in the same directory is
// written, flushed to disk and renamed over `path`. The temporary file is removed on every
// failure and, while it exists, on SIGINT/SIGTERM/SIGHUP (pipeline/common/cleanup.h).
// Throws OutputError naming the path and the system's reason (disk full, file too large,
// read-only, permission).
void WriteFileAtomically(const std::filesystem::path& path, std::string_view content);

// Reads at most `max_bytes` bytes of a regular file (ask for one byte more than a limit to
// tell a file at the limit from a longer one); throws InputError at {display, 0, 0} naming
// what the path is (RegularFileProblem's phrases) or the read error, with `expected`.
std::string ReadRegularFileUpTo(const std::filesystem::path& path, const std::string& display,
                                std::size_t max_bytes, const std::string& expected);

// Reads a whole regular file; throws InputError (file named, RegularFileProblem) otherwise.
std::string ReadWholeFile(const std::filesystem::path& path);

// Lower-case hex SHA-256 of a regular file's bytes (InputError as ReadWholeFile) / of a
// buffer (OpenSSL EVP).
std::string Sha256HexOfFile(const std::filesystem::path& path);
std::string Sha256Hex(std::string_view bytes);

// "cannot write PATH: REASON" for errno `error_number`, with a hint for ENOSPC, EFBIG,
// EROFS and EACCES; the text of OutputError.
std::string WriteFailureMessage(const std::filesystem::path& path, int error_number);

}  // namespace sorbtrace
