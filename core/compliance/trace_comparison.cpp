#include "core/compliance/trace_comparison.hpp"

#include <algorithm>
#include <utility>

#include "core/input/error.hpp"
#include "core/input/units.hpp"

namespace spurcast {

CompareResult compare_trace(const CompareRequest& request) {
  // Inputs first: nothing is compared unless every input is good.
  CompareResult result;
  result.trace_file = request.trace_file;
  result.detector = request.detector;
  result.guard_db = request.guard_db;
  result.correction_files = request.correction_files;
  result.prediction_file = request.prediction_file;
  for (const std::string& name : request.limit_files) {
    const auto path = resolve_limit_file(name, ".", request.data);
    if (!path) throw Error("cannot find limit file \"" + name + "\" here or in " + request.data.limits_directory());
    result.sets.push_back(read_limit_file(*path));
    // Outputs name a shipped file by its place in the data folder, not by where it is installed.
    result.sets.back().file = request.data.shown_path(*path);
    if (result.sets.back().unit != result.sets.front().unit) {
      throw Error("expected limit files of one unit, found " + limit_unit_symbol(result.sets.front()) + " and " +
                  limit_unit_symbol(result.sets.back()));
    }
  }
  for (const std::string& file : request.correction_files) result.corrections.push_back(read_correction_csv(file));
  const MeasuredTrace raw = read_trace_csv(request.trace_file, request.unit, request.level_column);
  check_trace_quantity(raw, result.sets);
  result.trace = apply_corrections(raw, result.corrections);
  if (!request.prediction_file.empty()) result.prediction = read_scan_csv(request.prediction_file);

  // Pre-scan rule: peak >= quasi-peak >= average (docs/references.md §10 item 30).
  const MeasuredTrace& trace = result.trace;
  result.separation_hz = 3.0 * prescan_rbw_hz(trace.frequency_hz.front());
  result.report = compare_with_limits(trace_readings(trace, request.detector), result.sets,
                                      {.guard_db = request.guard_db,
                                       .peak_against_every_line = request.detector == Detector::peak,
                                       .closest_count = request.closest_count,
                                       .closest_separation_hz = result.separation_hz,
                                       .closest_local_minima_only = true});
  if (result.report.compared_readings == 0) {
    double low_hz = 0.0;
    double high_hz = 0.0;
    for (const LimitSet& set : result.sets) {
      for (const LimitLine& line : set.lines) {
        if (low_hz == 0.0 || line.low_hz() < low_hz) low_hz = line.low_hz();
        high_hz = std::max(high_hz, line.high_hz());
      }
    }
    throw Error(SourcePosition{request.trace_file, 0, 0},
                "no trace point lies on a limit line for the " + to_string(request.detector) + " detector (trace " +
                    format_quantity(trace.frequency_hz.front(), Dimension::frequency) + " to " +
                    format_quantity(trace.frequency_hz.back(), Dimension::frequency) + ", lines " +
                    format_quantity(low_hz, Dimension::frequency) + " to " +
                    format_quantity(high_hz, Dimension::frequency) + ")");
  }
  PrescanResult prescan =
      run_prescan(trace, result.sets, result.prediction, request.detector, {.guard_db = request.guard_db});
  result.remeasure = std::move(prescan.remeasure);
  result.checks = std::move(prescan.prediction);
  result.remeasure_from_prediction = prescan.remeasure_from_prediction;
  result.sweep = prescan.sweep;
  result.notes = std::move(prescan.notes);
  return result;
}

}  // namespace spurcast
