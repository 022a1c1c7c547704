#include "pipeline/common/diagnostics.h"

#include <utility>

namespace sorbtrace {
namespace {

// Control bytes quoted from a damaged file (NUL, escape sequences, stray CR) would cut or
// garble the printed message; they are shown as \t, \r, \n or \xNN instead.
std::string Printable(const std::string& text) {
  static constexpr char kHex[] = "0123456789abcdef";
  std::string out;
  out.reserve(text.size());
  for (const char c : text) {
    const auto byte = static_cast<unsigned char>(c);
    if (byte == '\t') {
      out += "\\t";
    } else if (byte == '\r') {
      out += "\\r";
    } else if (byte == '\n') {
      out += "\\n";
    } else if (byte < 0x20 || byte == 0x7f) {
      out += "\\x";
      out += kHex[byte >> 4];
      out += kHex[byte & 0x0f];
    } else {
      out += c;
    }
  }
  return out;
}

}  // namespace

std::string FormatDiagnostic(const Diagnostic& diagnostic) {
  std::string out;
  if (!diagnostic.where.file.empty()) {
    out += diagnostic.where.file;
    if (diagnostic.where.line > 0) {
      out += ":" + std::to_string(diagnostic.where.line);
      if (diagnostic.where.column > 0) out += ":" + std::to_string(diagnostic.where.column);
    }
    out += ": ";
  }
  out += diagnostic.severity == Severity::kError ? "error: " : "warning: ";
  out += Printable(diagnostic.message);
  if (!diagnostic.expected.empty()) out += "; expected " + Printable(diagnostic.expected);
  return out;
}

InputError::InputError(Diagnostic diagnostic)
    : std::runtime_error(FormatDiagnostic(diagnostic)), diagnostic_(std::move(diagnostic)) {}

InputError::InputError(SourceLocation where, std::string message, std::string expected)
    : InputError(Diagnostic{Severity::kError, std::move(where), std::move(message),
                            std::move(expected)}) {}

}  // namespace sorbtrace
