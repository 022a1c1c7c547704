// Internal to the run stage: the one mapping from an exception to the process exit code and the
// message a person reads (README, "Exit codes"). Every verb and main() use it.
//   InputError       -> 3  (kBadInput)    the message as is ("file:line:column: error: ...")
//   ComputationError -> 4  (kFitFailure)  "fit failure: ..."
//   OutputError      -> 7  (kOutputError) "output error: ..."
//   anything else    -> 70 (kInternal)    "internal error: ..." (a bug)
#pragma once

#include <exception>
#include <string>

namespace sorbtrace::run {

struct Failure {
  int exit_code = 0;
  std::string message;  // without the "sorbtrace: " prefix
};

Failure FailureOf(const std::exception& error);

// The line printed on stderr: the message, prefixed "sorbtrace: " unless it is a located input
// error (which starts with its file).
std::string FailureLine(const Failure& failure);

// Prints FailureLine(FailureOf(error)) on stderr and returns the exit code.
int ReportFailure(const std::exception& error);

}  // namespace sorbtrace::run
