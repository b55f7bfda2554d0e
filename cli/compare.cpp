// spurcast compare: a measured spectrum-analyser or receiver trace against limit lines, as a lab
// pre-scan does (peak trace against every line; frequencies to re-measure with QP and AV).
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "core/compliance/margins.hpp"
#include "core/compliance/trace_comparison.hpp"
#include "core/input/error.hpp"
#include "core/input/units.hpp"
#include "core/output/compare_output.hpp"
#include "core/output/output_dir.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::string trace_file;
  std::vector<std::string> limit_files;
  std::string unit;  // "" = from the header, else dBuV | dBmV | dBm | dBuA | dBuV/m
  std::string level_column;
  std::vector<std::string> correction_files;
  std::string guard = "6 dB";
  std::string detector = "peak";
  std::string prediction_file;
  std::string csv_file;
  std::size_t top = 10;
  bool json = false;
};

int run_compare(const Options& options) {
  // Inputs first: nothing is written unless every input is good.
  CompareRequest request;
  request.trace_file = options.trace_file;
  request.limit_files = options.limit_files;
  if (!options.unit.empty()) request.unit = trace_unit_from_string(options.unit);
  request.guard_db = parse_quantity(options.guard, Dimension::decibel);
  if (!(request.guard_db >= 0.0)) throw Error("expected a guard band of 0 dB or more, found \"" + options.guard + "\"");
  request.detector = detector_from_string(options.detector);
  request.level_column = options.level_column;
  request.correction_files = options.correction_files;
  request.prediction_file = options.prediction_file;
  request.closest_count = options.top;
  request.data = locate_shipped_data();
  const CompareResult result = compare_trace(request);
  for (const std::string& note : result.notes) std::cerr << "spurcast: note: " << note << "\n";

  std::vector<std::string> written;
  if (!options.csv_file.empty()) {
    write_file_atomically(options.csv_file, margins_csv(result.report));
    written.push_back(options.csv_file);
  }
  std::cout << (options.json ? compare_json(result, written) : compare_text(result, written));
  return result.report.verdict == Verdict::pass ? exit_ok : exit_limit_exceeded;
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
  sub->add_option("--unit", options->unit,
                  "level unit of the trace: dBuV, dBmV, dBm (50 ohm), dBuA or dBuV/m; default from "
                  "the header, else dBuV");
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
