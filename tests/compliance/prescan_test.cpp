// The pre-scan against a prediction on a coarse analyser sweep: the prediction is compared as the
// analyser saw it (its maximum over each trace point's bin), re-measure frequencies come from the
// predicted lines, and a sweep step wider than the RBW is noted once.
#include "core/compliance/prescan.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "core/compliance/trace.hpp"

using namespace spurcast;

namespace {

const std::string source_dir = SPURCAST_SOURCE_DIR;

LimitSet class_b() {
  return read_limit_file(source_dir + "/limits/cispr32-class-b-conducted.toml");
}

// An invented prediction on a 2.25 kHz grid (a quarter of the 9 kHz RBW, the scan default): a 20
// dBµV floor and the harmonics of 220 kHz at 60 − 20·log10(n) dBµV, each seen through a Gaussian 9
// kHz IF (−6 dB at ±4.5 kHz).
std::vector<ScanCsvRow> harmonic_prediction() {
  std::vector<ScanCsvRow> rows;
  for (double f = 150e3; f <= 30e6 + 1.0; f += 2250.0) {
    double level = 20.0;
    const double n = std::round(f / 220e3);
    if (n >= 1.0) {
      const double offset_hz = f - n * 220e3;
      level = std::max(level, 60.0 - 20.0 * std::log10(n) - 6.0 * std::pow(offset_hz / 4.5e3, 2.0));
    }
    rows.push_back(ScanCsvRow{f, level, level - 3.0, level - 10.0});
  }
  return rows;
}

// A 1001-point analyser sweep, 150 kHz to 30 MHz (29.85 kHz steps), whose peak detector kept the
// maximum over each point's bin (±step/2), 2 dB above the prediction: the brute-force reference.
constexpr double sweep_start_hz = 150e3;
constexpr double sweep_step_hz = 29850.0;
constexpr int sweep_points = 1001;
constexpr double measured_offset_db = 2.0;

double brute_bin_maximum(const std::vector<ScanCsvRow>& prediction, double centre_hz,
                         double* where_hz = nullptr) {
  double best = -1e9;
  for (const ScanCsvRow& row : prediction) {
    if (std::abs(row.frequency_hz - centre_hz) > 0.5 * sweep_step_hz) continue;
    if (row.peak_dbuv > best) {
      best = row.peak_dbuv;
      if (where_hz) *where_hz = row.frequency_hz;
    }
  }
  return best;
}

std::string sweep_csv(const std::vector<ScanCsvRow>& prediction) {
  std::ostringstream csv;
  csv.precision(12);
  csv << "Type;Analyzer\nRBW;9000;Hz\n\nFrequency [Hz];Level [dBuV]\n";
  for (int i = 0; i < sweep_points; ++i) {
    const double f = sweep_start_hz + sweep_step_hz * i;
    csv << f << ";" << brute_bin_maximum(prediction, f) + measured_offset_db << "\n";
  }
  return csv.str();
}

}  // namespace

