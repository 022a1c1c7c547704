#include "pipeline/report/internal/reader_text.h"

#include <cctype>
#include <cstdlib>
#include <string>
#include <vector>

#include "fitters/registry.h"
#include "pipeline/physics/physics.h"
#include "pipeline/report/sheet.h"

namespace sorbtrace::report::internal {
namespace {

// A number of kelvin at least this large is an absolute temperature (the physics tables cover
// 0..100 °C; no temperature difference on a sorption datasheet comes near 150 K).
constexpr double kSmallestAbsoluteTemperature_K = 150.0;

bool IsWordChar(char c) {
  return std::isalnum(static_cast<unsigned char>(c)) != 0 || c == '_' || c == '.';
}

void ReplaceAll(std::string& text, const std::string& from, const std::string& to) {
  for (size_t pos = text.find(from); pos != std::string::npos; pos = text.find(from, pos)) {
    text.replace(pos, from.size(), to);
    pos += to.size();
  }
}

// "<number> K" followed by a non-word character or the end: the number in °C.
std::string KelvinToCelsius(const std::string& text) {
  std::string out;
  size_t i = 0;
  while (i < text.size()) {
    const size_t k = text.find(" K", i);
    if (k == std::string::npos) break;
    const bool word_end = k + 2 >= text.size() || !IsWordChar(text[k + 2]) || text[k + 2] == '.';
    size_t start = k;
    while (start > i && (std::isdigit(static_cast<unsigned char>(text[start - 1])) != 0 ||
                         text[start - 1] == '.')) {
      --start;
    }
    const bool number = start < k && std::isdigit(static_cast<unsigned char>(text[start])) != 0 &&
                        (start == 0 || !IsWordChar(text[start - 1]));
    if (!number || !word_end) {
      out.append(text, i, k + 2 - i);
      i = k + 2;
      continue;
    }
    const std::string digits = text.substr(start, k - start);
    const double kelvin = std::strtod(digits.c_str(), nullptr);
    out.append(text, i, start - i);
    if (kelvin >= kSmallestAbsoluteTemperature_K) {
      out += TemperatureLabel(kelvin);
    } else {
      out += digits + " °C";
    }
    i = k + 2;
  }
  out.append(text, i, std::string::npos);
  return out;
}

void DropFromMemory(std::string& text) {
  for (const char* note : {" (from memory)", "; from memory", ", from memory", " from memory"}) {
    ReplaceAll(text, note, "");
  }
  // Left empty brackets or a leading "from memory" are not expected; leave the rest as written.
  ReplaceAll(text, "from memory", "");
}

// Registry keys standing as words, outside quotes, become the model's title.
std::string ModelTitles(const std::string& text) {
  std::string out = text;
  for (const fitters::Model* model : fitters::AllModels()) {
    const std::string& key = model->name();
    const std::string& title = model->info().title;
    for (size_t pos = out.find(key); pos != std::string::npos; pos = out.find(key, pos)) {
      const size_t end = pos + key.size();
      const char before = pos > 0 ? out[pos - 1] : ' ';
      const char after = end < out.size() ? out[end] : ' ';
      const bool word = !IsWordChar(before) && before != '"' && before != '\'' &&
                        !(std::isalnum(static_cast<unsigned char>(after)) != 0 || after == '_' ||
                          after == '"' || after == '\'');
      if (!word) {
        pos = end;
        continue;
      }
      out.replace(pos, key.size(), title);
      pos += title.size();
    }
  }
  return out;
}

}  // namespace

std::string ReaderText(const std::string& text) {
  std::string out = KelvinToCelsius(text);
  ReplaceAll(out, "degC", "°C");
  ReplaceAll(out, "+-", "±");
  DropFromMemory(out);
  return ModelTitles(out);
}

}  // namespace sorbtrace::report::internal
