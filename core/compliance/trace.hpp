#pragma once
/// Measured traces (spectrum-analyser or receiver exports) and correction tables (LISN voltage-
/// division factor, limiter or attenuator, cable loss) as CSV, for the pre-scan comparison.
///
/// CSV rules (all files here): one row per line; fields separated by ',', ';' or a tab; lines that
/// are empty or start with '#' are skipped; an optional header row (its first field is not a number)
/// names the columns. A frequency column named "...mhz", "...khz" or "...ghz" is scaled to Hz,
/// otherwise it is in Hz. Frequencies must increase strictly. Errors carry file:line:column.
///
/// Sign convention of corrections: corrected level = reading + correction_db. A LISN voltage-division
/// factor (docs/references.md §2.3: "The measured value is added to the receiver reading"), an attenuator
/// or limiter and a cable loss are all entered as positive dB.
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "core/receiver/detector.hpp"
#include "core/compliance/margins.hpp"

namespace spurcast {

/// Level unit of a trace file.
enum class TraceUnit {
  dbuv,  ///< dBµV
  dbm,   ///< dBm in a 50 Ω system, converted with +106.99 dB (docs/references.md §9.2 [D])
};
/// "dBuV" or "dBm".
[[nodiscard]] std::string to_string(TraceUnit unit);
/// "dBuV" (also "dBµV"), "dBm"; Error `expected dBuV or dBm, found "dBW"` otherwise.
[[nodiscard]] TraceUnit trace_unit_from_string(std::string_view text);

/// A measured trace in dBµV after unit conversion (and corrections, once applied).
struct MeasuredTrace {
  std::string file;
  std::vector<double> frequency_hz;  ///< [Hz] strictly increasing
  std::vector<double> level_dbuv;    ///< [dBµV]
  TraceUnit unit = TraceUnit::dbuv;  ///< unit of the file's level column
  std::string level_column;          ///< header name of the level column ("" without header)
};

/// Reads a trace CSV. Columns: the frequency column (header starting with "freq", else the first
/// column) and the level column (the first other column, or the one named `level_column`).
/// `unit`: the level unit; when nullopt, a header holding "dbm" means dBm, anything else dBµV.
/// Error when the header names one unit and `unit` says the other. At least 2 rows.
[[nodiscard]] MeasuredTrace read_trace_csv(const std::string& path, std::optional<TraceUnit> unit = std::nullopt,
                                           const std::string& level_column = "");
[[nodiscard]] MeasuredTrace parse_trace_csv(std::string_view text, const std::string& name,
                                            std::optional<TraceUnit> unit = std::nullopt,
                                            const std::string& level_column = "");

/// A correction in dB versus frequency, interpolated linearly in log-frequency between its points
/// and held at the end values outside them.
struct CorrectionTable {
  std::string file;
  std::vector<double> frequency_hz;   ///< [Hz] strictly increasing, > 0
  std::vector<double> correction_db;  ///< [dB] added to the reading

  /// The correction at frequency_hz [dB].
  [[nodiscard]] double at(double frequency_hz) const;
  /// Whether frequency_hz lies within the table's points (else the end value is held).
  [[nodiscard]] bool covers(double frequency_hz) const;
};

/// Reads a correction CSV: frequency and dB columns (header optional). At least 1 row.
[[nodiscard]] CorrectionTable read_correction_csv(const std::string& path);
[[nodiscard]] CorrectionTable parse_correction_csv(std::string_view text, const std::string& name);

/// The trace with every table added: level + Σ table.at(f).
[[nodiscard]] MeasuredTrace apply_corrections(MeasuredTrace trace, const std::vector<CorrectionTable>& tables);

/// One reading per trace point, all with `detector` (a spectrum-analyser pre-scan is a peak trace).
[[nodiscard]] std::vector<LevelReading> trace_readings(const MeasuredTrace& trace, Detector detector = Detector::peak);

/// One row of a predicted scan CSV (docs/design.md §4: frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv).
struct ScanCsvRow {
  double frequency_hz = 0.0;
  double peak_dbuv = level_floor_db;
  double quasi_peak_dbuv = level_floor_db;
  double average_dbuv = level_floor_db;

  /// The reading of `detector` [dBµV].
  [[nodiscard]] double level_db(Detector detector) const;
};
/// Reads a scan CSV with the header `frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv` (columns
/// found by name, so extra columns are fine; a missing detector column reads level_floor_db).
[[nodiscard]] std::vector<ScanCsvRow> read_scan_csv(const std::string& path);
[[nodiscard]] std::vector<ScanCsvRow> parse_scan_csv(std::string_view text, const std::string& name);

}  // namespace spurcast
