#include "core/output/listing_output.hpp"

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <algorithm>

#include "core/input/units.hpp"

namespace spurcast {

namespace {

std::string range_text(const LimitSet& set) {
  double low = 0.0;
  double high = 0.0;
  for (const LimitLine& line : set.lines) {
    if (low == 0.0 || line.low_hz() < low) low = line.low_hz();
    high = std::max(high, line.high_hz());
  }
  return format_quantity(low, Dimension::frequency) + " to " + format_quantity(high, Dimension::frequency);
}

std::string detectors_text(const LimitSet& set) {
  std::string text;
  for (const LimitLine& line : set.lines) text += (text.empty() ? "" : ", ") + to_string(line.detector);
  return text;
}

nlohmann::json set_json(const LimitSet& set) {
  nlohmann::json lines = nlohmann::json::array();
  for (const LimitLine& line : set.lines) {
    nlohmann::json segments = nlohmann::json::array();
    for (const LimitSegment& s : line.segments) {
      segments.push_back({{"from_hz", s.from_hz}, {"to_hz", s.to_hz}, {"start", s.start_level}, {"end", s.end_level}});
    }
    lines.push_back({{"detector", to_string(line.detector)},
                     {"at_boundary", line.at_boundary == BoundaryRule::lower ? "lower" : "higher"},
                     {"segments", segments}});
  }
  nlohmann::json j{{"file", set.file},
                   {"name", set.name},
                   {"measures", to_string(set.measures)},
                   {"unit", limit_unit_symbol(set)},
                   {"source", set.source},
                   {"confidence", set.confidence_text},
                   {"lines", lines}};
  j["distance_m"] = set.distance_m ? nlohmann::json(*set.distance_m) : nlohmann::json(nullptr);
  return j;
}

std::string hz(double value) { return format_quantity(value, Dimension::frequency, 6); }

nlohmann::json band_json(const Band& band) {
  const auto channels = band.channel_centres_hz();
  return {{"name", band.name},
          {"region", band.region},
          {"low_hz", band.low_hz},
          {"high_hz", band.high_hz},
          {"raster_hz", band.raster_hz},
          {"channel_offset_hz", band.channel_offset_hz},
          {"first_channel_hz", channels.front()},
          {"last_channel_hz", channels.back()},
          {"channels", channels.size()},
          {"bandwidth_hz", band.bandwidth_hz},
          {"modulation", modulation_name(band.modulation)},
          {"wanted_field_dbuvm", band.wanted_field_dbuvm},
          {"protection_ratio_db", band.protection_ratio_db},
          {"source", band.source},
          {"note", band.note}};
}

}  // namespace

std::string limit_sets_json(const std::vector<LimitSet>& sets) {
  nlohmann::json list = nlohmann::json::array();
  for (const LimitSet& set : sets) list.push_back(set_json(set));
  return list.dump(2) + "\n";
}

std::string limit_set_text(const LimitSet& set, const std::string& shown_name) {
  return fmt::format("{}\n  {}: {}, {}{}; {}; {}\n  source: {}\n  confidence: {}\n", shown_name, set.name,
                           to_string(set.measures), limit_unit_symbol(set),
                           set.distance_m ? " at " + format_quantity(*set.distance_m, Dimension::length) : "",
                           detectors_text(set), range_text(set), set.source, set.confidence_text);
}

std::string band_plans_json(const std::vector<BandPlan>& plans) {
  nlohmann::json list = nlohmann::json::array();
  for (const BandPlan& plan : plans) {
    nlohmann::json bands = nlohmann::json::array();
    for (const Band& band : plan.bands) bands.push_back(band_json(band));
    list.push_back({{"name", plan.name}, {"region", plan.region}, {"file", plan.file}, {"source", plan.source},
                    {"bands", bands}});
  }
  return list.dump(2) + "\n";
}

std::string band_plan_text(const BandPlan& plan) {
  std::string out;
  out += fmt::format("{} ({})\n  source: {}\n", plan.name, plan.file, plan.source);
  out += fmt::format("  {:<20} {:>22} {:>9} {:>9} {:>4} {:>9} {:>8} {:>6}\n", "band", "edges", "raster",
                           "receiver", "mod", "channels", "wanted", "ratio");
  for (const Band& band : plan.bands) {
    const auto channels = band.channel_centres_hz();
    out += fmt::format("  {:<20} {:>22} {:>9} {:>9} {:>4} {:>9} {:>8} {:>6}\n", band.name,
                             hz(band.low_hz) + " - " + hz(band.high_hz),
                             band.raster_hz > 0.0 ? hz(band.raster_hz) : "single", hz(band.bandwidth_hz),
                             modulation_name(band.modulation), channels.size(),
                             fmt::format("{:.0f}", band.wanted_field_dbuvm), fmt::format("{:.0f} dB", band.protection_ratio_db));
  }
  out += "  wanted = minimum usable field of a weak station [dB\xC2\xB5V/m]; ratio = co-channel protection ratio\n";
  return out;
}

}  // namespace spurcast
