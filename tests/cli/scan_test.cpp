// End-to-end tests of `spurcast scan` (run through SPURCAST_EXECUTABLE). External check: the
// fundamental of a 50 % square wave of amplitude A has the RMS value (2·A/π)/√2 (Fourier series,
// C. R. Paul, Introduction to Electromagnetic Compatibility, 2nd ed., §3.2; the 20 ns edges change
// it by sinc(π·f·t_r) = 1 − 7e-6 at 100 kHz), and an isolated line reads its RMS value on every
// detector (CISPR 16-1-1 calibration, common practice). The receiver's noise floor between the
// harmonics: thermal noise k·T0 = −174 dBm/Hz in the Gaussian IF's noise bandwidth 0.7527·B6 plus a
// 20 dB noise figure (docs/references.md §1.2; physics), −8.70 dBµV in band B.
#include <doctest/doctest.h>

#include "cli_support.hpp"

#include <nlohmann/json.hpp>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <numbers>
#include <sstream>
#include <string>

#include <sys/wait.h>

#include "core/input/units.hpp"

namespace fs = std::filesystem;

namespace {

using spurcast::test::read_text;
using spurcast::test::RunResult;
using spurcast::test::write_text;

fs::path fresh_directory(const std::string& name) { return spurcast::test::fresh_directory("spurcast_scan_test_", name); }
RunResult run(const fs::path& dir, const std::string& arguments) { return spurcast::test::run_in(dir, arguments); }


const std::string executable = SPURCAST_EXECUTABLE;

const char* square_wave_scenario = R"(title = "test square wave"
[switching]
frequency = "100 kHz"
duty = 0.5
amplitude = "10 V"
current = "1 A"
rise = "20 ns"
fall = "20 ns"
[receiver]
bands = ["B"]
)";

fs::path write_scenario(const fs::path& dir) {
  std::ofstream(dir / "square.toml") << square_wave_scenario;
  return dir / "square.toml";
}

}  // namespace

TEST_CASE("scan: a spot reading on the fundamental of a square wave reads its RMS on every detector") {
  const fs::path dir = fresh_directory("spot");
  write_scenario(dir);
  const RunResult r = run(dir, "scan square.toml --at source --frequencies 100kHz --json");
  REQUIRE(r.exit_code == 0);
  const auto j = nlohmann::json::parse(r.out);
  REQUIRE(j["bands"].size() == 1);
  CHECK(j["bands"][0]["band"] == "A");  // 100 kHz lies in band A
  const auto& reading = j["bands"][0]["readings"][0];
  const double expected_dbuv = spurcast::volts_to_dbuv(2.0 * 10.0 / std::numbers::pi / std::numbers::sqrt2);
  const double tol_db = 0.01;
  CHECK(std::abs(reading["peak"].get<double>() - expected_dbuv) < tol_db);
  CHECK(std::abs(reading["quasi_peak"].get<double>() - expected_dbuv) < tol_db);
  CHECK(std::abs(reading["average"].get<double>() - expected_dbuv) < tol_db);
}

TEST_CASE("scan: band B grid into CSV with the documented columns") {
  const fs::path dir = fresh_directory("csv");
  write_scenario(dir);
  const RunResult r = run(dir, "scan square.toml --at source --band B --step 4.5kHz --csv scan.csv");
  REQUIRE(r.exit_code == 0);
  CHECK(r.out.find("band B (9 kHz IF bandwidth), at the source") != std::string::npos);
  std::ifstream in(dir / "scan.csv");
  std::string header;
  std::getline(in, header);
  CHECK(header == "frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv,at_floor");  // docs/design.md §4
  std::size_t rows = 0;
  for (std::string line; std::getline(in, line);) ++rows;
  CHECK(rows == 6634);  // 150 kHz + k·4.5 kHz up to 30 MHz

  const RunResult current = run(dir, "scan square.toml --at current --band B --frequencies 300kHz --csv current.csv");
  REQUIRE(current.exit_code == 0);
  std::ifstream current_in(dir / "current.csv");
  std::getline(current_in, header);
  CHECK(header == "frequency_hz,peak_dbua,quasi_peak_dbua,average_dbua,at_floor");
}

