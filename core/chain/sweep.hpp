#pragma once
/// The sweep (docs/design.md §2, §4): re-runs the chain for each value of one or more scenario keys, in
/// parallel, and finds the windows of the swept parameter where a broadcast band stays clear, the
/// fundamental stays out of a CISPR band, or every limit is met with the guard band — robust to a
/// stated drift tolerance of the switching frequency.
///
/// Keys are dotted paths into the scenario file: `switching.frequency`, `switching.rise`,
/// `switching.ringing.frequency`, `switching.dither.deviation`, `coupling.parasitic_capacitance`,
/// `filter.1.inductance` (1-based index into the [[filter]] array), `lisn.lines`, ... Each point is
/// a copy of the parsed table with the key set and re-read by scenario_from_table(), so every
/// section's own validation applies to every point (a value that fails it makes that point invalid,
/// with the message kept, not the whole sweep).
///
/// Per point, two paths:
///  - exact line spectrum ("lines"): a described, undithered source whose harmonics are spaced more
///    than 2·B6 apart (f0 > 2·B6 of every receiver band) is seen by a receiver tuned to a harmonic as
///    one isolated line (the neighbours lie beyond 2·B6, where the Gaussian IF gain is 2^-16,
///    −96 dB): it reads the line's RMS on the peak, quasi-peak and average detectors alike (CISPR
///    16-1-1 calibration: a sine reads its RMS), and no tuned frequency reads more, so the margins at
///    the harmonic frequencies are the scan's extreme margins (the limit changes by less than 0.1 dB
///    within a bandwidth). A line outside a receiver band but within 2·B6 of its edge gives a reading
///    at the edge through the IF skirt (the inside neighbour's share is left out). The network is
///    built once per sweep when no coupling., filter. or lisn. key varies.
///  - receiver scan ("scan"): dithered or captured sources, and f0 <= 2·B6, go through predict()
///    with its scans (the time-domain receiver for sampled sources).
///
/// Example:
///   const toml::table table = parse_toml_file("examples/greenhouse-buck.toml", "scenario file");
///   SweepOptions options;
///   options.axes.push_back(make_axis(table, parse_vary("switching.frequency=50kHz:2.5MHz:1000")));
///   options.criteria.push_back(parse_window_criterion("MW"));
///   options.tolerance_fraction = 0.05;
///   const SweepResult result = run_sweep(table, "examples/greenhouse-buck.toml", "examples",
///                                        locate_shipped_data(), options);
///   for (const RobustWindow& w : result.windows) ... w.from_value, w.to_value ...
#include <cstddef>
#include <functional>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "core/input/toml.hpp"

#include "core/receiver/detector.hpp"
#include "core/compliance/margins.hpp"
#include "core/chain/prediction.hpp"
#include "core/radio/reception.hpp"
#include "core/input/units.hpp"

namespace spurcast {

/// Points of a `--vary` without an explicit count.
inline constexpr std::size_t default_sweep_point_count = 101;
/// The most points of one sweep (all axes multiplied): bounds memory and run time.
inline constexpr std::size_t max_sweep_point_count = 1'000'000;

/// One `--vary` as written: "KEY=FROM:TO[:N][:log]", e.g. "switching.frequency=100kHz:3MHz:1000".
struct VarySpec {
  std::string key;        ///< dotted scenario key
  std::string from_text;  ///< quantity text of the first value ("100kHz")
  std::string to_text;    ///< quantity text of the last value
  std::size_t count = default_sweep_point_count;  ///< >= 1 (1: FROM alone, TO must equal it)
  bool logarithmic = false;  ///< geometric spacing (FROM and TO of one sign, non-zero)
};

/// Parses "KEY=FROM:TO[:N][:log]". Errors (no position):
/// `expected KEY=FROM:TO[:N] (e.g. "switching.frequency=100kHz:3MHz:1000"), found "x"`,
/// `expected a point count >= 1 after TO, found "x"`.
[[nodiscard]] VarySpec parse_vary(std::string_view text);

/// One swept parameter with its values in SI base units.
struct SweepAxis {
  std::string key;
  Dimension dimension = Dimension::number;  ///< how values are written back and shown
  std::vector<double> values;               ///< [SI base unit of the dimension]
};

/// The values from..to: `count` points, linear or geometric, both ends included.
/// Error for a log sweep through zero or across signs.
[[nodiscard]] std::vector<double> sweep_values(double from, double to, std::size_t count, bool logarithmic);

/// The dimension of `key` in `table`: the unit of its current string value ("220 kHz" → frequency);
/// when the key is absent or a plain number, the unit of `example_text` (a plain number there gives
/// Dimension::number: the value is written in SI base units and the section's reader judges it).
[[nodiscard]] Dimension scenario_key_dimension(const toml::table& table, std::string_view key,
                                               std::string_view example_text);

/// The axis of `vary` over `table`: checks the key's path (sections and [[filter]] indices exist,
/// the key is not a table), finds its dimension and parses FROM and TO in it. Errors:
/// `no [[filter]] 3 in the scenario (it has 1)`, `'switching.ringing' is a table, not a number`,
/// `--vary switching.frequency: expected a frequency (e.g. "220 kHz"), found "3 V"`.
[[nodiscard]] SweepAxis make_axis(const toml::table& table, const VarySpec& vary);

/// Writes `value` (SI) at `key` in `table`, creating missing sections and inline tables: as a
/// string with the dimension's unit symbol (so the reader checks the unit), as a plain number for
/// fractions and numbers, as an integer when the key holds an integer now.
void set_scenario_key(toml::table& table, std::string_view key, double value, Dimension dimension);

/// What a window is a window of.
struct WindowCriterion {
  enum class Kind {
    band_clear,           ///< a broadcast band's reception verdict is `clear` at every channel
    fundamental_outside,  ///< the fundamental (with dither and drift) lies outside a CISPR band
    limits_met,           ///< every margin >= the guard band (limits verdict `pass`)
    all,                  ///< every other criterion of the sweep at once
  };
  Kind kind = Kind::band_clear;
  std::string band;  ///< broadcast band name ("MW") or CISPR band letter ("B")

