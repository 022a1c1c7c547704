// Placeholder registration for `sorbtrace verify`; replaced by the stage owner.
#include <CLI/CLI.hpp>

#include "pipeline/common/diagnostics.h"
#include "pipeline/run/commands.h"

namespace sorbtrace::run {

void AddVerifyCommand(CLI::App& app, int& exit_code) {
  CLI::App* command = app.add_subcommand("verify", "(not yet available)");
  command->callback([&exit_code] { exit_code = static_cast<int>(ExitCode::kInternal); });
}

}  // namespace sorbtrace::run