TEST_CASE("scan: bad input exits with code 2, a precise message and no file") {
  const fs::path dir = fresh_directory("bad");
  write_scenario(dir);
  const RunResult step = run(dir, "scan square.toml --band B --step 5kHz --csv scan.csv");
  CHECK(step.exit_code == 2);
  CHECK(step.err == "spurcast: error: --step: expected a step of at most 4.5 kHz (half the 9 kHz bandwidth of band B), found 5 kHz\n");
  CHECK_FALSE(fs::exists(dir / "scan.csv"));
  const RunResult outside = run(dir, "scan square.toml --band B --frequencies 31MHz");
  CHECK(outside.exit_code == 2);
  CHECK(outside.err == "spurcast: error: frequency 31 MHz is outside band B (150 kHz-30 MHz)\n");
  const RunResult list = run(dir, "scan square.toml --frequencies 1MHz,,2MHz");
  CHECK(list.exit_code == 2);
  CHECK(list.err == "spurcast: error: expected a comma-separated list of frequencies, found \"1MHz,,2MHz\"\n");
}

TEST_CASE("scan: readings between the harmonics sit at the receiver's noise floor, as predict's do") {
  // A 50 % square wave has no even harmonics: between its lines, near 200 kHz and in the gaps, a
  // bare line receiver reads nothing (−400 dBµV before issue 14). The receiver's floor in band B:
  // −174 dBm/Hz + 107 dB (dBm to dBµV at 50 Ω) + 10·log10(0.7527·9 kHz) + 20 dB = −8.70 dBµV.
  const fs::path dir = fresh_directory("floor");
  write_scenario(dir);
  const double expected_floor_dbuv = -174.0 + 106.99 + 10.0 * std::log10(0.7527 * 9e3) + 20.0;
  const double tol_db = 0.01;
  const RunResult r = run(dir, "scan square.toml --band B --csv scan.csv --json");
  REQUIRE(r.exit_code == 0);
  const auto j = nlohmann::json::parse(r.out);
  REQUIRE(j["bands"].size() == 1);
  CHECK(std::abs(j["bands"][0]["noise_floor"].get<double>() - expected_floor_dbuv) < tol_db);
  std::ifstream in(dir / "scan.csv");
  std::string line;
  std::getline(in, line);
  REQUIRE(line == "frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv,at_floor");
  std::size_t rows = 0, marked = 0, clear = 0;
  double lowest_dbuv = 1e9;
  bool read_200khz = false;
  while (std::getline(in, line)) {
    ++rows;
    std::istringstream cells(line);
    std::string frequency, peak, quasi_peak, average, at_floor;
    std::getline(cells, frequency, ',');
    std::getline(cells, peak, ',');
    std::getline(cells, quasi_peak, ',');
    std::getline(cells, average, ',');
    std::getline(cells, at_floor);
    for (const std::string& level : {peak, quasi_peak, average}) lowest_dbuv = std::min(lowest_dbuv, std::stod(level));
    if (!at_floor.empty()) ++marked;
    if (at_floor.empty()) ++clear;
    if (std::abs(std::stod(frequency) - 199.5e3) < 1.0) {  // 150 kHz + 22 steps: 100 kHz from any line
      read_200khz = true;
      CHECK(at_floor == "peak+quasi-peak+average");
      CHECK(std::abs(std::stod(average) - expected_floor_dbuv) < tol_db);
    }
  }
  CHECK(read_200khz);
  // No reading below the floor, never −400 dBµV; most tuned frequencies of a 100 kHz comb with a
  // 9 kHz IF lie between the lines, and the lines themselves stand clear of it.
  CHECK(lowest_dbuv > expected_floor_dbuv - tol_db);
  CHECK(marked > rows / 2);
  CHECK(clear > 0);
  // The same floor on the terminal, and in a scenario's [receiver] noise_floor.
  const RunResult text = run(dir, "scan square.toml --band B");
  REQUIRE(text.exit_code == 0);
  CHECK(text.out.find("receiver noise floor -8.7 dB\xC2\xB5V: ") != std::string::npos);
  std::ofstream(dir / "floor.toml") << square_wave_scenario << "noise_floor = \"3 dBuV\"\n";
  const RunResult own = run(dir, "scan floor.toml --band B --frequencies 200kHz --json");
  REQUIRE(own.exit_code == 0);
  const auto k = nlohmann::json::parse(own.out);
  CHECK(std::abs(k["bands"][0]["readings"][0]["average"].get<double>() - 3.0) < tol_db);
  CHECK(k["bands"][0]["readings"][0]["at_floor"] == "peak+quasi-peak+average");
  // A current has no floor (the floor is a voltage at the receiver's input), and says so.
  const RunResult current = run(dir, "scan square.toml --at current --band B --frequencies 200kHz --json");
  REQUIRE(current.exit_code == 0);
  const auto c = nlohmann::json::parse(current.out);
  CHECK(c["bands"][0]["noise_floor"].is_null());
  CHECK(c["bands"][0]["readings"][0]["at_floor"] == "");
  CHECK(c["bands"][0]["notes"].dump().find("no receiver noise floor on current readings") != std::string::npos);
}
