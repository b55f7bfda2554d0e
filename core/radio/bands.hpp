#pragma once
/// Broadcast band plans (ITU Radio Regulations Article 5) and the mapping of spectral lines onto the
/// channels of a band: which lines fall inside it, which channels' receiver passbands hear them, and
/// how much power each channel collects.
///
/// Example:
///   const BandPlan plan = load_region_band_plan(2, locate_shipped_data());
///   const BandOccupancy mw = map_lines_to_band(plan.bands[0], lines);  // lines: {frequency_hz, level_db}
///   // mw.channels[i].level_db = power sum of the lines within ±bandwidth/2 of the channel centre
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "core/radio/ambient.hpp"
#include "core/radio/antenna.hpp"
#include "core/input/error.hpp"
#include "core/input/shipped_data.hpp"

namespace spurcast {

class TableReader;

/// The most channels a band may have (the FM band on 100 kHz has 205, 11 m on 5 kHz 86): a finer
/// raster is rejected by the loader as a typo.
inline constexpr std::size_t max_channels_per_band = 100000;

/// How the service is modulated; decides the reception criterion (core/radio/reception.hpp).
enum class Modulation { am, fm };

/// "am" or "fm".
[[nodiscard]] std::string modulation_name(Modulation modulation);

/// One broadcast band with its channel raster and a typical receiver.
///
/// Channel centres lie on the grid channel_offset_hz + k·raster_hz (k integer) and are kept when the
/// whole raster slot [c − raster/2, c + raster/2] lies inside [low_hz, high_hz]: this gives
/// 531…1602 kHz for MW 526.5–1606.5 kHz on 9 kHz, 530…1700 kHz for 525–1705 kHz on 10 kHz and
/// 153…279 kHz for LW 148.5–283.5 kHz. raster_hz == 0 means a single channel at the band centre (a
/// time-signal or aviation channel).
struct Band {
  std::string name;                 ///< "MW", "49 m", "FM"
  int region = 0;                   ///< ITU region 1..3, 0 = user band (any region)
  double low_hz = 0.0;              ///< lower band edge [Hz], > 0
  double high_hz = 0.0;             ///< upper band edge [Hz], > low_hz
  double raster_hz = 0.0;           ///< channel spacing [Hz], >= 0
  double channel_offset_hz = 0.0;   ///< grid origin [Hz] (100 kHz for the Americas' odd FM raster)
  double bandwidth_hz = 0.0;        ///< receiver passband, full width [Hz], > 0
  Modulation modulation = Modulation::am;
  double wanted_field_dbuvm = 0.0;  ///< minimum usable field strength of a weak station [dBµV/m]
  double protection_ratio_db = 0.0; ///< co-channel RF protection ratio of the service [dB]
  std::string source;               ///< where the edges and raster come from
  std::string note;                 ///< caveats (disagreements, regional footnotes)
  SourcePosition position;          ///< where the band was defined (file:line:column)

