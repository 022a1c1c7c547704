// Internal to the run stage: comparison of a recorded results.json against a recomputed one,
// leaf by leaf, for `sorbtrace verify`.
#pragma once

#include <string>
#include <vector>

#include <nlohmann/json.hpp>

namespace sorbtrace::run {

// One compared quantity: its JSON pointer, both values as text, tolerance and outcome.
struct AuditLine {
  std::string pointer;   // e.g. "/fits/0/parameters/0/value"
  std::string reported;
  std::string recomputed;
  double tolerance = 0.0;  // relative tolerance applied to numbers (0 for text)
  bool passed = false;
};

// Relative tolerance for recomputed numbers. The pipeline is deterministic (seeded
// resampling, fixed iteration order), so recomputation on the same build reproduces every
// number to the last bit; the tolerance only absorbs differences of compiler or library
// version between the issuing and the auditing machine.
inline constexpr double kAuditRelativeTolerance = 1e-9;
inline constexpr double kAuditAbsoluteTolerance = 1e-300;

std::vector<AuditLine> CompareResults(const nlohmann::json& reported,
                                      const nlohmann::json& recomputed);

}  // namespace sorbtrace::run
