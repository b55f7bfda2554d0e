// spurcast compare: a measured spectrum-analyser or receiver trace against limit lines, as a lab
// pre-scan does (peak trace against every line; frequencies to re-measure with QP and AV).
#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <optional>
#include <string>
#include <vector>

#include <unistd.h>

#include "cli/commands.hpp"
#include "core/input/error.hpp"
#include "core/output/output_dir.hpp"
#include "core/compliance/limits.hpp"
#include "core/compliance/margins.hpp"
#include "core/compliance/prescan.hpp"
#include "core/compliance/trace.hpp"
#include "core/input/units.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::string trace_file;
  std::vector<std::string> limit_files;
  std::string unit;  // "" = from the header, else dBuV | dBm
  std::string level_column;
  std::vector<std::string> correction_files;
  std::string guard = "6 dB";
  std::string detector = "peak";
  std::string prediction_file;
  std::string csv_file;
  std::size_t top = 10;
  bool json = false;
};

std::string mhz(double hz) { return fmt::format("{:.4f} MHz", hz / 1e6); }

std::string detectors_text(const std::vector<Detector>& detectors) {
  std::string text;
  for (Detector d : detectors) text += (text.empty() ? "" : " + ") + to_string(d);
  return text;
}

nlohmann::json row_json(const MarginRow& row) {
  nlohmann::json j{{"frequency_hz", row.frequency_hz},
                   {"detector", to_string(row.reading_detector)},
                   {"reading", row.reading},
                   {"limit", row.limit},
                   {"margin_db", row.margin_db},
                   {"line", row.limit_label}};
  j["u_cispr_db"] = row.uncertainty_db ? nlohmann::json(*row.uncertainty_db) : nlohmann::json(nullptr);
  return j;
}

