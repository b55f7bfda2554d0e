#pragma once
/// Captured sources: an oscilloscope record saved as text (CSV) with a time column and one or more
/// value columns. The loader detects header lines, the delimiter (`,` `;` tab or spaces), CRLF line
/// ends, the time unit of a header such as "Time (us)" or "t[ns]", and checks that the sampling is
/// uniform. Large files are memory-mapped and parsed with fast_float by several threads, each over a
/// chunk of whole lines; the file is never copied into memory.
///
/// Example:
///   CaptureSpec spec;  spec.file = "node.csv";  spec.column = ColumnChoice::by_name("CH1");
///   Capture capture = load_capture(spec);         // capture.waveform.samples in volts
///
/// Errors name file:line:column and what was expected, e.g.
///   "node.csv:17:12: expected a number, found "nan""
#include <cstddef>
#include <functional>
#include <optional>
#include <string>
#include <string_view>

#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"
#include "core/source/waveform.hpp"

namespace spurcast {

/// A column of the file: a 1-based index, or a name matched against the header line.
struct ColumnChoice {
  int index = 0;     ///< 1-based; 0 when chosen by name
  std::string name;  ///< header name when index == 0

  [[nodiscard]] static ColumnChoice by_index(int one_based) { return {one_based, {}}; }
  [[nodiscard]] static ColumnChoice by_name(std::string header) { return {0, std::move(header)}; }
  /// "2" or "'CH1'" for messages.
  [[nodiscard]] std::string describe() const;
};

/// What to load and how to interpret it (the scenario's [capture] section, or the CLI options).
struct CaptureSpec {
  std::string file;                                  ///< path as given (already resolved for loading)
  ColumnChoice time_column = ColumnChoice::by_index(1);
  ColumnChoice column = ColumnChoice::by_index(2);   ///< the value column
  double scale = 1.0;                                ///< multiplies the values (probe attenuation, e.g. 10 for 10:1), ≠ 0
  Quantity quantity = Quantity::voltage;
  std::optional<double> switching_frequency_hz;      ///< [Hz] > 0; estimated from the record when absent
  bool resample = false;                             ///< resample a non-uniform record instead of failing
  SourcePosition where;                              ///< of the [capture] table (for messages), may be empty
  /// A second column of the same record holding the input current (then `column` is the switch-node
  /// voltage): both paths driven from one measurement, with the two channels' relative phase.
  std::optional<ColumnChoice> current_column;
  double current_scale = 1.0;                        ///< multiplies the current column's values, ≠ 0
};

/// Reads a scenario's [capture] table: file (relative to the scenario file's folder, resolved here
/// into spec.file), column (1-based integer or header name, default 2), time_column (default 1),
/// scale (number, default 1), quantity ("voltage" | "current", default voltage), frequency
/// (optional switching frequency, e.g. "100 kHz"), resample (bool, default false), current_column
/// (a second column of the same file holding the input current; needs quantity = "voltage") and
/// current_scale (its scale, default 1). Calls reader.finish() with those keys.
[[nodiscard]] CaptureSpec read_capture_section(TableReader& reader);

/// The spec of the current channel of a two-channel capture (current_column set): the same file,
/// time column, frequency and resampling, column = current_column, scale = current_scale,
/// quantity current. Throws Error when `spec` has no current column.
[[nodiscard]] CaptureSpec current_capture_spec(const CaptureSpec& spec);

/// How much a sampled time axis departs from the uniform grid t0 + i·dt.
struct SamplingReport {
  double interval_s = 0.0;            ///< nominal sample interval dt = (t_last − t_first)/(n − 1) [s]
  double max_deviation_s = 0.0;       ///< max |t_i − (t0 + i·dt)| [s]
  std::size_t worst_line = 0;         ///< 1-based file line of that sample
  double tolerance_s = 0.0;           ///< deviation accepted as uniform [s]
  bool uniform = true;                ///< max_deviation_s <= tolerance_s
  bool resampled = false;             ///< the record was resampled onto the uniform grid
};

/// A loaded capture: the uniformly sampled record plus what was detected on the way.
struct Capture {
  Waveform waveform;                  ///< values × scale × header unit prefix, in V or A
  SamplingReport sampling;
  std::string file;                   ///< as named in messages
  std::size_t header_lines = 0;       ///< lines before the first data line
  std::size_t first_data_line = 0;    ///< 1-based
  char delimiter = ',';               ///< ',', ';', '\t' or ' ' (runs of blanks)
  std::string time_header;            ///< header text of the time column, "" without a header
  std::string value_header;           ///< header text of the value column, "" without a header
  double time_unit_s = 1.0;           ///< seconds per unit of the time column (1e-6 for "Time (us)")
  double value_unit = 1.0;            ///< factor of the value header's unit prefix (1e-3 for "(mV)")
  std::optional<double> switching_frequency_hz;  ///< copied from the spec
};

/// Parsing options that do not change the result.
struct CaptureLoadOptions {
  CaptureLoadOptions() = default;
  explicit CaptureLoadOptions(unsigned parser_threads) : threads(parser_threads) {}

  unsigned threads = 0;  ///< parser threads; 0 = std::thread::hardware_concurrency()
  /// Called with the number of samples as soon as the lines are parsed, before the sampling check
  /// and the assembly of the record: a caller can start work that needs only the length (planning
  /// the transform) while the loader finishes. Not called when parsing fails.
  std::function<void(std::size_t)> on_sample_count;
};

/// Memory-maps spec.file and parses it. Throws Error with file:line:column on malformed input, a
/// record shorter than 2 samples, time not strictly increasing, or non-uniform sampling (unless
/// spec.resample).
[[nodiscard]] Capture load_capture(const CaptureSpec& spec, const CaptureLoadOptions& options = CaptureLoadOptions());

/// The same over text already in memory; `name` stands for the file in messages.
[[nodiscard]] Capture parse_capture_text(std::string_view text, const std::string& name,
                                         const CaptureSpec& spec, const CaptureLoadOptions& options = CaptureLoadOptions());

/// Seconds per unit named in a time-column header: "Time (us)" → 1e-6, "t[ns]" → 1e-9,
/// "time/ms" → 1e-3, "second" → 1, "Time (min)" → 60. Any case ("uS", "mS", "NSEC"); s, sec,
/// second(s), ms, msec, us, usec, ns, nsec, ps, psec, min, minute(s) and their long forms; the
/// micro sign as u, µ (U+00B5), μ (U+03BC) or the Windows-1252 byte 0xB5. nullopt when the header
/// names no unit (a bare "Time"); Error `expected a time unit (s, ms, us, ns, ps or min, any case),
/// found "ks"` when it names one in (...), [...] or after '/' that is not a time unit (the loader
/// adds the cell's file:line:column).
[[nodiscard]] std::optional<double> time_unit_from_header(std::string_view header);

/// Checks a record is usable for a spectrum at `fundamental_hz`: at least one full period.
/// Throws "capture 'x.csv' covers 4 µs, fewer than one period of the fundamental (100 kHz, 10 µs)".
void check_capture_covers_period(const Capture& capture, double fundamental_hz);
/// The same from the record's file name (as named in messages) and duration [s], for a caller that
/// has already freed the samples.
void check_capture_covers_period(const std::string& file, double duration_s, double fundamental_hz);

}  // namespace spurcast
