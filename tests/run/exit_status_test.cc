// The one exception -> exit code mapping (pipeline/run/exit_status.h) against the README's
// table of exit codes.
#include "pipeline/run/exit_status.h"

#include <gtest/gtest.h>

#include <stdexcept>

#include "pipeline/common/diagnostics.h"

namespace sorbtrace::run {
namespace {

TEST(ExitStatusTest, EachKindOfFailureHasItsDocumentedCode) {
  const InputError input(SourceLocation{"job.toml", 3, 7}, "bad key", "a number");
  const Failure bad_input = FailureOf(input);
  EXPECT_EQ(bad_input.exit_code, 3);  // README: bad input
  EXPECT_EQ(FailureLine(bad_input).rfind("job.toml:3:7: error: bad key", 0), 0u);

  const Failure fit = FailureOf(ComputationError("no model fitted"));
  EXPECT_EQ(fit.exit_code, 4);  // README: fit failure
  EXPECT_EQ(FailureLine(fit), "sorbtrace: fit failure: no model fitted");

  const Failure output = FailureOf(OutputError("disk full"));
  EXPECT_EQ(output.exit_code, 7);  // README: an output cannot be written
  EXPECT_EQ(FailureLine(output), "sorbtrace: output error: disk full");

  const Failure bug = FailureOf(std::logic_error("index out of range"));
  EXPECT_EQ(bug.exit_code, 70);  // README: internal error
  EXPECT_EQ(FailureLine(bug), "sorbtrace: internal error: index out of range");
}

}  // namespace
}  // namespace sorbtrace::run
