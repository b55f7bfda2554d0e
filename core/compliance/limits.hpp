#pragma once
/// Limit lines: our own TOML format (one file per line set, shipped in limits/), the loader with
/// file:line:column errors, and the evaluation of a line at a frequency.
///
/// A line is a list of segments over frequency; a sloped segment is linear in log-frequency
/// (FCC 15.107 note: "decreases with the logarithm of the frequency"; EN 55022 table "decreasing
/// with Log (Freq.)"). At a boundary frequency shared by two segments the lower (stricter) value
/// applies unless the line says `at_boundary = "higher"` (FCC 15.107: "The lower limit applies at the
/// band edges"; docs/references.md §1.8, §3.2).
///
/// Example (a file; the format is documented at the top of every shipped file):
///   name = "CISPR 32 class B, mains port"
///   measures = "conducted-voltage"       # | "radiated-field" | "conducted-current"
///   unit = "dBuV"                        # | "dBuV/m" | "dBuA"
///   source = "CISPR 32 ... Table ..."
///   confidence = "read from the document: ..."   # or "from memory — verify against your copy"
///   [[line]]
///   detector = "quasi-peak"
///   segment = [ { from = "150 kHz", to = "500 kHz", start = "66 dBuV", end = "56 dBuV" },
///               { from = "500 kHz", to = "5 MHz", level = "56 dBuV" } ]
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "core/receiver/detector.hpp"
#include "core/input/error.hpp"
#include "core/input/shipped_data.hpp"
#include "core/input/toml_reader.hpp"
#include "core/input/units.hpp"

namespace spurcast {

/// What a limit set limits.
enum class LimitQuantity {
  conducted_voltage,  ///< "conducted-voltage": voltage at a LISN/AMN port, dBµV
  radiated_field,     ///< "radiated-field": electric field at a measuring distance, dBµV/m
  conducted_current,  ///< "conducted-current": current through a current probe, dBµA
};
[[nodiscard]] std::string to_string(LimitQuantity quantity);

/// How far the values of a limit set can be trusted (docs/references.md marks [F] and [M]).
enum class LimitConfidence {
  read_from_document,  ///< confidence text begins "read from" (values read from a copy of the document)
  from_memory,         ///< confidence text begins "from memory" (verify against your copy)
};

/// Which value applies exactly at a frequency shared by two segments.
enum class BoundaryRule {
  lower,   ///< "lower": the stricter value (the default; FCC 15.107 "lower limit applies at the band edges")
  higher,  ///< "higher": the looser value, only when the document says so
};

/// One segment of a limit line: from_hz..to_hz, level going from start_level to end_level linearly in
/// log10(f). A flat segment has start_level == end_level. Levels are in the set's unit.
struct LimitSegment {
  double from_hz = 0.0;      ///< [Hz], > 0
  double to_hz = 0.0;        ///< [Hz], > from_hz
  double start_level = 0.0;  ///< [dBµV | dBµV/m | dBµA] at from_hz
  double end_level = 0.0;    ///< [dBµV | dBµV/m | dBµA] at to_hz
  SourcePosition where;      ///< position of the segment in its file

  /// The level at frequency_hz, which must lie in [from_hz, to_hz]: linear in log10(f).
  [[nodiscard]] double level_at(double frequency_hz) const;
};

/// One detector's line of a set: segments in increasing frequency, not overlapping (gaps allowed).
struct LimitLine {
  Detector detector = Detector::quasi_peak;
  std::vector<LimitSegment> segments;
  BoundaryRule at_boundary = BoundaryRule::lower;
  SourcePosition where;

  /// The limit at frequency_hz, or nullopt when no segment covers it. Segment ends are matched with a
  /// relative tolerance of 1e-9 so "0.5 MHz" and "500 kHz" meet.
  [[nodiscard]] std::optional<double> level_at(double frequency_hz) const;
  [[nodiscard]] double low_hz() const;   ///< lowest frequency covered
  [[nodiscard]] double high_hz() const;  ///< highest frequency covered
};

/// A set of lines from one file (or one inline [[limits.line]] table).
struct LimitSet {
  std::string name;
  LimitQuantity measures = LimitQuantity::conducted_voltage;
  Dimension unit = Dimension::level_dbuv;  ///< level_dbuv, level_dbuvm or level_dbua
  std::optional<double> distance_m;        ///< measuring distance [m] (radiated sets)
  std::string source;                      ///< published document and table
  std::string confidence_text;             ///< as written in the file
  LimitConfidence confidence = LimitConfidence::read_from_document;
  std::string notes;                       ///< optional free text
  std::vector<LimitLine> lines;            ///< at most one line per detector
  std::string file;                        ///< path it was read from, "<shipped>/..." for a shipped file ("" for inline lines)

  /// The line of `detector`, or nullptr.
  [[nodiscard]] const LimitLine* line_for(Detector detector) const;
};

/// The [limits] table of a scenario: the sets to compare with and the guard band.
struct LimitsSpec {
  std::vector<LimitSet> sets;
  /// Pre-compliance margin [dB]: a margin in [0, guard) is "marginal". 6 dB is common practice
  /// (docs/references.md §7: "A 6 dB pre-compliance margin is common practice").
  double guard_db = 6.0;
};

/// The default guard band [dB], common practice (docs/references.md §7).
inline constexpr double default_guard_db = 6.0;

/// Reads a limit file. Errors carry file:line:column: frequencies out of order, overlapping
/// segments, unknown detector, unit or quantity, missing source or confidence, two lines with one
/// detector, unknown keys.
[[nodiscard]] LimitSet read_limit_file(const std::string& path);
/// Same, from TOML text; `name` stands for the file in messages.
[[nodiscard]] LimitSet parse_limit_text(std::string_view text, const std::string& name);

/// Reads a scenario's [limits] table:
///   files = ["limits/cispr32-class-b-conducted.toml", "cispr32-class-a-conducted", ...]
///   guard = "6 dB"                       # default 6 dB (common practice)
///   [[limits.line]]                      # inline line: name, unit (and optionally measures,
///   name = "customer spec"               #   distance, source, confidence) plus the keys of a [[line]]
///   unit = "dBuV"
///   detector = "quasi-peak"
///   segment = [ { from = "150 kHz", to = "30 MHz", level = "50 dBuV" } ]
/// File names resolve against `scenario_directory` first, then against `data`'s limits folder (also
/// with a leading "limits/" removed); a bare name without ".toml" names a shipped file. A shipped
/// file's LimitSet::file is its shown name ("<shipped>/limits/x.toml", ShippedData::shown_path).
/// Calls reader.finish({"files", "guard", "line"}).
[[nodiscard]] LimitsSpec read_limits_section(TableReader& reader, const std::string& scenario_directory,
                                             const ShippedData& data);

/// Resolves a limit file name as read_limits_section does; nullopt when no candidate exists.
[[nodiscard]] std::optional<std::string> resolve_limit_file(const std::string& name,
                                                            const std::string& base_directory,
                                                            const ShippedData& data);

/// The shipped limit files (*.toml directly in `data`'s limits folder that declare `measures`),
/// sorted by file name.
[[nodiscard]] std::vector<std::string> shipped_limit_files(const ShippedData& data);

/// The unit symbol used in text ("dBµV", "dBµV/m", "dBµA").
[[nodiscard]] std::string limit_unit_symbol(const LimitSet& set);
/// "<set name> / <detector>", used as the `limit` column of the margins CSV.
[[nodiscard]] std::string line_label(const LimitSet& set, const LimitLine& line);

}  // namespace spurcast
