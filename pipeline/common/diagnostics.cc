#include "pipeline/common/diagnostics.h"

#include <utility>

namespace sorbtrace {

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
  out += diagnostic.message;
  if (!diagnostic.expected.empty()) out += "; expected " + diagnostic.expected;
  return out;
}

InputError::InputError(Diagnostic diagnostic)
    : std::runtime_error(FormatDiagnostic(diagnostic)), diagnostic_(std::move(diagnostic)) {}

InputError::InputError(SourceLocation where, std::string message, std::string expected)
    : InputError(Diagnostic{Severity::kError, std::move(where), std::move(message),
                            std::move(expected)}) {}

}  // namespace sorbtrace