int run_compare(const Options& options) {
  // Inputs first: nothing is written unless every input is good.
  std::optional<TraceUnit> unit;
  if (!options.unit.empty()) unit = trace_unit_from_string(options.unit);
  const double guard_db = parse_quantity(options.guard, Dimension::decibel);
  if (!(guard_db >= 0.0)) throw Error("expected a guard band of 0 dB or more, found \"" + options.guard + "\"");
  const Detector trace_detector = detector_from_string(options.detector);

  std::vector<LimitSet> sets;
  for (const std::string& name : options.limit_files) {
    const auto path = resolve_limit_file(name, ".");
    if (!path) throw Error("cannot find limit file \"" + name + "\" here or in " + shipped_limits_directory());
    sets.push_back(read_limit_file(*path));
    if (sets.back().unit != sets.front().unit) {
      throw Error("expected limit files of one unit, found " + limit_unit_symbol(sets.front()) + " and " +
                  limit_unit_symbol(sets.back()));
    }
  }
  std::vector<CorrectionTable> corrections;
  for (const std::string& file : options.correction_files) corrections.push_back(read_correction_csv(file));
  const MeasuredTrace raw = read_trace_csv(options.trace_file, unit, options.level_column);
  const MeasuredTrace trace = apply_corrections(raw, corrections);
  std::vector<ScanCsvRow> prediction;
  if (!options.prediction_file.empty()) prediction = read_scan_csv(options.prediction_file);

  // Pre-scan rule: peak >= quasi-peak >= average (docs/references.md §10 item 30).
  const double separation_hz = 3.0 * prescan_rbw_hz(trace.frequency_hz.front());
  const MarginReport report = compare_with_limits(trace_readings(trace, trace_detector), sets,
                                                  {.guard_db = guard_db,
                                                   .peak_against_every_line = trace_detector == Detector::peak,
                                                   .closest_count = options.top,
                                                   .closest_separation_hz = separation_hz,
                                                   .closest_local_minima_only = true});
  if (report.compared_readings == 0) {
    double low_hz = 0.0;
    double high_hz = 0.0;
    for (const LimitSet& set : sets) {
      for (const LimitLine& line : set.lines) {
        if (low_hz == 0.0 || line.low_hz() < low_hz) low_hz = line.low_hz();
        high_hz = std::max(high_hz, line.high_hz());
      }
    }
    throw Error(SourcePosition{options.trace_file, 0, 0},
                "no trace point lies on a limit line for the " + to_string(trace_detector) + " detector (trace " +
                    format_quantity(trace.frequency_hz.front(), Dimension::frequency) + " to " +
                    format_quantity(trace.frequency_hz.back(), Dimension::frequency) + ", lines " +
                    format_quantity(low_hz, Dimension::frequency) + " to " +
                    format_quantity(high_hz, Dimension::frequency) + ")");
  }
  std::vector<RemeasurePoint> remeasure;
  if (trace_detector == Detector::peak) remeasure = remeasure_list(trace, sets, {.guard_db = guard_db});
  const std::vector<PredictionCheck> checks =
      prediction.empty() ? std::vector<PredictionCheck>{} : compare_with_prediction(remeasure, prediction);

  std::vector<std::string> written;
  if (!options.csv_file.empty()) {
    write_file_atomically(options.csv_file, margins_csv(report));
    written.push_back(options.csv_file);
  }

  const std::string unit_text = limit_unit_symbol(sets.front());
  if (options.json) {
    nlohmann::json j;
    j["verdict"] = to_string(report.verdict);
    j["guard_db"] = guard_db;
    j["trace"] = {{"file", options.trace_file},
                  {"points", trace.frequency_hz.size()},
                  {"unit", to_string(trace.unit)},
                  {"detector", to_string(trace_detector)}};
    j["corrections"] = options.correction_files;
    nlohmann::json limits = nlohmann::json::array();
    for (const LimitSet& set : sets) {
      limits.push_back({{"name", set.name}, {"file", set.file}, {"source", set.source}, {"confidence", set.confidence_text}});
    }
    j["limits"] = limits;
    nlohmann::json worst = nlohmann::json::object();
    for (const DetectorMargin& d : report.worst_per_detector) worst[to_string(d.detector)] = d.worst.margin_db;
    j["worst_margin_db"] = worst;
    j["worst"] = report.worst ? row_json(*report.worst) : nlohmann::json(nullptr);
    nlohmann::json closest = nlohmann::json::array();
    for (const MarginRow& row : report.closest) closest.push_back(row_json(row));
    j["closest"] = closest;
    j["compared_points"] = report.compared_readings;
    j["not_compared_points"] = report.not_compared;
    nlohmann::json points = nlohmann::json::array();
    for (const RemeasurePoint& p : remeasure) {
      nlohmann::json detectors = nlohmann::json::array();
      for (Detector d : p.detectors) detectors.push_back(to_string(d));
      points.push_back({{"frequency_hz", p.frequency_hz},
                        {"peak", p.peak_dbuv},
                        {"detectors", detectors},
                        {"margin_db", p.margin_db},
                        {"line", p.limit_label}});
    }
    j["remeasure"] = points;
    if (!prediction.empty()) {
      nlohmann::json side = nlohmann::json::array();
      for (const PredictionCheck& c : checks) {
        nlohmann::json item{{"frequency_hz", c.frequency_hz}, {"measured_peak", c.measured_peak_dbuv}};
        if (c.predicted) {
          item["predicted"] = {{"frequency_hz", c.predicted->frequency_hz},
                               {"peak", c.predicted->peak_dbuv},
                               {"quasi_peak", c.predicted->quasi_peak_dbuv},
                               {"average", c.predicted->average_dbuv}};
        } else {
          item["predicted"] = nullptr;
        }
        item["difference_db"] = c.difference_db ? nlohmann::json(*c.difference_db) : nlohmann::json(nullptr);
        side.push_back(item);
      }
      j["prediction"] = side;
    }
    j["files"] = written;
    std::cout << j.dump(2) << "\n";
  } else {
    std::cout << fmt::format("trace: {} ({} points, {} detector, levels in {}", options.trace_file,
                             trace.frequency_hz.size(), to_string(trace_detector),
                             trace.unit == TraceUnit::dbm ? "dBm converted for 50 ohm (+106.99 dB)" : "dBuV");
    std::cout << (corrections.empty() ? ")\n" : "; corrections added:");
    for (const CorrectionTable& c : corrections) {
      std::cout << fmt::format(" {}{}", c.file,
                               c.covers(trace.frequency_hz.front()) && c.covers(trace.frequency_hz.back())
                                   ? ""
                                   : " (end values held outside its range)");
    }
    if (!corrections.empty()) std::cout << ")\n";
    for (const LimitSet& set : sets) {
      std::cout << fmt::format("limits: {} [{}]\n  source: {}\n  confidence: {}\n", set.name, set.file, set.source,
                               set.confidence_text);
    }
    std::cout << fmt::format("guard band {:g} dB (6 dB is common practice); U_cispr: CISPR 16-4-2 measurement "
                             "uncertainty (values from memory)\n",
                             guard_db);
    if (trace_detector == Detector::peak) {
      std::cout << "a peak trace is compared with every line: peak >= quasi-peak >= average, so a peak under "
                   "a line proves it is met\n";
    }
    std::cout << "\nworst margin per line detector:\n";
    for (const DetectorMargin& d : report.worst_per_detector) {
      const MarginRow& w = d.worst;
      std::cout << fmt::format("  {:<11} {:+7.2f} dB at {} ({} {:.2f} vs limit {:.2f} {}){}\n", to_string(d.detector),
                               w.margin_db, mhz(w.frequency_hz), to_string(w.reading_detector), w.reading, w.limit,
                               unit_text,
                               w.uncertainty_db ? fmt::format("  U_cispr {:.1f} dB", *w.uncertainty_db) : "");
    }
    std::cout << fmt::format("\nclosest to the limit (at least {} apart):\n", format_quantity(separation_hz, Dimension::frequency));
    std::cout << fmt::format("  {:>13}  {:<10} {:>8} {:>8} {:>8} {:>8}  {}\n", "frequency", "detector", "reading",
                             "limit", "margin", "U_cispr", "line");
    for (const MarginRow& row : report.closest) {
      std::cout << fmt::format("  {:>13}  {:<10} {:>8.2f} {:>8.2f} {:>+8.2f} {:>8}  {}\n", mhz(row.frequency_hz),
                               to_string(row.reading_detector), row.reading, row.limit, row.margin_db,
                               row.uncertainty_db ? fmt::format("{:.1f}", *row.uncertainty_db) : "-", row.limit_label);
    }
    if (trace_detector == Detector::peak) {
      if (remeasure.empty()) {
        std::cout << fmt::format("\nnothing to re-measure: the peak trace is at least {:g} dB under every "
                                 "quasi-peak and average line\n",
                                 guard_db);
      } else {
        std::cout << fmt::format("\nre-measure with the quasi-peak / average detectors ({} local maxima within {:g} dB "
                                 "of a line, merged within 3 RBW):\n",
                                 remeasure.size(), guard_db);
        for (const RemeasurePoint& p : remeasure) {
          std::cout << fmt::format("  {:>13}  peak {:7.2f}  {:<22} margin {:+7.2f} dB to {}\n", mhz(p.frequency_hz),
                                   p.peak_dbuv, detectors_text(p.detectors), p.margin_db, p.limit_label);
        }
        std::cout << "  (if the quasi-peak reading already meets the average limit, no average measurement is "
                     "needed: 47 CFR 18.307(d))\n";
      }
    }
    if (!prediction.empty()) {
      std::cout << fmt::format("\nprediction ({}) beside the measurement at the re-measure frequencies:\n",
                               options.prediction_file);
      std::cout << fmt::format("  {:>13}  {:>9}  {:>9} {:>9} {:>9}  {:>10}\n", "frequency", "measured", "pred. PK",
                               "pred. QP", "pred. AV", "meas.-pred.");
      for (const PredictionCheck& c : checks) {
        if (!c.predicted) {
          std::cout << fmt::format("  {:>13}  {:>9.2f}  (no predicted reading within 3 RBW)\n", mhz(c.frequency_hz),
                                   c.measured_peak_dbuv);
          continue;
        }
        std::cout << fmt::format("  {:>13}  {:>9.2f}  {:>9.2f} {:>9.2f} {:>9.2f}  {:>+10.2f}\n", mhz(c.frequency_hz),
                                 c.measured_peak_dbuv, c.predicted->peak_dbuv, c.predicted->quasi_peak_dbuv,
                                 c.predicted->average_dbuv, c.difference_db.value_or(0.0));
      }
    }
    if (report.not_compared > 0) {
      std::cout << fmt::format("\n{} of {} trace points lie outside every line: not compared\n", report.not_compared,
                               report.readings);
    }
    std::cout << fmt::format("\nverdict: {} (worst margin {:+.2f} dB, guard {:g} dB)\n", to_string(report.verdict),
                             report.worst->margin_db, guard_db);
    if (report.verdict != Verdict::pass && trace_detector == Detector::peak &&
        report.worst->limit_detector != Detector::peak) {
      std::cout << "  a pre-scan verdict: the peak trace is compared with quasi-peak/average lines; the "
                   "re-measurement with those detectors decides\n";
    }
    for (const std::string& file : written) std::cout << "wrote " << file << "\n";
    std::cout << "a prediction or pre-scan is not a compliance result: only an accredited test decides\n";
  }
  return report.verdict == Verdict::pass ? exit_ok : exit_limit_exceeded;
}

}  // namespace

