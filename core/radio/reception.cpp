#include "core/radio/reception.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numbers>

#include "core/input/units.hpp"

namespace spurcast {

std::string reception_verdict_name(ReceptionVerdict verdict) {
  switch (verdict) {
    case ReceptionVerdict::clear: return "clear";
    case ReceptionVerdict::watch: return "watch";
    case ReceptionVerdict::noisy: return "noisy";
    case ReceptionVerdict::not_computed: return "not computed";
  }
  return "clear";
}

ChannelReception judge_channel(const Band& band, double centre_hz, double level_dbuvm, Environment environment) {
  ChannelReception channel;
  channel.centre_hz = centre_hz;
  channel.level_dbuvm = level_dbuvm;
  channel.ambient_dbuvm = ambient_noise_field_dbuvm(environment, centre_hz, band.bandwidth_hz);
  channel.protection_threshold_dbuvm = band.wanted_field_dbuvm - band.protection_ratio_db;
  if (band.modulation == Modulation::am) {
    // AM: audio S/N follows C/N; the protection ratio (BS.560) is the disturbance limit.
    channel.clear_below_dbuvm = channel.ambient_dbuvm;
    channel.noisy_above_dbuvm = std::max(channel.ambient_dbuvm, channel.protection_threshold_dbuvm);
  } else {
    // FM: limiter and capture effect reject what lies a protection ratio (BS.412) under the wanted
    // carrier; the FM improvement holds until C/N falls to the threshold (common practice 10-12 dB).
    channel.clear_below_dbuvm = std::max(channel.ambient_dbuvm, channel.protection_threshold_dbuvm);
    channel.noisy_above_dbuvm = std::max(channel.clear_below_dbuvm, band.wanted_field_dbuvm - fm_threshold_cn_db);
  }
  if (level_dbuvm <= channel.clear_below_dbuvm) {
    channel.verdict = ReceptionVerdict::clear;
  } else if (level_dbuvm > channel.noisy_above_dbuvm) {
    channel.verdict = ReceptionVerdict::noisy;
  } else {
    channel.verdict = ReceptionVerdict::watch;
  }
  return channel;
}

namespace {

std::string format_mhz(double hz) { return format_quantity(hz, Dimension::frequency); }

BandReception judge_band(const Band& band, const std::vector<SpectralLine>& lines,
                         const std::vector<std::size_t>& order, const BroadcastSpec& spec, double computed_up_to_hz) {
  BandReception result;
  result.band = band;
  const BandOccupancy occupancy = map_sorted_lines_to_band(band, lines, order);
  result.lines_inside = occupancy.lines_inside;
  for (const ChannelHit& hit : occupancy.channels) {
    ChannelReception channel = judge_channel(band, hit.centre_hz, hit.level_db, spec.environment);
    channel.strongest_line_hz = hit.strongest_line_hz;
    channel.line_count = hit.line_count;
    result.channels.push_back(channel);
  }
  auto worse = [](const ChannelReception& a, const ChannelReception& b) {
    if (a.verdict != b.verdict) return a.verdict > b.verdict;
    return a.level_dbuvm - a.noisy_above_dbuvm > b.level_dbuvm - b.noisy_above_dbuvm;
  };
  for (std::size_t i = 0; i < result.channels.size(); ++i) {
    if (!result.worst_channel || worse(result.channels[i], result.channels[*result.worst_channel])) {
      result.worst_channel = i;
    }
  }
  if (result.worst_channel) result.verdict = result.channels[*result.worst_channel].verdict;
  if (band.high_hz > computed_up_to_hz) {
    // Nothing was computed above computed_up_to_hz: silence there is not a clear band.
    if (result.verdict == ReceptionVerdict::clear) result.verdict = ReceptionVerdict::not_computed;
    result.caveats.push_back("not computed above " + format_mhz(computed_up_to_hz) +
                             ": the source's lines stop there (a capture's Nyquist frequency)");
  }

  const double c_m_per_s = 299792458.0;
  const double near_limit_hz = c_m_per_s / (2.0 * std::numbers::pi * spec.distance_m);
  if (band.low_hz < near_limit_hz) {
    result.caveats.push_back("near field at " + format_quantity(spec.distance_m, Dimension::length) +
                             " below " + format_mhz(near_limit_hz) +
                             ": the noise reaches the receiver through the mains wiring and the near field; "
                             "the far-field cable formula used here is only an order-of-magnitude estimate");
  }
  if (spec.cable_length_m > c_m_per_s / band.high_hz / 10.0) {
    result.caveats.push_back("cable longer than a tenth of a wavelength: length capped at the half-wave-dipole value");
  }
  if (!man_made_noise_in_range(band.low_hz) || !man_made_noise_in_range(band.high_hz)) {
    result.caveats.push_back("ambient noise held at the edge of the P.372 fit (0.3-250 MHz), not extrapolated");
  }
  return result;
}

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\n") == std::string::npos) return text;
  std::string quoted = "\"";
  for (char c : text) {
    if (c == '"') quoted += '"';
    quoted += c;
  }
  return quoted + "\"";
}

std::string number(double value, const char* format) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, value);
  return buffer;
}

}  // namespace

std::vector<BandReception> estimate_reception(const std::vector<Band>& bands,
                                              const std::vector<SpectralLine>& field_lines_dbuvm,
                                              const BroadcastSpec& spec, double computed_up_to_hz) {
  std::vector<BandReception> results;
  results.reserve(bands.size());
  const std::vector<std::size_t> order = sorted_line_order(field_lines_dbuvm);
  for (const Band& band : bands) results.push_back(judge_band(band, field_lines_dbuvm, order, spec, computed_up_to_hz));
  return results;
}

RadiationSetup radiation_setup(const BroadcastSpec& spec) {
  RadiationSetup setup;
  setup.distance_m = spec.distance_m;
  setup.cable_length_m = spec.cable_length_m;
  setup.loop_area_m2 = spec.loop_area_m2;
  setup.ground_reflection = spec.ground_reflection;
  return setup;
}

std::vector<BandReception> estimate_reception_from_currents(const std::vector<Band>& bands,
                                                            const BroadcastSpec& spec,
                                                            const std::vector<double>& frequency_hz,
                                                            const std::vector<double>& cm_current_per_conductor_a,
                                                            const std::vector<double>& dm_current_a) {
  const std::vector<FieldLine> fields =
      radiated_field(radiation_setup(spec), frequency_hz, cm_current_per_conductor_a, dm_current_a);
  std::vector<SpectralLine> lines;
  lines.reserve(fields.size());
  for (const FieldLine& field : fields) lines.push_back({field.frequency_hz, field.total_dbuvm});
  return estimate_reception(bands, lines, spec);
}

std::string bands_csv(const std::vector<BandReception>& results) {
  std::string csv = "band,region,low_hz,high_hz,verdict,worst_channel_hz,worst_level,unit\n";
  for (const BandReception& result : results) {
    csv += csv_field(result.band.name) + "," + std::to_string(result.band.region) + "," +
           number(result.band.low_hz, "%.0f") + "," + number(result.band.high_hz, "%.0f") + "," +
           reception_verdict_name(result.verdict) + ",";
    if (result.worst_channel) {
      const ChannelReception& worst = result.channels[*result.worst_channel];
      csv += number(worst.centre_hz, "%.0f") + "," + number(worst.level_dbuvm, "%.2f");
    } else {
      csv += ",";
    }
    csv += ",dB\xC2\xB5V/m\n";
  }
  return csv;
}

}  // namespace spurcast