TEST_CASE(
    "coarse sweep: measured − predicted is the prediction's bin maximum, not the bin centre") {
  const std::vector<ScanCsvRow> prediction = harmonic_prediction();
  const MeasuredTrace trace = parse_trace_csv(sweep_csv(prediction), "sweep.csv");
  REQUIRE(trace.frequency_hz.size() == static_cast<std::size_t>(sweep_points));
  const PrescanResult result = run_prescan(trace, {class_b()}, prediction, Detector::peak);
  // The 220 kHz and 440 kHz lines fall 10.3 kHz and 8.5 kHz from the nearest sweep points.
  REQUIRE(result.remeasure.size() >= 2);
  REQUIRE(result.prediction.size() == result.remeasure.size());
  const double tol_db = 1e-9;
  const double tol_hz = 1e-6;
  for (std::size_t i = 0; i < result.remeasure.size(); ++i) {
    const RemeasurePoint& point = result.remeasure[i];
    const PredictionCheck& check = result.prediction[i];
    CAPTURE(point.trace_frequency_hz);
    REQUIRE(check.difference_db.has_value());
    CHECK(check.bin_maximum);
    CHECK(std::abs(*check.difference_db - measured_offset_db) < tol_db);
    double line_hz = 0.0;
    CHECK(std::abs(check.predicted->peak_dbuv -
                   brute_bin_maximum(prediction, point.trace_frequency_hz, &line_hz)) < tol_db);
    // Re-measure where the predicted line is, not at the bin centre.
    CHECK(point.from_prediction);
    CHECK(std::abs(point.frequency_hz - line_hz) < tol_hz);
  }
  CHECK(std::abs(result.remeasure[0].trace_frequency_hz - 209700.0) < tol_hz);
  CHECK(std::abs(result.remeasure[0].frequency_hz - 219750.0) <
        tol_hz);  // the 2.25 kHz grid point of 220 kHz
  CHECK(std::abs(result.remeasure[1].frequency_hz - 440250.0) < tol_hz);
  CHECK(result.remeasure_from_prediction);

  // What the nearest-row comparison gave (the finding): the line's skirt at the bin centre, more
  // than 25 dB under what the analyser saw.
  const ScanCsvRow* nearest = &prediction.front();
  for (const ScanCsvRow& row : prediction) {
    if (std::abs(row.frequency_hz - 209700.0) < std::abs(nearest->frequency_hz - 209700.0))
      nearest = &row;
  }
  CHECK(result.prediction[0].measured_peak_dbuv - nearest->peak_dbuv > 25.0);

  // One note, naming the step and the file's RBW.
  REQUIRE(result.notes.size() == 1);
  CHECK(result.notes[0] ==
        "the trace step (up to 29.85 kHz) is wider than the 9 kHz RBW of the file at 1000 of 1000 "
        "steps (150 kHz to "
        "30 MHz): a line between two points shows only through the analyser's maximum over each "
        "bin; the prediction "
        "is compared as its maximum over each bin");
  CHECK(result.sweep.wider_than_rbw == 1000);
}

TEST_CASE("bin maxima against numpy") {
  const char* python = std::filesystem::exists("/usr/bin/python3") ? "/usr/bin/python3" : "python3";
  const std::string probe = std::string(python) + " -c \"import numpy\" > /dev/null 2>&1";
  if (std::system(probe.c_str()) != 0) {
    MESSAGE("SKIPPED: python3 with numpy is not available");
    return;
  }
  const std::vector<ScanCsvRow> prediction = harmonic_prediction();
  const MeasuredTrace trace = parse_trace_csv(sweep_csv(prediction), "sweep.csv");
  const PrescanResult result = run_prescan(trace, {class_b()}, prediction, Detector::peak);
  const auto dir = std::filesystem::temp_directory_path();
  const std::string input = (dir / "spurcast_prescan_numpy_in.txt").string();
  const std::string output = (dir / "spurcast_prescan_numpy_out.txt").string();
  {
    std::ofstream in(input);
    in.precision(17);
    for (const ScanCsvRow& row : prediction) in << row.frequency_hz << " " << row.peak_dbuv << "\n";
  }
  std::ostringstream centres;
  centres.precision(17);
  for (std::size_t i = 0; i < result.remeasure.size(); ++i)
    centres << (i ? "," : "") << result.remeasure[i].trace_frequency_hz;
  // Bin = [centre - step/2, centre + step/2]; numpy takes the maximum of the predicted peaks in it.
  const std::string command =
      std::string(python) + " -c \"import numpy as np; d=np.loadtxt('" + input +
      "'); c=np.array([" + centres.str() +
      "]); h=29850/2; print(' '.join(repr(float(d[np.abs(d[:,0]-x)<=h,1].max())) for x in c))\" "
      "> " +
      output;
  REQUIRE(std::system(command.c_str()) == 0);
  std::ifstream out(output);
  const double tol_db = 1e-9;
  for (const PredictionCheck& check : result.prediction) {
    double expected = 0.0;
    REQUIRE(static_cast<bool>(out >> expected));
    CAPTURE(check.frequency_hz);
    CHECK(std::abs(check.predicted->peak_dbuv - expected) < tol_db);
  }
  std::filesystem::remove(input);
  std::filesystem::remove(output);
}

