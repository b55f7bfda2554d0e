// spurcast spectrum: the harmonic spectrum of the source (described or captured), of the pulsed
// input current, or at the LISN receiver port; or a quick look at a capture file (--capture).
#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <optional>
#include <string>
#include <thread>
#include <vector>

#include <unistd.h>

#include "cli/commands.hpp"
#include "core/source/capture.hpp"
#include "core/coupling/conducted.hpp"
#include "core/input/error.hpp"
#include "core/output/output_dir.hpp"
#include "core/chain/scenario.hpp"
#include "core/source/source.hpp"
#include "core/source/spectrum.hpp"
#include "core/input/units.hpp"

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

/// One row of the output: a harmonic and its levels.
struct Row {
  int harmonic = 0;
  double frequency_hz = 0.0;
  double level_db = 0.0;
  std::optional<double> envelope_db;                // described sources (source, current)
  std::optional<double> line1_db, line2_db, dm_db, cm_db;  // at the LISN
};

struct Result {
  std::string what;        // "switch-node voltage", ...
  std::string at;          // source | current | lisn
  Quantity quantity = Quantity::voltage;
  double fundamental_hz = 0.0;
  bool fundamental_estimated = false;
  std::optional<double> nominal_fundamental_hz;  // what the scenario / option said
  std::optional<std::string> window;             // sampled records only
  std::optional<Capture> capture;                // without samples (metadata)
  std::size_t capture_samples = 0;
  double capture_duration_s = 0.0;
  std::vector<Row> rows;
  std::vector<std::string> notes;
};

Row make_row(int harmonic, double frequency_hz, double level) {
  Row row;
  row.harmonic = harmonic;
  row.frequency_hz = frequency_hz;
  row.level_db = level;
  return row;
}

std::string level_text(double level_db) {
  return level_db <= level_floor_db ? std::string("-") : fmt::format("{:.2f}", level_db);
}

std::vector<Row> rows_from_lines(const LineSpectrum& lines) {
  std::vector<Row> rows;
  for (std::size_t k = 0; k < lines.harmonics.size(); ++k) {
    rows.push_back(make_row(static_cast<int>(k + 1), lines.frequency_hz(k), level_db(std::abs(lines.harmonics[k]), lines.quantity)));
  }
  return rows;
}

std::vector<Row> rows_from_table(const HarmonicTable& table) {
  std::vector<Row> rows;
  for (const HarmonicLevel& line : table.lines) rows.push_back(make_row(line.harmonic, line.frequency_hz, line.level_db));
  return rows;
}

/// Fills the LISN columns of `rows` (level = the higher line) from per-line levels.
void set_lisn_columns(std::vector<Row>& rows, const std::vector<double>& line1, const std::vector<double>& line2,
                      const std::vector<double>& dm, const std::vector<double>& cm) {
  for (std::size_t i = 0; i < rows.size(); ++i) {
    rows[i].line1_db = line1[i];
    rows[i].line2_db = line2[i];
    rows[i].dm_db = dm[i];
    rows[i].cm_db = cm[i];
    rows[i].level_db = std::max(line1[i], line2[i]);
  }
}

std::vector<double> levels_of(const std::vector<std::complex<double>>& phasors, std::size_t count) {
  std::vector<double> out(count, level_floor_db);
  for (std::size_t i = 0; i < std::min(count, phasors.size()); ++i) out[i] = level_db(std::abs(phasors[i]), Quantity::voltage);
  return out;
}

/// The harmonic table of a sampled record at f0 (estimated when not given). Takes the record by
/// value: callers move it in at its last use, and the spectrum frees it once windowed.
HarmonicTable sampled_table(Waveform waveform, Window window, FftPlanner& planner, unsigned threads, std::optional<double> f0_hz,
                            double max_frequency_hz, Result& result) {
  const AmplitudeSpectrum spectrum = amplitude_spectrum(std::move(waveform), window, planner, threads);
  if (result.fundamental_hz == 0.0) {
    // Refine a given f_sw against the record (a real converter is off its nominal frequency by
    // more than a bin of a long record); estimate it when none was given.
    const FundamentalEstimate estimate = estimate_fundamental(spectrum, f0_hz);
    result.fundamental_hz = estimate.frequency_hz;
    result.fundamental_estimated = !f0_hz.has_value();
    result.nominal_fundamental_hz = f0_hz;
    if (window == Window::rectangular && f0_hz) result.fundamental_hz = *f0_hz;  // coherent record: take it as given
  }
  return harmonic_table(spectrum, result.fundamental_hz, max_frequency_hz);
}