  /// The channel centres [Hz], ascending.
  [[nodiscard]] std::vector<double> channel_centres_hz() const;
  /// True when low_hz <= frequency_hz <= high_hz.
  [[nodiscard]] bool contains(double frequency_hz) const;
};

/// The bands of one region (one data file under limits/bands/).
struct BandPlan {
  std::string name;     ///< e.g. "ITU Region 1"
  int region = 0;       ///< 1..3
  std::string source;   ///< the published source of the plan
  std::string file;     ///< the file it was read from ("" for built-in)
  std::vector<Band> bands;
};

/// Reads a band-plan file. Layout:
///   name = "ITU Region 1"      region = 1      source = "ITU Radio Regulations Article 5 ..."
///   [[band]]  name, low, high, raster, bandwidth, modulation ("am"|"fm"), wanted_field (dBµV/m),
///             protection_ratio (dB), optional channel_offset, source, note
/// Errors carry file:line:column: unknown keys, low >= high, a raster or bandwidth that is negative
/// or wider than the band, duplicate band names.
[[nodiscard]] BandPlan load_band_plan(const std::string& path);
/// Same from TOML text; `name` stands for the file in messages (tests, in-memory plans).
[[nodiscard]] BandPlan parse_band_plan(const std::string& text, const std::string& name);
/// The shipped plan of ITU region 1, 2 or 3: `data`'s limits/bands/region<N>.toml.
[[nodiscard]] BandPlan load_region_band_plan(int region, const ShippedData& data);
/// Path of the shipped plan of `region` in `data`.
[[nodiscard]] std::string region_band_plan_path(int region, const ShippedData& data);

/// Reads one band table ([[band]] in a plan, [[broadcast.band]] in a scenario). `region` is stored
/// in the band. Calls reader.finish().
[[nodiscard]] Band read_band(TableReader& reader, int region);

/// The scenario's [broadcast] table:
///   region = 1                   ITU region 1|2|3 (default 1)
///   distance = "3 m"             receiver to product or mains cable (default 3 m)
///   cable_length = "1.5 m"       radiating mains/supply cable (default 1.5 m)
///   environment = "residential"  city | residential | rural | quiet-rural ("business" = city)
///   plan = "region1"             optional: a shipped plan name (limits/bands/<name>.toml) or a path
///   antenna = "auto"             auto | ferrite | whip: what the receivers listen with (auto: a ferrite
///                                rod on LW and MW, a whip above; core/radio/antenna.hpp)
///   ground_reflection = false    optional: +6 dB for a reflecting ground (see core/radio/radiated.hpp)
///   [[broadcast.band]]           user bands, keys as in a plan file; `wanted_field` and
///                                `protection_ratio` default to the service's usual values (am: 60
///                                dBµV/m, 40 dB; fm: 48 dBµV/m, 36 dB; docs/references.md §5.1–5.2)
struct BroadcastSpec {
  int region = 1;
  double distance_m = 3.0;
  double cable_length_m = 1.5;
  Environment environment = Environment::residential;
  std::optional<std::string> plan;
  AntennaChoice antenna = AntennaChoice::automatic;
  bool ground_reflection = false;
  std::vector<Band> extra_bands;
  SourcePosition position;  ///< of the [broadcast] table
};

/// Reads [broadcast]; a bare plan name resolves in `data`'s band plans, and `plan` holds the path
/// found. Calls reader.finish() with its valid keys.
[[nodiscard]] BroadcastSpec read_broadcast_section(TableReader& reader, const ShippedData& data);

/// The plan of a scenario: `spec.plan` (a path, as read_broadcast_section resolved it) or the
/// region's shipped plan in `data`, followed by the user's bands.
[[nodiscard]] std::vector<Band> bands_for(const BroadcastSpec& spec, const ShippedData& data);

/// Parses an area: "4 cm2", "4 cm²", "400 mm2", "4e-4 m2" [m²]. Throws Error
/// `expected an area (e.g. "4 cm2"), found "x"`.
[[nodiscard]] double parse_area_m2(const std::string& text);

/// A spectral line: a frequency and a level in dB of any unit (dBµA, dBµV, dBµV/m). The caller may
/// pass exact harmonics or receiver readings; a dithered source is passed as its spread lines.
struct SpectralLine {
  double frequency_hz = 0.0;
  double level_db = 0.0;
  /// The caller's index of the line's origin (a field line, for the radiator shares); no_source if none.
  std::size_t source_index = no_source;
  static constexpr std::size_t no_source = static_cast<std::size_t>(-1);
};

/// One channel that hears at least one line.
struct ChannelHit {
  double centre_hz = 0.0;          ///< channel centre [Hz]
  double level_db = 0.0;           ///< power sum of the lines in its passband [dB, unit of the input]
  double strongest_line_hz = 0.0;  ///< the strongest line it hears [Hz]
  std::size_t strongest_line_index = 0;  ///< its index in the input lines
  double strongest_level_db = 0.0;       ///< its level through the channel's response [dB]
  std::size_t line_count = 0;      ///< lines within the channel's reach (channel_reach_hz)
};

/// What a band hears of a line spectrum.
struct BandOccupancy {
  std::vector<std::size_t> lines_inside;  ///< indices (into the input, ascending) of lines with low <= f <= high
  std::vector<ChannelHit> channels;       ///< channels that hear a line, ascending centre
  /// Index into `channels` of the loudest one; empty when no channel hears anything.
  std::optional<std::size_t> worst_channel;
};

/// Receiver selectivity of a broadcast channel: a Gaussian power response, −6.02 dB at ±bandwidth/2
/// (the band's bandwidth taken as the 6 dB width, like the CISPR 16-1-1 IF filters), so a line 5 kHz
/// from a 9 kHz channel's centre is heard at −7.43 dB (docs/references.md §5.5 [D]). No published
/// broadcast-receiver selectivity curve was read (BS.703 and BS.704 values not seen): the shape is a
/// judgement; consumer 455 kHz ceramic filters pass the same line at roughly −6 to −12 dB
/// [judgement]. The response is cut at channel_stop_db, of the order of a consumer IF filter's
/// ultimate rejection [judgement].
inline constexpr double channel_edge_db = 6.020599913279624;  ///< 20·log10(2): response at ±bandwidth/2
inline constexpr double channel_stop_db = -60.0;
/// The response [dB] (≤ 0) of a channel of `bandwidth_hz` to a line `offset_hz` from its centre:
/// −6.02·(2·offset/bandwidth)².
[[nodiscard]] double channel_response_db(double offset_hz, double bandwidth_hz);
/// The offset where the response reaches channel_stop_db: 1.578 × bandwidth.
[[nodiscard]] double channel_reach_hz(double bandwidth_hz);

/// Maps `lines` onto the channels of `band`: channel c hears every line within channel_reach_hz of its
/// centre, weighted by channel_response_db, and power-sums them (10·log10 Σ 10^((L + response)/10)),
/// which for a dithered source gives the energy through the channel's filter. No offset falls between
/// channels. Lines need not be sorted.
[[nodiscard]] BandOccupancy map_lines_to_band(const Band& band, const std::vector<SpectralLine>& lines);

}  // namespace spurcast
