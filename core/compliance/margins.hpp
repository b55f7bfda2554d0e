#pragma once
/// Margins of detector readings to limit lines: margin = limit − reading at the reading's frequency
/// (docs/design.md §6), worst margin per detector and overall, the readings closest to (or above) the
/// limit, the verdict with a guard band, and the CISPR 16-4-2 measurement uncertainty U_cispr shown
/// beside the margin.
///
/// Example:
///   std::vector<LevelReading> readings{{1.2e6, Detector::quasi_peak, 51.3}, ...};
///   const MarginReport report = compare_with_limits(readings, spec.sets, {.guard_db = spec.guard_db});
///   if (report.verdict == Verdict::fail) ...;  margins_csv(report) -> file
#include <cmath>
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "core/receiver/detector.hpp"
#include "core/compliance/limits.hpp"
#include "core/input/units.hpp"

namespace spurcast {

/// One reading of one detector at one frequency. `level` is in the unit of the limit sets it is
/// compared with (dBµV conducted, dBµV/m radiated, dBµA current).
struct LevelReading {
  double frequency_hz = 0.0;            ///< [Hz]
  Detector detector = Detector::peak;   ///< the detector that made the reading
  double level = level_floor_db;        ///< [dBµV | dBµV/m | dBµA]
  /// What the reading measures: it is compared only with limit sets that measure the same thing
  /// (a LISN voltage never with a radiated-field line).
  LimitQuantity quantity = LimitQuantity::conducted_voltage;
  /// [m] measuring distance of a radiated-field reading: compared only with sets of that distance.
  std::optional<double> distance_m{};
};

/// Readings of a receiver scan: one LevelReading per tuned frequency and listed detector. Works with
/// any scan row type having `frequency_hz` and `level_db(Detector)` (the receiver's Reading).
/// Readings at level_floor_db (nothing in the passband) are left out.
/// `quantity` and `distance_m` say what the scan measured (a LISN port voltage by default).
template <class ScanRow>
[[nodiscard]] std::vector<LevelReading> readings_from_scan(
    const std::vector<ScanRow>& scan, const std::vector<Detector>& detectors,
    LimitQuantity quantity = LimitQuantity::conducted_voltage, std::optional<double> distance_m = std::nullopt) {
  std::vector<LevelReading> readings;
  readings.reserve(scan.size() * detectors.size());
  for (const ScanRow& row : scan) {
    for (Detector detector : detectors) {
      const double level = row.level_db(detector);
      if (!std::isfinite(level) || level <= level_floor_db) continue;
      readings.push_back(LevelReading{row.frequency_hz, detector, level, quantity, distance_m});
    }
  }
  return readings;
}

/// pass: every margin >= guard; marginal: every margin >= 0 and one under the guard; fail: a margin < 0;
/// incomplete: no margin < 0, but part of a limit line has no reading (not computed); no_limits: no
/// limit line was given, so nothing can pass or fail.
enum class Verdict { pass, marginal, fail, incomplete, no_limits };
/// "pass", "marginal", "fail", "incomplete" or "no limits".
[[nodiscard]] std::string to_string(Verdict verdict);
/// The verdict of one margin: fail when margin < 0, marginal when 0 <= margin < guard, else pass.
[[nodiscard]] Verdict verdict_for(double margin_db, double guard_db);

/// CISPR 16-4-2 U_cispr (expanded uncertainty, k = 2) for a measurement of `measures` at
/// frequency_hz, docs/references.md §7 (from memory): conducted (AMN) 3.8 dB at 9–150 kHz, 3.4 dB at
/// 150 kHz–30 MHz; radiated 6.3 dB at 30–1000 MHz, 5.2 dB at 1–6 GHz, 5.5 dB at 6–18 GHz. nullopt
/// elsewhere and for conducted current (no value listed). At 150 kHz the conducted value of band B
/// applies (the band the limits start in).
[[nodiscard]] std::optional<double> cispr_uncertainty_db(LimitQuantity measures, double frequency_hz);

/// A frequency range of one quantity that was not read, and why.
struct UnreadRange {
  LimitQuantity quantity = LimitQuantity::conducted_voltage;
  double from_hz = 0.0;  ///< [Hz]
  double to_hz = 0.0;    ///< [Hz] > from_hz (may be infinity)
  std::string reason;    ///< e.g. "band A is not in the scenario's [receiver] bands"
};

/// Part of a limit line that no reading reached: the verdict is `incomplete` (unless a margin fails).
struct NotComputed {
  std::string limit_label;  ///< line_label(set, line)
  double from_hz = 0.0;     ///< [Hz]
  double to_hz = 0.0;       ///< [Hz]
  std::string reason;
};

struct MarginOptions {
  double guard_db = default_guard_db;  ///< [dB] >= 0
  /// Pre-scan rule: a peak reading is compared with the quasi-peak and average lines too, since
  /// peak >= quasi-peak >= average for any signal (docs/references.md §10 item 30), so a peak reading under
  /// a line proves that line is met. Without it each reading meets only its own detector's line.
  bool peak_against_every_line = false;
  std::size_t closest_count = 10;      ///< how many rows `closest` keeps (0: none, not computed)
  /// Frequency ranges the readings do not cover, with the reason; where one meets a limit line of
  /// its quantity, that part of the line is `not_computed` and the verdict cannot be pass.
  std::vector<UnreadRange> unread{};
  /// [Hz] rows of `closest` are at least this far apart (0: no thinning); for dense traces, so one
  /// emission does not fill the list with its neighbouring points.
  double closest_separation_hz = 0.0;
  /// `closest` takes only rows whose margin is a local minimum over frequency among the rows of the
  /// same line and reading detector (the tip of an emission, not its shoulders). For dense traces and
  /// band scans; leave it off for sparse spot readings, where neighbours are different emissions.
  bool closest_local_minima_only = false;
};

/// One comparison of one reading with one line.
struct MarginRow {
  double frequency_hz = 0.0;                 ///< [Hz]
  Detector reading_detector = Detector::peak;
  double reading = 0.0;                      ///< [unit of the set]
  double limit = 0.0;                        ///< [unit of the set] the line's value at frequency_hz
  double margin_db = 0.0;                    ///< limit − reading [dB]; negative = over the limit
  Detector limit_detector = Detector::peak;  ///< the detector of the line
  std::size_t set_index = 0;                 ///< index into the compared sets
  LimitQuantity quantity = LimitQuantity::conducted_voltage;  ///< what the reading and the line measure
  std::string limit_label;                   ///< line_label(set, line)
  std::optional<double> uncertainty_db;      ///< U_cispr at frequency_hz [dB], when known
};

/// The worst (smallest) margin to the lines of one detector.
struct DetectorMargin {
  Detector detector = Detector::peak;  ///< the detector of the lines
  std::size_t comparisons = 0;
  MarginRow worst;
};

struct MarginReport {
  double guard_db = default_guard_db;
  std::vector<MarginRow> rows;                  ///< every comparison, in reading order
  std::vector<MarginRow> closest;               ///< smallest margins first, options.closest_count at most
  std::vector<DetectorMargin> worst_per_detector;  ///< per line detector present, order peak, QP, AV
  std::optional<MarginRow> worst;               ///< the smallest margin of all (nullopt: nothing compared)
  std::size_t readings = 0;                     ///< readings given
  std::size_t compared_readings = 0;            ///< readings compared with at least one line
  /// Readings outside every segment of the lines their detector is compared with: not compared.
  std::size_t not_compared = 0;
  /// Parts of limit lines without a reading (options.unread, and every line no reading reached).
  std::vector<NotComputed> not_computed;
  /// no_limits without sets; fail when a margin is negative; else incomplete when something was
  /// not computed; else pass or marginal by the worst margin.
  Verdict verdict = Verdict::no_limits;
};

/// Compares every reading with the matching lines of every set. Error when options.guard_db < 0.
[[nodiscard]] MarginReport compare_with_limits(const std::vector<LevelReading>& readings,
                                               const std::vector<LimitSet>& sets,
                                               const MarginOptions& options = {});

/// The unit symbol of a row's reading and limit ("dBµV", "dBµV/m", "dBµA").
[[nodiscard]] std::string row_unit_symbol(const MarginRow& row);

/// "482 kHz-30 MHz of <line>: <reason>", one not-computed part in words.
[[nodiscard]] std::string describe(const NotComputed& part);

/// The margins CSV (docs/design.md §4): header
/// `frequency_hz,detector,reading_dbuv,limit_dbuv,margin_db,limit,unit` then one line per row; levels
/// with 2 decimals, the limit label quoted when it holds a comma. The first columns keep their names
/// (interface); `unit` says what the row compares (dBµV at the LISN port, dBµV/m radiated estimate).
[[nodiscard]] std::string margins_csv(const MarginReport& report);

/// Quotes a CSV field when it holds a comma, quote or newline (RFC 4180).
[[nodiscard]] std::string csv_field(const std::string& text);

}  // namespace spurcast
