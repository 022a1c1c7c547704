// Shared by the libFuzzer targets: each target writes the fuzzer's bytes into a file of a
// private temporary folder and runs the real reader on it, exactly as the binary would.
// A reader may reject the input only with sorbtrace::InputError; any other exception, crash,
// hang, leak or sanitizer report is a finding.
#pragma once

#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <string>
#include <string_view>

namespace sorbtrace::fuzz {

inline std::filesystem::path WorkDir() {
  static const std::filesystem::path dir = [] {
    auto path =
        std::filesystem::temp_directory_path() / ("sorbtrace-fuzz-" + std::to_string(::getpid()));
    std::filesystem::create_directories(path);
    return path;
  }();
  return dir;
}

inline std::filesystem::path WriteFile(const std::string& name, std::string_view content) {
  const auto path = WorkDir() / name;
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out.write(content.data(), static_cast<std::streamsize>(content.size()));
  return path;
}

inline std::string_view Bytes(const uint8_t* data, size_t size) {
  return {reinterpret_cast<const char*>(data), size};
}

}  // namespace sorbtrace::fuzz
