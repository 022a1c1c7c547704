#include "pipeline/run/console.h"

#include <unistd.h>

namespace sorbtrace::run {

Console::Console(Verbosity verbosity)
    : verbosity_(verbosity), terminal_(::isatty(::fileno(stderr)) != 0) {
  stage_start_ = std::chrono::steady_clock::now();
}

void Console::Stage(const std::string& label, const std::string& stage, int index, int count) {
  if (verbosity_ == Verbosity::kQuiet) return;
  std::lock_guard<std::mutex> lock(mutex_);
  const auto now = std::chrono::steady_clock::now();
  if (verbosity_ == Verbosity::kVerbose && index > 0) {
    const double seconds = std::chrono::duration<double>(now - stage_start_).count();
    if (status_open_) std::fputs("\n", stderr);
    std::fprintf(stderr, "sorbtrace: %s: previous stage took %.3f s\n", label.c_str(), seconds);
    status_open_ = false;
  }
  stage_start_ = now;
  if (terminal_) {
    std::fprintf(stderr, "\r\x1b[K[%d/%d] %s: %s", index + 1, count, label.c_str(), stage.c_str());
    status_open_ = true;
  } else {
    std::fprintf(stderr, "sorbtrace: [%d/%d] %s: %s\n", index + 1, count, label.c_str(),
                 stage.c_str());
  }
  std::fflush(stderr);
}

void Console::Line(const std::string& text) {
  std::lock_guard<std::mutex> lock(mutex_);
  if (status_open_) {
    std::fputs("\r\x1b[K", stderr);
    status_open_ = false;
  }
  std::fprintf(stderr, "%s\n", text.c_str());
}

void Console::Finish() {
  std::lock_guard<std::mutex> lock(mutex_);
  if (status_open_) {
    std::fputs("\r\x1b[K", stderr);
    status_open_ = false;
  }
}

}  // namespace sorbtrace::run
