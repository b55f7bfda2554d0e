// spurcast sweep: re-runs the chain across one or more scenario keys (in parallel) and prints the
// windows of the first key where a broadcast band stays clear, the fundamental stays out of a CISPR
// band, and/or every limit is met with the guard band, robust to a drift tolerance.
#include <cstdlib>
#include <filesystem>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/terminal.hpp"
#include "core/input/error.hpp"
#include "core/output/output_dir.hpp"
#include "core/output/sweep_output.hpp"
#include "core/chain/sweep.hpp"
#include "core/input/toml_reader.hpp"
#include "core/input/units.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::string scenario_file;
  std::vector<std::string> vary;
  bool logarithmic = false;
  std::vector<std::string> clear;
  bool meet_limits = false;
  std::string tolerance = "0 %";
  std::string csv_file;
  std::string plot_file;
  bool json = false;
  bool scan = false;
  unsigned threads = 0;
};

int run_sweep_command(const Options& options) {
  // Inputs first: nothing is written unless every input is good.
  const toml::table table = parse_toml_file(options.scenario_file, "scenario file");
  const std::filesystem::path folder = std::filesystem::path(options.scenario_file).parent_path();
  const std::string directory = folder.empty() ? "." : folder.string();

  SweepOptions sweep;
  for (const std::string& text : options.vary) {
    VarySpec vary = parse_vary(text);
    vary.logarithmic = vary.logarithmic || options.logarithmic;
    sweep.axes.push_back(make_axis(table, vary));
  }
  for (const std::string& band : options.clear) sweep.criteria.push_back(parse_window_criterion(band));
  if (options.meet_limits) sweep.criteria.push_back(WindowCriterion{WindowCriterion::Kind::limits_met, ""});
  try {
    sweep.tolerance_fraction = parse_quantity(options.tolerance, Dimension::fraction);
  } catch (const Error& e) {
    throw Error(std::string("--tolerance: ") + e.what());
  }
  sweep.threads = options.threads ? options.threads : sweep_thread_count(std::getenv("SPURCAST_THREADS"));
  sweep.exact_lines = !options.scan;

  // Progress on stderr when it is a terminal (a dithered source's point takes about a second).
  Progress progress;
  sweep.on_point_done = [&progress](std::size_t done, std::size_t total) {
    progress.show("sweeping: " + std::to_string(done) + " of " + std::to_string(total) + " points",
                  static_cast<double>(done) / static_cast<double>(total));
  };
  SweepResult result = run_sweep(table, options.scenario_file, directory, locate_shipped_data(), sweep);
  progress.clear();

  // The CSV and the plot appear together or not at all (core/output/output_dir.hpp).
  std::vector<std::string> written;
  OutputSet outputs;
  if (!options.csv_file.empty()) {
    outputs.add_file(options.csv_file, sweep_csv(result));
    written.push_back(options.csv_file);
  }
  if (!options.plot_file.empty()) {
    outputs.add_file(options.plot_file, sweep_svg(result, "sweep of " + result.axes.front().key));
    written.push_back(options.plot_file);
  }
  outputs.commit();

  std::cout << (options.json ? sweep_json(result, written) : sweep_text(result, written));
  return sweep_goal_met(result) ? exit_ok : exit_limit_exceeded;
}

}  // namespace

void setup_sweep(CLI::App& app, CommandList& commands) {
  auto options = std::make_shared<Options>();
  CLI::App* sub = app.add_subcommand(
      "sweep",
      "re-run the prediction across a scenario key and find the windows that clear a band or meet the limits.\n"
      "Exit code 0 when a window is found (with several criteria: one meeting all of them; without any: when\n"
      "every point meets the limits), 1 otherwise, 2 on bad input.");
  sub->add_option("scenario", options->scenario_file, "scenario file (TOML)")->required();
  sub->add_option("--vary", options->vary,
                  "KEY=FROM:TO[:N][:log], e.g. switching.frequency=100kHz:3MHz:1000 (default N 101); keys are "
                  "dotted scenario keys (switching.rise, coupling.parasitic_capacitance, filter.1.inductance, ...); "
                  "repeat for a grid (windows run along the first)")
      ->required();
  sub->add_flag("--log", options->logarithmic, "space the values of every --vary geometrically");
  sub->add_option("--clear", options->clear,
                  "find windows where this broadcast band (e.g. MW, LW, FM, \"49 m\") is clear; a CISPR band letter "
                  "(A-D) asks for the fundamental to stay outside that band; repeatable");
  sub->add_flag("--meet-limits", options->meet_limits, "find windows where every limit is met with the guard band");
  sub->add_option("--tolerance", options->tolerance,
                  "drift of the switching frequency the windows must hold across, e.g. 5%")
      ->capture_default_str();
  sub->add_option("--csv", options->csv_file, "write one row per point to this CSV file");
  sub->add_option("--plot", options->plot_file, "write the sweep plot (SVG) to this file");
  sub->add_flag("--json", options->json, "print JSON instead of text");
  sub->add_flag("--scan", options->scan, "use the receiver scan at every point (slow; the exact line path is the default)");
  sub->add_option("--threads", options->threads, "worker threads (default: SPURCAST_THREADS, else every core)")
      ->check(thread_count_check());
  commands.push_back(Command{sub, [options] { return run_sweep_command(*options); }});
}

}  // namespace spurcast::cli
