// spurcast demo [-o DIR] [--json]: predict on the built-in example scenario (no files needed).
// The scenario is examples/greenhouse-buck.toml, embedded at build time (CMakeLists.txt generates
// spurcast_demo_scenario.hpp); its limit files resolve through the shipped limits folder.
#include <memory>
#include <string>

#include "cli/commands.hpp"
#include "cli/terminal.hpp"
#include "core/compliance/limits.hpp"
#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/output/output_dir.hpp"
#include "spurcast_demo_scenario.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::string output = "spurcast-demo";
  bool json = false;
};

int run_demo(const Options& options) {
  Prediction prediction;
  {
    Progress progress;
    check_output_folder(options.output);  // refuse a folder that is not ours before the long part
    progress.show("predicting the built-in demo scenario");
    const ShippedData data = locate_shipped_data();
    const Scenario scenario =
        scenario_from_text(demo_scenario_toml, "greenhouse-buck.toml (built in)", data.limits_directory(), data);
    prediction = predict(scenario);
  }
  // The demo shows the tool at work on an invented product: its verdict is reported, not turned
  // into the exit code, so a successful run exits 0 (predict maps verdicts to 0 and 1).
  const int code = write_report_and_summarise(prediction, options.output, options.json);
  return code == exit_limit_exceeded ? exit_ok : code;
}

}  // namespace

void setup_demo(CLI::App& app, CommandList& commands) {
  auto options = std::make_shared<Options>();
  CLI::App* sub = app.add_subcommand(
      "demo", "predict on the built-in example (a 48 V to 12 V buck, examples/greenhouse-buck.toml) and write a report");
  sub->add_option("-o,--output", options->output, "report folder (replaced only if spurcast wrote it)")
      ->capture_default_str();
  sub->add_flag("--json", options->json, "print summary.json instead of the text summary");
  sub->footer("exit codes: 0 the demo ran (its verdict is in the summary; predict maps verdicts to 0 and 1), 2 bad input, 3 the report could not be written");
  commands.push_back(Command{sub, [options] { return run_demo(*options); }});
}

}  // namespace spurcast::cli
