// Internal to the run stage: how the verbs talk to a person. On a terminal, progress
// redraws one status line; otherwise plain log lines. --quiet silences progress and
// warnings, --verbose adds warnings and stage timings.
#pragma once

#include <chrono>
#include <cstdio>
#include <mutex>
#include <string>

namespace sorbtrace::run {

enum class Verbosity { kQuiet, kNormal, kVerbose };

class Console {
 public:
  explicit Console(Verbosity verbosity);
  // A stage of a single run started ("fit", 3 of 6).
  void Stage(const std::string& label, const std::string& stage, int index, int count);
  // A line that always stays (a result, a warning in verbose mode).
  void Line(const std::string& text);
  // End of a redrawn status line (so the next output starts on a fresh line).
  void Finish();
  Verbosity verbosity() const { return verbosity_; }
  bool is_terminal() const { return terminal_; }

 private:
  Verbosity verbosity_;
  bool terminal_;
  bool status_open_ = false;
  std::mutex mutex_;
  std::chrono::steady_clock::time_point stage_start_;
};

}  // namespace sorbtrace::run
