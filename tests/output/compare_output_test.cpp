// Tests of core/output/compare_output: the JSON parses with nlohmann::json and holds the numbers of
// the CompareResult (worst margin per detector, the worst row, re-measure points, the prediction
// beside them, the files written); the text gives the verdict with the worst margin and ends with
// the reminder that a pre-scan is not a compliance result; the margins CSV written beside them has
// the interface columns of docs/design.md §4. Inputs: an invented trace against the shipped
// CISPR 32 class B conducted lines (docs/references.md §3.1).
#include <doctest/doctest.h>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <string>

#include "core/compliance/margins.hpp"
#include "core/output/compare_output.hpp"

using namespace spurcast;
namespace fs = std::filesystem;

namespace {

constexpr double json_tol_db = 1e-12;  // [dB]

std::string write_file(const std::string& name, const std::string& text) {
  const fs::path dir = fs::temp_directory_path() / "spurcast_compare_output_test";
  fs::create_directories(dir);
  std::ofstream(dir / name) << text;
  return (dir / name).string();
}

CompareResult failing_result() {
  std::string trace = "frequency_hz,level_dbuv\n";
  for (int i = 0; i < 200; ++i) {
    const double f = 150e3 * std::pow(200.0, i / 199.0);
    trace += fmt::format("{:.10g},{}\n", f, i == 80 ? 51.0 : 30.0);
  }
  CompareRequest request;
  request.data = locate_shipped_data();
  request.trace_file = write_file("trace.csv", trace);
  request.limit_files = {"cispr32-class-b-conducted"};
  const double emission_hz = 150e3 * std::pow(200.0, 80 / 199.0);
  request.prediction_file =
      write_file("scan.csv", fmt::format("frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv\n{:.10g},48,45,41\n", emission_hz));
  return compare_trace(request);
}

}  // namespace

TEST_CASE("compare_json: the numbers of the result") {
  const CompareResult r = failing_result();
  const nlohmann::json j = nlohmann::json::parse(compare_json(r, {"m.csv"}));
  CHECK(j["verdict"] == to_string(r.report.verdict));
  CHECK(j["trace"]["points"] == r.trace.frequency_hz.size());
  CHECK(j["trace"]["detector"] == "peak");
  for (const DetectorMargin& d : r.report.worst_per_detector) {
    CHECK(std::abs(j["worst_margin_db"][to_string(d.detector)].get<double>() - d.worst.margin_db) < json_tol_db);
  }
  REQUIRE(r.report.worst.has_value());
  CHECK(std::abs(j["worst"]["margin_db"].get<double>() - r.report.worst->margin_db) < json_tol_db);
  CHECK(std::abs(j["worst"]["reading"].get<double>() - r.report.worst->reading) < json_tol_db);
  CHECK(j["closest"].size() == r.report.closest.size());
  REQUIRE(j["remeasure"].size() == r.remeasure.size());
  REQUIRE_FALSE(r.remeasure.empty());
  CHECK(std::abs(j["remeasure"][0]["frequency_hz"].get<double>() - r.remeasure[0].frequency_hz) < 1e-9);
  REQUIRE(j["prediction"].size() == r.checks.size());
  CHECK(j["prediction"][0]["predicted"]["quasi_peak"].get<double>() == doctest::Approx(45.0));
  CHECK(j["files"] == nlohmann::json::array({"m.csv"}));
}

TEST_CASE("compare_text: verdict with the worst margin, the files, and the closing reminder") {
  const CompareResult r = failing_result();
  const std::string text = compare_text(r, {"m.csv"});
  CHECK(text.rfind("trace: " + r.trace_file + " (200 points, peak detector, levels in dBuV)\n", 0) == 0);
  CHECK(text.find(fmt::format("\nverdict: {} (worst margin {:+.2f} dB, guard 6 dB)\n", to_string(r.report.verdict),
                              r.report.worst->margin_db)) != std::string::npos);
  const std::string ending =
      "wrote m.csv\na prediction or pre-scan is not a compliance result: only an accredited test decides\n";
  CHECK(text.substr(text.size() - ending.size()) == ending);
  CHECK(text.find("\nprediction (" + r.prediction_file + ") beside the measurement") != std::string::npos);
}

TEST_CASE("the margins CSV beside them has the interface columns") {
  const CompareResult r = failing_result();
  const std::string csv = margins_csv(r.report);
  CHECK(csv.substr(0, csv.find('\n')) == "frequency_hz,detector,reading_dbuv,limit_dbuv,margin_db,limit,unit");
}
