// Tests of core/chain/scan_at: a spot reading on an isolated harmonic of a described trapezoid reads
// its RMS value on every detector (CISPR 16-1-1 calibration, common practice; the line's RMS from
// the trapezoid Fourier series, C. R. Paul, Introduction to Electromagnetic Compatibility, 2nd ed.,
// chapter 3, docs/references.md §6.3), spot frequencies go to the CISPR band that holds them (CISPR
// 16-1-1 band edges, docs/references.md §1.1), and the errors of a request are exact.
#include <doctest/doctest.h>

#include <cmath>
#include <numbers>
#include <string>
#include <vector>

#include "core/chain/scan_at.hpp"
#include "core/chain/scenario.hpp"
#include "core/input/error.hpp"

using namespace spurcast;

namespace {

constexpr double tol_db = 0.05;  // [dB] the line path's Gaussian weight of the neighbours 100 kHz away is far below this

const std::string trapezoid_scenario =
    "title = \"trapezoid\"\n[switching]\nfrequency = \"100 kHz\"\nduty = 0.3\namplitude = \"10 V\"\ncurrent = \"2 A\"\n"
    "rise = \"50 ns\"\nfall = \"50 ns\"\n[coupling]\ninput_capacitance = \"4.7 uF\"\ninput_esr = \"8 mOhm\"\n"
    "input_esl = \"1.5 nH\"\nparasitic_capacitance = \"35 pF\"\n[lisn]\nmodel = \"v-network-50uH\"\nlines = 2\n";

double sinc(double x) { return x == 0.0 ? 1.0 : std::sin(x) / x; }

double trapezoid_dbuv(int n, double amplitude, double duty, double rise_over_period) {
  const double c_n = 2.0 * amplitude * duty * std::abs(sinc(std::numbers::pi * n * duty)) *
                     std::abs(sinc(std::numbers::pi * n * rise_over_period));
  return 20.0 * std::log10(c_n / std::numbers::sqrt2 / 1e-6);
}

}  // namespace

TEST_CASE("scan_scenario: a spot reading on an isolated line reads its RMS on every detector") {
  const Scenario scenario = scenario_from_text(trapezoid_scenario, "trapezoid.toml", ".", locate_shipped_data());
  ScanRequest request;
  request.at = "source";
  request.frequencies_hz = {300e3, 1.2e6};
  const ScanReport report = scan_scenario(scenario, request);
  CHECK(report.spot);
  CHECK(report.at == "source");
  CHECK(report.scenario_file == "trapezoid.toml");
  CHECK(report.detectors.size() == 3);
  REQUIRE(report.bands.size() == 1);
  CHECK(report.bands[0].band == CisprBand::B);
  REQUIRE(report.bands[0].readings.size() == 2);
  const std::vector<int> harmonics{3, 12};
  for (std::size_t i = 0; i < 2; ++i) {
    const Reading& r = report.bands[0].readings[i];
    const double expected = trapezoid_dbuv(harmonics[i], 10.0, 0.3, 50e-9 / 10e-6);
    CAPTURE(r.frequency_hz);
    CHECK(std::abs(r.peak_db - expected) < tol_db);
    CHECK(std::abs(r.quasi_peak_db - expected) < tol_db);
    CHECK(std::abs(r.average_db - expected) < tol_db);
  }
}

TEST_CASE("scan_plans: spot frequencies go to the band that holds them, bands ascending") {
  const Scenario scenario = scenario_from_text(trapezoid_scenario, "trapezoid.toml", ".", locate_shipped_data());
  ScanRequest request;
  request.frequencies_hz = {45e6, 400e3, 100e3, 1.2e6};  // band C (30-300 MHz), B (0.15-30 MHz), A (9-150 kHz)
  const std::vector<ScanPlan> plans = scan_plans(scenario, request);
  REQUIRE(plans.size() == 3);
  CHECK(plans[0].band == CisprBand::A);
  CHECK(plans[1].band == CisprBand::B);
  CHECK(plans[1].frequencies_hz == std::vector<double>{400e3, 1.2e6});
  CHECK(plans[2].band == CisprBand::C);
  // A band scan: the scenario's bands (default B) with the requested step; on_band sees each band.
  ScanRequest band_scan;
  band_scan.step_hz = 4.5e3;
  band_scan.at = "current";
  std::vector<CisprBand> seen;
  const ScanReport report = scan_scenario(scenario, band_scan, [&](CisprBand b) { seen.push_back(b); });
  CHECK(seen == std::vector<CisprBand>{CisprBand::B});
  REQUIRE(report.bands.size() == 1);
  CHECK(report.bands[0].step_hz == doctest::Approx(4.5e3));
  CHECK(report.bands[0].quantity == Quantity::current);
}

TEST_CASE("scan errors") {
  const Scenario scenario = scenario_from_text(trapezoid_scenario, "trapezoid.toml", ".", locate_shipped_data());
  ScanRequest request;
  request.band = CisprBand::B;
  request.step_hz = 9e3;
  CHECK_THROWS_WITH_AS(scan_plans(scenario, request),
                       "expected a step of at most 4.5 kHz (half the 9 kHz bandwidth of band B), found 9 kHz", Error);
  ScanRequest moon;
  moon.at = "moon";
  CHECK_THROWS_WITH_AS(scan_scenario(scenario, moon), "expected --at source, current or lisn, found \"moon\"", Error);
}
