#include "pipeline/report/plot/text.h"

#include <algorithm>
#include <array>
#include <cstdint>
#include <string>

namespace sorbtrace::report::internal::plot {

std::string SanitizeUtf8(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  size_t i = 0;
  while (i < text.size()) {
    const auto c = static_cast<std::uint8_t>(text[i]);
    if (c < 0x80) {
      // Control characters (tabs, newlines, NUL) print as a space.
      out.push_back(c < 0x20 || c == 0x7f ? ' ' : static_cast<char>(c));
      ++i;
      continue;
    }
    int length = 0;
    std::uint32_t code = 0;
    if ((c & 0xE0) == 0xC0) {
      length = 2;
      code = c & 0x1F;
    } else if ((c & 0xF0) == 0xE0) {
      length = 3;
      code = c & 0x0F;
    } else if ((c & 0xF8) == 0xF0) {
      length = 4;
      code = c & 0x07;
    }
    bool valid = length > 0 && i + static_cast<size_t>(length) <= text.size();
    for (int k = 1; valid && k < length; ++k) {
      const auto cc = static_cast<std::uint8_t>(text[i + static_cast<size_t>(k)]);
      if ((cc & 0xC0) != 0x80) {
        valid = false;
      } else {
        code = (code << 6) | (cc & 0x3F);
      }
    }
    // Overlong forms, surrogates and code points beyond the Basic Multilingual Plane (the
    // embedded font covers the BMP only) are replaced.
    static constexpr std::array<std::uint32_t, 5> kMinimum = {0, 0, 0x80, 0x800, 0x10000};
    if (valid && (code < kMinimum[static_cast<size_t>(length)] || code > 0xFFFF ||
                  (code >= 0xD800 && code <= 0xDFFF))) {
      valid = false;
    }
    if (valid) {
      out.append(text.substr(i, static_cast<size_t>(length)));
      i += static_cast<size_t>(length);
    } else {
      out.push_back('?');
      ++i;
    }
  }
  return out;
}

namespace {

bool IsContinuationByte(char c) { return (static_cast<std::uint8_t>(c) & 0xC0) == 0x80; }
bool IsSeparator(char c) { return c == ' ' || c == '\t' || c == '\n' || c == '\r'; }
constexpr std::string_view kEllipsis = "…";

}  // namespace

std::string ClipLongWords(std::string_view text, size_t max_chars) {
  std::string out;
  out.reserve(std::min(text.size(), size_t{1} << 20));
  size_t chars_in_word = 0;
  bool clipped = false;  // the current word has been cut already
  for (char c : text) {
    if (IsSeparator(c)) {
      chars_in_word = 0;
      clipped = false;
      out.push_back(c);
      continue;
    }
    if (clipped) continue;
    if (!IsContinuationByte(c)) {
      if (chars_in_word == max_chars) {
        out.append(kEllipsis);
        clipped = true;
        continue;
      }
      ++chars_in_word;
    }
    out.push_back(c);
  }
  return out;
}

std::string PrintableText(std::string_view text) {
  std::string clean = ClipLongWords(SanitizeUtf8(text));
  if (clean.size() <= kMaxTextRunBytes) return clean;
  size_t cut = kMaxTextRunBytes - kEllipsis.size();
  while (cut > 0 && IsContinuationByte(clean[cut])) --cut;
  clean.resize(cut);
  clean.append(kEllipsis);
  return clean;
}

}  // namespace sorbtrace::report::internal::plot
