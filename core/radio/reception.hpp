#pragma once
/// The reception estimate: for each broadcast band, how a nearby receiver tuned to its channels fares
/// against the disturbance field in its bandwidth. Our verdicts:
///   clear  — the disturbance is under what the receiver already hears (the ambient man-made noise of
///            ITU-R P.372; for FM also under the level its limiter and capture effect reject);
///   watch  — above that, but below the threshold where a weak station is disturbed;
///   noisy  — reception of a weak station is likely disturbed.
///
/// The criterion respects the modulation:
///   AM (LW, MW, HF): an envelope detector hears noise in its audio band almost in proportion to the
///     carrier-to-noise ratio, so the threshold is the co-channel protection ratio (ITU-R BS.560:
///     40 dB, giving 20 dBµV/m for a 60 dBµV/m station): noisy above
///     max(ambient, wanted_field − protection_ratio), clear at or below the ambient.
///   FM: the limiter suppresses amplitude noise and the capture effect suppresses a weaker co-channel
///     carrier by the BS.412 protection ratio (36 dB mono steady, from memory), so the disturbance is
///     clear at or below max(ambient, wanted − protection_ratio); it is noisy once it comes within the
///     FM threshold carrier-to-noise ratio (12 dB, common practice: 10–12 dB) of the weak wanted
///     signal, where the FM improvement collapses: noisy above wanted − fm_threshold.
/// Assumptions: the weak station is at the band's minimum usable field strength (the band file's
/// wanted_field); the disturbance field is the power sum of the lines in the receiver's rectangular
/// passband; the ambient is man-made noise only (galactic and atmospheric noise, large on LW/MW at
/// night, are left out, which makes `clear` harder to reach). Below about 16 MHz at 3 m the receiver
/// is in the near field of the cable; the field there is an estimate, flagged in `caveats`.
///
/// Example:
///   const auto results = estimate_reception(bands_for(spec, locate_shipped_data()), field_lines, spec);
///   const std::string csv = bands_csv(results);
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "core/radio/bands.hpp"
#include "core/radio/radiated.hpp"

namespace spurcast {

///   not computed — the band lies (wholly, or partly with nothing heard below) above the highest
///            frequency the source's lines reach (a capture's Nyquist frequency): never `clear`.
enum class ReceptionVerdict { clear, watch, noisy, not_computed };

/// "clear", "watch", "noisy", "not computed".
[[nodiscard]] std::string reception_verdict_name(ReceptionVerdict verdict);

/// FM threshold carrier-to-noise ratio [dB] (common practice: 10–12 dB).
inline constexpr double fm_threshold_cn_db = 12.0;

/// One channel that hears at least one line, with the numbers behind its verdict.
struct ChannelReception {
  double centre_hz = 0.0;
  double level_dbuvm = 0.0;        ///< disturbance field in the channel bandwidth [dBµV/m]
  double strongest_line_hz = 0.0;
  std::size_t line_count = 0;
  double ambient_dbuvm = 0.0;      ///< P.372 man-made noise in the channel bandwidth [dBµV/m]
  double protection_threshold_dbuvm = 0.0;  ///< wanted_field − protection_ratio [dBµV/m]
  double clear_below_dbuvm = 0.0;  ///< at or below this: clear
  double noisy_above_dbuvm = 0.0;  ///< above this: noisy
  ReceptionVerdict verdict = ReceptionVerdict::clear;
};

/// The estimate for one band.
struct BandReception {
  Band band;
  ReceptionVerdict verdict = ReceptionVerdict::clear;           ///< the worst channel's (clear when nothing is heard)
  std::vector<std::size_t> lines_inside;      ///< indices of input lines with low <= f <= high
  std::vector<ChannelReception> channels;     ///< channels that hear a line, ascending
  std::optional<std::size_t> worst_channel;   ///< highest verdict, then highest level − noisy_above
  std::vector<std::string> caveats;           ///< near field, electrically long cable, noise-model range
};

/// The verdict of one channel for a disturbance `level_dbuvm` (rules above). Exposed for tests.
[[nodiscard]] ChannelReception judge_channel(const Band& band, double centre_hz, double level_dbuvm,
                                             Environment environment);

/// Estimates every band from field lines (frequency, level in dBµV/m at the receiver).
/// `spec` gives the environment and the distance (for the near-field caveat). `computed_up_to_hz` is
/// the highest frequency the lines could reach: a band above it is `not computed` (a band across it
/// keeps a watch/noisy verdict from its computed part, else is `not computed`), with a caveat.
[[nodiscard]] std::vector<BandReception> estimate_reception(
    const std::vector<Band>& bands, const std::vector<SpectralLine>& field_lines_dbuvm, const BroadcastSpec& spec,
    double computed_up_to_hz = std::numeric_limits<double>::infinity());

/// The whole estimate from conducted currents: the radiated fields (core/radio/radiated.hpp, geometry
/// from `spec`) of each frequency, then estimate_reception(). Currents RMS [A]: CM per conductor,
/// DM loop current (may be empty).
[[nodiscard]] std::vector<BandReception> estimate_reception_from_currents(
    const std::vector<Band>& bands, const BroadcastSpec& spec, const std::vector<double>& frequency_hz,
    const std::vector<double>& cm_current_per_conductor_a, const std::vector<double>& dm_current_a);

/// The radiation setup of a [broadcast] section.
[[nodiscard]] RadiationSetup radiation_setup(const BroadcastSpec& spec);

/// Bands CSV (docs/design.md §4): `band,region,low_hz,high_hz,verdict,worst_channel_hz,worst_level,unit`,
/// one row per band; worst_channel_hz and worst_level empty when no channel hears anything; region 0
/// for a user band; unit "dBµV/m".
[[nodiscard]] std::string bands_csv(const std::vector<BandReception>& results);

}  // namespace spurcast
