#pragma once
/// Measured traces (spectrum-analyser or receiver exports) and correction tables (LISN voltage-
/// division factor, limiter or attenuator, cable loss) as CSV, for the pre-scan comparison.
///
/// CSV rules (all files here): one row per line; one delimiter per file: ';' if any line holds one,
/// else a tab if any line holds one, else ','; a field in double quotes may hold the delimiter.
/// With ';' or tab between the fields a number may use a decimal comma ("60,45" = 60.45); in a
/// comma file a comma inside a number, or a row with more filled fields than the header, is refused
/// as ambiguous. Lines that are empty or start with '#' are skipped; an optional header row (its
/// first field is not a number) names the columns. Instrument exports may put metadata lines before
/// the header ("Type;Analyzer", "RBW;9000;Hz"): the data start at the first row whose first field
/// is a number, the row before it is the header, and rows before that are metadata, read only for
/// the resolution bandwidth (a row "RBW", "Res BW" or "Resolution Bandwidth"; Hz unless a unit is
/// given in the row). The frequency column's unit comes from its header ("Frequency (MHz)",
/// "Freq [kHz]", "frequency_hz", "Hz"); an unknown unit in brackets is refused at the header cell.
/// Without a unit the column is read as Hz only when no other unit could be meant (Hz puts every
/// value within 9 kHz..18 GHz and kHz, MHz and GHz do not); otherwise it is refused, so a MHz
/// table is never read as Hz. Frequencies must increase strictly. Errors carry file:line:column.
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
#include "core/input/error.hpp"

namespace spurcast {

/// Level unit of a trace file, named in the level column's header ("Level (dBmV)", "level_dbm") or
/// given with --unit.
enum class TraceUnit {
  dbuv,   ///< dBµV (also written dBuV, dBμV with a Greek mu)
  dbmv,   ///< dBmV: +60 dB to dBµV (20·log10(1 mV / 1 µV), common practice)
  dbm,    ///< dBm in a 50 Ω system: +106.99 dB to dBµV (docs/references.md §9.2 [D])
  dbua,   ///< dBµA, a current-probe reading
  dbuvm,  ///< dBµV/m, a field strength
};
/// "dBuV", "dBmV", "dBm", "dBuA" or "dBuV/m".
[[nodiscard]] std::string to_string(TraceUnit unit);
/// Any spelling of a trace unit, case-insensitive, µ as u, µ (U+00B5) or μ (U+03BC);
/// Error `expected dBuV, dBmV, dBm, dBuA or dBuV/m, found "dBW"` otherwise.
[[nodiscard]] TraceUnit trace_unit_from_string(std::string_view text);
/// What a trace in `unit` measures: dBµV, dBmV and dBm a voltage, dBµA a current, dBµV/m a field.
[[nodiscard]] LimitQuantity trace_quantity(TraceUnit unit);
/// How the levels were converted, for reports: "dBuV", "dBmV converted to dBuV (+60 dB)", ...
[[nodiscard]] std::string describe_conversion(TraceUnit unit);

/// A measured trace after unit conversion (and corrections, once applied): dBmV and dBm are
/// converted to dBµV; dBµA and dBµV/m traces keep their unit (see `quantity`).
struct MeasuredTrace {
  std::string file;
  std::vector<double> frequency_hz;  ///< [Hz] strictly increasing
  std::vector<double> level_dbuv;    ///< [dBµV; dBµA for a current trace, dBµV/m for a field trace]
  TraceUnit unit = TraceUnit::dbuv;  ///< unit of the file's level column
  LimitQuantity quantity = LimitQuantity::conducted_voltage;  ///< what the levels measure (from `unit`)
  std::string level_column;          ///< header name of the level column ("" without header)
  SourcePosition unit_where;         ///< the level column's header cell (the file alone without header)
  std::optional<double> rbw_hz;      ///< [Hz] resolution bandwidth named in the metadata lines, if any
  SourcePosition rbw_where;          ///< where that was read
};

/// Reads a trace CSV. Columns: the frequency column (header starting with "freq", else the first
/// column) and the level column (the first other column, or the one named `level_column`).
/// `unit`: the level unit; when nullopt, the unit named in the level header ("Level (dBmV)",
/// "level_dbm", "Level [dBµV/m]"), else dBµV. A unit in (...) or [...], or a last word starting with
/// "dB", that is not one of TraceUnit is an error at its header cell. Error when the header names
/// one unit and `unit` says another. At least 2 rows.
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
