// Tests of core/chain/spectrum_at: the spectrum at the source of a described trapezoid against its
// Fourier series (C. R. Paul, Introduction to Electromagnetic Compatibility, chapter 3: one-sided
// amplitude c_n = 2·A·d·|sinc(nπd)|·|sinc(nπ·t_r/T)| for equal edges, docs/references.md §6.3),
// at the LISN (the level is the higher line), and a coherent capture of two sines read back at their
// RMS values (common practice: an integer number of periods under a rectangular window puts each line
// on one bin). The point names and their errors are interface and checked exactly.
#include <doctest/doctest.h>

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <numbers>
#include <string>

#include "core/chain/scenario.hpp"
#include "core/chain/spectrum_at.hpp"
#include "core/source/source.hpp"
#include "core/input/error.hpp"
#include "core/input/units.hpp"

using namespace spurcast;

namespace {

constexpr double tol_db = 0.01;        // [dB]
constexpr double tol_hz = 1e-6;        // [Hz]

const std::string trapezoid_scenario =
    "title = \"trapezoid\"\n[switching]\nfrequency = \"100 kHz\"\nduty = 0.3\namplitude = \"10 V\"\ncurrent = \"2 A\"\n"
    "rise = \"50 ns\"\nfall = \"50 ns\"\n[coupling]\ninput_capacitance = \"4.7 uF\"\ninput_esr = \"8 mOhm\"\n"
    "input_esl = \"1.5 nH\"\nparasitic_capacitance = \"35 pF\"\n[lisn]\nmodel = \"v-network-50uH\"\nlines = 2\n";

double sinc(double x) { return x == 0.0 ? 1.0 : std::sin(x) / x; }

/// dBµV of the RMS value of the n-th harmonic of a trapezoid (docs/references.md §6.3).
double trapezoid_dbuv(int n, double amplitude, double duty, double rise_over_period) {
  const double c_n = 2.0 * amplitude * duty * std::abs(sinc(std::numbers::pi * n * duty)) *
                     std::abs(sinc(std::numbers::pi * n * rise_over_period));
  return 20.0 * std::log10(c_n / std::numbers::sqrt2 / 1e-6);
}

}  // namespace

TEST_CASE("scenario_spectrum at the source: the trapezoid's Fourier series") {
  const Scenario scenario = scenario_from_text(trapezoid_scenario, "trapezoid.toml", ".", locate_shipped_data());
  SpectrumSettings settings;
  settings.max_frequency_hz = 1e6;
  const SpectrumResult r = scenario_spectrum(scenario, "source", settings);
  CHECK(r.at == "source");
  CHECK(r.what == "switch-node voltage (described)");
  CHECK(r.quantity == Quantity::voltage);
  CHECK(std::abs(r.fundamental_hz - 100e3) < tol_hz);
  REQUIRE(r.rows.size() == 10);
  for (const SpectrumRow& row : r.rows) {
    CAPTURE(row.harmonic);
    CHECK(std::abs(row.frequency_hz - 100e3 * row.harmonic) < tol_hz);
    if (row.harmonic % 10 == 0) {
      CHECK(row.level_db < trapezoid_dbuv(1, 10.0, 0.3, 50e-9 / 10e-6) - 100.0);  // sinc(nπd) = 0: a null
    } else {
      CHECK(std::abs(row.level_db - trapezoid_dbuv(row.harmonic, 10.0, 0.3, 50e-9 / 10e-6)) < tol_db);
    }
    REQUIRE(row.envelope_db.has_value());
    CHECK(*row.envelope_db >= row.level_db - tol_db);  // the envelope bounds every line
    CHECK_FALSE(row.line1_db.has_value());
  }
  // The current is the same trapezoid with the current's amplitude: 2 A -> dBµA.
  const SpectrumResult current = scenario_spectrum(scenario, "current", settings);
  CHECK(current.quantity == Quantity::current);
  CHECK(std::abs(current.rows[0].level_db - trapezoid_dbuv(1, 2.0, 0.3, 50e-9 / 10e-6)) < tol_db);
}

TEST_CASE("scenario_spectrum at the LISN: the level is the higher of the two lines") {
  const Scenario scenario = scenario_from_text(trapezoid_scenario, "trapezoid.toml", ".", locate_shipped_data());
  SpectrumSettings settings;
  settings.max_frequency_hz = 2e6;
  const SpectrumResult r = scenario_spectrum(scenario, "", settings);  // "" = lisn for a scenario
  CHECK(r.at == "lisn");
  REQUIRE(r.rows.size() == 20);
  for (const SpectrumRow& row : r.rows) {
    REQUIRE(row.line1_db.has_value());
    CHECK(std::abs(row.level_db - std::max(*row.line1_db, *row.line2_db)) < tol_db);
    CHECK_FALSE(row.envelope_db.has_value());
  }
  REQUIRE(r.notes.size() == 1);
}

