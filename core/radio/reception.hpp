#pragma once
/// The reception estimate: for each broadcast band, how a nearby receiver tuned to its channels fares
/// against the disturbance field in its bandwidth. Our verdicts:
///   clear  — the disturbance is under what the receiver already hears (the ambient man-made noise of
///            ITU-R P.372; for a whistle on AM, tone_audibility_db under it);
///   watch  — above that, but below the threshold where a weak station is disturbed;
///   noisy  — reception of a weak station is likely disturbed.
///
/// The criterion respects the modulation:
///   AM (LW, MW, HF): an envelope detector hears noise in its audio band almost in proportion to the
///     carrier-to-noise ratio, so the threshold is the co-channel protection ratio (ITU-R BS.560:
///     40 dB, giving 20 dBµV/m for a 60 dBµV/m station): noisy above
///     max(ambient, wanted_field − protection_ratio), clear at or below the ambient.
///   FM: the co-channel RF protection ratio of ITU-R BS.412 (mono 36 dB, stereo 45 dB, steady; from
///     memory, docs/references.md §5.1) is the level of an interferer against a station at the minimum
///     usable field (48 dBµV/m mono, 54 stereo; the band file's values) at which reception is just
///     acceptable: noisy above max(ambient, wanted − protection_ratio), clear at or below the ambient.
///     The limiter and the capture effect are what the protection ratio already measures, so no further
///     credit is given (an earlier rule that waited for the FM threshold C/N was 24 dB more lenient than
///     the ratio it cited).
/// Assumptions: the weak station is at the band's minimum usable field strength (the band file's
/// wanted_field); the disturbance field is the power sum of the lines weighted by the channel's
/// shaped response (channel_response_db in core/radio/bands.hpp), so no line falls between channels;
/// a single line is a whistle, audible under the noise (tone_audibility_db); the ambient is man-made
/// noise only (galactic and atmospheric noise, large on LW/MW at night, are left out, which makes
/// `clear` harder to reach). Each band's receiver listens with its
/// antenna (core/radio/antenna.hpp): a ferrite rod reads η0·H, a whip reads E, both exact at any
/// distance (core/radio/radiated.hpp).
///
/// Example:
///   const auto results = estimate_reception(bands_for(spec, locate_shipped_data()), receiver_lines(field), spec);
///   const std::string csv = bands_csv(results);
#include <array>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "core/radio/antenna.hpp"
#include "core/radio/bands.hpp"
#include "core/radio/radiated.hpp"
#include "core/source/source.hpp"

