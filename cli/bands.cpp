// spurcast bands: list the shipped broadcast band plans (one per ITU region), or one region's.
#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <iostream>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "core/radio/bands.hpp"
#include "core/input/units.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  int region = 0;  // 0 = every region
  bool json = false;
};

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

void print_plan(const BandPlan& plan) {
  std::cout << fmt::format("{} ({})\n  source: {}\n", plan.name, plan.file, plan.source);
  std::cout << fmt::format("  {:<20} {:>22} {:>9} {:>9} {:>4} {:>9} {:>8} {:>6}\n", "band", "edges", "raster",
                           "receiver", "mod", "channels", "wanted", "ratio");
  for (const Band& band : plan.bands) {
    const auto channels = band.channel_centres_hz();
    std::cout << fmt::format("  {:<20} {:>22} {:>9} {:>9} {:>4} {:>9} {:>8} {:>6}\n", band.name,
                             hz(band.low_hz) + " - " + hz(band.high_hz),
                             band.raster_hz > 0.0 ? hz(band.raster_hz) : "single", hz(band.bandwidth_hz),
                             modulation_name(band.modulation), channels.size(),
                             fmt::format("{:.0f}", band.wanted_field_dbuvm), fmt::format("{:.0f} dB", band.protection_ratio_db));
  }
  std::cout << "  wanted = minimum usable field of a weak station [dB\xC2\xB5V/m]; ratio = co-channel protection ratio\n";
}

int run_bands(const Options& options) {
  std::vector<int> regions;
  if (options.region == 0) {
    regions = {1, 2, 3};
  } else {
    regions = {options.region};
  }
  nlohmann::json list = nlohmann::json::array();
  for (const int region : regions) {
    const BandPlan plan = load_region_band_plan(region);
    if (options.json) {
      nlohmann::json bands = nlohmann::json::array();
      for (const Band& band : plan.bands) bands.push_back(band_json(band));
      list.push_back({{"name", plan.name}, {"region", plan.region}, {"file", plan.file}, {"source", plan.source},
                      {"bands", bands}});
    } else {
      if (region != regions.front()) std::cout << "\n";
      print_plan(plan);
    }
  }
  if (options.json) std::cout << list.dump(2) << "\n";
  return exit_ok;
}

}  // namespace

void setup_bands(CLI::App& app, CommandList& commands) {
  auto options = std::make_shared<Options>();
  CLI::App* sub = app.add_subcommand("bands", "list the broadcast band plans (ITU Radio Regulations Article 5)");
  sub->add_option("--region", options->region, "ITU region 1, 2 or 3 (default: all)")->check(CLI::Range(1, 3));
  sub->add_flag("--json", options->json, "print JSON instead of text");
  commands.push_back(Command{sub, [options] { return run_bands(*options); }});
}

}  // namespace spurcast::cli
