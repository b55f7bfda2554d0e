#pragma once
/// Emulation of a CISPR 16-1-1 measuring receiver: bands with their Gaussian IF selectivity, the
/// tuned-frequency grid, and the peak / quasi-peak / average readings of a sampled record (an
/// FFT receiver, every tuned frequency at once) or of a periodic line spectrum (exact fast path).
///
/// Example:
///   ScanPlan plan{.band = CisprBand::B};                       // 150 kHz-30 MHz, 9 kHz, step 2.25 kHz
///   const ScanResult result = scan_waveform(waveform, plan);
///   for (const Reading& r : result.readings) ... r.quasi_peak_db ...
#include <complex>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "core/receiver/detector.hpp"
#include "core/input/toml_reader.hpp"
#include "core/source/waveform.hpp"

namespace spurcast {

/// CISPR 16-1-1 frequency bands. C and D share bandwidth and time constants.
enum class CisprBand { A, B, C, D };

/// "A", "B", "C" or "D".
[[nodiscard]] std::string to_string(CisprBand band);
/// The band named `name` ("A".."D", upper case), or nullopt.
[[nodiscard]] std::optional<CisprBand> find_band(std::string_view name);
/// Like find_band; throws Error (no position): `expected one of A, B, C or D, found "E"`.
[[nodiscard]] CisprBand band_from_string(std::string_view name);

/// The receiver parameters of a band: CISPR 16-1-1 values as listed in docs/references.md §1.1 (from
/// memory, two public secondary sources agree).
struct BandParameters {
  CisprBand band = CisprBand::B;
  double start_hz = 0.0;            ///< [Hz] lower band edge
  double stop_hz = 0.0;             ///< [Hz] upper band edge
  double bandwidth_6db_hz = 0.0;    ///< [Hz] IF bandwidth at -6 dB
  DetectorTimeConstants detector;   ///< QP charge/discharge and meter time constants
};
[[nodiscard]] BandParameters band_parameters(CisprBand band);
/// The band whose range holds `frequency_hz` (edges: the lower band, e.g. 150 kHz is band A,
/// 30 MHz is band B); Error `frequency 5 kHz is outside the CISPR bands (9 kHz-1 GHz)` otherwise.
[[nodiscard]] CisprBand band_for_frequency(double frequency_hz);

/// The [receiver] table of a scenario.
struct ReceiverSpec {
  std::vector<CisprBand> bands{CisprBand::B};
  std::vector<Detector> detectors{Detector::peak, Detector::quasi_peak, Detector::average};
  std::optional<double> step_hz;  ///< [Hz] scan step; default default_step_hz(band); <= B6/2
  /// [dBµV] the receiver's noise floor for every band; default default_noise_floor_dbuv(band).
  std::optional<double> noise_floor_dbuv;
};

/// The default noise floor of the emulated receiver in `band` [dBµV at its 50 Ω input]: thermal noise
/// k·T0 = −174 dBm/Hz (−67.0 dBµV/Hz at 50 Ω, physics) in the Gaussian IF's noise bandwidth
/// (0.7527·B6), plus a 20 dB noise figure (judgement: a receiver without preamplifier). Band A
/// −25.2 dBµV, band B −8.7 dBµV, bands C/D +2.6 dBµV.
[[nodiscard]] double default_noise_floor_dbuv(CisprBand band);

/// Reads the [receiver] table: keys `bands` (array of "A".."D", default ["B"]), `detectors` (array
/// of "peak", "quasi-peak", "average", default all three), `step` (a frequency, at most half the
/// 6 dB bandwidth of every listed band) and `noise_floor` (a level in dBµV between −60 and
/// +60 dBµV). Calls reader.finish(). Errors carry the value's position.
[[nodiscard]] ReceiverSpec read_receiver_section(TableReader& reader);

// ---------------------------------------------------------------------------------------------
// IF selectivity: Gaussian, |H(f)| = exp(-4·ln2·(f - f_tuned)²/B6²), so |H| = 1/2 (-6.02 dB) at
// ±B6/2. A Gaussian meets the CISPR 16-1-1 selectivity mask only approximately; the mask itself is
// not reproduced here (docs/references.md §1.2: mask values not confirmed). tests/receiver/receiver_test.cpp
// checks the simulated shape in every band against this Gaussian down to -60 dB and the 6 dB
// bandwidth against a ±10 % tolerance (from memory).

/// Gain of the Gaussian IF filter (linear, <= 1) at `offset_hz` from the tuned frequency.
[[nodiscard]] double if_gain(double offset_hz, double bandwidth_6db_hz);
/// Impulse bandwidth of the Gaussian filter: 1.0645·B6 (= sqrt(pi/(4 ln2))·B6; docs/references.md §1.2).
[[nodiscard]] double impulse_bandwidth_hz(double bandwidth_6db_hz);
/// Equivalent noise bandwidth: 0.7527·B6 (= sqrt(pi/(8 ln2))·B6; docs/references.md §1.2).
[[nodiscard]] double noise_bandwidth_hz(double bandwidth_6db_hz);
/// The default scan step: B6/4 (worst-case Gaussian scalloping 0.38 dB, docs/references.md §1.2).
[[nodiscard]] double default_step_hz(CisprBand band);
/// The most tuned frequencies of one band scan: 2^20. The default grids have 2,821 (band A) to
/// 32,334 (band C/D) points; the bound allows steps 30 times finer than the default and keeps a
/// scan's readings within some tens of MB. `scan --band C --step 1Hz` asked for 970 million
/// (issue 14). Judgement.
inline constexpr std::size_t max_tuned_frequencies = std::size_t{1} << 20;
/// Why `step_hz` cannot scan `band`: not positive, above B6/2, or more than max_tuned_frequencies
/// points ("expected a step of at least 925.1 Hz in band C (30 MHz-1 GHz: at most 1048576 tuned
/// frequencies), found 1 Hz"); nullopt when it can.
[[nodiscard]] std::optional<std::string> step_problem(CisprBand band, double step_hz);
/// Tuned frequencies start_hz + k·step_hz for k = 0, 1, ... while <= stop_hz (1e-9 relative slack).
/// Error with step_problem()'s message, before any allocation.
[[nodiscard]] std::vector<double> tuned_frequencies(CisprBand band, double step_hz);

// ---------------------------------------------------------------------------------------------
// Scanning.

/// What to read.
struct ScanPlan {
  CisprBand band = CisprBand::B;
  std::optional<double> step_hz;       ///< [Hz] default default_step_hz(band); must be <= B6/2
  /// Who gave step_hz, for messages: "--step" (then errors read "--step: expected ..."), or "".
  std::string step_origin;
  std::vector<double> frequencies_hz;  ///< spot readings at these tuned frequencies; empty = scan the band
  /// [Hz] the slowest modulation in the signal (e.g. a dither rate), 0 = unknown. The sampled path
  /// notes a record holding fewer than 3 of its periods.
  double slowest_modulation_hz = 0.0;
  /// The sampled record holds whole periods of a periodic signal (a capture with its switching
  /// frequency stated). Its lines then sit on FFT bins and a record shorter than 1/B6 is still
  /// exact; otherwise scan_waveform refuses a record shorter than 1/B6, which cannot resolve the
  /// IF bandwidth.
  bool periodic_record = false;
  /// Threads of the sampled path (its record transform and the tuned frequencies, split into
  /// contiguous runs); 0 = std::thread::hardware_concurrency(). The readings do not depend on it.
  unsigned threads = 0;
  /// The line path (scan_lines) reads the peak of each tuned frequency's periodic envelope at this
  /// many times its default points (5 per B6 over the period, at least the lines in the span);
  /// quasi-peak and average keep the default, which they do not need finer. Dense lines (a
  /// dithered source's) make an envelope whose peaks fall between the default points; 1 keeps
  /// the default.
  unsigned envelope_oversampling = 1;
  /// [dB of the record's quantity] the receiver's noise floor: no reading falls below it (nullopt:
  /// no floor, the bare signal; readings then fall to level_floor_db where nothing is in the passband).
  std::optional<double> noise_floor_db;
};

/// One tuned frequency. Levels are RMS-calibrated readings in dBµV for a voltage, dBµA for a current;
/// level_floor_db where nothing is in the passband.
struct Reading {
  double frequency_hz = 0.0;
  double peak_db = level_floor_db;
  double quasi_peak_db = level_floor_db;
  double average_db = level_floor_db;

