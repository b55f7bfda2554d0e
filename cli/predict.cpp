// spurcast predict SCENARIO.toml [-o DIR] [--json] [--explain-at FREQ]... [--sampled-dither]: the whole chain, written as a report folder.
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/terminal.hpp"
#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/input/error.hpp"
#include "core/input/units.hpp"
#include "core/output/output_dir.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::string scenario;
  std::string output = "spurcast-report";
  bool json = false;
  std::vector<std::string> explain_at;
  bool sampled_dither = false;
};

int run_predict(const Options& options) {
  PredictionOptions prediction_options;
  for (const std::string& text : options.explain_at) {
    try {
      prediction_options.explain_at_hz.push_back(parse_quantity(text, Dimension::frequency));
    } catch (const Error& e) {
      throw Error(std::string("--explain-at: ") + e.what());
    }
  }
  Prediction prediction;
  {
    Progress progress;
    progress.show("reading " + options.scenario);
    const Scenario scenario = load_scenario(options.scenario, locate_shipped_data());
    check_output_folder(options.output);  // refuse a folder that is not ours before the long part
    progress.show("predicting (source, conducted path, receiver scans, bands)");
    prediction_options.sampled_dither = options.sampled_dither;
    prediction = predict(scenario, prediction_options);
  }
  return write_report_and_summarise(prediction, options.output, options.json);
}

}  // namespace

void setup_predict(CLI::App& app, CommandList& commands) {
  auto options = std::make_shared<Options>();
  CLI::App* sub = app.add_subcommand(
      "predict", "run the whole chain on a scenario and write a report folder (report.html, CSV, summary.json)");
  sub->add_option("scenario", options->scenario, "scenario file (TOML)")->required();
  sub->add_option("-o,--output", options->output, "report folder (replaced only if spurcast wrote it)")
      ->capture_default_str();
  sub->add_flag("--json", options->json, "print summary.json instead of the text summary");
  sub->add_option("--explain-at", options->explain_at,
                  "also show what makes the reading at this frequency (DM/CM shares, source term, controlling path), "
                  "e.g. 1.2MHz; repeatable, inside the computed band")
      ->allow_extra_args(false);
  sub->add_flag("--sampled-dither", options->sampled_dither,
                "read a dithered source through a sampled record and the FFT receiver, even when its exact lines "
                "are available (a cross-check; slower)");
  sub->footer("exit codes: 0 every limit met, 1 a limit exceeded or a margin under the guard band, 2 bad input, 3 the report could not be written");
  commands.push_back(Command{sub, [options] { return run_predict(*options); }});
}

}  // namespace spurcast::cli
