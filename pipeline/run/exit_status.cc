// The exception -> exit code mapping of every verb (exit_status.h).
#include "pipeline/run/exit_status.h"

#include <cstdio>

#include "pipeline/common/diagnostics.h"

namespace sorbtrace::run {

Failure FailureOf(const std::exception& error) {
  if (dynamic_cast<const InputError*>(&error) != nullptr) {
    return {static_cast<int>(ExitCode::kBadInput), error.what()};
  }
  if (dynamic_cast<const ComputationError*>(&error) != nullptr) {
    return {static_cast<int>(ExitCode::kFitFailure), std::string("fit failure: ") + error.what()};
  }
  if (dynamic_cast<const OutputError*>(&error) != nullptr) {
    return {static_cast<int>(ExitCode::kOutputError), std::string("output error: ") + error.what()};
  }
  return {static_cast<int>(ExitCode::kInternal), std::string("internal error: ") + error.what()};
}

std::string FailureLine(const Failure& failure) {
  return failure.exit_code == static_cast<int>(ExitCode::kBadInput)
             ? failure.message
             : "sorbtrace: " + failure.message;
}

int ReportFailure(const std::exception& error) {
  const Failure failure = FailureOf(error);
  std::fprintf(stderr, "%s\n", FailureLine(failure).c_str());
  return failure.exit_code;
}

}  // namespace sorbtrace::run
