// End-to-end tests of `spurcast compare` and `spurcast limits` (run through SPURCAST_EXECUTABLE):
// exit codes of docs/design.md §4 (0 every limit met, 1 exceeded or under the guard band, 2 bad input),
// output files written only on success, via a temporary file renamed into place.
// The traces here are invented test inputs; the limit values they are checked against come from
// the shipped CISPR 32 class B file (docs/references.md §3.1).
#include <doctest/doctest.h>
#include <sys/wait.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "cli_support.hpp"

namespace fs = std::filesystem;

namespace {

using spurcast::test::read_text;
using spurcast::test::RunResult;
using spurcast::test::write_text;

fs::path fresh_directory(const std::string& name) { return spurcast::test::fresh_directory("spurcast_compare_test_", name); }
RunResult run(const fs::path& dir, const std::string& arguments) { return spurcast::test::run_in(dir, arguments); }


const std::string source_dir = SPURCAST_SOURCE_DIR;
const std::string executable = SPURCAST_EXECUTABLE;

// A trace from 150 kHz to 30 MHz, 400 log-spaced points at `floor_dbuv`, with an emission of
// `emission_dbuv` at 1 MHz (one point).
std::string trace_csv(double floor_dbuv, double emission_dbuv, const std::string& header = "frequency_hz,level_dbuv",
                      double offset_db = 0.0) {
  std::ostringstream csv;
  csv.precision(10);
  csv << header << "\n";
  for (int i = 0; i < 400; ++i) {
    double f = 150e3 * std::pow(200.0, i / 399.0);
    double level = floor_dbuv;
    if (i > 0 && std::abs(std::log10(f / 1e6)) < 0.5 * std::log10(200.0) / 399.0) {
      f = 1e6;
      level = emission_dbuv;
    }
    csv << f << "," << level + offset_db << "\n";
  }
  return csv.str();
}

bool has_temporary_files(const fs::path& dir) {
  for (const auto& entry : fs::directory_iterator(dir)) {
    if (entry.path().filename().string().find(".tmp") != std::string::npos) return true;
  }
  return false;
}

}  // namespace

TEST_CASE("compare: every limit met -> exit 0, margins CSV written") {
  const fs::path dir = fresh_directory("pass");
  write_text(dir / "trace.csv", trace_csv(30.0, 35.0));
  const RunResult r = run(dir, "compare trace.csv --limits cispr32-class-b-conducted --csv margins.csv");
  CAPTURE(r.err);
  CHECK(r.exit_code == 0);
  CHECK(r.out.find("verdict: pass") != std::string::npos);
  CHECK(r.out.find("nothing to re-measure") != std::string::npos);
  REQUIRE(fs::exists(dir / "margins.csv"));
  const std::string csv = read_text(dir / "margins.csv");
  CHECK(csv.rfind("frequency_hz,detector,reading_dbuv,limit_dbuv,margin_db,limit,unit\n", 0) == 0);
  // A peak trace meets both the quasi-peak and the average line: two rows per point.
  CHECK(std::count(csv.begin(), csv.end(), '\n') == 1 + 2 * 400);
  CHECK_FALSE(has_temporary_files(dir));
  // Options before the trace: each --limits takes one file, so the trace is not taken for a limit file.
  CHECK(run(dir, "compare --limits cispr32-class-b-conducted trace.csv --limits fcc15-107-class-b-conducted").exit_code == 0);
}

TEST_CASE("compare: a margin under the guard band -> exit 1 (marginal)") {
  // CISPR 32 class B average at 1 MHz is 46 dBµV (docs/references.md §3.1): a 42 dBµV peak leaves 4 dB < 6 dB.
  const fs::path dir = fresh_directory("marginal");
  write_text(dir / "trace.csv", trace_csv(30.0, 42.0));
  const RunResult r = run(dir, "compare trace.csv --limits cispr32-class-b-conducted");
  CHECK(r.exit_code == 1);
  CHECK(r.out.find("verdict: marginal (worst margin +4.00 dB, guard 6 dB)") != std::string::npos);
  CHECK(r.out.find("1.0000 MHz  peak   42.00  average") != std::string::npos);
  // With a 3 dB guard band the same trace passes.
  CHECK(run(dir, "compare trace.csv --limits cispr32-class-b-conducted --guard 3dB").exit_code == 0);
}

