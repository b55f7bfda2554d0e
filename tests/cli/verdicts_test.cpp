// End-to-end tests of what a verdict may claim (`spurcast predict` through the built executable):
// a limit compared only with a reading of its own quantity, `incomplete` where a limit range was not
// computed, `not computed` broadcast bands above a capture's Nyquist frequency, and `no limits`.
// Limit values: CISPR 32 class B, docs/references.md §3.1 (conducted) and §3.4 (radiated).
#include <doctest/doctest.h>

#include <cmath>
#include <string>

#include <nlohmann/json.hpp>

#include "cli_support.hpp"

using namespace spurcast::test;

namespace {

const std::string source_dir = SPURCAST_SOURCE_DIR;

/// The greenhouse example with its [limits] files and [receiver] bands replaced.
std::string greenhouse_with(const std::string& limits_files, const std::string& bands) {
  std::string text = read_text(source_dir + "/examples/greenhouse-buck.toml");
  const auto replace = [&](const std::string& from, const std::string& to) {
    const std::size_t at = text.find(from);
    REQUIRE(at != std::string::npos);
    text.replace(at, from.size(), to);
  };
  replace("files = [\"cispr32-class-b-conducted\"]", limits_files);
  replace("bands = [\"B\"]", bands);
  return text;
}

/// A capture of a 100 kHz, 40 % duty, 50 mV square wave at `sample_rate_hz` for 1 ms (a quiet
/// source, far under the class B line: every computed margin passes).
std::string quiet_capture(double sample_rate_hz) {
  std::string csv = "Time (s),CH1 (V)\n";
  const auto n = static_cast<long>(std::lround(1e-3 * sample_rate_hz));
  for (long i = 0; i < n; ++i) {
    const double t = static_cast<double>(i) / sample_rate_hz;
    const double phase = std::fmod(t * 100e3, 1.0);
    csv += std::to_string(t) + "," + (phase < 0.4 ? "0.05" : "0") + "\n";
  }
  return csv;
}

const std::string capture_scenario = R"(title = "quiet capture"
[capture]
file = "quiet.csv"
quantity = "voltage"
frequency = "100 kHz"
[coupling]
input_capacitance = "10 uF"
parasitic_capacitance = "20 pF"
[lisn]
model = "v-network-50uH"
lines = 2
[limits]
files = ["cispr32-class-b-conducted"]
)";

}  // namespace

TEST_CASE("a radiated-field limit is never compared with the LISN voltage") {
  const fs::path dir = fresh_directory("spurcast-verdicts-", "radiated");
  // Band B only: the radiated line has no reading, so the verdict is incomplete (exit 1), first.
  write_text(dir / "b.toml", greenhouse_with("files = [\"cispr32-class-b-radiated-10m\"]", "bands = [\"B\"]"));
  const RunResult b = run_in(dir, "predict b.toml -o out-b");
  CAPTURE(b.err);
  CHECK(b.exit_code == 1);
  CHECK(b.out.find("verdict: incomplete (not computed: 30 MHz-300 MHz of CISPR 32 class B, radiated, 10 m / "
                   "quasi-peak: band C was not scanned, so it has no radiated-field estimate") != std::string::npos);
  CHECK(b.out.find("pass") == std::string::npos);
  CHECK(read_text(dir / "out-b/margins.csv") == "frequency_hz,detector,reading_dbuv,limit_dbuv,margin_db,limit,unit\n");
  const auto summary = nlohmann::json::parse(read_text(dir / "out-b/summary.json"));
  CHECK(summary.at("verdict") == "incomplete");
  REQUIRE(summary.at("not_computed").size() == 2);
  CHECK(summary.at("not_computed")[0].at("reason") ==
        "band C was not scanned, so it has no radiated-field estimate (the scenario's [receiver] bands are B)");

  // Bands B and C: the radiated line is compared with the radiated-field estimate (dBµV/m) only.
  write_text(dir / "bc.toml", greenhouse_with("files = [\"cispr32-class-b-radiated-10m\", \"cispr32-class-b-conducted\"]",
                                              "bands = [\"B\", \"C\"]"));
  const RunResult bc = run_in(dir, "predict bc.toml -o out-bc");
  CAPTURE(bc.err);
  CHECK(bc.exit_code == 1);
  const std::string margins = read_text(dir / "out-bc/margins.csv");
  std::size_t radiated_rows = 0, conducted_rows = 0;
  std::size_t start = margins.find('\n') + 1;
  while (start < margins.size()) {
    const std::size_t end = margins.find('\n', start);
    const std::string row = margins.substr(start, end - start);
    if (row.find("radiated, 10 m") != std::string::npos) {
      ++radiated_rows;
      CHECK(row.ends_with(",dB\xC2\xB5V/m"));
      CHECK(std::stod(row) >= 30e6);  // the estimate is made in band C only
    } else {
      ++conducted_rows;
      CHECK(row.ends_with(",dB\xC2\xB5V"));
    }
    start = end + 1;
  }
  CHECK(radiated_rows > 0);
  CHECK(conducted_rows > 0);
}

