#include "cli/commands.hpp"

namespace spurcast::cli {

void register_commands(CLI::App& app, CommandList& commands) {
  (void)app;
  (void)commands;
}

}  // namespace spurcast::cli
