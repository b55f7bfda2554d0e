// spurcast design-filter SCENARIO.toml -o NEW.toml [--json] [--report DIR]: proposes input-filter
// stages that meet the scenario's limits with the guard band, and writes the scenario with them.
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <string>

#include "cli/commands.hpp"
#include "cli/terminal.hpp"
#include "core/chain/filter_design.hpp"
#include "core/input/error.hpp"
#include "core/input/shipped_data.hpp"
#include "core/input/toml_reader.hpp"
#include "core/output/filter_design_output.hpp"
#include "core/output/output_dir.hpp"
#include "core/output/report.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::string scenario_file;
  std::string output;
  bool json = false;
  std::string report;  ///< report folder of NEW.toml with the before readings ("" = none)
};

int run_design_filter_command(const Options& options) {
  namespace fs = std::filesystem;
  std::error_code ec;
  if (fs::exists(options.output, ec)) {
    // Replace only a file this command wrote (its first line says so), never the scenario itself.
    if (fs::equivalent(options.output, options.scenario_file, ec)) {
      throw OutputError("refusing to write " + options.output + ": it is the scenario file");
    }
    std::ifstream existing(options.output);
    std::string first;
    std::getline(existing, first);
    if (first.rfind(filter_design_header, 0) != 0) {
      throw OutputError("refusing to replace " + options.output +
                        ": spurcast design-filter did not write it");
    }
  }
  // Refuse a report folder that is not ours before the long part.
  if (!options.report.empty()) check_output_folder(options.report);
  const toml::table table = parse_toml_file(options.scenario_file, "scenario file");
  const fs::path folder = fs::path(options.scenario_file).parent_path();
  FilterDesign design;
  {
    Progress progress;
    progress.show("planning the input filter of " + options.scenario_file);
    design = design_filter(table, options.scenario_file, folder.empty() ? "." : folder.string(),
                           locate_shipped_data());
  }
  write_file_atomically(options.output, design.scenario_toml);
  if (!options.report.empty()) {
    write_output_directory(options.report,
                           report_files(*design.after_prediction, &*design.before_prediction));
  }
  std::cout << (options.json ? filter_design_json(design, options.output)
                             : filter_design_text(design, options.output));
  if (!options.report.empty() && !options.json) {
    std::cout << "wrote the report of " << options.output << " with the readings before in "
              << options.report << "/report.html\n";
  }
  return design.met ? exit_ok : exit_limit_exceeded;
}

}  // namespace

void setup_design_filter(CLI::App& app, CommandList& commands) {
  auto options = std::make_shared<Options>();
  CLI::App* sub = app.add_subcommand("design-filter",
                                     "propose input-filter stages (a common-mode choke with Y "
                                     "capacitors, a damped differential-mode LC\n"
                                     "section) that meet the scenario's conducted limits with the "
                                     "guard, and write the scenario with them");
  sub->add_option("scenario", options->scenario_file, "scenario file (TOML)")->required();
  sub->add_option("-o,--output", options->output,
                  "the new scenario file (replaced only if design-filter wrote it)")
      ->required();
  sub->add_flag("--json", options->json, "print JSON instead of text");
  sub->add_option("--report", options->report,
                  "also write the report folder of the new scenario, with the readings before the "
                  "filter on its plots and a before/after margin table (replaced only if spurcast "
                  "wrote it)");
  sub->footer(
      "exit codes: 0 the limits are met with the guard, 1 no filter within the constraints meets "
      "them "
      "(the binding constraint is named), 2 bad input, 3 the file could not be written");
  commands.push_back(Command{sub, [options] { return run_design_filter_command(*options); }});
}

}  // namespace spurcast::cli