  /// "MW clear", "fundamental outside band B", "limits met", "all criteria".
  [[nodiscard]] std::string label() const;
};

/// `--clear NAME`: a CISPR band letter A..D gives fundamental_outside, any other name band_clear
/// (checked against the scenario's band plan by run_sweep).
[[nodiscard]] WindowCriterion parse_window_criterion(std::string_view band_name);

struct SweepOptions {
  std::vector<SweepAxis> axes;  ///< one or more; the first varies fastest, windows run along it
  std::vector<WindowCriterion> criteria;  ///< an `all` criterion is added when there are several
  /// Drift of the switching frequency [fraction, 0 <= t < 0.5]: a point is robust when every swept
  /// point within [v·(1−t), v·(1+t)] of the first axis meets the criterion and, on the lines path,
  /// when no harmonic drifting over k·f0·(1±t) reaches a channel passband with a level that is not
  /// clear there (power sum of every harmonic whose drift range overlaps the passband), no harmonic
  /// drifting over its range meets a limit with less than the guard, and the fundamental's range
  /// stays out of the band (fundamental_outside).
  double tolerance_fraction = 0.0;
  /// Worker threads; 0 = sweep_thread_count(getenv("SPURCAST_THREADS")).
  unsigned threads = 0;
  /// false: every point goes through predict() with its scans (the slow path, for checks).
  bool exact_lines = true;
  PredictionOptions prediction;  ///< for the scan path (skip_scans is ignored)
  /// Called after each point with (points done, points in all), one call at a time (serialised
  /// across the worker threads), for a progress display; may be empty.
  std::function<void(std::size_t, std::size_t)> on_point_done;
};

/// The threads to use: `environment_value` (SPURCAST_THREADS) when it is a positive integer,
/// otherwise std::thread::hardware_concurrency() (at least 1). Error on a value that is not a
/// positive integer: `expected SPURCAST_THREADS to be a positive integer, found "x"`.
[[nodiscard]] unsigned sweep_thread_count(const char* environment_value);
/// The most worker threads a command starts: 256 (judgement: well above the cores of one machine;
/// each thread holds its own buffers).
inline constexpr unsigned max_worker_threads = 256;
/// Why `text` is not a thread count of 1..max_worker_threads ("expected a thread count of 1..256,
/// found \"0\""), or nullopt.
[[nodiscard]] std::optional<std::string> thread_count_problem(std::string_view text);

/// The worst margin to the lines of one detector at one point.
struct DetectorMarginPoint {
  Detector detector = Detector::quasi_peak;
  std::optional<double> margin_db;  ///< nullopt: no reading compared with these lines
  double frequency_hz = 0.0;        ///< where the worst margin is
};

/// The worst margin to one limit line ("set name / detector") at one point.
struct LineMarginPoint {
  std::optional<double> margin_db;
  double frequency_hz = 0.0;
};

/// One broadcast band at one point.
struct BandPoint {
  std::size_t channels_hit = 0;                 ///< channels that hear at least one line
  std::optional<double> worst_channel_hz;       ///< the channel that sets the verdict
  std::optional<double> worst_level_dbuvm;      ///< its disturbance field [dBµV/m]
  /// The smallest (clear threshold − level) over the channels heard [dB]: how far the band is from
  /// losing `clear` (negative when a channel is not clear); nullopt when no channel hears a line.
  std::optional<double> clear_headroom_db;
  ReceptionVerdict verdict = ReceptionVerdict::clear;
};

/// Everything a sweep keeps of one point.
struct SweepPoint {
  std::vector<double> values;            ///< one per axis [SI]
  std::string method;                    ///< "lines" or "scan" ("" when invalid)
  std::optional<std::string> error;      ///< the scenario rejected this point (message)
  double switching_frequency_hz = 0.0;   ///< f0 of the point (0 for a capture)
  std::vector<DetectorMarginPoint> detectors;  ///< aligned with SweepResult::detectors
  std::vector<LineMarginPoint> limit_lines;    ///< aligned with SweepResult::limit_lines
  std::vector<BandPoint> bands;                ///< aligned with SweepResult::bands
  std::optional<double> worst_margin_db;       ///< over every limit line
  Verdict limits_verdict = Verdict::pass;      ///< pass when no limit was compared
  std::vector<bool> point_meets;   ///< per criterion: this point alone at its nominal value
  std::vector<bool> drift_meets;   ///< per criterion: point_meets and the analytic drift check (lines path)
  /// per criterion: drift_meets here and point_meets at every grid point within ±tolerance
  std::vector<bool> robust;
};

/// A contiguous run of robust points along the first axis (the other axes fixed).
struct RobustWindow {
  std::size_t criterion = 0;          ///< index into SweepResult::criteria
  std::vector<double> fixed_values;   ///< the values of axes 2.. (empty for a 1-axis sweep)
  double from_value = 0.0;            ///< first axis value of the first robust point [SI]
  double to_value = 0.0;              ///< of the last robust point [SI]
  std::size_t first_point = 0;        ///< index into SweepResult::points
  std::size_t last_point = 0;
  std::size_t point_count = 0;
  bool open_low = false;   ///< the window starts at the first swept value: it may reach further
  bool open_high = false;  ///< the window ends at the last swept value
  /// Why the window stops (the point just outside it): the part of the criterion that point fails,
  /// e.g. "MW channel 1.602 MHz noisy at 24.3 dBµV/m (harmonic 7)"; empty for an open end.
  std::string low_edge;
  std::string high_edge;
};

/// The value the sweep recommends: inside a window of the last criterion, the point with the
/// largest robust headroom, i.e. the smallest headroom over the points within ±tolerance of it,
/// where a point's headroom is the smallest of its worst limit margin less the guard band and each
/// criterion band's clear headroom (BandPoint::clear_headroom_db). Ties go to the point nearest the
/// middle of its window.
struct SweepRecommendation {
  std::size_t point = 0;                ///< index into SweepResult::points
  std::size_t window = 0;               ///< index into SweepResult::windows
  std::optional<double> headroom_db;    ///< nullopt when unbounded or the criterion has no level in it
  /// What sets it: "limits less the guard band", "MW clear threshold", or why it is unbounded ("no
  /// MW channel hears a line"); empty when the criterion has no level in it.
  std::string headroom_to;
};

struct SweepResult {
  std::vector<SweepAxis> axes;
  std::vector<Detector> detectors;            ///< line detectors with a limit, order peak, QP, AV
  std::vector<std::string> limit_lines;       ///< line_label() of each compared limit line
  std::vector<std::string> bands;             ///< broadcast band names of the scenario's plan
  std::vector<WindowCriterion> criteria;
  double tolerance_fraction = 0.0;
  double guard_db = default_guard_db;
  std::vector<SweepPoint> points;             ///< the first axis fastest, then the second, ...
  std::vector<RobustWindow> windows;           ///< per criterion, in increasing first-axis order
  std::optional<SweepRecommendation> recommended;  ///< nullopt when the last criterion has no window
  std::vector<std::string> notes;
  unsigned threads = 1;
  std::size_t invalid_points = 0;
};

/// Runs the sweep over the parsed scenario `table` (`file`, `directory` and `data` as for
/// scenario_from_table). Throws Error when the base scenario is invalid, a criterion names a band
/// the plan does not have, the options are out of range, or every point is invalid (the first
/// point's message, prefixed with its values).
[[nodiscard]] SweepResult run_sweep(const toml::table& table, const std::string& file, const std::string& directory,
                                    const ShippedData& data, const SweepOptions& options);

/// A value of an axis for people: 6 significant digits with the axis unit (a fraction in %).
[[nodiscard]] std::string sweep_value_text(double value, Dimension dimension);

/// What the sweep was asked to find: a window of the last criterion (`all criteria` when there are
/// several); without criteria, every point valid and meeting the limits. The CLI's exit code.
[[nodiscard]] bool sweep_goal_met(const SweepResult& result);

}  // namespace spurcast