TEST_CASE("capture_spectrum: a coherent record of two sines reads their RMS values") {
  const std::filesystem::path file = std::filesystem::temp_directory_path() / "spurcast_spectrum_at_test.csv";
  {
    std::ofstream out(file);
    out << "Time (s),CH1 (V)\n";
    const double fs = 10e6;
    for (int i = 0; i < 10000; ++i) {  // 1 ms: 100 periods of 100 kHz
      const double t = i / fs;
      out << fmt::format("{:.12g},{:.12g}\n", t,
                         1.0 * std::sin(2 * std::numbers::pi * 100e3 * t) + 0.1 * std::sin(2 * std::numbers::pi * 300e3 * t));
    }
  }
  CaptureSpec spec;
  spec.file = file.string();
  SpectrumSettings settings;
  settings.fundamental_hz = 100e3;
  settings.window = Window::rectangular;
  settings.max_frequency_hz = 500e3;
  const SpectrumResult r = capture_spectrum(spec, "", settings);  // "" = source for a capture
  std::filesystem::remove(file);
  CHECK(r.at == "source");
  CHECK(r.what == "captured voltage");
  CHECK(r.window == std::optional<std::string>("rectangular"));
  CHECK(r.capture_samples == 10000);
  REQUIRE(r.capture.has_value());
  CHECK(r.capture->waveform.samples.empty());  // metadata only
  REQUIRE(r.rows.size() == 5);
  CHECK(std::abs(r.rows[0].level_db - 20.0 * std::log10(1.0 / std::numbers::sqrt2 / 1e-6)) < tol_db);
  CHECK(std::abs(r.rows[2].level_db - 20.0 * std::log10(0.1 / std::numbers::sqrt2 / 1e-6)) < tol_db);
  CHECK(r.rows[1].level_db < r.rows[2].level_db - 100.0);  // nothing at 200 kHz
}

TEST_CASE("the points of the chain and their errors") {
  CHECK(capture_point("") == "source");
  CHECK(capture_point("current") == "current");
  CHECK(scenario_point("") == "lisn");
  CHECK(scenario_point("source") == "source");
  CHECK_THROWS_WITH_AS(capture_point("lisn"),
                       "--at lisn needs a scenario (the coupling network and LISN); a capture file alone has none", Error);
  CHECK_THROWS_WITH_AS(capture_point("moon"), "expected --at source or current, found \"moon\"", Error);
  CHECK_THROWS_WITH_AS(scenario_point("moon"), "expected --at source, current or lisn, found \"moon\"", Error);
}

TEST_CASE("a two-channel capture at the LISN and at the current: the described source it was sampled from") {
  // The trapezoid scenario above sampled at 100 MHz over 40 whole periods by the band-limited
  // synthesis (flat within 1e-5 to 40 MHz), voltage and current in one CSV file. At the LISN both
  // channels drive their paths in the time domain, each line on a bin: the port lines equal the
  // described source's within 0.02 dB (passband ripple and the 17 digits written), at every line
  // within 80 dB of the strongest (below that, the records' rounding). --at current reads the
  // current channel.
  const double capture_tol_db = 0.02;
  const Scenario described = scenario_from_text(trapezoid_scenario, "t.toml", ".", locate_shipped_data());
  const SwitchingSpec& spec = *described.switching;
  const double fs = 100e6;
  const Waveform v = synthesize_switch_node(spec, fs, 40.0 / 100e3);
  const Waveform i = synthesize_input_current(spec, fs, 40.0 / 100e3);
  const auto dir = std::filesystem::temp_directory_path() / "spurcast_spectrum_two_channels";
  std::filesystem::create_directories(dir);
  {
    std::ofstream out(dir / "trapezoid.csv");
    char line[128];
    for (std::size_t k = 0; k < v.samples.size(); ++k) {
      std::snprintf(line, sizeof line, "%.17g,%.17g,%.17g\n", static_cast<double>(k) / fs, v.samples[k], i.samples[k]);
      out << line;
    }
  }
  const Scenario captured = scenario_from_text(
      "title = \"two channels\"\n[capture]\nfile = \"trapezoid.csv\"\nfrequency = \"100 kHz\"\ncurrent_column = 3\n"
      "[coupling]\ninput_capacitance = \"4.7 uF\"\ninput_esr = \"8 mOhm\"\ninput_esl = \"1.5 nH\"\n"
      "parasitic_capacitance = \"35 pF\"\n[lisn]\nmodel = \"v-network-50uH\"\nlines = 2\n",
      (dir / "c.toml").string(), dir.string(), locate_shipped_data());
  SpectrumSettings settings;
  for (const char* at : {"lisn", "current"}) {
    CAPTURE(at);
    const SpectrumResult a = scenario_spectrum(captured, at, settings);
    const SpectrumResult b = scenario_spectrum(described, at, settings);
    REQUIRE(a.rows.size() == b.rows.size());
    double strongest_db = -1e9;
    for (const SpectrumRow& row : b.rows) strongest_db = std::max(strongest_db, row.level_db);
    for (std::size_t k = 0; k < a.rows.size(); ++k) {
      if (b.rows[k].level_db < strongest_db - 80.0) continue;
      CAPTURE(k + 1);
      CHECK(std::abs(a.rows[k].level_db - b.rows[k].level_db) < capture_tol_db);
      if (b.rows[k].line2_db) {
        REQUIRE(a.rows[k].line2_db);
        CHECK(std::abs(*a.rows[k].line2_db - *b.rows[k].line2_db) < capture_tol_db);
        CHECK(std::abs(*a.rows[k].cm_db - *b.rows[k].cm_db) < capture_tol_db);
      }
    }
  }
}
