// Tests of core/output/scan_output: the scan CSV columns are the interface names of docs/design.md §4
// (frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv,at_floor; dbua for a current), its values read back at
// the written resolution, the JSON parses with nlohmann::json and holds the same numbers and the
// highest reading per detector, and the text lists each line of the peak trace once.
#include <doctest/doctest.h>

#include <nlohmann/json.hpp>

#include <cmath>
#include <sstream>
#include <string>
#include <vector>

#include "core/input/units.hpp"
#include "core/output/scan_output.hpp"

using namespace spurcast;

namespace {

constexpr double csv_level_resolution_db = 0.0005 + 1e-12;  // [dB] 3 decimals, half a step
constexpr double csv_frequency_relative = 5e-6 + 1e-15;      // 6 significant digits, half a step
constexpr double json_tol_db = 1e-12;                         // [dB]

ScanReport example_report() {
  ScanReport report;
  report.scenario_file = "buck.toml";
  report.at = "lisn";
  report.detectors = {Detector::peak, Detector::quasi_peak, Detector::average};
  ScanResult band;
  band.band = CisprBand::B;
  band.bandwidth_6db_hz = 9e3;
  band.step_hz = 2.25e3;
  const std::vector<double> peaks{40.1234, 58.98765, 44.5, 61.00049, 39.0};
  for (std::size_t i = 0; i < peaks.size(); ++i) {
    Reading r;
    r.frequency_hz = 150e3 + 2.25e3 * static_cast<double>(i) + 0.4;
    r.peak_db = peaks[i];
    r.quasi_peak_db = peaks[i] - 2.5;
    r.average_db = i == 4 ? level_floor_db : peaks[i] - 9.75;
    band.readings.push_back(r);
  }
  band.notes.push_back("exact line path");
  report.bands.push_back(band);
  return report;
}

}  // namespace

TEST_CASE("scan_csv: interface columns and values read back at the written resolution") {
  const ScanReport report = example_report();
  std::istringstream in(scan_csv(report));
  std::string line;
  REQUIRE(std::getline(in, line));
  CHECK(line == "frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv,at_floor");
  for (const Reading& r : report.bands[0].readings) {
    REQUIRE(std::getline(in, line));
    std::istringstream cells(line);
    std::vector<double> values;
    std::string cell;
    while (std::getline(cells, cell, ',')) values.push_back(std::stod(cell));
    REQUIRE(values.size() == 4);
    CHECK(std::abs(values[0] - r.frequency_hz) <= csv_frequency_relative * r.frequency_hz);
    CHECK(std::abs(values[1] - r.peak_db) <= csv_level_resolution_db);
    CHECK(std::abs(values[2] - r.quasi_peak_db) <= csv_level_resolution_db);
    CHECK(std::abs(values[3] - r.average_db) <= csv_level_resolution_db);
  }
  CHECK_FALSE(std::getline(in, line));
  ScanReport current = report;
  current.bands[0].quantity = Quantity::current;
  CHECK(scan_csv(current).rfind("frequency_hz,peak_dbua,quasi_peak_dbua,average_dbua,at_floor\n", 0) == 0);
}

TEST_CASE("scan_csv and scan_json: at_floor names the detectors held at the band's noise floor") {
  ScanReport report = example_report();
  apply_noise_floor(report.bands[0], 39.0);  // at or above every peak but the last one's 39.0
  std::istringstream in(scan_csv(report));
  std::string line;
  REQUIRE(std::getline(in, line));
  std::vector<std::string> at_floor;
  while (std::getline(in, line)) at_floor.push_back(line.substr(line.rfind(',') + 1));
  // Peaks 40.12, 58.99, 44.5, 61.0, 39.0; quasi-peak 2.5 dB and average 9.75 dB lower.
  const std::vector<std::string> expected{"quasi-peak+average", "", "average", "", "peak+quasi-peak+average"};
  CHECK(at_floor == expected);
  const nlohmann::json j = nlohmann::json::parse(scan_json(report, {}));
  CHECK(std::abs(j["bands"][0]["noise_floor"].get<double>() - 39.0) < csv_level_resolution_db);
  CHECK(j["bands"][0]["readings"][4]["at_floor"] == "peak+quasi-peak+average");
  CHECK(j["bands"][0]["readings"][1]["at_floor"] == "");
  CHECK(scan_text(report, false, {}).find("receiver noise floor 39.0 dB\xC2\xB5V: 3 of 5 readings at the floor") !=
        std::string::npos);
  CHECK(nlohmann::json::parse(scan_json(example_report(), {}))["bands"][0]["noise_floor"].is_null());
}

TEST_CASE("scan_json: parses, holds the readings and the highest reading per detector") {
  const ScanReport report = example_report();
  const nlohmann::json j = nlohmann::json::parse(scan_json(report, {"scan.csv"}));
  CHECK(j["scenario"] == "buck.toml");
  CHECK(j["unit"] == "dBuV");
  CHECK(j["files"] == nlohmann::json::array({"scan.csv"}));
  REQUIRE(j["bands"].size() == 1);
  const nlohmann::json& b = j["bands"][0];
  CHECK(b["band"] == "B");
  REQUIRE(b["readings"].size() == report.bands[0].readings.size());
  for (std::size_t i = 0; i < report.bands[0].readings.size(); ++i) {
    const Reading& r = report.bands[0].readings[i];
    CHECK(std::abs(b["readings"][i]["peak"].get<double>() - r.peak_db) < json_tol_db);
    CHECK(std::abs(b["readings"][i]["average"].get<double>() - r.average_db) < json_tol_db);
  }
  CHECK(std::abs(b["highest"]["peak"]["level"].get<double>() - 61.00049) < json_tol_db);
  CHECK(std::abs(b["highest"]["average"]["level"].get<double>() - (61.00049 - 9.75)) < json_tol_db);
}

TEST_CASE("scan_text: each line of the peak trace once, highest first, then the files written") {
  const ScanReport report = example_report();
  const std::string text = scan_text(report, false, {"scan.csv"});
  CHECK(text.rfind("band B (9 kHz IF bandwidth), at the LISN receiver port\n", 0) == 0);
  CHECK(text.find("  5 tuned frequencies, step 2.25 kHz, levels in dB\xC2\xB5V\n") != std::string::npos);
  CHECK(text.find("  the 2 highest peaks:\n") != std::string::npos);  // 58.99 and 61.00 are the local maxima
  CHECK(text.find("61.0") < text.find("59.0", text.find("highest peaks")));  // 61.00 and 58.99 at 0.1 dB
  CHECK(text.find("  note: exact line path\n") != std::string::npos);
  CHECK(text.substr(text.size() - 15) == "wrote scan.csv\n");
  CHECK(scan_text(report, true, {}).rfind("\x1b[1mband B", 0) == 0);
}
