// spurcast serve SCENARIO.toml [--port N]: the local what-if page (core/output/whatif_server.hpp).
#include <filesystem>
#include <iostream>
#include <memory>
#include <string>

#include "cli/commands.hpp"
#include "core/input/shipped_data.hpp"
#include "core/input/toml_reader.hpp"
#include "core/output/whatif_server.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::string scenario;
  int port = 8470;
};

int run_serve(const Options& options) {
  const std::filesystem::path folder = std::filesystem::path(options.scenario).parent_path();
  WhatIfServer server(WhatIfSession(parse_toml_file(options.scenario, "scenario file"), options.scenario,
                                    folder.empty() ? "." : folder.string(), locate_shipped_data()));
  const int port = server.bind(options.port);
  std::cout << "what-if page: http://127.0.0.1:" << port << "/  (loopback only; Ctrl-C stops it)" << std::endl;
  server.listen();
  return exit_ok;
}

}  // namespace

void setup_serve(CLI::App& app, CommandList& commands) {
  auto options = std::make_shared<Options>();
  CLI::App* sub = app.add_subcommand(
      "serve", "serve a local what-if page for a scenario on 127.0.0.1 (change values, see the verdict at once)");
  sub->add_option("scenario", options->scenario, "scenario file (TOML); it is read once and never written")->required();
  sub->add_option("--port", options->port, "port on 127.0.0.1 (0: any free port, printed)")
      ->check(CLI::Range(0, 65535))
      ->capture_default_str();
  commands.push_back(Command{sub, [options] { return run_serve(*options); }});
}

}  // namespace spurcast::cli
