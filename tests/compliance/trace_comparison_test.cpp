// Tests of core/compliance/trace_comparison: a peak trace against the shipped CISPR 32 class B
// conducted lines (56 dBµV quasi-peak and 46 dBµV average from 0.5 to 5 MHz, CISPR 32 Annex A,
// docs/references.md §3.1): the margins at an emission, the re-measure list, corrections added to
// the reading, dBm converted for 50 Ω (+106.99 dB, docs/references.md §9.2), the prediction beside
// the measurement, and the errors of bad inputs (checked exactly; the shipped radiated 3 m file
// covers 30 MHz to 1 GHz, CISPR 32 Annex A). The traces are invented.
#include <doctest/doctest.h>

#include <fmt/format.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <string>

#include "core/compliance/trace_comparison.hpp"
#include "core/input/error.hpp"

using namespace spurcast;
namespace fs = std::filesystem;

namespace {

constexpr double tol_db = 1e-6;  // [dB]

fs::path folder() {
  const fs::path dir = fs::temp_directory_path() / "spurcast_trace_comparison_test";
  fs::create_directories(dir);
  return dir;
}

/// A trace from 150 kHz to 30 MHz, 400 log-spaced points at `floor`, one point of `emission` at 1 MHz.
std::string write_trace(const std::string& name, double floor, double emission, const std::string& header = "frequency_hz,level_dbuv") {
  const fs::path path = folder() / name;
  std::ofstream out(path);
  out << header << "\n";
  for (int i = 0; i < 400; ++i) {
    double f = 150e3 * std::pow(200.0, i / 399.0);
    double level = floor;
    if (i > 0 && std::abs(std::log10(f / 1e6)) < 0.5 * std::log10(200.0) / 399.0) {
      f = 1e6;
      level = emission;
    }
    out << fmt::format("{:.10g},{:.10g}\n", f, level);
  }
  return path.string();
}

std::string write_text(const std::string& name, const std::string& text) {
  const fs::path path = folder() / name;
  std::ofstream(path) << text;
  return path.string();
}

double worst_of(const CompareResult& r, Detector d) {
  for (const DetectorMargin& m : r.report.worst_per_detector) {
    if (m.detector == d) return m.worst.margin_db;
  }
  FAIL("no margin for " << to_string(d));
  return 0.0;
}

}  // namespace

TEST_CASE("compare_trace: a 51 dBuV peak at 1 MHz against CISPR 32 class B") {
  CompareRequest request;
  request.data = locate_shipped_data();
  request.trace_file = write_trace("fail.csv", 30.0, 51.0);
  request.limit_files = {"cispr32-class-b-conducted"};
  request.prediction_file = write_text("scan.csv", "frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv\n1000000,48,45,41\n");
  const CompareResult r = compare_trace(request);
  CHECK(r.report.verdict == Verdict::fail);
  CHECK(std::abs(worst_of(r, Detector::quasi_peak) - (56.0 - 51.0)) < tol_db);
  CHECK(std::abs(worst_of(r, Detector::average) - (46.0 - 51.0)) < tol_db);
  CHECK(r.trace.frequency_hz.size() == 400);
  // 3 RBW of band B (9 kHz) at the first trace point.
  CHECK(std::abs(r.separation_hz - 27e3) < 1e-6);
  REQUIRE(r.remeasure.size() == 1);
  CHECK(std::abs(r.remeasure[0].frequency_hz - 1e6) < 1e-3);
  CHECK(r.remeasure[0].detectors == std::vector<Detector>{Detector::quasi_peak, Detector::average});
  REQUIRE(r.checks.size() == 1);
  REQUIRE(r.checks[0].difference_db.has_value());
  CHECK(std::abs(*r.checks[0].difference_db - (51.0 - 48.0)) < tol_db);
}

TEST_CASE("compare_trace: corrections add to the reading, dBm converts for 50 ohm") {
  CompareRequest request;
  request.data = locate_shipped_data();
  request.trace_file = write_trace("pass.csv", 30.0, 40.0);
  request.limit_files = {"cispr32-class-b-conducted"};
  const CompareResult plain = compare_trace(request);
  CHECK(plain.report.verdict == Verdict::pass);
  CHECK(plain.remeasure.empty());
  request.correction_files = {write_text("vdf.csv", "frequency_hz,correction_db\n150000,10\n30000000,10\n")};
  const CompareResult corrected = compare_trace(request);
  CHECK(std::abs(worst_of(corrected, Detector::average) - (worst_of(plain, Detector::average) - 10.0)) < tol_db);

  CompareRequest dbm;

  dbm.data = locate_shipped_data();
  const double dbuv_per_dbm = 90.0 + 10.0 * std::log10(50.0);  // 1 mW into 50 ohm is 0.2236 V: 106.99 dBuV
  dbm.trace_file = write_trace("dbm.csv", 30.0 - dbuv_per_dbm, 51.0 - dbuv_per_dbm, "frequency_hz,level_dbm");
  dbm.limit_files = {"cispr32-class-b-conducted"};
  const CompareResult converted = compare_trace(dbm);
  CHECK(converted.trace.unit == TraceUnit::dbm);
  CHECK(std::abs(worst_of(converted, Detector::average) - (46.0 - 51.0)) < tol_db);
}

TEST_CASE("compare_trace: a non-peak trace is compared only with its own detector's line") {
  CompareRequest request;
  request.data = locate_shipped_data();
  request.trace_file = write_trace("av.csv", 20.0, 35.0);
  request.limit_files = {"cispr32-class-b-conducted"};
  request.detector = Detector::average;
  const CompareResult r = compare_trace(request);
  REQUIRE(r.report.worst_per_detector.size() == 1);
  CHECK(std::abs(worst_of(r, Detector::average) - (46.0 - 35.0)) < tol_db);
  CHECK(r.remeasure.empty());  // the re-measure list is for peak traces
}

TEST_CASE("compare_trace errors") {
  CompareRequest request;
  request.data = locate_shipped_data();
  request.trace_file = write_trace("good.csv", 30.0, 40.0);
  request.limit_files = {"cispr32-class-b-conducted", "cispr32-class-b-radiated-3m"};
  CHECK_THROWS_WITH_AS(compare_trace(request), "expected limit files of one unit, found dB\xC2\xB5V and dB\xC2\xB5V/m", Error);
  request.limit_files = {"cispr32-class-b-radiated-3m"};
  // A field-strength trace: a voltage trace is refused against a radiated line before the range check.
  request.trace_file = write_text("short.csv", "frequency_hz,level (dBuV/m)\n150000,40\n1000000,41\n");
  CHECK_THROWS_WITH_AS(compare_trace(request),
                       (request.trace_file + ": no trace point lies on a limit line for the peak detector (trace 150 kHz to "
                                             "1 MHz, lines 30 MHz to 1 GHz)")
                           .c_str(),
                       Error);
  request.trace_file = write_text("voltage.csv", "frequency_hz,level_dbuv\n50e6,40\n60e6,41\n");
  CHECK_THROWS_WITH_AS(compare_trace(request),
                       (request.trace_file + ":1:14: expected a radiated-field trace (dBuV/m) for the limits \"CISPR 32 "
                                             "class B, radiated, 3 m\", found a conducted-voltage trace (dBuV)")
                           .c_str(),
                       Error);
}
