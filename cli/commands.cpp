#include "cli/commands.hpp"

namespace spurcast::cli {

void register_commands(CLI::App& app, CommandList& commands) {
  setup_compare(app, commands);
  setup_limits(app, commands);
  setup_sweep(app, commands);
  setup_predict(app, commands);
  setup_demo(app, commands);
  setup_bands(app, commands);
  setup_scan(app, commands);
  setup_spectrum(app, commands);
  setup_sensitivity(app, commands);
  setup_serve(app, commands);
}

}  // namespace spurcast::cli