TEST_CASE("compare: a limit exceeded -> exit 1, re-measure list and prediction side by side") {
  const fs::path dir = fresh_directory("fail");
  write_text(dir / "trace.csv", trace_csv(30.0, 51.0));
  write_text(dir / "scan.csv", "frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv\n1000000,48,45,41\n");
  const RunResult r =
      run(dir, "compare trace.csv --limits cispr32-class-b-conducted --prediction scan.csv --csv m.csv --json");
  CAPTURE(r.err);
  CHECK(r.exit_code == 1);
  const auto j = nlohmann::json::parse(r.out);
  CHECK(j["verdict"] == "fail");
  const double tol_db = 1e-6;
  CHECK(std::abs(j["worst_margin_db"]["average"].get<double>() - (46.0 - 51.0)) < tol_db);
  CHECK(std::abs(j["worst_margin_db"]["quasi-peak"].get<double>() - (56.0 - 51.0)) < tol_db);
  REQUIRE(j["remeasure"].size() == 1);
  CHECK(std::abs(j["remeasure"][0]["frequency_hz"].get<double>() - 1e6) < 1e-3);
  // 51 dBµV peak: within 6 dB of the quasi-peak line (56) and over the average line (46).
  CHECK(j["remeasure"][0]["detectors"] == nlohmann::json::array({"quasi-peak", "average"}));
  CHECK(std::abs(j["prediction"][0]["difference_db"].get<double>() - 3.0) < tol_db);
  CHECK(j["files"] == nlohmann::json::array({"m.csv"}));
  CHECK(fs::exists(dir / "m.csv"));  // a limit exceeded is still a finished run
}

TEST_CASE("compare: correction tables are added to the reading") {
  // Sign convention: corrected = reading + correction (docs/references.md §2.3: the VDF "is added to the
  // receiver reading"). 40 dBµV flat leaves 6 dB to the 46 dBµV average line: pass; +1 dB: marginal.
  const fs::path dir = fresh_directory("correction");
  write_text(dir / "trace.csv", trace_csv(40.0, 40.0));
  write_text(dir / "vdf.csv", "frequency_hz,correction_db\n100000,1\n40000000,1\n");
  CHECK(run(dir, "compare trace.csv --limits cispr32-class-b-conducted").exit_code == 0);
  const RunResult r = run(dir, "compare trace.csv --limits cispr32-class-b-conducted --correction vdf.csv");
  CHECK(r.exit_code == 1);
  CHECK(r.out.find("verdict: marginal (worst margin +5.00 dB") != std::string::npos);
}

TEST_CASE("compare: dBm traces are converted for 50 ohm") {
  // 0 dBm = 106.99 dBµV (docs/references.md §9.2 [D]); -67 dBm = 39.99 dBµV: 6.01 dB under 46 dBµV.
  const fs::path dir = fresh_directory("dbm");
  write_text(dir / "trace.csv", trace_csv(-67.0, -67.0, "frequency_hz,level"));
  const RunResult r = run(dir, "compare trace.csv --limits cispr32-class-b-conducted --unit dBm");
  CAPTURE(r.out);
  CHECK(r.exit_code == 0);
  CHECK(r.out.find("+6.01 dB") != std::string::npos);
  // One dB more and it is under the guard band.
  write_text(dir / "trace2.csv", trace_csv(-66.0, -66.0, "frequency_hz,level_dbm"));
  CHECK(run(dir, "compare trace2.csv --limits cispr32-class-b-conducted").exit_code == 1);
}

TEST_CASE("compare: a dBmV trace is +60 dB, not read as dBm") {
  // -10 dBmV = 50 dBµV (1 mV = 60 dBµV, common practice): 4 dB over the 46 dBµV average line at 1 MHz
  // (docs/references.md §3.1). Read as dBm it would be 96.99 dBµV.
  const fs::path dir = fresh_directory("dbmv");
  write_text(dir / "trace.csv", trace_csv(-10.0, -10.0, "frequency_hz,Level (dBmV)"));
  const RunResult r = run(dir, "compare trace.csv --limits cispr32-class-b-conducted --json");
  CAPTURE(r.err);
  CHECK(r.exit_code == 1);
  const auto j = nlohmann::json::parse(r.out);
  CHECK(j["trace"]["unit"] == "dBmV");
  const double tol_db = 1e-6;
  CHECK(std::abs(j["worst_margin_db"]["average"].get<double>() - (46.0 - 50.0)) < tol_db);
}

