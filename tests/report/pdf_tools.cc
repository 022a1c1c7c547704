#include "tests/report/pdf_tools.h"

#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <stdexcept>

namespace sorbtrace::report::testing {
namespace {

std::filesystem::path TempDirectory() {
  // One folder per process: ctest runs test cases in parallel processes.
  std::filesystem::path dir = std::filesystem::path(::testing::TempDir()) /
                              ("sorbtrace_report_test_" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  // Removed when the test process ends (set SORBTRACE_KEEP_TEST_FILES=1 to look at them).
  static const struct Cleanup {
    std::filesystem::path path;
    ~Cleanup() {
      if (std::getenv("SORBTRACE_KEEP_TEST_FILES") == nullptr) {
        std::error_code ignored;
        std::filesystem::remove_all(path, ignored);
      }
    }
  } cleanup{dir};
  return dir;
}

void Run(const std::string& command) {
  const int status = std::system(command.c_str());
  if (status != 0) throw std::runtime_error("command failed: " + command);
}

std::string Slurp(const std::filesystem::path& file) {
  std::ifstream in(file, std::ios::binary);
  std::stringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

}  // namespace

double GreyImage::InkFraction(int x0, int y0, int x1, int y1, int threshold) const {
  x0 = std::clamp(x0, 0, width);
  x1 = std::clamp(x1, 0, width);
  y0 = std::clamp(y0, 0, height);
  y1 = std::clamp(y1, 0, height);
  if (x1 <= x0 || y1 <= y0) return 0.0;
  long dark = 0;
  for (int y = y0; y < y1; ++y) {
    for (int x = x0; x < x1; ++x) dark += at(x, y) < threshold ? 1 : 0;
  }
  return static_cast<double>(dark) / (static_cast<double>(x1 - x0) * (y1 - y0));
}

GreyImage ReadPgm(const std::filesystem::path& file) {
  const std::string data = Slurp(file);
  size_t pos = 0;
  auto token = [&]() {
    while (pos < data.size()) {
      if (data[pos] == '#') {
        while (pos < data.size() && data[pos] != '\n') ++pos;
      } else if (std::isspace(static_cast<unsigned char>(data[pos]))) {
        ++pos;
      } else {
        break;
      }
    }
    const size_t start = pos;
    while (pos < data.size() && !std::isspace(static_cast<unsigned char>(data[pos]))) ++pos;
    return data.substr(start, pos - start);
  };
  if (token() != "P5") throw std::runtime_error("not a binary PGM: " + file.string());
  GreyImage image;
  image.width = std::stoi(token());
  image.height = std::stoi(token());
  if (token() != "255") throw std::runtime_error("PGM maxval is not 255: " + file.string());
  ++pos;  // the single whitespace after maxval
  const size_t n = static_cast<size_t>(image.width) * static_cast<size_t>(image.height);
  if (data.size() < pos + n) throw std::runtime_error("PGM truncated: " + file.string());
  image.pixels.assign(data.begin() + static_cast<long>(pos),
                      data.begin() + static_cast<long>(pos + n));
  return image;
}

std::filesystem::path WriteTempFile(const std::string& name, const std::string& bytes) {
  const std::filesystem::path path = TempDirectory() / name;
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
  return path;
}

std::vector<GreyImage> RenderPages(const std::filesystem::path& pdf, int dpi) {
  const std::filesystem::path dir = TempDirectory() / (pdf.stem().string() + "_pages");
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  Run("pdftoppm -r " + std::to_string(dpi) + " -gray '" + pdf.string() + "' '" +
      (dir / "page").string() + "' 2>/dev/null");
  std::vector<std::filesystem::path> files;
  for (const auto& entry : std::filesystem::directory_iterator(dir)) {
    if (entry.path().extension() == ".pgm") files.push_back(entry.path());
  }
  // pdftoppm pads page numbers to the same width, so names sort in page order.
  std::sort(files.begin(), files.end());
  std::vector<GreyImage> pages;
  for (const auto& f : files) pages.push_back(ReadPgm(f));
  return pages;
}

std::string PdfText(const std::filesystem::path& pdf) {
  const std::filesystem::path out = pdf.string() + ".txt";
  Run("pdftotext -enc UTF-8 '" + pdf.string() + "' '" + out.string() + "' 2>/dev/null");
  return Slurp(out);
}

std::string CollapseSpaces(const std::string& text) {
  std::string out;
  bool space = false;
  for (char c : text) {
    if (std::isspace(static_cast<unsigned char>(c))) {
      space = true;
    } else {
      if (space && !out.empty()) out.push_back(' ');
      space = false;
      out.push_back(c);
    }
  }
  return out;
}

}  // namespace sorbtrace::report::testing
