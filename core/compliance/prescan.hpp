#pragma once
/// The pre-scan step of a lab measurement: a fast peak trace is compared with every line (peak >=
/// quasi-peak >= average, so a peak under a line proves that line is met), and the local maxima
/// within the guard band of a quasi-peak or average line are listed for re-measurement with those
/// detectors, merged within a few RBW. Labs work this way because quasi-peak scans are slow
/// (docs/references.md §1.7: band B quasi-peak about 200 s/MHz, peak 100 ms/MHz, from memory).
#include <optional>
#include <string>
#include <vector>

#include "core/receiver/detector.hpp"
#include "core/compliance/limits.hpp"
#include "core/compliance/trace.hpp"

namespace spurcast {

/// The CISPR 16-1-1 6 dB bandwidth of the band holding frequency_hz: 200 Hz below 150 kHz, 9 kHz up
/// to 30 MHz, 120 kHz up to 1 GHz, 1 MHz above (docs/references.md §1.1, band E §1.1 note).
[[nodiscard]] double prescan_rbw_hz(double frequency_hz);

/// Error unless the trace measures what every set limits: a voltage trace against a field-strength
/// line, or a dBµA trace against a dBµV line, compares nothing. The error is at the trace's level
/// header and names both quantities:
/// `t.csv:1:21: expected a radiated-field trace (dBuV/m) for the limits "...", found a conducted-voltage trace (dBuV)`.
void check_trace_quantity(const MeasuredTrace& trace, const std::vector<LimitSet>& sets);

struct PrescanOptions {
  double guard_db = default_guard_db;  ///< [dB] re-measure where the peak is within this of a QP/AV line
  double merge_rbw = 3.0;              ///< candidates closer than merge_rbw × RBW are one emission
};

/// A frequency to re-measure with the quasi-peak and/or average detector.
struct RemeasurePoint {
  double frequency_hz = 0.0;  ///< [Hz] where to re-measure: the trace maximum of the merged group,
                              ///< or the prediction's line inside its bin (from_prediction)
  double trace_frequency_hz = 0.0;  ///< [Hz] the trace point of that maximum
  double bin_low_hz = 0.0;          ///< [Hz] the trace point's bin: half-way to its neighbours
  double bin_high_hz = 0.0;         ///< [Hz] (an end point's bin is symmetric around it)
  bool from_prediction = false;     ///< frequency_hz is the predicted line's frequency
  double peak_dbuv = 0.0;           ///< [unit of the sets] corrected trace level there
  std::vector<Detector> detectors;  ///< quasi-peak and/or average, in that order
  double margin_db = 0.0;           ///< smallest margin of the peak to those lines [dB]
  std::string limit_label;          ///< the line of that margin
};

/// Local maxima of the trace (a point at least as high as both neighbours; the ends count against
/// their one neighbour) whose peak level is less than guard_db under a quasi-peak or average line of
/// any set, merged: sorted by frequency, a candidate within merge_rbw·RBW of the previous one joins
/// its group; each group reports its smallest-margin member with the union of detectors.
[[nodiscard]] std::vector<RemeasurePoint> remeasure_list(const MeasuredTrace& trace,
                                                         const std::vector<LimitSet>& sets,
                                                         const PrescanOptions& options = {});

/// A prediction next to the measurement at one re-measure frequency.
struct PredictionCheck {
  double frequency_hz = 0.0;            ///< [Hz] the trace point
  double measured_peak_dbuv = 0.0;      ///< corrected trace level
  std::optional<ScanCsvRow> predicted;  ///< the predicted row compared (see bin_maximum)
  bool bin_maximum = false;  ///< predicted is the highest predicted peak inside the trace
                             ///< point's bin; false: the row nearest in frequency
                             ///< within the window (no predicted row inside the bin)
  std::optional<double> difference_db;  ///< measured peak − predicted peak [dB]
};

/// For each re-measure point, the prediction as the analyser would have seen it: a swept analyser's
/// peak detector shows at each trace point the maximum over that point's bin (±step/2), so the
/// predicted row compared is the one with the highest peak inside the bin. When no predicted row
/// lies inside the bin (a prediction coarser than the trace), the row nearest in frequency within
/// window_rbw × RBW is compared instead.
[[nodiscard]] std::vector<PredictionCheck> compare_with_prediction(const std::vector<RemeasurePoint>& points,
                                                                  const std::vector<ScanCsvRow>& prediction,
                                                                  double window_rbw = 3.0);

/// How coarse the trace is against the resolution bandwidth.
struct SweepStepCheck {
  std::size_t steps = 0;           ///< intervals between trace points
  std::size_t wider_than_rbw = 0;  ///< of those, how many are wider than the RBW there
  double widest_step_hz = 0.0;     ///< [Hz] the widest such interval
  double rbw_hz = 0.0;             ///< [Hz] the RBW at that interval
  double low_hz = 0.0;             ///< [Hz] the span of the intervals wider than the RBW
  double high_hz = 0.0;            ///< [Hz]
};
/// Compares every trace step with the RBW: the file's (metadata "RBW") when given, else the CISPR
/// 16-1-1 bandwidth of the band (prescan_rbw_hz).
[[nodiscard]] SweepStepCheck check_sweep_step(const MeasuredTrace& trace);

/// The pre-scan of a trace: the re-measure list, the prediction beside it, and notes for the user.
struct PrescanResult {
  LimitQuantity quantity = LimitQuantity::conducted_voltage;  ///< what trace and limits measure
  std::vector<RemeasurePoint> remeasure;                      ///< frequencies to re-measure
  std::vector<PredictionCheck> prediction;  ///< one per re-measure point (with a prediction)
  bool remeasure_from_prediction = false;   ///< a prediction was given: re-measure frequencies are
                                           ///< its lines inside the bins where it has one
  SweepStepCheck sweep;            ///< trace step against the RBW
  std::vector<std::string> notes;  ///< warnings, each once (e.g. a step wider than the RBW)
};

/// The pre-scan: check_trace_quantity (and, with a prediction, a voltage trace: a predicted scan
/// CSV is in dBµV), remeasure_list (for a peak trace), compare_with_prediction
/// (when `prediction` is not empty) with the re-measure frequencies moved to the predicted lines,
/// and a note when the trace step is wider than the RBW.
[[nodiscard]] PrescanResult run_prescan(const MeasuredTrace& trace,
                                        const std::vector<LimitSet>& sets,
                                        const std::vector<ScanCsvRow>& prediction,
                                        Detector trace_detector,
                                        const PrescanOptions& options = {});

}  // namespace spurcast
