// Tests of core/output/listing_output: the JSON of the shipped CISPR 32 class B conducted file holds
// its published lines (quasi-peak 66 to 56 dBµV over 0.15-0.5 MHz then 56 dBµV to 5 MHz, average
// 10 dB lower; CISPR 32 Annex A, docs/references.md §3.1) and the JSON of the Region 1 band plan its
// MW band (526.5 to 1606.5 kHz on a 9 kHz raster, channels 531 to 1602 kHz: 120 of them; ITU Radio
// Regulations Article 5 and GE75, docs/references.md §4.1); both parse with nlohmann::json, and the
// text shows the same values.
#include <doctest/doctest.h>

#include <nlohmann/json.hpp>

#include <cmath>
#include <string>

#include "core/compliance/limits.hpp"
#include "core/output/listing_output.hpp"
#include "core/radio/bands.hpp"

using namespace spurcast;

namespace {

constexpr double tol_db = 1e-9;  // [dB]
constexpr double tol_hz = 1e-6;  // [Hz]

LimitSet cispr32_class_b() { return read_limit_file(locate_shipped_data().limits_directory() + "/cispr32-class-b-conducted.toml"); }

}  // namespace

TEST_CASE("limit_sets_json: the published lines of CISPR 32 class B conducted") {
  const nlohmann::json j = nlohmann::json::parse(limit_sets_json({cispr32_class_b()}));
  REQUIRE(j.is_array());
  REQUIRE(j.size() == 1);
  const nlohmann::json& set = j[0];
  CHECK(set["unit"] == "dB\xC2\xB5V");
  CHECK(set["distance_m"].is_null());
  REQUIRE(set["lines"].size() == 2);
  for (const nlohmann::json& line : set["lines"]) {
    const double offset_db = line["detector"] == "average" ? 10.0 : 0.0;
    const nlohmann::json& first = line["segments"][0];
    CHECK(std::abs(first["from_hz"].get<double>() - 150e3) < tol_hz);
    CHECK(std::abs(first["to_hz"].get<double>() - 500e3) < tol_hz);
    CHECK(std::abs(first["start"].get<double>() - (66.0 - offset_db)) < tol_db);
    CHECK(std::abs(first["end"].get<double>() - (56.0 - offset_db)) < tol_db);
    const nlohmann::json& second = line["segments"][1];
    CHECK(std::abs(second["to_hz"].get<double>() - 5e6) < tol_hz);
    CHECK(std::abs(second["start"].get<double>() - (56.0 - offset_db)) < tol_db);
  }
}

TEST_CASE("limit_set_text: name, quantity, detectors, range, source and confidence") {
  const LimitSet set = cispr32_class_b();
  const std::string text = limit_set_text(set, "shown");
  CHECK(text.rfind("shown\n  " + set.name + ": conducted-voltage, dB\xC2\xB5V; quasi-peak, average; 150 kHz to 30 MHz\n", 0) == 0);
  CHECK(text.find("\n  source: " + set.source + "\n") != std::string::npos);
  CHECK(text.find("\n  confidence: " + set.confidence_text + "\n") != std::string::npos);
}

TEST_CASE("band plans: the Region 1 MW band in JSON and text") {
  const BandPlan plan = load_region_band_plan(1, locate_shipped_data());
  const nlohmann::json j = nlohmann::json::parse(band_plans_json({plan}));
  REQUIRE(j.size() == 1);
  CHECK(j[0]["region"] == 1);
  const nlohmann::json* mw = nullptr;
  for (const nlohmann::json& band : j[0]["bands"]) {
    if (band["name"] == "MW") mw = &band;
  }
  REQUIRE(mw != nullptr);
  CHECK(std::abs((*mw)["low_hz"].get<double>() - 526.5e3) < tol_hz);
  CHECK(std::abs((*mw)["high_hz"].get<double>() - 1606.5e3) < tol_hz);
  CHECK(std::abs((*mw)["raster_hz"].get<double>() - 9e3) < tol_hz);
  CHECK(std::abs((*mw)["first_channel_hz"].get<double>() - 531e3) < tol_hz);
  CHECK(std::abs((*mw)["last_channel_hz"].get<double>() - 1602e3) < tol_hz);
  CHECK((*mw)["channels"] == 120);
  const std::string text = band_plan_text(plan);
  CHECK(text.find("  MW                   526.5 kHz - 1.6065 MHz     9 kHz     9 kHz   am       120") != std::string::npos);
}