  [[nodiscard]] double level_db(Detector detector) const;
};

/// True when `level_db` is the scan's noise floor (the signal alone reads at or below it).
[[nodiscard]] bool at_noise_floor(double level_db, const std::optional<double>& noise_floor_db);

/// Holds every reading of `result` at or above `noise_floor_db` and records the floor.
void apply_noise_floor(struct ScanResult& result, double noise_floor_db);

struct ScanResult {
  Quantity quantity = Quantity::voltage;
  CisprBand band = CisprBand::B;
  double bandwidth_6db_hz = 0.0;  ///< [Hz]
  double step_hz = 0.0;           ///< [Hz] 0 for spot readings
  std::vector<Reading> readings;  ///< ascending frequency
  /// [Hz] set when a band scan stopped early: tuned frequencies above this one were not read (the
  /// record's sample rate does not cover them); `unread_reason` says why.
  std::optional<double> read_up_to_hz;
  /// [dB] the noise floor the readings were held at (ScanPlan::noise_floor_db), if any.
  std::optional<double> noise_floor_db;
  std::string unread_reason;
  /// Facts the user should know about how the readings were made ("record treated as periodic ...").
  std::vector<std::string> notes;
};

/// The tuned frequencies a plan reads (the band grid, or the spot frequencies). Error on a step
/// above B6/2, a non-positive step, or a spot frequency outside the plan's band.
[[nodiscard]] std::vector<double> plan_frequencies(const ScanPlan& plan);

/// FFT receiver on a sampled record. The record is taken as one period of a periodic signal (the
/// detectors are run to their periodic steady state; a note says so). One FFT of the whole record
/// (sampled_spectrum, keeping the bins scan_span_hz names) and scan_spectrum() on it:
/// for each tuned frequency the bins within ±2·B6 are weighted by the Gaussian IF response and
/// inverse-transformed into a decimated complex envelope, on which the detectors run.
/// Error if the sample rate does not cover the band (tuned frequency + 2·B6 above Nyquist) or the
/// record is empty. Uses plan.threads threads.
[[nodiscard]] ScanResult scan_waveform(const Waveform& waveform, const ScanPlan& plan);

/// The same reading from the record's spectrum (SampledSpectrum, core/source/waveform.hpp), which
/// needs to hold only the bins scan_span_hz() names: a stage that filters the record in the
/// frequency domain (the conducted path to the LISN port) hands its product over without a return
/// to the time domain. The readings equal scan_waveform()'s on the record whose spectrum it is.
/// Errors as scan_waveform(), and `expected the record's spectrum from 132 kHz to 30.02 MHz, found
/// ...` when the spectrum lacks bins the scan reads.
[[nodiscard]] ScanResult scan_spectrum(const SampledSpectrum& spectrum, const ScanPlan& plan);

/// [Hz] The lowest and highest frequency whose spectrum bins a sampled scan of `plan` reads on a
/// record sampled at `sample_rate_hz`: its tuned frequencies (those the rate covers) ∓ the IF span
/// (2·B6), the lower one at least 0; {0, 0} when it reads none or the rate covers none of them.
[[nodiscard]] std::pair<double, double> scan_span_hz(const ScanPlan& plan, double sample_rate_hz);
/// [Hz] The same over several plans (the span holding each plan's): what one spectrum read by
/// every band of a scan must hold; {0, 0} when none reads anything.
[[nodiscard]] std::pair<double, double> scan_span_hz(const std::vector<ScanPlan>& plans, double sample_rate_hz);

/// Exact receiver for a periodic line spectrum: the IF output at each tuned frequency is the sum of
/// the lines within ±2·B6 weighted by the Gaussian response; its envelope is periodic with 1/f0.
/// One line in the passband reads |H|·RMS on every detector.
[[nodiscard]] ScanResult scan_lines(const LineSpectrum& lines, const ScanPlan& plan);

/// How scan_modulated_lines reads lines that follow a slow modulation (ModulatedLines, waveform.hpp)
/// in one band:
///  - sidebands: exact. The phasor of harmonic k over the modulation period T is a Fourier series,
///    so the harmonic becomes lines at k·f0 + n/T; those within ±2·B6 of the tuned frequency pass
///    the Gaussian IF and their envelope, periodic with T, goes to the detectors (as scan_lines).
///    Chosen when the span holds at most max_sideband_lines of them (band A on 50 Hz mains: 8);
///  - quasi_static: the IF follows the modulation (its response, about 1/B6, is short against T),
///    so the envelope at the tuned frequency is |H(k·f0 − f)|·√2·|X_k(t_j)|; the detectors are
///    homogeneous (a scaled envelope reads scaled), so each harmonic's envelope is read once and
///    scaled by |H|. Chosen otherwise (band B on 50 Hz mains: 360 sideband lines in the span);
///  - several_harmonics: the span (±2·B6) holds more than one harmonic of f0 (f0 ≤ 4·B6); the
///    beat between harmonics is not read over the modulation: scan_modulated_lines refuses it;
///  - swept: the fundamental varies over the instants (ModulatedLines::instant_fundamental_hz, a
///    critical-conduction PFC stage), so harmonic k sweeps across the band and no sideband series
///    at k·f0 + n/T exists. Quasi-static with the sweep: the fundamental is taken linear in time
///    between the instants (from the midpoint with the instant before to f_j, then to the midpoint
///    with the instant after, two halves of Δ = T/N), and in each half harmonic k is a line sweeping
///    linearly at μ = k·df/dt through the IF. A linear sweep through the Gaussian IF
///    |H(u)| = exp(−a·u²), a = 4·ln2/B6², gives the envelope (swept_if_gain)
///        |y| = A·(1 + x²)^(−1/4)·exp(−a·u²/(1 + x²)),   x = a·μ/π,   u = the line's offset now
///    (the chirp exp(jπμt²) through the Gaussian impulse response is a Gaussian integral: our
///    derivation; for x → 0 the quasi-static |H(u)|, and its peak factor is the swept analyser's
///    sweep loss of a Gaussian filter, [1 + 0.195·(μ/B3²)²]^(−1/4) with B3 = B6/√2, common
///    practice). The envelope handed to the average and quasi-peak detectors at instant j is the
///    sum over harmonics of A_k·(that gain averaged over the interval: an erf difference), the
///    peak the largest over the instants of Σ_k A_k·(its highest value in the interval), A_k =
///    √2·|X_k(t_j)|. Checked against a numpy time-domain simulation of a critical-conduction
///    stage (tests/receiver/swept_lines_test.cpp). Judgements: the magnitudes of harmonics add
///    (their beat is not read: a bound where two pass the IF at once); a line passing in a
///    fraction of the interval reaches the quasi-peak detector spread over the interval (the
///    average is kept; the quasi-peak, which charges more from a short burst than from its mean,
///    reads somewhat low for fast sweeps, always between the average and the peak).
enum class ModulatedReading { sidebands, quasi_static, several_harmonics, swept };

/// The Gaussian IF's response to a line sweeping linearly from start_offset_hz to end_offset_hz
/// (offsets from the tuned frequency) in duration_s (see ModulatedReading::swept): its mean and its
/// highest value over the sweep, relative to the line's amplitude.
struct SweptGain {
  double mean = 0.0;
  double highest = 0.0;
};
/// Below this highest gain a sweep's mean is taken as 0 (its erf is not evaluated): 1e-7, −140 dB
/// (judgement: far below any reading beside the line's own passage, and below the receiver's noise
/// floor for any line under 1 V).
inline constexpr double negligible_swept_gain = 1e-7;
[[nodiscard]] SweptGain swept_if_gain(double start_offset_hz, double end_offset_hz, double duration_s,
                                      double bandwidth_6db_hz);
/// The most sideband lines in a span (4·B6·T) for the exact sideband reading: 64 (judgement: the
/// quasi-static reading then sees an IF response shorter than T/16; the two agree within
/// 0.1 dB there, tests/receiver/modulated_lines_test.cpp).
inline constexpr double max_sideband_lines = 64.0;
/// "sidebands", "quasi-static", "several harmonics" or "swept".
[[nodiscard]] std::string to_string(ModulatedReading reading);
/// The reading scan_modulated_lines makes in `band` for fundamental f0 and modulation period T
/// (for a fixed fundamental; lines whose fundamental varies are read swept unless their lowest
/// fundamental makes several_harmonics).
[[nodiscard]] ModulatedReading modulated_reading(double fundamental_hz, double modulation_period_s, CisprBand band);

/// The receiver on modulated lines (see ModulatedReading): peak, quasi-peak and average of the
/// envelope over the modulation period, each detector in its periodic steady state
/// (read_periodic_envelope). `reading` forces a method (tests); nullopt: modulated_reading().
/// Error when the band's spans hold several harmonics, or the lines are malformed.
[[nodiscard]] ScanResult scan_modulated_lines(const ModulatedLines& lines, const ScanPlan& plan,
                                              std::optional<ModulatedReading> reading = std::nullopt);

/// The reading with the highest level on `detector` (the first, lowest frequency, of equal ones);
/// none when there are no readings.
[[nodiscard]] std::optional<Reading> highest_reading(const ScanResult& result, Detector detector);

/// The local maxima of the peak trace above level_floor_db, highest first, at most `count`: a line
/// seen at several neighbouring tuned frequencies is listed once (a plateau at its last point).
[[nodiscard]] std::vector<Reading> peak_maxima(const ScanResult& result, std::size_t count);

/// The IF envelope (magnitude of the complex IF output, peak volts) at one tuned frequency of a
/// sampled record, over one record length, treated as periodic: `samples.size()` points spaced
/// `sample_interval_s`. Exposed for tests (cross-check against a direct mix-and-filter).
struct Envelope {
  double sample_interval_s = 0.0;
  std::vector<double> samples;
};
[[nodiscard]] Envelope waveform_envelope(const Waveform& waveform, double tuned_hz, double bandwidth_6db_hz);

}  // namespace spurcast
