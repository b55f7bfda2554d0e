// spurcast sensitivity SCENARIO.toml [--json]: the change of each worst reading per +10 % of every
// numeric scenario value, ranked.
#include "core/chain/sensitivity.hpp"

#include <cstdlib>
#include <filesystem>
#include <iostream>
#include <memory>
#include <string>

#include "cli/commands.hpp"
#include "cli/terminal.hpp"
#include "core/chain/sweep.hpp"
#include "core/input/shipped_data.hpp"
#include "core/input/toml_reader.hpp"
#include "core/output/sensitivity_output.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::string scenario_file;
  bool json = false;
  unsigned threads = 0;
};

int run_sensitivity_command(const Options& options) {
  const toml::table table = parse_toml_file(options.scenario_file, "scenario file");
  const std::filesystem::path folder = std::filesystem::path(options.scenario_file).parent_path();
  SensitivityOptions sensitivity;
  sensitivity.threads =
      options.threads ? options.threads : sweep_thread_count(std::getenv("SPURCAST_THREADS"));
  SensitivityResult result;
  {
    Progress progress;
    progress.show("predicting once per numeric key of " + options.scenario_file);
    result = run_sensitivity(table, options.scenario_file, folder.empty() ? "." : folder.string(),
                             locate_shipped_data(), sensitivity);
  }
  std::cout << (options.json ? sensitivity_json(result) : sensitivity_text(result));
  return exit_ok;
}

}  // namespace

void setup_sensitivity(CLI::App& app, CommandList& commands) {
  auto options = std::make_shared<Options>();
  CLI::App* sub = app.add_subcommand(
      "sensitivity",
      "the change in dB of each detector's worst reading (and each broadcast band's worst channel) "
      "per +10 % of\n"
      "every numeric scenario value, ranked; described sources without dither only");
  sub->add_option("scenario", options->scenario_file, "scenario file (TOML)")->required();
  sub->add_flag("--json", options->json, "print JSON instead of text");
  sub->add_option("--threads", options->threads,
                  "worker threads (default: SPURCAST_THREADS, else every core)");
  sub->footer("exit codes: 0 done, 2 bad input (a dithered or captured source included)");
  commands.push_back(Command{sub, [options] { return run_sensitivity_command(*options); }});
}

}  // namespace spurcast::cli