TEST_CASE("a 1 MS/s capture is incomplete above 480 kHz, not a pass") {
  const fs::path dir = fresh_directory("spurcast-verdicts-", "slow");
  write_text(dir / "quiet.csv", quiet_capture(1e6));
  write_text(dir / "s.toml", capture_scenario);
  const RunResult r = run_in(dir, "predict s.toml -o out");
  CAPTURE(r.err);
  CHECK(r.exit_code == 1);
  CHECK(r.out.find("verdict: incomplete (common-mode noise only: the voltage capture drives the common-mode path, "
                   "differential-mode noise (the input current's) is not included; not computed: 480.8 kHz-30 MHz of CISPR 32 class B, AC mains port / "
                   "quasi-peak: the record's sample rate (1 MHz) covers tuned frequencies up to 480.8 kHz only") !=
        std::string::npos);
  CHECK(r.out.find("PASS") == std::string::npos);
  CHECK(r.out.find(" pass") == std::string::npos);
  const auto summary = nlohmann::json::parse(read_text(dir / "out/summary.json"));
  CHECK(summary.at("verdict") == "incomplete");
  CHECK(summary.at("not_computed")[0].at("from_hz").get<double>() == doctest::Approx(480750.0));
  // The report's verdict line says the same first.
  const std::string html = read_text(dir / "out/report.html");
  CHECK(html.find("<span class=\"word\">INCOMPLETE</span>\n<span>common-mode noise only: ") != std::string::npos);
  CHECK(html.find("is not included; not computed: 480.8 kHz-30 MHz of CISPR 32 class B") != std::string::npos);
  // Broadcast bands above 500 kHz were not computed: never `clear`.
  const std::string bands = read_text(dir / "out/bands.csv");
  CHECK(bands.find("\nMW,1,526500,1606500,not computed,") != std::string::npos);
  CHECK(bands.find("\nFM,1,87500000,108000000,not computed,") != std::string::npos);
}

TEST_CASE("a 40 MS/s capture: 20-30 MHz of band B is not computed") {
  const fs::path dir = fresh_directory("spurcast-verdicts-", "scope");
  const RunResult r = run_in(dir, "predict " + shell_quote(source_dir + "/examples/scope-capture.toml") + " -o out");
  CAPTURE(r.err);
  CHECK(r.exit_code == 1);
  const auto summary = nlohmann::json::parse(read_text(dir / "out/summary.json"));
  bool band_b_listed = false;
  for (const auto& part : summary.at("not_computed")) {
    if (part.contains("range") && part.at("range") == "band B") {
      band_b_listed = part.at("to_hz").get<double>() == doctest::Approx(30e6);
    }
  }
  CHECK(band_b_listed);
  CHECK(read_text(dir / "out/bands.csv").find("\nFM,1,87500000,108000000,not computed,") != std::string::npos);
}

