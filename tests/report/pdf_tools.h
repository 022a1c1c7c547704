// Test helpers: run poppler-utils on a PDF and read its rendered pages (PGM, greyscale).
#pragma once

#include <filesystem>
#include <string>
#include <vector>

namespace sorbtrace::report::testing {

// One greyscale page: 0 = black, 255 = white.
struct GreyImage {
  int width = 0;
  int height = 0;
  std::vector<unsigned char> pixels;  // row-major, top row first
  unsigned char at(int x, int y) const {
    return pixels[static_cast<size_t>(y) * static_cast<size_t>(width) + static_cast<size_t>(x)];
  }
  // Fraction of pixels darker than `threshold` in the box [x0, x1) x [y0, y1) (clamped).
  double InkFraction(int x0, int y0, int x1, int y1, int threshold = 200) const;
};

// Parses a binary PGM (P5, maxval 255). Throws std::runtime_error on anything else.
GreyImage ReadPgm(const std::filesystem::path& file);

// Writes bytes to a fresh file under the gtest temporary directory and returns its path.
std::filesystem::path WriteTempFile(const std::string& name, const std::string& bytes);

// pdftoppm -r <dpi> -gray: every page as a GreyImage, in page order.
std::vector<GreyImage> RenderPages(const std::filesystem::path& pdf, int dpi);

// pdftotext -layout output (UTF-8) of the whole document.
std::string PdfText(const std::filesystem::path& pdf);

// Collapses every run of whitespace to one space (pdftotext breaks lines and columns).
std::string CollapseSpaces(const std::string& text);

}  // namespace sorbtrace::report::testing
