// spurcast scan: the measuring-receiver emulation on its own — peak, quasi-peak and average
// readings over a CISPR band (tuned at the band start plus whole steps) or at spot frequencies,
// at the source, the pulsed input current or the LISN receiver port.
#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <cstdlib>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <optional>
#include <string>
#include <vector>

#include <unistd.h>

#include "cli/commands.hpp"
#include "cli/terminal.hpp"
#include "core/source/capture.hpp"
#include "core/coupling/conducted.hpp"
#include "core/input/error.hpp"
#include "core/output/output_dir.hpp"
#include "core/chain/prediction.hpp"
#include "core/receiver/receiver.hpp"
#include "core/chain/scenario.hpp"
#include "core/source/source.hpp"
#include "core/chain/sweep.hpp"
#include "core/input/units.hpp"

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

/// How many of the highest readings the text output lists.
constexpr std::size_t listed_readings = 10;

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

/// Scans one band (or spot frequencies within it) at the requested point of the chain.
ScanResult scan_band(const Scenario& scenario, const std::string& at, const ScanPlan& plan) {
  const BandParameters band = band_parameters(plan.band);
  const double top_hz = band.stop_hz + 2.0 * band.bandwidth_6db_hz;
  std::vector<std::string> notes;
  std::optional<ConductedModel> model;
  if (at == "lisn") model.emplace(scenario.coupling, scenario.filters, scenario.lisn);

  auto scan_two_lines = [&](auto&& scan_line) {
    std::optional<ScanResult> line2;
    if (model->line_count() == 2) line2 = scan_line(2);
    return worst_of_lines(scan_line(1), line2);
  };

  ScanResult result;
  if (scenario.switching && !scenario.switching->dither) {
    // Periodic, undithered: exact line spectra, no sampling.
    const SwitchingSpec& spec = *scenario.switching;
    if (at == "source") {
      result = scan_lines(switch_node_spectrum(spec, top_hz), plan);
    } else if (at == "current") {
      result = scan_lines(input_current_spectrum(spec, top_hz), plan);
    } else {
      const ConductedResult conducted =
          conduct(switch_node_spectrum(spec, top_hz), input_current_spectrum(spec, top_hz), *model);
      result = scan_two_lines([&](int line) { return scan_lines(conducted.line_spectrum(line), plan); });
    }
  } else {
    Waveform source_v;
    Waveform source_i;
    ScanPlan sampled_plan = plan;
    if (scenario.switching) {
      // Dithered: a synthesized record through the FFT receiver, as the prediction makes it.
      const SwitchingSpec& spec = *scenario.switching;
      const double fs = receiver_sample_rate_hz(plan.band);
      const double duration_s = dithered_record_duration_s(spec, fs, 0.0, notes);
      if (at != "current") source_v = synthesize_switch_node(spec, fs, duration_s);
      if (at != "source") source_i = synthesize_input_current(spec, fs, duration_s);
      sampled_plan.slowest_modulation_hz = spec.dither->rate_hz;
    } else {
      const Capture capture = load_capture(*scenario.capture);
      const bool is_current = capture.waveform.quantity == Quantity::current;
      if (at == "current" && !is_current) {
        throw Error("expected a current capture for --at current, found a voltage capture (use --at source)");
      }
      (is_current ? source_i : source_v) = capture.waveform;
      sampled_plan.periodic_record = holds_whole_periods(capture);
    }
    if (at == "source") {
      result = scan_waveform(source_v.samples.empty() ? source_i : source_v, sampled_plan);
    } else if (at == "current") {
      result = scan_waveform(source_i, sampled_plan);
    } else {
      result = scan_two_lines([&](int line) {
        return scan_waveform(lisn_port_waveform(source_v, source_i, *model, line), sampled_plan);
      });
    }
  }
  result.notes.insert(result.notes.begin(), notes.begin(), notes.end());
  return result;
}

std::string level_text(double level_db) {
  return level_db <= level_floor_db ? std::string("-") : fmt::format("{:.2f}", level_db);
}

