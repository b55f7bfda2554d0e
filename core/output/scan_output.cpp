#include "core/output/scan_output.hpp"

#include <algorithm>
#include <optional>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include "core/input/units.hpp"
#include "core/output/text_table.hpp"

namespace spurcast {

namespace {

/// The detectors whose reading is the noise floor, joined by '+' ("" for none), as in the
/// prediction's scan.csv (core/output/report.hpp).
std::string at_floor_text(const Reading& r, const std::optional<double>& noise_floor_db) {
  std::string text;
  for (const Detector d : {Detector::peak, Detector::quasi_peak, Detector::average}) {
    if (at_noise_floor(r.level_db(d), noise_floor_db)) text += (text.empty() ? "" : "+") + to_string(d);
  }
  return text;
}

nlohmann::json reading_json(const Reading& r, const std::optional<double>& noise_floor_db) {
  return {{"frequency_hz", r.frequency_hz}, {"peak", r.peak_db},   {"quasi_peak", r.quasi_peak_db},
          {"average", r.average_db},        {"at_floor", at_floor_text(r, noise_floor_db)}};
}

std::string point_name(const std::string& at) {
  return at == "lisn" ? "LISN receiver port" : at == "current" ? "input current" : "source";
}

}  // namespace

std::string scan_csv(const ScanReport& report) {
  const std::string suffix = report.bands.empty() ? "dbuv" : level_suffix(report.bands.front().quantity);
  std::string text = fmt::format("frequency_hz,peak_{0},quasi_peak_{0},average_{0},at_floor\n", suffix);
  for (const ScanResult& result : report.bands) {
    for (const Reading& r : result.readings) {
      text += fmt::format("{:.6g},{:.3f},{:.3f},{:.3f},{}\n", r.frequency_hz, r.peak_db, r.quasi_peak_db, r.average_db,
                          at_floor_text(r, result.noise_floor_db));
    }
  }
  return text;
}

std::string scan_json(const ScanReport& report, const std::vector<std::string>& written) {
  nlohmann::json j;
  j["scenario"] = report.scenario_file;
  j["at"] = report.at;
  j["unit"] = report.bands.empty() ? "dBuV" : (report.bands.front().quantity == Quantity::voltage ? "dBuV" : "dBuA");
  nlohmann::json bands = nlohmann::json::array();
  for (const ScanResult& result : report.bands) {
    nlohmann::json b;
    b["band"] = to_string(result.band);
    b["bandwidth_6db_hz"] = result.bandwidth_6db_hz;
    b["step_hz"] = result.step_hz;
    b["noise_floor"] = result.noise_floor_db ? nlohmann::json(*result.noise_floor_db) : nlohmann::json(nullptr);
    nlohmann::json highest = nlohmann::json::object();
    for (const Detector d : report.detectors) {
      if (const auto best = highest_reading(result, d)) {
        highest[to_string(d)] = {{"frequency_hz", best->frequency_hz}, {"level", best->level_db(d)}};
      }
    }
    b["highest"] = highest;
    nlohmann::json readings = nlohmann::json::array();
    for (const Reading& r : result.readings) readings.push_back(reading_json(r, result.noise_floor_db));
    b["readings"] = readings;
    b["notes"] = result.notes;
    bands.push_back(b);
  }
  j["bands"] = bands;
  j["files"] = written;
  return j.dump(2) + "\n";
}

std::string scan_text(const ScanReport& report, bool colour, const std::vector<std::string>& written) {
  std::string out;
  for (const ScanResult& result : report.bands) {
    const std::string unit = level_unit(result.quantity);
    out += paint(fmt::format("band {} ({} IF bandwidth), at the {}", to_string(result.band),
                             format_quantity(result.bandwidth_6db_hz, Dimension::frequency), point_name(report.at)),
                 Colour::bold, colour) +
           "\n";
    if (report.spot) {
      out += fmt::format("  spot readings at {} frequencies, levels in {}\n", result.readings.size(), unit);
    } else {
      out += fmt::format("  {} tuned frequencies, step {}, levels in {}\n", result.readings.size(),
                         format_quantity(result.step_hz, Dimension::frequency), unit);
    }
    std::vector<std::vector<std::string>> rows{{"detector", "highest", "at"}};
    for (const Detector d : report.detectors) {
      const auto best = highest_reading(result, d);
      if (!best) continue;
      rows.push_back({to_string(d), level_cell(best->level_db(d)), format_quantity(best->frequency_hz, Dimension::frequency, 4)});
    }
    out += format_columns(rows, {1}, "  ");
    if (result.noise_floor_db) {
      const auto at_floor = std::count_if(result.readings.begin(), result.readings.end(), [&](const Reading& r) {
        return !at_floor_text(r, result.noise_floor_db).empty();
      });
      out += fmt::format("  receiver noise floor {}: {} of {} readings at the floor on some detector\n",
                         level_cell(*result.noise_floor_db) + " " + unit, at_floor, result.readings.size());
    }
    // The highest readings: local maxima of the peak trace (each line once), or every spot reading.
    const std::vector<Reading> listed = report.spot ? result.readings : peak_maxima(result, scan_text_listed_readings);
    if (!report.spot) out += fmt::format("  the {} highest peaks:\n", listed.size());
    std::vector<std::vector<std::string>> table{{"frequency", "peak", "quasi-peak", "average"}};
    for (const Reading& reading : listed) {
      table.push_back({format_quantity(reading.frequency_hz, Dimension::frequency, 4), level_cell(reading.peak_db),
                       level_cell(reading.quasi_peak_db), level_cell(reading.average_db)});
    }
    out += format_columns(table, {0, 1, 2, 3}, "    ");
    for (const std::string& note : result.notes) out += "  note: " + note + "\n";
  }
  for (const std::string& file : written) out += "wrote " + file + "\n";
  return out;
}

}  // namespace spurcast
