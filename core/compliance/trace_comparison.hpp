#pragma once
/// A measured spectrum-analyser or receiver trace against limit lines, as a lab pre-scan uses it
/// (`spurcast compare`): the trace, with correction tables added, is compared with every line of
/// the given limit files (a peak trace with every line: peak >= quasi-peak >= average,
/// docs/references.md §10 item 30); a peak trace also gives the frequencies to re-measure with the
/// quasi-peak and average detectors, and, with a predicted scan CSV, the prediction beside them.
///
/// Example:
///   CompareRequest request;
///   request.trace_file = "trace.csv";
///   request.limit_files = {"cispr32-class-b-conducted"};
///   const CompareResult r = compare_trace(request);
///   if (r.report.verdict != Verdict::pass) ...;  compare_text(r, {});  // core/output/compare_output.hpp
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "core/compliance/limits.hpp"
#include "core/compliance/margins.hpp"
#include "core/compliance/prescan.hpp"
#include "core/compliance/trace.hpp"
#include "core/receiver/detector.hpp"

namespace spurcast {

/// What to compare.
struct CompareRequest {
  std::string trace_file;
  std::vector<std::string> limit_files;  ///< files or shipped names (resolved here, then in the shipped folder); one unit
  std::optional<TraceUnit> unit;         ///< none: from the trace header, else dBµV
  std::string level_column;              ///< "" = the first non-frequency column
  std::vector<std::string> correction_files;  ///< correction CSVs added to the reading
  double guard_db = default_guard_db;    ///< [dB] >= 0
  Detector detector = Detector::peak;    ///< the trace's detector
  std::string prediction_file;           ///< "" = none; a predicted scan CSV
  std::size_t closest_count = 10;        ///< how many closest readings to list
  ShippedData data;                      ///< where shipped names resolve (the CLI: locate_shipped_data())
};

/// The comparison, with everything it was made from.
struct CompareResult {
  std::string trace_file;
  MeasuredTrace trace;                      ///< corrected
  Detector detector = Detector::peak;
  double guard_db = default_guard_db;       ///< [dB]
  std::vector<LimitSet> sets;
  std::vector<std::string> correction_files;
  std::vector<CorrectionTable> corrections;
  double separation_hz = 0.0;               ///< [Hz] closest readings are at least this far apart (3 RBW)
  MarginReport report;
  std::vector<RemeasurePoint> remeasure;    ///< peak traces only
  std::string prediction_file;
  std::vector<ScanCsvRow> prediction;       ///< empty without a prediction file
  std::vector<PredictionCheck> checks;      ///< one per re-measure point when a prediction is given
  bool remeasure_from_prediction = false;   ///< re-measure frequencies are the predicted lines in their bins
  SweepStepCheck sweep;                     ///< the trace step against the RBW
  std::vector<std::string> notes;           ///< warnings for the user, each once (run_prescan)
};

/// Reads every input (limit files, corrections, the trace, the prediction) before comparing, so
/// nothing is produced from bad input. Errors: a limit file not found, limit files of two units,
/// the inputs' own errors, and no trace point on any line (naming the trace and both ranges).
[[nodiscard]] CompareResult compare_trace(const CompareRequest& request);

}  // namespace spurcast
