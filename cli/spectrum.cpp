// spurcast spectrum: the harmonic spectrum of the source (described or captured), of the pulsed
// input current, or at the LISN receiver port; or a quick look at a capture file (--capture).
#include <algorithm>
#include <iostream>
#include <memory>
#include <optional>
#include <string>

#include "cli/commands.hpp"
#include "cli/terminal.hpp"
#include "core/chain/scenario.hpp"
#include "core/chain/spectrum_at.hpp"
#include "core/input/error.hpp"
#include "core/input/units.hpp"
#include "core/output/output_dir.hpp"
#include "core/output/spectrum_output.hpp"
#include "core/source/capture.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::string scenario_file;
  std::string capture_file;
  std::string column;       // "" = default (2), a 1-based number or a header name
  std::string time_column;  // "" = default (1)
  std::string scale;        // "" = 1
  std::string quantity = "voltage";
  std::string fundamental;  // "" = from the scenario or estimated
  std::string window = "hann";
  std::string at;           // "" = lisn for a scenario, source for --capture
  std::string max_frequency = "30 MHz";
  std::string csv_file;
  std::size_t top = 15;
  unsigned threads = 0;
  bool resample = false;
  bool json = false;
};

ColumnChoice column_choice(const std::string& text, int fallback) {
  if (text.empty()) return ColumnChoice::by_index(fallback);
  if (std::all_of(text.begin(), text.end(), [](char c) { return c >= '0' && c <= '9'; })) {
    const long index = std::stol(text);
    if (index < 1) throw Error("expected a column number of 1 or more, found " + text);
    return ColumnChoice::by_index(static_cast<int>(index));
  }
  return ColumnChoice::by_name(text);
}

int run_spectrum(const Options& options) {
  if (options.scenario_file.empty() == options.capture_file.empty()) {
    throw Error("expected a scenario file or --capture FILE (one of them)");
  }
  const double max_frequency_hz = parse_quantity(options.max_frequency, Dimension::frequency);
  if (!(max_frequency_hz > 0.0)) throw Error("expected a positive --max-frequency, found \"" + options.max_frequency + "\"");
  std::optional<double> f0_hz;
  if (!options.fundamental.empty()) {
    f0_hz = parse_quantity(options.fundamental, Dimension::frequency);
    if (!(*f0_hz > 0.0)) throw Error("expected a positive --fundamental, found \"" + options.fundamental + "\"");
  }
  SpectrumSettings settings;
  settings.fundamental_hz = f0_hz;
  settings.window = parse_window(options.window);
  settings.max_frequency_hz = max_frequency_hz;
  settings.threads = options.threads;
  settings.resample = options.resample;
  SpectrumResult result;
  // A long capture takes seconds to read and transform (about 10 s for 10^8 samples): a progress
  // line on stderr when it is a terminal (cli/terminal.hpp), cleared before the result is printed.
  Progress progress;
  if (!options.capture_file.empty()) {
    progress.show("reading " + options.capture_file + " and taking its spectrum");
    const std::string at = capture_point(options.at);
    CaptureSpec spec;
    spec.file = options.capture_file;
    spec.column = column_choice(options.column, 2);
    spec.time_column = column_choice(options.time_column, 1);
    if (!options.scale.empty()) spec.scale = parse_quantity(options.scale, Dimension::number);
    spec.quantity = (options.quantity == "current" || at == "current") ? Quantity::current : Quantity::voltage;
    spec.resample = options.resample;
    result = capture_spectrum(spec, at, settings);
  } else {
    const std::string at = scenario_point(options.at);
    progress.show("computing the spectrum of " + options.scenario_file);
    result = scenario_spectrum(load_scenario(options.scenario_file, locate_shipped_data()), at, settings);
  }
  progress.clear();
  if (!options.csv_file.empty()) write_file_atomically(options.csv_file, spectrum_csv(result));
  std::cout << (options.json ? spectrum_json(result) : spectrum_text(result, options.top));
  return exit_ok;
}

}  // namespace

void setup_spectrum(CLI::App& app, CommandList& commands) {
  auto options = std::make_shared<Options>();
  CLI::App* sub = app.add_subcommand("spectrum", "harmonic spectrum of the source, the input current, the LISN port, "
                                                 "or a capture file");
  sub->add_option("scenario", options->scenario_file, "scenario file (TOML)");
  sub->add_option("--capture", options->capture_file, "a capture CSV to look at instead of a scenario");
  sub->add_option("--column", options->column, "value column: 1-based number or header name (default 2)");
  sub->add_option("--time-column", options->time_column, "time column: 1-based number or header name (default 1)");
  sub->add_option("--scale", options->scale, "factor on the values, e.g. 10 for a 10:1 probe (default 1)");
  sub->add_option("--quantity", options->quantity, "what the capture measures: voltage or current")
      ->check(CLI::IsMember({"voltage", "current"}))
      ->capture_default_str();
  sub->add_option("--fundamental", options->fundamental, "switching frequency, e.g. 100kHz (default: scenario, else estimated)");
  sub->add_option("--window", options->window, "rectangular (coherent records), hann or flat-top")->capture_default_str();
  sub->add_option("--at", options->at, "source, current or lisn (default lisn for a scenario, source for --capture)");
  sub->add_option("--max-frequency", options->max_frequency, "highest harmonic frequency listed")->capture_default_str();
  sub->add_option("--csv", options->csv_file, "write harmonic,frequency_hz,level_dbuv,... to this file");
  sub->add_option("--top", options->top, "how many of the strongest harmonics to print")->capture_default_str();
  sub->add_option("--threads", options->threads, "capture parser threads (default: all cores)")
      ->check(thread_count_check());
  sub->add_flag("--resample", options->resample, "resample a non-uniformly sampled capture instead of failing");
  sub->add_flag("--json", options->json, "print JSON instead of text");
  commands.push_back(Command{sub, [options] { return run_spectrum(*options); }});
}

}  // namespace spurcast::cli
