// File helpers used by every stage that reads or writes: atomic writes (temp file +
// rename, so no partial output is ever left behind) and SHA-256 digests of inputs.
#pragma once

#include <filesystem>
#include <string>
#include <string_view>

namespace sorbtrace {

// Writes `content` to `path` atomically: a temporary file in the same directory is
// written, flushed to disk and renamed over `path`. Throws std::runtime_error on failure
// (and removes the temporary file).
void WriteFileAtomically(const std::filesystem::path& path, std::string_view content);

// Reads a whole file; throws InputError (file named) if it cannot be opened.
std::string ReadWholeFile(const std::filesystem::path& path);

// Lower-case hex SHA-256 of a file's bytes / of a buffer (OpenSSL EVP).
std::string Sha256HexOfFile(const std::filesystem::path& path);
std::string Sha256Hex(std::string_view bytes);

}  // namespace sorbtrace