Result sampled_result(Capture capture, FftPlanner& planner, const Options& options, std::optional<double> f0_hz,
                      double max_frequency_hz, const std::string& at, const Scenario* scenario) {
  Result result;
  result.capture_samples = capture.waveform.samples.size();
  result.capture_duration_s = capture.waveform.duration_s();
  result.at = at;
  const Window window = parse_window(options.window);
  result.window = window_name(window);
  if (f0_hz) check_capture_covers_period(capture, *f0_hz);
  const bool is_current = capture.waveform.quantity == Quantity::current;
  if (at == "current" && !is_current) {
    throw Error("expected a current capture for --at current, found a voltage capture (use --at source)");
  }
  if (at != "lisn") {
    result.what = is_current ? "captured current" : "captured voltage";
    result.quantity = capture.waveform.quantity;
    result.rows = rows_from_table(sampled_table(std::move(capture.waveform), window, planner, options.threads, f0_hz, max_frequency_hz, result));
  } else {
    const ConductedModel model(scenario->coupling, scenario->filters, scenario->lisn);
    Waveform source_v;
    Waveform source_i;
    (is_current ? source_i : source_v) = capture.waveform;
    const Waveform v1 = lisn_port_waveform(source_v, source_i, model, 1);
    Waveform v2 = v1;
    if (model.line_count() == 2) {
      v2 = lisn_port_waveform(source_v, source_i, model, 2);
    } else {
      std::fill(v2.samples.begin(), v2.samples.end(), 0.0);
    }
    Waveform dm = v1;
    Waveform cm = v1;
    for (std::size_t i = 0; i < v1.samples.size(); ++i) {
      dm.samples[i] = 0.5 * (v1.samples[i] - v2.samples[i]);
      cm.samples[i] = 0.5 * (v1.samples[i] + v2.samples[i]);
    }
    result.what = "LISN receiver port (from the captured " + std::string(is_current ? "current" : "voltage") + ")";
    result.quantity = Quantity::voltage;
    // The source record sets f0 (estimated once, on the source); the port records are read at it.
    (void)sampled_table(std::move(capture.waveform), window, planner, options.threads, f0_hz, max_frequency_hz, result);
    auto levels = [&](Waveform&& w) {
      std::vector<double> out;
      for (const HarmonicLevel& line : sampled_table(std::move(w), window, planner, options.threads, f0_hz, max_frequency_hz, result).lines) {
        out.push_back(line.level_db);
      }
      return out;
    };
    result.rows = rows_from_table(sampled_table(v1, window, planner, options.threads, f0_hz, max_frequency_hz, result));
    std::vector<double> l1;
    for (const Row& row : result.rows) l1.push_back(row.level_db);
    std::vector<double> l2 = levels(std::move(v2));
    std::vector<double> ldm = levels(std::move(dm));
    std::vector<double> lcm = levels(std::move(cm));
    for (auto* l : {&l2, &ldm, &lcm}) l->resize(l1.size(), level_floor_db);
    set_lisn_columns(result.rows, l1, l2, ldm, lcm);
    result.notes.push_back(model.setup_description());
  }
  std::vector<double>().swap(capture.waveform.samples);  // moved from above; the metadata stays
  result.capture = std::move(capture);
  return result;
}

Result described_result(const Scenario& scenario, const std::string& at, double max_frequency_hz) {
  const SwitchingSpec& spec = *scenario.switching;
  Result result;
  result.at = at;
  result.fundamental_hz = spec.frequency_hz;
  if (spec.dither) result.notes.push_back("dither is not applied to the line spectrum (the undithered source is shown)");
  if (at == "source" || at == "current") {
    const bool current = at == "current";
    const LineSpectrum lines = current ? input_current_spectrum(spec, max_frequency_hz) : switch_node_spectrum(spec, max_frequency_hz);
    result.what = current ? "pulsed input current (described)" : "switch-node voltage (described)";
    result.quantity = lines.quantity;
    result.rows = rows_from_lines(lines);
    const double amplitude = current ? spec.current_a : spec.amplitude_v;
    for (Row& row : result.rows) {
      row.envelope_db = level_db(trapezoid_envelope_rms(spec, amplitude, row.frequency_hz), lines.quantity);
    }
    return result;
  }
  const ConductedModel model(scenario.coupling, scenario.filters, scenario.lisn);
  const ConductedResult conducted =
      conduct(switch_node_spectrum(spec, max_frequency_hz), input_current_spectrum(spec, max_frequency_hz), model);
  result.what = "LISN receiver port (described source)";
  result.quantity = Quantity::voltage;
  const std::size_t count = conducted.frequency_hz.size();
  for (std::size_t i = 0; i < count; ++i) result.rows.push_back(make_row(static_cast<int>(i + 1), conducted.frequency_hz[i], 0.0));
  set_lisn_columns(result.rows, levels_of(conducted.line1_v, count), levels_of(conducted.line2_v, count),
                   levels_of(conducted.dm_v, count), levels_of(conducted.cm_v, count));
  result.notes.push_back(conducted.setup);
  return result;
}

