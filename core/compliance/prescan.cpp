#include "core/compliance/prescan.hpp"

#include <algorithm>
#include <cmath>

#include "core/compliance/margins.hpp"
#include "core/input/error.hpp"
#include "core/input/units.hpp"

namespace spurcast {

double prescan_rbw_hz(double frequency_hz) {
  // CISPR 16-1-1 bands, docs/references.md §1.1 [F: de.zxc.wiki Quasispitzenwert; analyser manual].
  if (frequency_hz < 150e3) return 200.0;
  if (frequency_hz <= 30e6) return 9e3;
  if (frequency_hz <= 1e9) return 120e3;
  return 1e6;  // band E, above 1 GHz
}

void check_trace_quantity(const MeasuredTrace& trace, const std::vector<LimitSet>& sets) {
  for (const LimitSet& set : sets) {
    if (set.measures == trace.quantity) continue;
    const TraceUnit wanted = set.measures == LimitQuantity::radiated_field      ? TraceUnit::dbuvm
                             : set.measures == LimitQuantity::conducted_current ? TraceUnit::dbua
                                                                                : TraceUnit::dbuv;
    throw Error(trace.unit_where, "expected a " + to_string(set.measures) + " trace (" + to_string(wanted) +
                                      ") for the limits \"" + set.name + "\", found a " + to_string(trace.quantity) +
                                      " trace (" + to_string(trace.unit) + ")");
  }
}

std::vector<RemeasurePoint> remeasure_list(const MeasuredTrace& trace, const std::vector<LimitSet>& sets,
                                           const PrescanOptions& options) {
  std::vector<RemeasurePoint> candidates;
  const std::size_t n = trace.frequency_hz.size();
  for (std::size_t i = 0; i < n; ++i) {
    const double level = trace.level_dbuv[i];
    const bool left_ok = i == 0 || level >= trace.level_dbuv[i - 1];
    const bool right_ok = i + 1 == n || level >= trace.level_dbuv[i + 1];
    if (!left_ok || !right_ok) continue;
    RemeasurePoint point;
    point.frequency_hz = trace.frequency_hz[i];
    point.trace_frequency_hz = point.frequency_hz;
    // The point's bin: half-way to each neighbour (±step/2 on a uniform sweep); an end point's
    // bin mirrors its one neighbour.
    const double below_hz = i > 0 ? trace.frequency_hz[i] - trace.frequency_hz[i - 1]
                                  : (n > 1 ? trace.frequency_hz[1] - trace.frequency_hz[0] : 0.0);
    const double above_hz =
        i + 1 < n ? trace.frequency_hz[i + 1] - trace.frequency_hz[i] : below_hz;
    point.bin_low_hz = point.frequency_hz - 0.5 * (i > 0 ? below_hz : above_hz);
    point.bin_high_hz = point.frequency_hz + 0.5 * above_hz;
    point.peak_dbuv = level;
    bool wanted = false;
    for (const LimitSet& set : sets) {
      for (const LimitLine& line : set.lines) {
        if (line.detector == Detector::peak) continue;  // the peak trace is already the final peak reading
        const auto limit = line.level_at(point.frequency_hz);
        if (!limit) continue;
        const double margin_db = *limit - level;
        if (margin_db >= options.guard_db) continue;  // the peak under the line by the guard proves it
        if (std::find(point.detectors.begin(), point.detectors.end(), line.detector) == point.detectors.end()) {
          point.detectors.push_back(line.detector);
        }
        if (!wanted || margin_db < point.margin_db) {
          point.margin_db = margin_db;
          point.limit_label = line_label(set, line);
        }
        wanted = true;
      }
    }
    if (wanted) candidates.push_back(point);
  }

  std::vector<RemeasurePoint> merged;
  double group_end_hz = 0.0;
  for (RemeasurePoint& candidate : candidates) {
    const bool joins = !merged.empty() &&
                       candidate.frequency_hz - group_end_hz <= options.merge_rbw * prescan_rbw_hz(group_end_hz);
    if (!joins) {
      merged.push_back(candidate);
    } else {
      RemeasurePoint& group = merged.back();
      std::vector<Detector> detectors = group.detectors;
      for (Detector d : candidate.detectors) {
        if (std::find(detectors.begin(), detectors.end(), d) == detectors.end()) detectors.push_back(d);
      }
      if (candidate.margin_db < group.margin_db) group = candidate;
      group.detectors = detectors;
    }
    group_end_hz = candidate.frequency_hz;
  }
  for (RemeasurePoint& point : merged) {
    std::sort(point.detectors.begin(), point.detectors.end(),
              [](Detector a, Detector b) { return static_cast<int>(a) < static_cast<int>(b); });
  }
  return merged;
}

std::vector<PredictionCheck> compare_with_prediction(const std::vector<RemeasurePoint>& points,
                                                     const std::vector<ScanCsvRow>& prediction, double window_rbw) {
  std::vector<PredictionCheck> checks;
  for (const RemeasurePoint& point : points) {
    PredictionCheck check;
    check.frequency_hz = point.trace_frequency_hz;
    check.measured_peak_dbuv = point.peak_dbuv;
    // What the analyser showed at this point: the maximum over its bin.
    for (const ScanCsvRow& row : prediction) {
      if (row.frequency_hz < point.bin_low_hz || row.frequency_hz > point.bin_high_hz) continue;
      if (!check.predicted || row.peak_dbuv > check.predicted->peak_dbuv) check.predicted = row;
    }
    check.bin_maximum = check.predicted.has_value();
    if (!check.predicted) {
      const double window_hz = window_rbw * prescan_rbw_hz(point.trace_frequency_hz);
      double best_distance_hz = window_hz;
      for (const ScanCsvRow& row : prediction) {
        const double distance_hz = std::abs(row.frequency_hz - point.trace_frequency_hz);
        if (distance_hz <= best_distance_hz) {
          best_distance_hz = distance_hz;
          check.predicted = row;
        }
      }
    }
    if (check.predicted && check.predicted->peak_dbuv > level_floor_db) {
      check.difference_db = point.peak_dbuv - check.predicted->peak_dbuv;
    }
    checks.push_back(check);
  }
  return checks;
}

SweepStepCheck check_sweep_step(const MeasuredTrace& trace) {
  SweepStepCheck check;
  for (std::size_t i = 0; i + 1 < trace.frequency_hz.size(); ++i) {
    ++check.steps;
    const double step_hz = trace.frequency_hz[i + 1] - trace.frequency_hz[i];
    const double rbw_hz = trace.rbw_hz.value_or(prescan_rbw_hz(trace.frequency_hz[i]));
    if (!(step_hz > rbw_hz)) continue;
    if (check.wider_than_rbw == 0) check.low_hz = trace.frequency_hz[i];
    check.high_hz = trace.frequency_hz[i + 1];
    ++check.wider_than_rbw;
    if (step_hz > check.widest_step_hz) {
      check.widest_step_hz = step_hz;
      check.rbw_hz = rbw_hz;
    }
  }
  return check;
}

PrescanResult run_prescan(const MeasuredTrace& trace, const std::vector<LimitSet>& sets,
                          const std::vector<ScanCsvRow>& prediction, Detector trace_detector,
                          const PrescanOptions& options) {
  check_trace_quantity(trace, sets);
  // A predicted scan CSV holds LISN-port voltages (its columns are *_dbuv): beside a current or
  // field trace its difference would compare two quantities.
  if (!prediction.empty() && trace.quantity != LimitQuantity::conducted_voltage) {
    throw Error(trace.unit_where,
                "expected a conducted-voltage trace (dBuV) beside the prediction (dBuV), found a " +
                    to_string(trace.quantity) + " trace (" + to_string(trace.unit) + ")");
  }
  PrescanResult result;
  result.quantity = trace.quantity;
  result.sweep = check_sweep_step(trace);
  if (result.sweep.wider_than_rbw > 0) {
    const SweepStepCheck& s = result.sweep;
    result.notes.push_back(
        "the trace step (up to " + format_quantity(s.widest_step_hz, Dimension::frequency) +
        ") is wider than the " + format_quantity(s.rbw_hz, Dimension::frequency) + " RBW" +
        (trace.rbw_hz ? " of the file" : "") + " at " + std::to_string(s.wider_than_rbw) + " of " +
        std::to_string(s.steps) + " steps (" + format_quantity(s.low_hz, Dimension::frequency) +
        " to " + format_quantity(s.high_hz, Dimension::frequency) +
        "): a line between two points shows only through the analyser's maximum over each bin" +
        (prediction.empty() ? std::string()
                            : "; the prediction is compared as its maximum over each bin"));
  }
  if (trace_detector == Detector::peak) result.remeasure = remeasure_list(trace, sets, options);
  if (!prediction.empty()) {
    result.prediction = compare_with_prediction(result.remeasure, prediction);
    result.remeasure_from_prediction = true;
    for (std::size_t i = 0; i < result.remeasure.size(); ++i) {
      const PredictionCheck& check = result.prediction[i];
      // The prediction's line inside the bin: where the lab should tune, not the bin centre.
      if (check.bin_maximum && check.predicted->peak_dbuv > level_floor_db) {
        result.remeasure[i].frequency_hz = check.predicted->frequency_hz;
        result.remeasure[i].from_prediction = true;
      }
    }
  }
  return result;
}

}  // namespace spurcast