namespace spurcast {

///   not computed — the band lies (wholly, or partly with nothing heard below) above the highest
///            frequency the source's lines reach (a capture's Nyquist frequency): never `clear`.
enum class ReceptionVerdict { clear, watch, noisy, not_computed };

/// "clear", "watch", "noisy", "not computed".
[[nodiscard]] std::string reception_verdict_name(ReceptionVerdict verdict);

/// How far under the channel's noise power a steady tone (a heterodyne whistle) is still heard [dB]:
/// 10 dB, the middle of the 8–13 dB of critical-band masking (docs/references.md §5.5, judgement).
/// An AM channel whose power comes mostly from one line (its strongest line carries at least half of
/// it) is clear only this far under the ambient noise.
inline constexpr double tone_audibility_db = 10.0;

/// One channel that hears at least one line, with the numbers behind its verdict.
struct ChannelReception {
  double centre_hz = 0.0;
  double level_dbuvm = 0.0;        ///< disturbance field in the channel bandwidth [dBµV/m]
  double strongest_line_hz = 0.0;
  std::size_t line_count = 0;
  /// Each radiator's share of the field at the strongest line (power fractions summing to 1), when the
  /// lines came from radiated_field(); all zero otherwise.
  std::array<double, radiator_count> radiator_share{};
  std::optional<Radiator> dominant_radiator;  ///< the largest share, when known
  double ambient_dbuvm = 0.0;      ///< P.372 man-made noise in the channel bandwidth [dBµV/m]
  double protection_threshold_dbuvm = 0.0;  ///< wanted_field − protection_ratio [dBµV/m]
  double clear_below_dbuvm = 0.0;  ///< at or below this: clear
  double noisy_above_dbuvm = 0.0;  ///< above this: noisy
  bool tone = false;               ///< one line dominates: judged as a whistle (tone_audibility_db)
  ReceptionVerdict verdict = ReceptionVerdict::clear;
};

/// The estimate for one band.
struct BandReception {
  Band band;
  AntennaKind antenna = AntennaKind::whip;  ///< what the band's receiver listens with
  ReceptionVerdict verdict = ReceptionVerdict::clear;           ///< the worst channel's (clear when nothing is heard)
  std::vector<std::size_t> lines_inside;      ///< indices of input lines with low <= f <= high
  std::vector<ChannelReception> channels;     ///< channels that hear a line, ascending
  std::optional<std::size_t> worst_channel;   ///< highest verdict, then highest level − noisy_above
  std::vector<std::string> caveats;           ///< near field, electrically long cable, noise-model range
};

/// The verdict of one channel for a disturbance `level_dbuvm` (rules above); `tone`: the disturbance is
/// one steady line, heard as a whistle on AM down to tone_audibility_db under the ambient. Exposed for tests.
[[nodiscard]] ChannelReception judge_channel(const Band& band, double centre_hz, double level_dbuvm,
                                             Environment environment, bool tone = false);
/// True when a channel's strongest line (through the channel's response) carries at least half its power.
[[nodiscard]] bool is_tone(double strongest_level_db, double level_db);

/// What the receivers hear: E lines for a whip, η0·H lines for a ferrite rod [dBµV/m], each line's
/// source_index pointing into `field` (for the radiator shares).
struct ReceiverLines {
  std::vector<FieldLine> field;
  std::vector<SpectralLine> e_lines;
  std::vector<SpectralLine> h_lines;
  /// A dithered source: the lines are its nominal (undithered) harmonics, spread per band by
  /// dithered_lines() with the band's channel bandwidth.
  std::optional<DitherSpec> dither;
};

/// The sweep-rate factor of a channel [power ratio, ≤ 1]: the peak power a Gaussian filter of 3 dB
/// bandwidth B3 reads from a line sweeping through it at `sweep_rate_hz_per_s`,
/// [1 + 0.195·(S/B3²)²]^(−1/2), 0.195 = (2·ln 2/π)² (a Gaussian filter's response to a linear sweep;
/// derived in reception.cpp, checked against core/receiver's swept_if_gain, which numpy checks).
/// Before 2026-12-04 the 0.195 stood inside the square, understating the loss of fast sweeps.
[[nodiscard]] double sweep_peak_factor(double sweep_rate_hz_per_s, double bandwidth_3db_hz);

/// A dithered source's lines as a channel of `bandwidth_hz` (6 dB) hears them: each line spread over its
/// deviation k·Δf (uniform density for a triangle, arcsine for a sine profile; sub-lines spaced at most
/// bandwidth/8 and 1 kHz), scaled so that a channel inside the deviation collects the larger of
///  - the time-averaged share, ENBW/(2·k·Δf) (ENBW = 0.753·bandwidth for the Gaussian), and
///  - sweep_peak_factor() at the mean sweep rate 4·k·Δf·f_m: a slow sweep (f_m·k·Δf small against the
///    bandwidth²) crosses the channel and is heard as the full line for part of each period
///    (docs/references.md §5.5), a fast one only as its time-averaged share. The level heard is the peak
///    of the passage (judgement: a periodic burst at the full line is as audible as the line).
/// Lines keep their source_index.
/// The most lines dithered_lines() makes for one band: 2^23 (134 MB); a 400 kHz converter with 8 %
/// dither makes about 100,000 in the FM band. Judgement.
inline constexpr std::size_t max_dithered_lines = std::size_t{1} << 23;
/// Throws Error (at the dither key) when the spread would exceed max_dithered_lines.
[[nodiscard]] std::vector<SpectralLine> dithered_lines(const std::vector<SpectralLine>& lines, const DitherSpec& dither,
                                                       double bandwidth_hz);
/// One E and one η0·H line per field line.
[[nodiscard]] ReceiverLines receiver_lines(std::vector<FieldLine> field);

/// Estimates every band, each from the lines of its antenna (spec.antenna, antenna_for_band()).
/// `computed_up_to_hz` is the highest frequency the lines could reach: a band above it is `not
/// computed` (a band across it keeps a watch/noisy verdict from its computed part, else is `not
/// computed`), with a caveat.
[[nodiscard]] std::vector<BandReception> estimate_reception(
    const std::vector<Band>& bands, const ReceiverLines& lines, const BroadcastSpec& spec,
    double computed_up_to_hz = std::numeric_limits<double>::infinity());
/// The same with one set of field lines (frequency, level in dBµV/m) heard by every band's antenna.
[[nodiscard]] std::vector<BandReception> estimate_reception(
    const std::vector<Band>& bands, const std::vector<SpectralLine>& field_lines_dbuvm, const BroadcastSpec& spec,
    double computed_up_to_hz = std::numeric_limits<double>::infinity());

/// The whole estimate from the radiators' currents: radiated_field(), then estimate_reception().
[[nodiscard]] std::vector<BandReception> estimate_reception_from_currents(const std::vector<Band>& bands,
                                                                          const BroadcastSpec& spec,
                                                                          const RadiationSetup& setup,
                                                                          const RadiatorCurrents& currents);

/// Channels CSV (docs/design.md §4): `band,channel_hz,level_dbuvm,antenna,clear_below_dbuvm,
/// noisy_above_dbuvm,verdict,lines,strongest_line_offset_hz,tone,main_radiator,share_cable_cm,
/// share_cable_dm,share_hot_loop`, one row per channel that hears a line (every band, ascending):
/// the strongest line's offset from the channel centre, `yes` when judged as a whistle, and each
/// radiator's power share at the strongest line (empty when the lines did not come from radiators).
[[nodiscard]] std::string channels_csv(const std::vector<BandReception>& results);

/// One line saying what the estimate assumes: distance, each band's antenna, the environment, the
/// radiators (cable or battery-lead length, hot loop or its absence) and the ground reflection.
[[nodiscard]] std::string reception_assumptions(const BroadcastSpec& spec, const RadiationSetup& setup,
                                                const std::vector<BandReception>& results, bool battery_leads);

/// Bands CSV (docs/design.md §4): `band,region,low_hz,high_hz,verdict,worst_channel_hz,worst_level,unit`,
/// one row per band; worst_channel_hz and worst_level empty when no channel hears anything; region 0
/// for a user band; unit "dBµV/m".
[[nodiscard]] std::string bands_csv(const std::vector<BandReception>& results);

}  // namespace spurcast