TEST_CASE("compare: an instrument export with metadata lines before the header") {
  // 30 dBµV flat leaves 16 dB to the 46 dBµV average line (docs/references.md §3.1): pass.
  const fs::path dir = fresh_directory("metadata");
  std::string text = "Type;Analyzer\nRBW;9000;Hz\n\nFrequency [Hz];Level [dBuV]\n";
  for (int i = 0; i < 1001; ++i) text += std::to_string(150000 + 29850 * i) + ";30,0\n";
  write_text(dir / "export.csv", text);
  const RunResult r = run(dir, "compare export.csv --limits cispr32-class-b-conducted --json");
  CAPTURE(r.err);
  CHECK(r.exit_code == 0);
  const auto j = nlohmann::json::parse(r.out);
  CHECK(j["trace"]["points"] == 1001);
  CHECK(std::abs(j["worst_margin_db"]["average"].get<double>() - 16.0) < 1e-9);
}

TEST_CASE(
    "compare: a 1001-point sweep beside a prediction is compared bin by bin, with a note on the "
    "step") {
  // An invented prediction: a 220 kHz line at 60 dBµV seen through a Gaussian 9 kHz IF on a 2.25
  // kHz grid, and the analyser trace that kept the maximum of each 29.85 kHz bin, 2 dB higher.
  // Before the fix the comparison took the predicted row nearest the bin centre (209.7 kHz): +27.4
  // dB.
  const fs::path dir = fresh_directory("sweep");
  std::ostringstream scan;
  scan.precision(12);
  scan << "frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv\n";
  std::vector<std::pair<double, double>> rows;
  for (double f = 150e3; f <= 30e6 + 1.0; f += 2250.0) {
    const double level = std::max(20.0, 60.0 - 6.0 * std::pow((f - 220e3) / 4.5e3, 2.0));
    rows.emplace_back(f, level);
    scan << f << "," << level << "," << level << "," << level << "\n";
  }
  write_text(dir / "scan.csv", scan.str());
  std::ostringstream trace;
  trace.precision(12);
  trace << "Type;Analyzer\nRBW;9000;Hz\n\nFrequency [Hz];Level [dBuV]\n";
  for (int i = 0; i < 1001; ++i) {
    const double f = 150e3 + 29850.0 * i;
    double best = 0.0;
    for (const auto& [g, level] : rows) {
      if (std::abs(g - f) <= 29850.0 / 2) best = std::max(best, level);
    }
    trace << f << ";" << best + 2.0 << "\n";
  }
  write_text(dir / "sweep.csv", trace.str());
  const RunResult r =
      run(dir, "compare sweep.csv --limits cispr32-class-b-conducted --prediction scan.csv --json");
  CAPTURE(r.err);
  CHECK(r.exit_code == 1);
  const std::string note =
      "spurcast: note: the trace step (up to 29.85 kHz) is wider than the 9 kHz RBW of the file at "
      "1000 of 1000 steps "
      "(150 kHz to 30 MHz): a line between two points shows only through the analyser's maximum "
      "over each bin; the "
      "prediction is compared as its maximum over each bin\n";
  CHECK(r.err == note);  // once
  const auto j = nlohmann::json::parse(r.out);
  REQUIRE(j["notes"].size() == 1);
  CHECK(j["remeasure_from_prediction"] == true);
  REQUIRE(j["remeasure"].size() == 1);
  const double tol_hz = 1e-3;
  CHECK(std::abs(j["remeasure"][0]["frequency_hz"].get<double>() - 219750.0) < tol_hz);
  CHECK(std::abs(j["remeasure"][0]["trace_frequency_hz"].get<double>() - 209700.0) < tol_hz);
  CHECK(j["remeasure"][0]["frequency_from"] == "prediction");
  CHECK(std::abs(j["prediction"][0]["difference_db"].get<double>() - 2.0) < 1e-6);
  CHECK(j["prediction"][0]["predicted_is_bin_maximum"] == true);
}

