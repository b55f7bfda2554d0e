#include "cli/commands.hpp"

#include "core/chain/sweep.hpp"

namespace spurcast::cli {

CLI::Validator thread_count_check() {
  return CLI::Validator([](std::string& text) { return spurcast::thread_count_problem(text).value_or(""); }, "1..N");
}

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
  setup_design_filter(app, commands);
  setup_serve(app, commands);
}

}  // namespace spurcast::cli