void setup_compare(CLI::App& app, CommandList& commands) {
  auto options = std::make_shared<Options>();
  CLI::App* sub = app.add_subcommand("compare", "compare a measured spectrum-analyser or receiver trace with limit "
                                                "lines (pre-scan): margins and frequencies to re-measure");
  sub->add_option("trace", options->trace_file, "trace CSV: frequency and level columns")->required();
  sub->add_option("--limits", options->limit_files, "limit-line file (TOML) or shipped name; repeatable")
      ->required()
      ->allow_extra_args(false);
  sub->add_option("--unit", options->unit, "level unit of the trace: dBuV or dBm (50 ohm); default from the header, else dBuV")
      ->check(CLI::IsMember({"dBuV", "dBm", "dbuv", "dbm"}));
  sub->add_option("--column", options->level_column, "name of the level column (default: the first non-frequency column)");
  sub->add_option("--correction", options->correction_files,
                  "correction CSV (frequency, dB) added to the reading: LISN VDF, attenuator, cable loss; repeatable")
      ->allow_extra_args(false);
  sub->add_option("--guard", options->guard, "guard band (pre-compliance margin)")->capture_default_str();
  sub->add_option("--detector", options->detector, "detector of the trace: peak, quasi-peak or average")
      ->capture_default_str();
  sub->add_option("--prediction", options->prediction_file,
                  "predicted scan CSV (frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv) shown beside the measurement");
  sub->add_option("--csv", options->csv_file, "write the margins CSV to this file");
  sub->add_option("--top", options->top, "how many closest readings to list")->capture_default_str();
  sub->add_flag("--json", options->json, "print JSON instead of text");
  commands.push_back(Command{sub, [options] { return run_compare(*options); }});
}

}  // namespace spurcast::cli