TEST_CASE(
    "a sweep no coarser than the RBW has no note; without a prediction the trace frequencies "
    "stay") {
  // 5 kHz steps under the CISPR 16-1-1 9 kHz band B RBW (docs/references.md §1.1): no note.
  std::string csv = "frequency_hz,level_dbuv\n";
  for (int i = 0; i <= 200; ++i)
    csv += std::to_string(990000 + 100 * i) + "," + (i == 100 ? "45" : "30") + "\n";
  const MeasuredTrace trace = parse_trace_csv(csv, "fine.csv");
  const PrescanResult result = run_prescan(trace, {class_b()}, {}, Detector::peak);
  CHECK(result.notes.empty());
  CHECK(result.sweep.wider_than_rbw == 0);
  // Without a prediction the note says only what the step means for the trace.
  const MeasuredTrace coarse_trace =
      parse_trace_csv("frequency_hz,level_dbuv\n150e3,30\n200e3,31\n", "coarse.csv");
  const PrescanResult coarse_result = run_prescan(coarse_trace, {class_b()}, {}, Detector::peak);
  REQUIRE(coarse_result.notes.size() == 1);
  CHECK(coarse_result.notes[0] ==
        "the trace step (up to 50 kHz) is wider than the 9 kHz RBW at 1 of 1 steps (150 kHz to 200 "
        "kHz): a line "
        "between two points shows only through the analyser's maximum over each bin");
  REQUIRE(result.remeasure.size() == 1);
  CHECK_FALSE(result.remeasure[0].from_prediction);
  CHECK_FALSE(result.remeasure_from_prediction);
  const double tol_hz = 1e-6;
  CHECK(std::abs(result.remeasure[0].frequency_hz - 1e6) < tol_hz);
  // A prediction coarser than the trace: no row inside the 100 Hz bin, the nearest within 3 RBW is
  // used.
  const std::vector<ScanCsvRow> coarse{{995000.0, 41.0, 40.0, 39.0}, {1020000.0, 50.0, 49.0, 48.0}};
  const PrescanResult beside = run_prescan(trace, {class_b()}, coarse, Detector::peak);
  REQUIRE(beside.prediction.size() == 1);
  CHECK_FALSE(beside.prediction[0].bin_maximum);
  CHECK(std::abs(beside.prediction[0].predicted->frequency_hz - 995000.0) < tol_hz);
  CHECK(std::abs(*beside.prediction[0].difference_db - 4.0) < 1e-9);
  CHECK_FALSE(beside.remeasure[0].from_prediction);  // the nearest row is not a line inside the bin
}

TEST_CASE("a prediction in dBuV is compared only with a voltage trace") {
  const LimitSet current_limits = parse_limit_text(
      "name = \"probe\"\nmeasures = \"conducted-current\"\nunit = \"dBuA\"\nsource = \"invented "
      "for the test\"\n"
      "confidence = \"read from nowhere: invented\"\n[[line]]\ndetector = \"average\"\n"
      "segment = [ { from = \"150 kHz\", to = \"30 MHz\", level = \"20 dBuA\" } ]\n",
      "probe.toml");
  const MeasuredTrace current =
      parse_trace_csv("frequency_hz,Current (dBuA)\n150e3,18\n30e6,10\n", "i.csv");
  CHECK_NOTHROW((void)run_prescan(current, {current_limits}, {}, Detector::peak));
  const std::vector<ScanCsvRow> prediction{{150e3, 60.0, 55.0, 50.0}};
  CHECK_THROWS_WITH_AS(
      (void)run_prescan(current, {current_limits}, prediction, Detector::peak),
      "i.csv:1:14: expected a conducted-voltage trace (dBuV) beside the prediction (dBuV), found a "
      "conducted-current trace (dBuA)",
      Error);
}