std::string csv_text(const Result& result) {
  const std::string suffix = level_suffix(result.quantity);
  const bool lisn = !result.rows.empty() && result.rows.front().line1_db.has_value();
  const bool envelope = !result.rows.empty() && result.rows.front().envelope_db.has_value();
  std::string text = "harmonic,frequency_hz,level_" + suffix;
  if (envelope) text += ",envelope_" + suffix;
  if (lisn) text += ",line1_dbuv,line2_dbuv,dm_dbuv,cm_dbuv";
  text += "\n";
  for (const Row& row : result.rows) {
    text += fmt::format("{},{:.9g},{:.3f}", row.harmonic, row.frequency_hz, row.level_db);
    if (envelope) text += fmt::format(",{:.3f}", *row.envelope_db);
    if (lisn) text += fmt::format(",{:.3f},{:.3f},{:.3f},{:.3f}", *row.line1_db, *row.line2_db, *row.dm_db, *row.cm_db);
    text += "\n";
  }
  return text;
}

nlohmann::json json_of(const Result& result) {
  const std::string suffix = level_suffix(result.quantity);
  nlohmann::json harmonics = nlohmann::json::array();
  for (const Row& row : result.rows) {
    nlohmann::json item{{"harmonic", row.harmonic}, {"frequency_hz", row.frequency_hz}, {"level_" + suffix, row.level_db}};
    if (row.envelope_db) item["envelope_" + suffix] = *row.envelope_db;
    if (row.line1_db) {
      item["line1_dbuv"] = *row.line1_db;
      item["line2_dbuv"] = *row.line2_db;
      item["dm_dbuv"] = *row.dm_db;
      item["cm_dbuv"] = *row.cm_db;
    }
    harmonics.push_back(item);
  }
  nlohmann::json out{{"at", result.at},
                     {"what", result.what},
                     {"quantity", result.quantity == Quantity::voltage ? "voltage" : "current"},
                     {"unit", level_unit(result.quantity)},
                     {"fundamental_hz", result.fundamental_hz},
                     {"fundamental_estimated", result.fundamental_estimated},
                     {"harmonics", harmonics},
                     {"notes", result.notes}};
  if (result.nominal_fundamental_hz) out["nominal_fundamental_hz"] = *result.nominal_fundamental_hz;
  if (result.window) out["window"] = *result.window;
  if (result.capture) {
    const Capture& c = *result.capture;
    out["capture"] = {{"file", c.file},
                      {"sample_rate_hz", c.waveform.sample_rate_hz},
                      {"samples", result.capture_samples},
                      {"duration_s", result.capture_duration_s},
                      {"header_lines", c.header_lines},
                      {"time_unit_s", c.time_unit_s},
                      {"uniform", c.sampling.uniform},
                      {"resampled", c.sampling.resampled},
                      {"max_time_deviation_s", c.sampling.max_deviation_s}};
  }
  return out;
}

void print_text(const Result& result, std::size_t top) {
  const std::string unit = level_unit(result.quantity);
  std::cout << "spectrum of the " << result.what << "\n";
  std::cout << "fundamental: " << format_quantity(result.fundamental_hz, Dimension::frequency, 7);
  if (result.fundamental_estimated) std::cout << " (estimated from the record)";
  if (result.nominal_fundamental_hz && !result.fundamental_estimated) {
    std::cout << " (nominal " << format_quantity(*result.nominal_fundamental_hz, Dimension::frequency, 7) << ", refined on the record)";
  }
  std::cout << "\n";
  if (result.capture) {
    const Capture& c = *result.capture;
    std::cout << "capture: " << c.file << ", " << fmt::format("{:.6g} MSa/s, ", c.waveform.sample_rate_hz / 1e6) << result.capture_samples << " samples, "
              << format_quantity(result.capture_duration_s, Dimension::time)
              << (c.sampling.resampled ? " (resampled: non-uniform time stamps)" : "") << "\n";
  }
  if (result.window) std::cout << "window: " << *result.window << "\n";
  for (const std::string& note : result.notes) std::cout << "note: " << note << "\n";
  std::vector<Row> sorted = result.rows;
  std::stable_sort(sorted.begin(), sorted.end(), [](const Row& a, const Row& b) { return a.level_db > b.level_db; });
  if (sorted.size() > top) sorted.resize(top);
  std::cout << fmt::format("\nstrongest {} of {} harmonics:\n", sorted.size(), result.rows.size());
  std::cout << fmt::format("{:>8}  {:>14}  {:>10}", "harmonic", "frequency", unit);
  const bool envelope = !sorted.empty() && sorted.front().envelope_db.has_value();
  const bool lisn = !sorted.empty() && sorted.front().line1_db.has_value();
  if (envelope) std::cout << fmt::format("  {:>10}", "envelope");
  if (lisn) std::cout << fmt::format("  {:>8}  {:>8}  {:>8}  {:>8}", "line 1", "line 2", "DM", "CM");
  std::cout << "\n";
  for (const Row& row : sorted) {
    std::cout << fmt::format("{:>8}  {:>14}  {:>10}", row.harmonic, format_quantity(row.frequency_hz, Dimension::frequency, 6),
                             level_text(row.level_db));
    if (envelope) std::cout << fmt::format("  {:>10}", level_text(*row.envelope_db));
    if (lisn) {
      std::cout << fmt::format("  {:>8}  {:>8}  {:>8}  {:>8}", level_text(*row.line1_db), level_text(*row.line2_db),
                               level_text(*row.dm_db), level_text(*row.cm_db));
    }
    std::cout << "\n";
  }
}

