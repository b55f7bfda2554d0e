#pragma once
/// The whole chain of a prediction (docs/design.md §2): source → spectrum → conducted path → LISN port →
/// receiver → limits / bands. One call, one value out; the report writers and the sweep consume it.
///
/// Example:
///   const Scenario scenario = load_scenario("examples/greenhouse-buck.toml", locate_shipped_data());
///   const Prediction p = predict(scenario);
///   p.margins.verdict, p.scans[0].worst.readings, p.reception[i].verdict ...
#include <optional>
#include <string>
#include <vector>

#include "core/chain/contributors.hpp"
#include "core/coupling/conducted.hpp"
#include "core/compliance/margins.hpp"
#include "core/receiver/receiver.hpp"
#include "core/radio/reception.hpp"
#include "core/chain/scenario.hpp"
#include "core/source/waveform.hpp"

namespace spurcast {

/// How the source was given, which decides the receiver path.
enum class SourceKind {
  described,  ///< periodic trapezoid: exact lines, exact line-spectrum receiver
  dithered,   ///< described with dither: the exact lines of its repeat (or, when the profile does not
              ///< repeat, sampled synthesis and the FFT receiver); Prediction::receiver_path says which
  captured,   ///< a capture: its samples through the conducted path and the FFT receiver
};
[[nodiscard]] std::string to_string(SourceKind kind);

struct PredictionOptions {
  std::optional<double> step_hz;       ///< scan step override [Hz]
  std::vector<CisprBand> bands;        ///< override of the scenario's receiver bands (empty: keep)
  /// [s] record length of the sampled path for dithered sources; 0 = automatic (enough modulation
  /// periods for the detectors, bounded for memory).
  double record_duration_s = 0.0;
  /// Skip the receiver scans (the sweep's margins-only mode reads the lines directly).
  bool skip_scans = false;
  /// [Hz] frequencies whose contributors are asked for (`predict --explain-at`), in the order
  /// given; each must lie inside a receiver band of the conducted prediction that was computed
  /// (otherwise predict() throws Error before the long part).
  std::vector<double> explain_at_hz;
  /// Read a dithered source through sampled synthesis and the FFT receiver even when its profile
  /// repeats (a cross-check of the exact line path; `predict --sampled-dither`).
  bool sampled_dither = false;
  /// Skip what only a report shows: the closest-margin list and the contributors of the worst
  /// readings. The margins, their worst per detector and line, and the verdicts are unchanged (a
  /// sweep point reads nothing else).
  bool skip_report_details = false;
};

/// ScanPlan::envelope_oversampling for a dithered source's exact lines, in predict() and
/// spectrum_at/scan_at alike: the dense lines' envelope is read 4× finer than a periodic source's
/// (judgement: the peak reading then agrees with the sampled path's within 0.1 dB on the boat
/// example).
inline constexpr unsigned dithered_envelope_oversampling = 4;

/// Which receiver path read the LISN port.
enum class ReceiverPath {
  lines,          ///< exact line spectrum of a periodic source
  dithered_lines, ///< exact lines of a dithered source's repeat (source.hpp, DitherRepeat)
  sampled,        ///< a sampled record through the FFT receiver (a capture, or a dither that does not repeat)
  mains_gated,    ///< a boost PFC stage's lines over the mains half-cycle (scan_modulated_lines)
};
/// "lines", "dithered-lines", "sampled" or "mains-gated-lines".
[[nodiscard]] std::string to_string(ReceiverPath path);

/// The readings of one CISPR band at the LISN port(s).
struct BandScan {
  CisprBand band = CisprBand::B;
  ScanResult line1;
  std::optional<ScanResult> line2;
  /// Per tuned frequency and detector, the higher of the two lines (what a lab reports after
  /// measuring each line in turn).
  ScanResult worst;
};

/// The radiated-field estimate of one CISPR band C/D at one limit's measuring distance, read by the
/// receiver from the field lines (levels in dBµV/m; an estimate, core/radio/radiated.hpp).
struct RadiatedScan {
  CisprBand band = CisprBand::C;
  double distance_m = 10.0;  ///< [m] the limit set's measuring distance
  ScanResult scan;           ///< readings in dBµV/m
};

/// Part of a broadcast band or other range the prediction did not compute, and why.
struct UncomputedRange {
  std::string what;    ///< "broadcast band FM", "band B", ...
  double from_hz = 0.0;
  double to_hz = 0.0;
  std::string reason;
};

/// What the mains-cycle reading of a boost PFC stage used (core/source/mains_cycle.hpp).
struct MainsGating {
  double mains_frequency_hz = 0.0;
  double crest_input_v = 0.0;          ///< [V] (1 − duty)·amplitude
  double switching_threshold_v = 0.0;  ///< [V]
  double switching_fraction = 0.0;     ///< of each half-cycle during which the stage switches
  std::size_t phases = 0;              ///< instants sampled over the half-cycle
  Conduction conduction = Conduction::continuous;
  /// [Hz] the switching frequency's range over the half-cycle (critical conduction: the crest's
  /// frequency up to the highest, near the zero crossing), and the instants held at the clamp.
  double lowest_switching_hz = 0.0;
  double highest_switching_hz = 0.0;
  std::size_t clamped_phases = 0;
  /// How each scanned band was read; several_harmonics: that band shows the crest's lines.
  std::vector<std::pair<CisprBand, ModulatedReading>> band_readings;
};

struct Prediction {
  Scenario scenario;
  SourceKind source_kind = SourceKind::described;
  ReceiverPath receiver_path = ReceiverPath::lines;
  /// Exact harmonics at the source: switch-node voltage and input current. For a dithered source
  /// these are the undithered (nominal) lines; for a capture, the lines read from its spectrum.
  LineSpectrum switch_node_v;
  LineSpectrum input_current_a;
  /// The conducted result at the harmonics (every source kind; for a dithered source it holds the
  /// nominal, undithered lines). Absent for a battery supply: there is no LISN.
  std::optional<ConductedResult> conducted;
  std::vector<BandScan> scans;
  /// Set when receiver_path is mains_gated.
  std::optional<MainsGating> mains_gating;
  MarginReport margins;
  /// Radiated-field estimates read for the radiated-field limit sets (bands C/D only).
  std::vector<RadiatedScan> radiated_scans;
  /// Ranges of the receiver bands that were not read (e.g. above a capture's Nyquist frequency);
  /// limit-line parts not computed are in margins.not_computed.
  std::vector<UncomputedRange> unread_bands;
  /// [Hz] the highest frequency the source's lines reach (a capture: half its sample rate);
  /// broadcast bands above it are `not computed`.
  double computed_up_to_hz = 0.0;
  /// The capture drives only the common-mode path: differential-mode noise is not included.
  bool common_mode_only = false;
  /// The capture drives only the differential-mode path: common-mode noise is not included.
  bool differential_mode_only = false;
  /// Field lines at the broadcast receiver [dBµV/m] per radiator (cable CM and DM, hot loop;
  /// core/radio/radiated.hpp), and the per-band reception estimate made from them.
  std::vector<FieldLine> field;
  std::vector<BandReception> reception;
  std::string radiation_convention;
  /// What the broadcast estimate assumes, one line (reception_assumptions()).
  std::string reception_assumptions;
  std::string setup_description;  ///< the LISN set-up the levels refer to
  std::vector<std::string> notes; ///< assumptions and warnings to show the user
  /// The conducted model's resonances inside the receiver bands (Q ≥ resonance_note_min_q).
  std::vector<Resonance> resonances;
  /// What makes each of the worst conducted readings (worst_frequencies(…, 5), LISN-port readings
  /// only), in the same order (core/chain/contributors.hpp).
  std::vector<Contributor> contributors;
  /// The contributors at PredictionOptions::explain_at_hz, in that order (separate from the worst
  /// readings' list).
  std::vector<Contributor> contributors_requested;
  Verdict verdict = Verdict::no_limits;  ///< the margins' verdict (no_limits when no limit was given)
};

/// Sample rate of the FFT receiver's synthesized records for `band`: 2.5× the highest frequency the
/// IF response reaches (band top plus twice the bandwidth), clear of the Nyquist frequency.
[[nodiscard]] double receiver_sample_rate_hz(CisprBand band);

/// Record length for a dithered source: whole modulation periods (whole repeats when the dither
/// repeats over several, DitherRepeat), at least three modulation periods and at least
/// 10 ms (`requested_s` > 0 overrides that), bounded to 2^23 samples at `sample_rate_hz`; a note
/// is added when the bound shortens it.
[[nodiscard]] double dithered_record_duration_s(const SwitchingSpec& spec, double sample_rate_hz,
                                                double requested_s, std::vector<std::string>& notes);

/// Per tuned frequency and detector, the higher of two scans over the same tuned frequencies
/// (the two LISN lines: a lab measures each and reports the higher); notes are merged.
[[nodiscard]] ScanResult worst_of_lines(const ScanResult& line1, const std::optional<ScanResult>& line2);

/// True when a capture states its switching frequency and holds a whole number of its periods
/// (to within half a sample), so the FFT receiver may treat the record as exact periods.
[[nodiscard]] bool holds_whole_periods(const Capture& capture);

/// The radiators' currents (core/radio/radiated.hpp) at the harmonic numbers `harmonics` (1-based, of the
/// sources' fundamental): the cable's CM and DM currents from `conducted` (mains and dc supplies) or from
/// the battery leads' model (core/radio/product.hpp), and the hot loop's pulsed source current.
/// `conducted` may be null for a battery supply; otherwise Error.
[[nodiscard]] RadiatorCurrents radiator_currents(const Scenario& scenario, const LineSpectrum& switch_node_v,
                                                 const LineSpectrum& input_current_a,
                                                 const std::vector<std::size_t>& harmonics,
                                                 const ConductedResult* conducted);

/// The receiver's 6 dB bandwidth of the band of `prediction.scans` holding `frequency_hz` (9 kHz when
/// none does: band B's).
[[nodiscard]] double receiver_bandwidth_at(const Prediction& prediction, double frequency_hz);

/// A reading that stands out: the smallest margin at one frequency.
struct WorstFrequency {
  MarginRow row;
  double separation_hz = 0.0;  ///< the thinning distance used (the band's 6 dB bandwidth) [Hz]
};
/// The `count` smallest margins at distinct frequencies: rows sorted by margin, each kept only when
/// it is at least one receiver bandwidth (B6 of its band) away from the rows already kept, so one
/// emission does not fill the list with its neighbouring scan points.
[[nodiscard]] std::vector<WorstFrequency> worst_frequencies(const Prediction& prediction, std::size_t count);

/// Runs the chain. Throws Error on inconsistent input (e.g. a capture too slow for the band).
[[nodiscard]] Prediction predict(const Scenario& scenario, const PredictionOptions& options = {});

}  // namespace spurcast
