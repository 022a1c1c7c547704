#include "pipeline/common/files.h"

#include <openssl/evp.h>
#include <unistd.h>

#include <array>
#include <atomic>
#include <cstdio>
#include <fstream>
#include <memory>
#include <random>
#include <stdexcept>
#include <system_error>

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

}  // namespace

void WriteFileAtomically(const std::filesystem::path& path, std::string_view content) {
  const std::filesystem::path directory =
      path.has_parent_path() ? path.parent_path() : std::filesystem::path(".");
  // Unique temporary name in the same directory (rename is atomic within a file system).
  std::string temp_name = "." + path.filename().string() + ".tmp-" + std::to_string(::getpid()) +
                          "-" + std::to_string(temp_counter.fetch_add(1));
  const std::filesystem::path temp_path = directory / temp_name;
  std::FILE* file = std::fopen(temp_path.c_str(), "wb");
  if (file == nullptr) {
    throw std::runtime_error("cannot create " + temp_path.string());
  }
  const bool written = std::fwrite(content.data(), 1, content.size(), file) == content.size();
  const bool flushed = std::fflush(file) == 0 && ::fsync(::fileno(file)) == 0;
  const bool closed = std::fclose(file) == 0;
  if (!written || !flushed || !closed) {
    std::filesystem::remove(temp_path);
    throw std::runtime_error("cannot write " + temp_path.string());
  }
  std::error_code error;
  std::filesystem::rename(temp_path, path, error);
  if (error) {
    std::filesystem::remove(temp_path);
    throw std::runtime_error("cannot rename " + temp_path.string() + " to " + path.string() + ": " +
                             error.message());
  }
}

std::string ReadWholeFile(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) {
    throw InputError(SourceLocation{path.string(), 0, 0}, "cannot open file",
                     "an existing, readable file");
  }
  std::string content((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  return content;
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
  std::ifstream in(path, std::ios::binary);
  if (!in) {
    throw InputError(SourceLocation{path.string(), 0, 0}, "cannot open file",
                     "an existing, readable file");
  }
  std::unique_ptr<EVP_MD_CTX, EvpContextDeleter> context(EVP_MD_CTX_new());
  if (!context || EVP_DigestInit_ex(context.get(), EVP_sha256(), nullptr) != 1) {
    throw std::runtime_error("SHA-256 init failed");
  }
  std::array<char, 1 << 16> buffer{};
  while (in) {
    in.read(buffer.data(), static_cast<std::streamsize>(buffer.size()));
    const std::streamsize got = in.gcount();
    if (got > 0 && EVP_DigestUpdate(context.get(), buffer.data(), static_cast<size_t>(got)) != 1) {
      throw std::runtime_error("SHA-256 update failed");
    }
  }
  std::array<unsigned char, EVP_MAX_MD_SIZE> digest{};
  unsigned int length = 0;
  if (EVP_DigestFinal_ex(context.get(), digest.data(), &length) != 1) {
    throw std::runtime_error("SHA-256 final failed");
  }
  return HexOf(digest.data(), length);
}

}  // namespace sorbtrace