/// Loads a capture while planning its transform: the plan (FFTW computes every twiddle, tens of
/// milliseconds for millions of points) is made on a second thread as soon as the parser knows
/// the record length, while the loader checks the sampling and assembles the record.
class CaptureWithPlan {
 public:
  CaptureWithPlan(const CaptureSpec& spec, unsigned threads) {
    CaptureLoadOptions load{threads};
    load.on_sample_count = [this](std::size_t samples) {
      planning_.thread = std::thread([this, samples] {
        try {
          planner_.prepare(spectrum_transform_length(samples));
        } catch (const std::exception&) {
          // The transform plans again, and reports, when it runs.
        }
      });
    };
    capture_ = load_capture(spec, load);
  }
  CaptureWithPlan(const CaptureWithPlan&) = delete;
  CaptureWithPlan& operator=(const CaptureWithPlan&) = delete;
  [[nodiscard]] Capture take_capture() { return std::move(capture_); }
  [[nodiscard]] FftPlanner& planner() { return planner_; }

 private:
  // Joins in its destructor, which also runs when load_capture throws from the constructor;
  // declared after the planner, so it is joined before the planner goes.
  struct JoiningThread {
    std::thread thread;
    ~JoiningThread() {
      if (thread.joinable()) thread.join();
    }
  };
  FftPlanner planner_;
  JoiningThread planning_;
  Capture capture_;
};

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
  (void)parse_window(options.window);
  Result result;
  if (!options.capture_file.empty()) {
    const std::string at = options.at.empty() ? "source" : options.at;
    if (at == "lisn") throw Error("--at lisn needs a scenario (the coupling network and LISN); a capture file alone has none");
    if (at != "source" && at != "current") throw Error("expected --at source or current, found \"" + at + "\"");
    CaptureSpec spec;
    spec.file = options.capture_file;
    spec.column = column_choice(options.column, 2);
    spec.time_column = column_choice(options.time_column, 1);
    if (!options.scale.empty()) spec.scale = parse_quantity(options.scale, Dimension::number);
    spec.quantity = (options.quantity == "current" || at == "current") ? Quantity::current : Quantity::voltage;
    spec.resample = options.resample;
    CaptureWithPlan loaded(spec, options.threads);
    result = sampled_result(loaded.take_capture(), loaded.planner(), options, f0_hz, max_frequency_hz, at, nullptr);
  } else {
    const std::string at = options.at.empty() ? "lisn" : options.at;
    if (at != "source" && at != "current" && at != "lisn") {
      throw Error("expected --at source, current or lisn, found \"" + at + "\"");
    }
    const Scenario scenario = load_scenario(options.scenario_file);
    if (scenario.capture) {
      CaptureSpec spec = *scenario.capture;
      if (options.resample) spec.resample = true;
      if (!f0_hz) f0_hz = spec.switching_frequency_hz;
      CaptureWithPlan loaded(spec, options.threads);
      result = sampled_result(loaded.take_capture(), loaded.planner(), options, f0_hz, max_frequency_hz, at, &scenario);
    } else if (scenario.switching) {
      result = described_result(scenario, at, max_frequency_hz);
    } else {
      throw Error(SourcePosition{options.scenario_file, 0, 0}, "expected a [switching] or [capture] section");
    }
  }
  if (!options.csv_file.empty()) write_file_atomically(options.csv_file, csv_text(result));
  if (options.json) {
    std::cout << json_of(result).dump(2) << "\n";
  } else {
    print_text(result, options.top);
  }
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
  sub->add_option("--threads", options->threads, "capture parser threads (default: all cores)");
  sub->add_flag("--resample", options->resample, "resample a non-uniformly sampled capture instead of failing");
  sub->add_flag("--json", options->json, "print JSON instead of text");
  commands.push_back(Command{sub, [options] { return run_spectrum(*options); }});
}

}  // namespace spurcast::cli