TEST_CASE("no limit lines: the verdict is `no limits` (exit 0), never pass") {
  const fs::path dir = fresh_directory("spurcast-verdicts-", "nolimits");
  std::string text = read_text(source_dir + "/examples/greenhouse-buck.toml");
  const std::size_t at = text.find("[limits]");
  REQUIRE(at != std::string::npos);
  text.erase(at, text.find("[broadcast]") - at);
  write_text(dir / "n.toml", text);
  const RunResult r = run_in(dir, "predict n.toml -o out");
  CAPTURE(r.err);
  CHECK(r.exit_code == 0);
  CHECK(r.out.find("verdict: no limits (no limit lines were given: nothing was compared)") != std::string::npos);
  CHECK(r.out.find("pass") == std::string::npos);
  const auto summary = nlohmann::json::parse(read_text(dir / "out/summary.json"));
  CHECK(summary.at("verdict") == "no limits");
  CHECK(read_text(dir / "out/report.html").find("<span class=\"word\">NO LIMITS</span>") != std::string::npos);
}

TEST_CASE("a voltage capture says first that differential-mode noise is not included") {
  const fs::path dir = fresh_directory("spurcast-verdicts-", "cm-only");
  const RunResult r = run_in(dir, "predict " + shell_quote(source_dir + "/examples/scope-capture.toml") + " -o out");
  CAPTURE(r.err);
  CHECK(r.exit_code == 1);
  const std::string warning = "common-mode noise only: the voltage capture drives the common-mode path, "
                              "differential-mode noise (the input current's) is not included";
  // In the verdict line itself, before anything else it says.
  CHECK(r.out.find("verdict: fail (" + warning + "; ") != std::string::npos);
  // Above the margins table of the terminal and of the report, and in summary.json.
  CHECK(r.out.find("worst margin per detector of the limit line:\n  (" + warning + ")\n") != std::string::npos);
  const std::string html = read_text(dir / "out/report.html");
  const std::size_t margins = html.find("<h2>Margins</h2>");
  REQUIRE(margins != std::string::npos);
  CHECK(html.find("<p class=\"caution\"><strong>common-mode noise only: the voltage capture", margins) == margins + 17);
  const auto summary = nlohmann::json::parse(read_text(dir / "out/summary.json"));
  CHECK(summary.at("paths") == "common mode only");
  CHECK(summary.at("paths_warning") == warning);
}

TEST_CASE("scan.csv: no reading under the receiver's noise floor, and the readings on it marked") {
  const fs::path dir = fresh_directory("spurcast-verdicts-", "floor");
  std::string text = read_text(source_dir + "/examples/greenhouse-buck.toml");
  const std::string detectors = "detectors = [\"peak\", \"quasi-peak\", \"average\"]\n";
  const std::size_t at = text.find(detectors);
  REQUIRE(at != std::string::npos);
  text.insert(at + detectors.size(), "noise_floor = \"-5 dBuV\"\n");
  write_text(dir / "g.toml", text);
  const RunResult r = run_in(dir, "predict g.toml -o out");
  CAPTURE(r.err);
  CHECK(r.exit_code == 1);
  const std::string csv = read_text(dir / "out/scan.csv");
  REQUIRE(csv.rfind("frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv,at_floor\n", 0) == 0);
  std::size_t rows = 0, all_at_floor = 0, clear_of_floor = 0;
  std::size_t start = csv.find('\n') + 1;
  while (start < csv.size()) {
    const std::size_t end = csv.find('\n', start);
    const std::string row = csv.substr(start, end - start);
    double f = 0.0, pk = 0.0, qp = 0.0, av = 0.0;
    char flags[64] = "";
    REQUIRE(std::sscanf(row.c_str(), "%lf,%lf,%lf,%lf,%63s", &f, &pk, &qp, &av, flags) >= 4);
    const double tol_db = 0.005;  // the CSV's two decimals
    CHECK(av >= -5.0 - tol_db);   // the average detector reads lowest
    const std::string marked = flags;
    if (marked == "peak+quasi-peak+average") {
      ++all_at_floor;
      CHECK(std::abs(pk + 5.0) < tol_db);
    } else if (marked.empty()) {
      ++clear_of_floor;
      CHECK(av > -5.0);
    }
    ++rows;
    start = end + 1;
  }
  CHECK(all_at_floor > 0);
  CHECK(clear_of_floor > 0);
  CHECK(rows > all_at_floor + clear_of_floor / 2);
}
