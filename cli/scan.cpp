// spurcast scan: the measuring-receiver emulation on its own — peak, quasi-peak and average
// readings over a CISPR band (tuned at the band start plus whole steps) or at spot frequencies,
// at the source, the pulsed input current or the LISN receiver port.
#include <cstdlib>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/terminal.hpp"
#include "core/chain/scan_at.hpp"
#include "core/chain/scenario.hpp"
#include "core/chain/sweep.hpp"
#include "core/input/error.hpp"
#include "core/input/units.hpp"
#include "core/output/output_dir.hpp"
#include "core/output/scan_output.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::string scenario_file;
  std::string at = "lisn";
  std::string band;  // "" = the scenario's bands (or, for spot readings, the band of each frequency)
  std::string step;
  std::string frequencies;
  std::string csv_file;
  bool json = false;
  unsigned threads = 0;  // 0 = SPURCAST_THREADS, else every core
};

std::vector<double> parse_frequency_list(const std::string& text) {
  std::vector<double> frequencies;
  std::size_t start = 0;
  while (start <= text.size()) {
    const std::size_t comma = text.find(',', start);
    const std::string item = text.substr(start, comma == std::string::npos ? std::string::npos : comma - start);
    if (item.find_first_not_of(" \t") == std::string::npos) {
      throw Error("expected a comma-separated list of frequencies, found \"" + text + "\"");
    }
    const double f = parse_quantity(item, Dimension::frequency);
    if (!(f > 0.0)) throw Error("expected positive frequencies, found \"" + item + "\"");
    frequencies.push_back(f);
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  return frequencies;
}

int run_scan(const Options& options) {
  // --at is checked by its option (and again, with the same message, by scan_scenario).
  const Scenario scenario = load_scenario(options.scenario_file, locate_shipped_data());
  ScanRequest request;
  request.at = options.at;
  if (!options.step.empty()) request.step_hz = parse_quantity(options.step, Dimension::frequency);
  request.step_origin = "--step";
  if (!options.band.empty()) request.band = band_from_string(options.band);
  request.threads = options.threads ? options.threads : sweep_thread_count(std::getenv("SPURCAST_THREADS"));
  if (!options.frequencies.empty()) request.frequencies_hz = parse_frequency_list(options.frequencies);

  ScanReport report;
  {
    Progress progress;
    report = scan_scenario(scenario, request, [&](CisprBand band) { progress.show("scanning band " + to_string(band)); });
  }
  std::vector<std::string> written;
  if (!options.csv_file.empty()) {
    write_file_atomically(options.csv_file, scan_csv(report));
    written.push_back(options.csv_file);
  }
  std::cout << (options.json ? scan_json(report, written) : scan_text(report, stdout_wants_colour(), written));
  return exit_ok;
}

}  // namespace

void setup_scan(CLI::App& app, CommandList& commands) {
  auto options = std::make_shared<Options>();
  CLI::App* sub = app.add_subcommand("scan", "receiver emulation: CISPR 16-1-1 peak, quasi-peak and average readings");
  sub->add_option("scenario", options->scenario_file, "scenario file (TOML)")->required();
  sub->add_option("--at", options->at, "where to measure: source, current or lisn")
      ->check(CLI::IsMember({"source", "current", "lisn"}))
      ->capture_default_str();
  sub->add_option("--band", options->band, "CISPR band A, B, C or D (default: the scenario's [receiver] bands)")
      ->check(CLI::IsMember({"A", "B", "C", "D"}));
  sub->add_option("--step", options->step, "scan step, at most half the IF bandwidth (e.g. 4.5kHz; default a quarter)");
  sub->add_option("--frequencies", options->frequencies, "spot readings at these tuned frequencies (e.g. 1.2MHz,3.6MHz)");
  sub->add_option("--csv", options->csv_file, "write every reading to FILE (frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv)");
  sub->add_flag("--json", options->json, "machine-readable output on stdout");
  sub->add_option("--threads", options->threads, "threads of the FFT receiver (default: SPURCAST_THREADS, else every core)")
      ->check(thread_count_check());
  commands.push_back({sub, [options] { return run_scan(*options); }});
}

}  // namespace spurcast::cli
