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

bool is_tone(double strongest_level_db, double level_db) {
  return strongest_level_db >= level_db - 10.0 * std::log10(2.0) - 1e-9;
}

ChannelReception judge_channel(const Band& band, double centre_hz, double level_dbuvm, Environment environment,
                               bool tone) {
  ChannelReception channel;
  channel.centre_hz = centre_hz;
  channel.level_dbuvm = level_dbuvm;
  channel.tone = tone;
  channel.ambient_dbuvm = ambient_noise_field_dbuvm(environment, centre_hz, band.bandwidth_hz);
  channel.protection_threshold_dbuvm = band.wanted_field_dbuvm - band.protection_ratio_db;
  // AM: audio S/N follows C/N, and the protection ratio (BS.560) is the disturbance limit; a whistle is
  // heard under the noise (critical-band masking, judgement). FM: the BS.412 protection ratio, which
  // already includes the limiter's and the capture effect's rejection.
  const bool whistle = tone && band.modulation == Modulation::am;
  channel.clear_below_dbuvm = channel.ambient_dbuvm - (whistle ? tone_audibility_db : 0.0);
  channel.noisy_above_dbuvm = std::max(channel.ambient_dbuvm, channel.protection_threshold_dbuvm);
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

BandReception judge_band(const Band& band, const std::vector<SpectralLine>& lines, const BroadcastSpec& spec,
                         const std::vector<FieldLine>* field, bool magnetic, double computed_up_to_hz) {
  BandReception result;
  result.band = band;
  result.antenna = antenna_for_band(spec.antenna, band.high_hz);
  const BandOccupancy occupancy = map_lines_to_band(band, lines);
  result.lines_inside = occupancy.lines_inside;
  for (const ChannelHit& hit : occupancy.channels) {
    ChannelReception channel = judge_channel(band, hit.centre_hz, hit.level_db, spec.environment,
                                             is_tone(hit.strongest_level_db, hit.level_db));
    channel.strongest_line_hz = hit.strongest_line_hz;
    channel.line_count = hit.line_count;
    const std::size_t source = lines[hit.strongest_line_index].source_index;
    if (field && source < field->size()) {
      const FieldLine& at = (*field)[source];
      const auto& levels = magnetic ? at.h_dbuvm : at.e_dbuvm;
      double total = 0.0;
      for (std::size_t r = 0; r < radiator_count; ++r) {
        channel.radiator_share[r] = levels[r] > level_floor_db ? std::pow(10.0, levels[r] / 10.0) : 0.0;
        total += channel.radiator_share[r];
      }
      if (total > 0.0) {
        std::size_t largest = 0;
        for (std::size_t r = 0; r < radiator_count; ++r) {
          channel.radiator_share[r] /= total;
          if (channel.radiator_share[r] > channel.radiator_share[largest]) largest = r;
        }
        channel.dominant_radiator = static_cast<Radiator>(largest);
      }
    }
    result.channels.push_back(channel);
  }
  // The worst channel: the worst verdict, then the level furthest above its noisy threshold. A
  // dithered spectrum is flat across many channels, equal to the last few bits: levels within
  // 1e-9 dB count as equal and the lowest such channel is named, whatever the rounding.
  constexpr double equal_within_db = 1e-9;
  const auto excess = [](const ChannelReception& c) { return c.level_dbuvm - c.noisy_above_dbuvm; };
  std::optional<ReceptionVerdict> worst_verdict;
  double worst_excess = -INFINITY;
  for (const ChannelReception& c : result.channels) {
    if (!worst_verdict || c.verdict > *worst_verdict) {
      worst_verdict = c.verdict;
      worst_excess = excess(c);
    } else if (c.verdict == *worst_verdict) {
      worst_excess = std::max(worst_excess, excess(c));
    }
  }
  for (std::size_t i = 0; i < result.channels.size() && worst_verdict; ++i) {
    if (result.channels[i].verdict == *worst_verdict && excess(result.channels[i]) >= worst_excess - equal_within_db) {
      result.worst_channel = i;
      break;
    }
  }
  if (result.worst_channel) result.verdict = result.channels[*result.worst_channel].verdict;
  if (band.high_hz > computed_up_to_hz) {
    // Nothing was computed above computed_up_to_hz: silence there is not a clear band.
    if (result.verdict == ReceptionVerdict::clear) result.verdict = ReceptionVerdict::not_computed;
    result.caveats.push_back("not computed above " + format_mhz(computed_up_to_hz) +
                             ": the source's lines stop there (a capture's Nyquist frequency)");
  }

  const bool long_cable = field && std::any_of(result.lines_inside.begin(), result.lines_inside.end(), [&](std::size_t i) {
    const std::size_t source = lines[i].source_index;
    return source < field->size() && (*field)[source].cable_electrically_long;
  });
  if (long_cable) {
    result.caveats.push_back("cable longer than a tenth of a wavelength: a travelling-wave current is assumed; "
                             "standing waves on a mismatched cable can add up to 6 dB");
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

double sweep_peak_factor(double sweep_rate_hz_per_s, double bandwidth_3db_hz) {
  // A Gaussian filter exp(−a·f²), a = 2·ln 2/B3², driven by exp(jπSt²): the output's peak
  // amplitude is (1 + (a·S/π)²)^(−1/4) (the Gaussian integral of the convolution at the crossing;
  // tests/receiver/swept_lines_test checks the same response against numpy's filtered chirp).
  const double x = 2.0 * std::numbers::ln2 / std::numbers::pi * sweep_rate_hz_per_s /
                   (bandwidth_3db_hz * bandwidth_3db_hz);
  return 1.0 / std::sqrt(1.0 + x * x);
}

std::vector<SpectralLine> dithered_lines(const std::vector<SpectralLine>& lines, const DitherSpec& dither,
                                         double bandwidth_hz) {
  // Equivalent noise bandwidth of the Gaussian power response 4^(−(2Δ/B)²): (B/2)·√(π/ln 4).
  const double enbw_hz = 0.5 * bandwidth_hz * std::sqrt(std::numbers::pi / std::log(4.0));
  const double b3_hz = bandwidth_hz / std::sqrt(2.0);  // the Gaussian's 3 dB width
  const double resolution_hz = std::min(1e3, bandwidth_hz / 8.0);
  constexpr std::size_t max_sub_lines = 4000;
  const auto sub_line_count = [&](double frequency_hz) {
    return static_cast<std::size_t>(std::clamp(std::ceil(2.0 * frequency_hz * dither.deviation_fraction / resolution_hz),
                                               1.0, static_cast<double>(max_sub_lines)));
  };
  // Counted before allocation (issue 14): 8 % dither on a 110 Hz fundamental would spread the
  // FM band's 186,000 harmonics into 7e8 lines.
  std::size_t total = 0;
  for (const SpectralLine& line : lines) total += sub_line_count(line.frequency_hz);
  if (total > max_dithered_lines) {
    throw Error(dither.where, "dither of " + format_quantity(dither.deviation_fraction, Dimension::fraction) + " on " +
                                  std::to_string(lines.size()) + " harmonics spreads them into " + std::to_string(total) +
                                  " lines, more than the " + std::to_string(max_dithered_lines) +
                                  " of the broadcast estimate: expected a higher switching frequency or a smaller deviation");
  }
  std::vector<SpectralLine> out;
  out.reserve(total);
  for (const SpectralLine& line : lines) {
    const double deviation = line.frequency_hz * dither.deviation_fraction;
    const std::size_t count = sub_line_count(line.frequency_hz);
    if (count == 1 || deviation <= 0.0) {
      out.push_back(line);
      continue;
    }
    const double time_average = std::min(1.0, enbw_hz / (2.0 * deviation));
    const double peak = sweep_peak_factor(4.0 * deviation * dither.rate_hz, b3_hz);
    const double scale = std::max(time_average, peak) / time_average;
    const double power = std::exp(line.level_db * (std::numbers::ln10 / 10.0)) * scale;  // 10^(L/10)·scale
    for (std::size_t m = 0; m < count; ++m) {
      // Sub-band m covers x in [x0, x1] of the normalised deviation [-1, 1].
      const double x0 = -1.0 + 2.0 * static_cast<double>(m) / static_cast<double>(count);
      const double x1 = -1.0 + 2.0 * static_cast<double>(m + 1) / static_cast<double>(count);
      double weight = 1.0 / static_cast<double>(count);
      if (dither.profile == DitherProfile::sine) {
        weight = (std::asin(std::clamp(x1, -1.0, 1.0)) - std::asin(std::clamp(x0, -1.0, 1.0))) / std::numbers::pi;
      }
      if (weight <= 0.0 || power <= 0.0) continue;
      out.push_back({line.frequency_hz + deviation * 0.5 * (x0 + x1), 10.0 * std::log10(power * weight), line.source_index});
    }
  }
  return out;
}

ReceiverLines receiver_lines(std::vector<FieldLine> field) {
  ReceiverLines out;
  out.e_lines.reserve(field.size());
  out.h_lines.reserve(field.size());
  for (std::size_t i = 0; i < field.size(); ++i) {
    out.e_lines.push_back({field[i].frequency_hz, field[i].e_total_dbuvm, i});
    out.h_lines.push_back({field[i].frequency_hz, field[i].h_total_dbuvm, i});
  }
  out.field = std::move(field);
  return out;
}

std::vector<BandReception> estimate_reception(const std::vector<Band>& bands, const ReceiverLines& lines,
                                              const BroadcastSpec& spec, double computed_up_to_hz) {
  std::vector<BandReception> results;
  results.reserve(bands.size());
  for (const Band& band : bands) {
    const bool magnetic = antenna_for_band(spec.antenna, band.high_hz) == AntennaKind::ferrite;
    const std::vector<SpectralLine>& heard = magnetic ? lines.h_lines : lines.e_lines;
    if (lines.dither) {
      // Spread with this band's channel bandwidth; only the lines that can reach the band.
      const double reach = channel_reach_hz(band.bandwidth_hz);
      std::vector<SpectralLine> near_band;
      for (const SpectralLine& line : heard) {
        const double deviation = line.frequency_hz * lines.dither->deviation_fraction;
        if (line.frequency_hz + deviation >= band.low_hz - reach && line.frequency_hz - deviation <= band.high_hz + reach) {
          near_band.push_back(line);
        }
      }
      const std::vector<SpectralLine> spread = dithered_lines(near_band, *lines.dither, band.bandwidth_hz);
      results.push_back(judge_band(band, spread, spec, &lines.field, magnetic, computed_up_to_hz));
    } else {
      results.push_back(
          judge_band(band, heard, spec, &lines.field, magnetic, computed_up_to_hz));
    }
  }
  return results;
}

std::vector<BandReception> estimate_reception(const std::vector<Band>& bands,
                                              const std::vector<SpectralLine>& field_lines_dbuvm,
                                              const BroadcastSpec& spec, double computed_up_to_hz) {
  std::vector<BandReception> results;
  results.reserve(bands.size());
  for (const Band& band : bands) {
    results.push_back(judge_band(band, field_lines_dbuvm, spec, nullptr, false, computed_up_to_hz));
  }
  return results;
}

std::vector<BandReception> estimate_reception_from_currents(const std::vector<Band>& bands, const BroadcastSpec& spec,
                                                            const RadiationSetup& setup,
                                                            const RadiatorCurrents& currents) {
  return estimate_reception(bands, receiver_lines(radiated_field(setup, currents)), spec);
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

std::string channels_csv(const std::vector<BandReception>& results) {
  std::string csv =
      "band,channel_hz,level_dbuvm,antenna,clear_below_dbuvm,noisy_above_dbuvm,verdict,lines,"
      "strongest_line_offset_hz,tone,main_radiator,share_cable_cm,share_cable_dm,share_hot_loop\n";
  for (const BandReception& result : results) {
    for (const ChannelReception& c : result.channels) {
      csv += csv_field(result.band.name) + "," + number(c.centre_hz, "%.0f") + "," + number(c.level_dbuvm, "%.2f") + "," +
             antenna_name(result.antenna) + "," + number(c.clear_below_dbuvm, "%.2f") + "," +
             number(c.noisy_above_dbuvm, "%.2f") + "," + reception_verdict_name(c.verdict) + "," +
             std::to_string(c.line_count) + "," + number(c.strongest_line_hz - c.centre_hz, "%.0f") + "," +
             (c.tone ? "yes" : "no") + "," + (c.dominant_radiator ? radiator_name(*c.dominant_radiator) : "");
      for (const double share : c.radiator_share) csv += "," + (c.dominant_radiator ? number(share, "%.4f") : "");
      csv += "\n";
    }
  }
  return csv;
}

std::string reception_assumptions(const BroadcastSpec& spec, const RadiationSetup& setup,
                                  const std::vector<BandReception>& results, bool battery_leads) {
  std::string ferrite_bands, whip_bands;
  for (const BandReception& result : results) {
    std::string& list = result.antenna == AntennaKind::ferrite ? ferrite_bands : whip_bands;
    list += (list.empty() ? "" : ", ") + result.band.name;
  }
  std::string text = "a portable radio " + format_quantity(spec.distance_m, Dimension::length) + " from the product";
  if (whip_bands.empty()) {
    text += "; every band heard on a ferrite rod (η0·H)";
  } else if (ferrite_bands.empty()) {
    text += "; every band heard on a whip (E)";
  } else {
    text += "; " + ferrite_bands + " heard on a ferrite rod (η0·H), the others on a whip (E)";
  }
  text += "; " + environment_name(spec.environment) + " man-made noise (ITU-R P.372)";
  text += "; radiators: the " + format_quantity(setup.cable_length_m, Dimension::length) +
          (battery_leads ? " battery leads" : " supply cable") + " (common and differential mode)";
  if (setup.hot_loop_area_m2) {
    char area[32];
    std::snprintf(area, sizeof area, "%.3g cm\xC2\xB2", *setup.hot_loop_area_m2 * 1e4);
    text += ", hot loop " + std::string(area);
  } else {
    text += ", no hot loop (no [board] hot_loop_area)";
  }
  text += setup.ground_reflection ? "; +6 dB ground reflection" : "; no ground reflection";
  return text;
}

}  // namespace spurcast
