#include "core/radio/bands.hpp"

#include <algorithm>
#include <filesystem>
#include <cctype>
#include <cmath>
#include <numbers>
#include <set>

#include "core/input/input_file.hpp"
#include "core/input/toml_reader.hpp"
#include "core/input/units.hpp"

namespace spurcast {

std::string modulation_name(Modulation modulation) { return modulation == Modulation::am ? "am" : "fm"; }

namespace {

// Typical service values used when a user band does not give its own (docs/references.md §5.1-5.2):
// AM: minimum usable field "of the order of 1 mV/m" = 60 dBµV/m with the 40 dB co-channel
// protection ratio (ITU-R BS.560); FM: 48 dBµV/m mono, rural, in the presence of interference
// (ITU-R BS.412, from memory) with the 36 dB mono steady co-channel ratio (BS.412, from memory).
constexpr double am_wanted_field_dbuvm = 60.0;
constexpr double am_protection_ratio_db = 40.0;
constexpr double fm_wanted_field_dbuvm = 48.0;          // from memory
constexpr double fm_protection_ratio_db = 36.0;         // from memory

// Slack for floating-point edge comparisons (1 mHz).
constexpr double edge_slack_hz = 1e-3;

std::string format_hz(double hz) { return format_quantity(hz, Dimension::frequency); }

}  // namespace

bool Band::contains(double frequency_hz) const {
  return frequency_hz >= low_hz - edge_slack_hz && frequency_hz <= high_hz + edge_slack_hz;
}

std::vector<double> Band::channel_centres_hz() const {
  std::vector<double> centres;
  if (raster_hz <= 0.0) {
    centres.push_back(0.5 * (low_hz + high_hz));
    return centres;
  }
  // First grid point whose whole raster slot lies inside the band.
  const double half = 0.5 * raster_hz;
  const double k_first = std::ceil((low_hz + half - channel_offset_hz - edge_slack_hz) / raster_hz);
  const double k_last = std::floor((high_hz - half - channel_offset_hz + edge_slack_hz) / raster_hz);
  // Count-based, so the loop ends even where k is too large for k + 1 to differ from k.
  const double count = k_last - k_first + 1.0;
  if (!(count > 0.0)) return centres;
  const auto n = static_cast<std::size_t>(std::min(count, static_cast<double>(max_channels_per_band)));
  centres.reserve(n);
  for (std::size_t i = 0; i < n; ++i) {
    centres.push_back(channel_offset_hz + (k_first + static_cast<double>(i)) * raster_hz);
  }
  return centres;
}

Band read_band(TableReader& reader, int region) {
  Band band;
  band.region = region;
  band.position = reader.table_position();
  band.name = reader.required_string("name");
  if (band.name.empty()) reader.fail("name", "band name must not be empty");
  band.low_hz = reader.required_quantity("low", Dimension::frequency);
  band.high_hz = reader.required_quantity("high", Dimension::frequency);
  if (!(band.low_hz > 0.0)) reader.fail("low", "band edge must be positive, found " + format_hz(band.low_hz));
  if (!(band.high_hz > band.low_hz)) {
    reader.fail("high", "expected high > low (" + format_hz(band.low_hz) + "), found " + format_hz(band.high_hz));
  }
  const double width_hz = band.high_hz - band.low_hz;
  band.raster_hz = reader.quantity_or("raster", Dimension::frequency, 0.0);
  if (band.raster_hz < 0.0) reader.fail("raster", "raster must not be negative, found " + format_hz(band.raster_hz));
  if (band.raster_hz > width_hz + edge_slack_hz) {
    reader.fail("raster", "raster " + format_hz(band.raster_hz) + " is wider than the band (" + format_hz(width_hz) + ")");
  }
  // A raster that gives more channels than any broadcast band has is a typo ("5 fHz"), and one
  // finer than the frequencies' double resolution cannot be laid out at all.
  if (band.raster_hz > 0.0) {
    const double channels = width_hz / band.raster_hz;
    if (band.raster_hz < band.high_hz * 1e-12) {
      reader.fail("raster", "raster " + format_hz(band.raster_hz) + " is finer than the resolution of frequencies near " +
                                format_hz(band.high_hz));
    }
    if (!(channels <= static_cast<double>(max_channels_per_band))) {
      reader.fail("raster", "raster " + format_hz(band.raster_hz) + " gives more than " +
                                std::to_string(max_channels_per_band) + " channels in " + format_hz(band.low_hz) +
                                " to " + format_hz(band.high_hz));
    }
  }
  band.channel_offset_hz = reader.quantity_or("channel_offset", Dimension::frequency, 0.0);
  if (band.channel_offset_hz < 0.0) reader.fail("channel_offset", "channel offset must not be negative");
  band.bandwidth_hz = reader.required_quantity("bandwidth", Dimension::frequency);
  if (!(band.bandwidth_hz > 0.0)) {
    reader.fail("bandwidth", "receiver bandwidth must be positive, found " + format_hz(band.bandwidth_hz));
  }
  // A channel raster with a receiver wider than the whole band is a slip of a unit; a single
  // channel (no raster: a time signal, an aviation channel) may have any bandwidth.
  if (band.raster_hz > 0.0 && band.bandwidth_hz > width_hz + edge_slack_hz) {
    reader.fail("bandwidth", "receiver bandwidth " + format_hz(band.bandwidth_hz) + " is wider than the band (" +
                                 format_hz(width_hz) + ")");
  }
  band.modulation = reader.required_choice("modulation", {"am", "fm"}) == "am" ? Modulation::am : Modulation::fm;
  const bool am = band.modulation == Modulation::am;
  band.wanted_field_dbuvm =
      reader.quantity_or("wanted_field", Dimension::level_dbuvm, am ? am_wanted_field_dbuvm : fm_wanted_field_dbuvm);
  band.protection_ratio_db =
      reader.quantity_or("protection_ratio", Dimension::decibel, am ? am_protection_ratio_db : fm_protection_ratio_db);
  band.source = reader.optional_string("source").value_or("");
  band.note = reader.optional_string("note").value_or("");
  if (band.channel_centres_hz().empty()) {
    reader.fail("raster", "no channel of raster " + format_hz(band.raster_hz) + " fits in " + format_hz(band.low_hz) +
                              " to " + format_hz(band.high_hz));
  }
  reader.finish({"name", "low", "high", "raster", "channel_offset", "bandwidth", "modulation", "wanted_field",
                 "protection_ratio", "source", "note"});
  return band;
}

namespace {

int read_region(TableReader& reader, std::string_view key, int fallback) {
  const auto value = reader.optional_integer(key);
  if (!value) return fallback;
  if (*value < 1 || *value > 3) reader.fail(key, "expected ITU region 1, 2 or 3, found " + std::to_string(*value));
  return static_cast<int>(*value);
}

BandPlan read_plan(const toml::table& table, const std::string& file) {
  TableReader reader(table, file, "band plan");
  BandPlan plan;
  plan.file = file;
  plan.name = reader.required_string("name");
  if (!reader.has("region")) throw Error(reader.table_position(), "missing key 'region' in [band plan] (expected 1, 2 or 3)");
  plan.region = read_region(reader, "region", 1);
  plan.source = reader.required_string("source");
  const auto tables = reader.table_array("band");
  if (tables.empty()) throw Error(reader.table_position(), "band plan has no [[band]]");
  std::set<std::string> names;
  for (std::size_t i = 0; i < tables.size(); ++i) {
    TableReader band_reader(*tables[i], file, "band " + std::to_string(i + 1));
    Band band = read_band(band_reader, plan.region);
    if (!names.insert(band.name).second) throw Error(band.position, "duplicate band name '" + band.name + "'");
    plan.bands.push_back(std::move(band));
  }
  reader.finish({"name", "region", "source", "band"});
  return plan;
}

}  // namespace

BandPlan load_band_plan(const std::string& path) { return read_plan(parse_toml_file(path, "band plan"), path); }

BandPlan parse_band_plan(const std::string& text, const std::string& name) {
  return read_plan(parse_toml_text(text, name), name);
}

std::string region_band_plan_path(int region, const ShippedData& data) {
  if (region < 1 || region > 3) throw Error("expected ITU region 1, 2 or 3, found " + std::to_string(region));
  return (std::filesystem::path(data.bands_directory()) / ("region" + std::to_string(region) + ".toml")).string();
}

BandPlan load_region_band_plan(int region, const ShippedData& data) {
  return load_band_plan(region_band_plan_path(region, data));
}

double parse_area_m2(const std::string& text) {
  const std::string bad = "expected an area (e.g. \"4 cm2\"), found \"" + text + "\"";
  std::size_t end = 0;
  double value = 0.0;
  try {
    value = std::stod(text, &end);
  } catch (const std::exception&) {
    throw Error(bad);
  }
  std::string unit = text.substr(end);
  unit.erase(std::remove_if(unit.begin(), unit.end(), [](unsigned char c) { return std::isspace(c) != 0; }), unit.end());
  // "²" (U+00B2) is accepted for "2".
  const std::string squared = "\xC2\xB2";
  if (unit.size() >= squared.size() && unit.compare(unit.size() - squared.size(), squared.size(), squared) == 0) {
    unit = unit.substr(0, unit.size() - squared.size()) + "2";
  }
  double scale = 0.0;
  if (unit == "m2" || unit.empty()) scale = 1.0;
  else if (unit == "cm2") scale = 1e-4;
  else if (unit == "mm2") scale = 1e-6;
  if (scale == 0.0 || !std::isfinite(value) || value <= 0.0) throw Error(bad);
  return value * scale;
}

BroadcastSpec read_broadcast_section(TableReader& reader, const ShippedData& data) {
  BroadcastSpec spec;
  spec.position = reader.table_position();
  spec.region = read_region(reader, "region", 1);
  spec.distance_m = reader.quantity_or("distance", Dimension::length, 3.0);
  if (!(spec.distance_m > 0.0)) reader.fail("distance", "distance must be positive");
  spec.cable_length_m = reader.quantity_or("cable_length", Dimension::length, 1.5);
  if (!(spec.cable_length_m > 0.0)) reader.fail("cable_length", "cable length must be positive");
  if (const auto environment = reader.optional_string("environment")) {
    try {
      spec.environment = environment_from_name(*environment);
    } catch (const Error& e) {
      reader.fail("environment", e.message());
    }
  }
  spec.plan = reader.optional_string("plan");
  if (spec.plan && spec.plan->empty()) reader.fail("plan", "plan name must not be empty");
  if (spec.plan) {
    // A path is taken relative to the scenario's folder, like every other file a scenario names;
    // a bare name is a shipped plan (limits/bands/<name>.toml).
    const bool is_path = spec.plan->find('/') != std::string::npos || spec.plan->find(".toml") != std::string::npos;
    std::filesystem::path resolved = is_path ? std::filesystem::path(*spec.plan)
                                             : std::filesystem::path(data.bands_directory()) / (*spec.plan + ".toml");
    if (is_path && resolved.is_relative()) {
      resolved = std::filesystem::path(reader.file()).parent_path() / resolved;
    }
    std::error_code ignored;
    if (!std::filesystem::exists(resolved, ignored)) reader.fail("plan", "band plan not found: " + resolved.string());
    try {
      const InputFile plan_file(resolved.string(), "band plan");  // a regular file (not a pipe or device)
    } catch (const Error& e) {
      reader.fail("plan", e.what());
    }
    spec.plan = resolved.string();
  }
  if (reader.has("loop_area")) {
    reader.fail("loop_area", "loop_area is now [board] hot_loop_area: the switching cell's loop, carrying the "
                             "pulsed source current");
  }
  if (const auto antenna = reader.optional_string("antenna")) {
    try {
      spec.antenna = antenna_choice_from_name(*antenna);
    } catch (const Error& e) {
      reader.fail("antenna", e.message());
    }
  }
  spec.ground_reflection = reader.optional_bool("ground_reflection").value_or(false);
  const auto tables = reader.table_array("band");
  std::set<std::string> names;
  for (std::size_t i = 0; i < tables.size(); ++i) {
    TableReader band_reader(*tables[i], reader.file(), reader.where() + ".band " + std::to_string(i + 1));
    Band band = read_band(band_reader, 0);
    if (!names.insert(band.name).second) throw Error(band.position, "duplicate band name '" + band.name + "'");
    spec.extra_bands.push_back(std::move(band));
  }
  reader.finish({"region", "distance", "cable_length", "environment", "plan", "antenna", "ground_reflection",
                 "band"});
  return spec;
}

std::vector<Band> bands_for(const BroadcastSpec& spec, const ShippedData& data) {
  BandPlan plan;
  if (!spec.plan) {
    plan = load_region_band_plan(spec.region, data);
  } else {
    plan = load_band_plan(*spec.plan);
  }
  std::vector<Band> bands = std::move(plan.bands);
  for (const Band& band : spec.extra_bands) bands.push_back(band);
  return bands;
}

double channel_response_db(double offset_hz, double bandwidth_hz) {
  const double x = 2.0 * offset_hz / bandwidth_hz;
  return -channel_edge_db * x * x;
}

double channel_reach_hz(double bandwidth_hz) {
  return 0.5 * bandwidth_hz * std::sqrt(-channel_stop_db / channel_edge_db);
}

BandOccupancy map_lines_to_band(const Band& band, const std::vector<SpectralLine>& lines) {
  BandOccupancy occupancy;
  const std::vector<double> centres = band.channel_centres_hz();
  const double reach = channel_reach_hz(band.bandwidth_hz);
  // Each line finds the channels it reaches by binary search in the ascending centres and adds its
  // weighted power to them: no sort of the lines (a dithered spectrum has hundreds of thousands).
  // The response 10^(−edge·x²/10) is computed as exp(−edge·ln10/10·x²).
  struct Accumulator {
    double power = 0.0;
    double strongest_db = -INFINITY;
    double strongest_hz = 0.0;
    std::size_t strongest_index = 0;
    std::size_t count = 0;
  };
  std::vector<Accumulator> sums(centres.size());
  const double decibel_exponent = std::numbers::ln10 / 10.0;
  const double response_exponent = channel_edge_db * decibel_exponent;
  const double inverse_half_bandwidth = 2.0 / band.bandwidth_hz;
  const double step = centres.size() > 1 ? (centres[1] - centres[0]) * inverse_half_bandwidth : 0.0;
  const double ratio_step = std::exp(-2.0 * response_exponent * step * step);
  for (std::size_t i = 0; i < lines.size(); ++i) {
    const SpectralLine& line = lines[i];
    const double f = line.frequency_hz;
    if (f >= band.low_hz - edge_slack_hz && f <= band.high_hz + edge_slack_hz) occupancy.lines_inside.push_back(i);
    if (centres.empty() || f < centres.front() - reach || f > centres.back() + reach) continue;
    const double power = std::exp(line.level_db * decibel_exponent);  // 10^(L/10)
    // The response over consecutive channels by recurrence (the centres lie on a uniform raster,
    // x drops by step from one to the next): with w_c = exp(−a·x_c²), w_{c+1} = w_c·q_c,
    // q_c = exp(−a·(x_{c+1}² − x_c²)) and q_{c+1} = q_c·exp(−2·a·step²); two exps per line.
    double weight = 0.0;
    double ratio = 0.0;
    bool first = true;
    for (auto c = std::lower_bound(centres.begin(), centres.end(), f - reach); c != centres.end() && *c <= f + reach; ++c) {
      const double x = (f - *c) * inverse_half_bandwidth;
      if (first) {
        weight = std::exp(-response_exponent * x * x);
        const double x_next = x - step;
        ratio = std::exp(-response_exponent * (x_next - x) * (x_next + x));
        first = false;
      } else {
        weight *= ratio;
        ratio *= ratio_step;
      }
      // The same closed interval [centre − reach, centre + reach] as a channel-by-channel search.
      if (f < *c - reach) continue;
      Accumulator& sum = sums[static_cast<std::size_t>(c - centres.begin())];
      sum.power += power * weight;
      ++sum.count;
      // The strongest line; on a tie the lower frequency, then the lower index (a fixed choice,
      // whatever the order of the input).
      const double weighted_db = line.level_db - channel_edge_db * x * x;
      if (weighted_db > sum.strongest_db ||
          (weighted_db == sum.strongest_db && (f < sum.strongest_hz || (f == sum.strongest_hz && i < sum.strongest_index)))) {
        sum.strongest_db = weighted_db;
        sum.strongest_hz = f;
        sum.strongest_index = i;
      }
    }
  }
  for (std::size_t c = 0; c < centres.size(); ++c) {
    const Accumulator& sum = sums[c];
    if (sum.count == 0) continue;
    ChannelHit hit;
    hit.centre_hz = centres[c];
    hit.line_count = sum.count;
    hit.strongest_line_hz = sum.strongest_hz;
    hit.strongest_line_index = sum.strongest_index;
    hit.level_db = sum.power > 0.0 ? 10.0 * std::log10(sum.power) : level_floor_db;
    hit.strongest_level_db = std::max(sum.strongest_db, level_floor_db);
    occupancy.channels.push_back(hit);
  }
  for (std::size_t c = 0; c < occupancy.channels.size(); ++c) {
    if (!occupancy.worst_channel || occupancy.channels[c].level_db > occupancy.channels[*occupancy.worst_channel].level_db) {
      occupancy.worst_channel = c;
    }
  }
  return occupancy;
}

}  // namespace spurcast