std::string scan_csv(const std::vector<ScanResult>& results) {
  const std::string suffix = results.empty() ? "dbuv" : level_suffix(results.front().quantity);
  std::string text = fmt::format("frequency_hz,peak_{0},quasi_peak_{0},average_{0}\n", suffix);
  for (const ScanResult& result : results) {
    for (const Reading& r : result.readings) {
      text += fmt::format("{:.6g},{:.3f},{:.3f},{:.3f}\n", r.frequency_hz, r.peak_db, r.quasi_peak_db, r.average_db);
    }
  }
  return text;
}

nlohmann::json reading_json(const Reading& r) {
  return {{"frequency_hz", r.frequency_hz}, {"peak", r.peak_db}, {"quasi_peak", r.quasi_peak_db}, {"average", r.average_db}};
}

int run_scan(const Options& options) {
  if (options.at != "source" && options.at != "current" && options.at != "lisn") {
    throw Error("expected --at source, current or lisn, found \"" + options.at + "\"");
  }
  const Scenario scenario = load_scenario(options.scenario_file);
  if (!scenario.switching && !scenario.capture) {
    throw Error(SourcePosition{options.scenario_file, 0, 0}, "expected a [switching] or [capture] section");
  }
  std::optional<double> step_hz = scenario.receiver.step_hz;
  if (!options.step.empty()) step_hz = parse_quantity(options.step, Dimension::frequency);
  std::optional<CisprBand> chosen_band;
  if (!options.band.empty()) chosen_band = band_from_string(options.band);

  // The plans: one per band; spot frequencies go to the given band or to the band that holds each.
  const unsigned threads = options.threads ? options.threads : sweep_thread_count(std::getenv("SPURCAST_THREADS"));
  std::vector<ScanPlan> plans;
  if (!options.frequencies.empty()) {
    for (const double f : parse_frequency_list(options.frequencies)) {
      const CisprBand band = chosen_band ? *chosen_band : band_for_frequency(f);
      auto plan = std::find_if(plans.begin(), plans.end(), [&](const ScanPlan& p) { return p.band == band; });
      if (plan == plans.end()) {
        ScanPlan spot_plan;
        spot_plan.band = band;
        spot_plan.threads = threads;
        plans.push_back(spot_plan);
        plan = plans.end() - 1;
      }
      plan->frequencies_hz.push_back(f);
    }
  } else {
    const std::vector<CisprBand> bands = chosen_band ? std::vector<CisprBand>{*chosen_band} : scenario.receiver.bands;
    for (const CisprBand band : bands) {
      ScanPlan band_plan;
      band_plan.band = band;
      band_plan.threads = threads;
      band_plan.step_hz = step_hz;
      plans.push_back(band_plan);
    }
  }
  std::sort(plans.begin(), plans.end(), [](const ScanPlan& a, const ScanPlan& b) { return a.band < b.band; });
  for (const ScanPlan& plan : plans) (void)plan_frequencies(plan);  // check steps and ranges before any work

  std::vector<ScanResult> results;
  {
    Progress progress;
    for (const ScanPlan& plan : plans) {
      progress.show("scanning band " + to_string(plan.band));
      results.push_back(scan_band(scenario, options.at, plan));
    }
  }

  std::vector<std::string> written;
  if (!options.csv_file.empty()) {
    write_file_atomically(options.csv_file, scan_csv(results));
    written.push_back(options.csv_file);
  }

  const bool spot = !options.frequencies.empty();
  const std::vector<Detector>& detectors = scenario.receiver.detectors;
  if (options.json) {
    nlohmann::json j;
    j["scenario"] = options.scenario_file;
    j["at"] = options.at;
    j["unit"] = results.empty() ? "dBuV" : (results.front().quantity == Quantity::voltage ? "dBuV" : "dBuA");
    nlohmann::json bands = nlohmann::json::array();
    for (const ScanResult& result : results) {
      nlohmann::json b;
      b["band"] = to_string(result.band);
      b["bandwidth_6db_hz"] = result.bandwidth_6db_hz;
      b["step_hz"] = result.step_hz;
      nlohmann::json highest = nlohmann::json::object();
      for (const Detector d : detectors) {
        const auto best = std::max_element(result.readings.begin(), result.readings.end(),
                                           [&](const Reading& x, const Reading& y) { return x.level_db(d) < y.level_db(d); });
        if (best != result.readings.end()) {
          highest[to_string(d)] = {{"frequency_hz", best->frequency_hz}, {"level", best->level_db(d)}};
        }
      }
      b["highest"] = highest;
      nlohmann::json readings = nlohmann::json::array();
      for (const Reading& r : result.readings) readings.push_back(reading_json(r));
      b["readings"] = readings;
      b["notes"] = result.notes;
      bands.push_back(b);
    }
    j["bands"] = bands;
    j["files"] = written;
    std::cout << j.dump(2) << "\n";
    return exit_ok;
  }

  const bool colour = stdout_wants_colour();
  for (const ScanResult& result : results) {
    const std::string unit = level_unit(result.quantity);
    std::cout << paint(fmt::format("band {} ({} IF bandwidth), at the {}", to_string(result.band),
                                   format_quantity(result.bandwidth_6db_hz, Dimension::frequency),
                                   options.at == "lisn" ? "LISN receiver port" : options.at == "current" ? "input current" : "source"),
                       Colour::bold, colour)
              << "\n";
    if (spot) {
      std::cout << fmt::format("  spot readings at {} frequencies, levels in {}\n", result.readings.size(), unit);
    } else {
      std::cout << fmt::format("  {} tuned frequencies, step {}, levels in {}\n", result.readings.size(),
                               format_quantity(result.step_hz, Dimension::frequency), unit);
    }
    std::vector<std::vector<std::string>> rows{{"detector", "highest", "at"}};
    for (const Detector d : detectors) {
      const auto best = std::max_element(result.readings.begin(), result.readings.end(),
                                         [&](const Reading& x, const Reading& y) { return x.level_db(d) < y.level_db(d); });
      if (best == result.readings.end()) continue;
      rows.push_back({to_string(d), level_text(best->level_db(d)), format_quantity(best->frequency_hz, Dimension::frequency, 6)});
    }
    std::cout << format_columns(rows, {1}, "  ");
    // The highest readings: local maxima of the peak trace (each line once), or every spot reading.
    std::vector<Reading> listed;
    const auto& r = result.readings;
    for (std::size_t i = 0; i < r.size(); ++i) {
      const bool above_before = i == 0 || r[i].peak_db >= r[i - 1].peak_db;
      const bool above_after = i + 1 == r.size() || r[i].peak_db > r[i + 1].peak_db;
      if (spot || (above_before && above_after && r[i].peak_db > level_floor_db)) listed.push_back(r[i]);
    }
    if (!spot) {
      std::sort(listed.begin(), listed.end(), [](const Reading& a, const Reading& b) { return a.peak_db > b.peak_db; });
      if (listed.size() > listed_readings) listed.resize(listed_readings);
      std::cout << fmt::format("  the {} highest peaks:\n", listed.size());
    }
    std::vector<std::vector<std::string>> table{{"frequency", "peak", "quasi-peak", "average"}};
    for (const Reading& reading : listed) {
      table.push_back({format_quantity(reading.frequency_hz, Dimension::frequency, 6), level_text(reading.peak_db),
                       level_text(reading.quasi_peak_db), level_text(reading.average_db)});
    }
    std::cout << format_columns(table, {0, 1, 2, 3}, "    ");
    for (const std::string& note : result.notes) std::cout << "  note: " << note << "\n";
  }
  for (const std::string& file : written) std::cout << "wrote " << file << "\n";
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
      ->check(CLI::PositiveNumber);
  commands.push_back({sub, [options] { return run_scan(*options); }});
}

}  // namespace spurcast::cli
