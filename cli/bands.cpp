// spurcast bands: list the shipped broadcast band plans (one per ITU region), or one region's.
#include <iostream>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "core/radio/bands.hpp"
#include "core/output/listing_output.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  int region = 0;  // 0 = every region
  bool json = false;
};

int run_bands(const Options& options) {
  const ShippedData data = locate_shipped_data();
  std::vector<int> regions;
  if (options.region == 0) {
    regions = {1, 2, 3};
  } else {
    regions = {options.region};
  }
  std::vector<BandPlan> plans;
  for (const int region : regions) {
    const BandPlan plan = load_region_band_plan(region, data);
    if (options.json) {
      plans.push_back(plan);
    } else {
      if (region != regions.front()) std::cout << "\n";
      std::cout << band_plan_text(plan);
    }
  }
  if (options.json) std::cout << band_plans_json(plans);
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