TEST_CASE("compare: bad input -> exit 2, message on stderr, nothing written") {
  const fs::path dir = fresh_directory("bad");
  write_text(dir / "trace.csv", "frequency_hz,level_dbuv\n1e6,40\n0.9e6,41\n");
  RunResult r = run(dir, "compare trace.csv --limits cispr32-class-b-conducted --csv m.csv");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "spurcast: error: trace.csv:3:1: frequencies out of order: expected above 1 MHz, found 900 kHz\n");
  CHECK_FALSE(fs::exists(dir / "m.csv"));
  CHECK_FALSE(has_temporary_files(dir));

  write_text(dir / "good.csv", trace_csv(30.0, 30.0));
  r = run(dir, "compare good.csv --limits no-such-limits --csv m.csv");
  CHECK(r.exit_code == 2);
  // The executable finds its data beside itself: the build's copy in <build>/share/spurcast.
  const std::string shipped_limits = (fs::path(SPURCAST_EXECUTABLE).parent_path() / "share/spurcast/limits").string();
  CHECK(r.err == "spurcast: error: cannot find limit file \"no-such-limits\" here or in " + shipped_limits + "\n");
  CHECK_FALSE(fs::exists(dir / "m.csv"));

  r = run(dir, "compare good.csv --limits cispr32-class-b-conducted --guard 6V --csv m.csv");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "spurcast: error: expected a level in dB (e.g. \"6 dB\"), found \"6V\"\n");
  CHECK_FALSE(fs::exists(dir / "m.csv"));

  r = run(dir, "compare good.csv --limits " + source_dir + "/tests/data/limits/unknown-detector.toml");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "spurcast: error: " + source_dir +
                     "/tests/data/limits/unknown-detector.toml:9:12: expected one of peak, quasi-peak or average, "
                     "found \"qp\"\n");

  // A field-strength trace (a voltage trace is refused against a radiated line before this check).
  write_text(dir / "short.csv", "frequency_hz,level (dBuV/m)\n1e6,30\n2e6,30\n");
  r = run(dir, "compare short.csv --limits cispr32-class-b-radiated-3m");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "spurcast: error: short.csv: no trace point lies on a limit line for the peak detector (trace "
                 "1 MHz to 2 MHz, lines 30 MHz to 1 GHz)\n");

  write_text(dir / "field.csv", "frequency_hz,level_dbuv\n1e6,30\n2e6,30\n");
  r = run(dir, "compare field.csv --limits cispr32-class-b-radiated-3m");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "spurcast: error: field.csv:1:14: expected a radiated-field trace (dBuV/m) for the limits \"CISPR 32 "
                 "class B, radiated, 3 m\", found a conducted-voltage trace (dBuV)\n");

  r = run(dir, "compare good.csv --limits cispr32-class-b-conducted --limits cispr32-class-b-radiated-3m");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "spurcast: error: expected limit files of one unit, found dB\xC2\xB5V and dB\xC2\xB5V/m\n");
}

TEST_CASE("limits: list the shipped files, validate given ones") {
  const fs::path dir = fresh_directory("limits");
  RunResult r = run(dir, "limits");
  CHECK(r.exit_code == 0);
  for (const char* stem : {"cispr11-group1-class-a-conducted", "cispr11-group1-class-b-conducted",
                           "cispr32-class-a-conducted", "cispr32-class-b-conducted", "cispr32-class-a-radiated-3m",
                           "cispr32-class-a-radiated-10m", "cispr32-class-b-radiated-3m", "cispr32-class-b-radiated-10m",
                           "fcc15-107-class-a-conducted", "fcc15-107-class-b-conducted"}) {
    CAPTURE(stem);
    CHECK(r.out.find(std::string(stem) + "\n") != std::string::npos);
  }
  CHECK(r.out.find("confidence: from memory") != std::string::npos);

  r = run(dir, "limits cispr32-class-b-conducted --json");
  CHECK(r.exit_code == 0);
  const auto j = nlohmann::json::parse(r.out);
  CHECK(j[0]["name"] == "CISPR 32 class B, AC mains port");
  CHECK(j[0]["lines"].size() == 2);

  r = run(dir, "limits " + source_dir + "/tests/data/limits/missing-source.toml");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "spurcast: error: " + source_dir +
                     "/tests/data/limits/missing-source.toml:1:1: missing key 'source' in [limit file] (expected a "
                     "string)\n");
}
