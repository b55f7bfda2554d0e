#pragma once
/// The writers of the shipped-data listings: limit-line files (`spurcast limits`) and broadcast
/// band plans (`spurcast bands`), as JSON and as terminal text, from the values the loaders return.
///
/// Example:
///   std::cout << limit_set_text(read_limit_file(path), "cispr32-class-b-conducted");
///   std::cout << band_plans_json({load_region_band_plan(1, locate_shipped_data())});
#include <string>
#include <vector>

#include "core/compliance/limits.hpp"
#include "core/radio/bands.hpp"

namespace spurcast {

/// The limit sets as a JSON array (2-space indent, ending in a newline): per set its file, name,
/// what it measures, unit, source, confidence, distance (null for conducted) and lines with their
/// segments.
[[nodiscard]] std::string limit_sets_json(const std::vector<LimitSet>& sets);

/// One limit set in three lines under `shown_name`: name, quantity, unit, distance, detectors and
/// frequency range; source; confidence.
[[nodiscard]] std::string limit_set_text(const LimitSet& set, const std::string& shown_name);

/// The band plans as a JSON array (2-space indent, ending in a newline): per plan its name, region,
/// file, source and bands with edges, raster, channels, receiver bandwidth, modulation and thresholds.
[[nodiscard]] std::string band_plans_json(const std::vector<BandPlan>& plans);

/// One band plan as a table: a band per line with edges, raster, receiver bandwidth, modulation,
/// channel count, wanted field and protection ratio.
[[nodiscard]] std::string band_plan_text(const BandPlan& plan);

}  // namespace spurcast
