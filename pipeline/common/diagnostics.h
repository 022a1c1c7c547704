// Diagnostics shared by every stage: where a problem is, what was expected,
// and the documented exit codes of the sorbtrace binary.
//
// Convention (see DEVELOPERS.md): bad input from outside (files, job settings,
// command-line values) is reported by throwing InputError with a Diagnostic
// naming file, line and column; the run stage catches it, prints it and exits
// with ExitCode::kBadInput. Warnings that do not stop the run are collected in
// each stage's Summary. Programmer errors use assert().
#pragma once

#include <stdexcept>
#include <string>
#include <vector>

namespace sorbtrace {

// Process exit codes of the `sorbtrace` binary (documented in README.md).
enum class ExitCode : int {
  kOk = 0,             // everything done
  kUsage = 2,          // bad command line (unknown verb/option, missing argument)
  kBadInput = 3,       // an input file, job file or template is invalid
  kFitFailure = 4,     // no model could be fitted / a required computation failed
  kAuditMismatch = 5,  // `verify`: a recomputed number or an input hash differs
  kBatchPartial = 6,   // `batch`: at least one job failed (others completed)
  kOutputError = 7,    // an output cannot be written: read-only folder, disk full (ENOSPC),
                       // file-size limit (EFBIG, `ulimit -f`); nothing partial is left behind
  kInternal = 70,      // a bug: please report (EX_SOFTWARE)
};

// A place in an input: file path as given, 1-based line and column (0 = not applicable).
struct SourceLocation {
  std::string file;
  int line = 0;
  int column = 0;
};

enum class Severity { kWarning, kError };

// One finding about an input. `message` says what is wrong, `expected` what would be right.
struct Diagnostic {
  Severity severity = Severity::kError;
  SourceLocation where;
  std::string message;
  std::string expected;  // may be empty
};

// "file:line:column: error: message; expected ..." (parts omitted when unknown).
std::string FormatDiagnostic(const Diagnostic& diagnostic);

// Thrown for bad input; what() is FormatDiagnostic(diagnostic()).
class InputError : public std::runtime_error {
 public:
  explicit InputError(Diagnostic diagnostic);
  InputError(SourceLocation where, std::string message, std::string expected = {});
  const Diagnostic& diagnostic() const { return diagnostic_; }

 private:
  Diagnostic diagnostic_;
};

// Thrown when an output cannot be written for a reason of the environment (read-only
// folder, disk full, file-size limit); what() names the path and the system's reason. The
// verbs map it to ExitCode::kOutputError.
class OutputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Thrown when a computation cannot produce a result (e.g. no model converged).
class ComputationError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

}  // namespace sorbtrace
