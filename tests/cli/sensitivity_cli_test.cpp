// `spurcast sensitivity` end to end. External check: finite differences of two full `predict` runs
// of the same executable (the scenario and its copy with one value written +10 %), read from their
// margins.csv and summary.json, agree with the command's figure to the rounding of those files.
// The JSON is read with nlohmann (its fields are interface: docs/design.md §4).
#include <doctest/doctest.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>

#include "cli_support.hpp"

using namespace spurcast::test;

namespace {

/// A buck without an input filter, two lines, class B and the region 1 bands. Invented data.
const std::string scenario = R"(title = "sensitivity test buck"
[switching]
frequency = "220 kHz"
duty = 0.25
amplitude = "48 V"
current = "6 A"
rise = "12 ns"
fall = "15 ns"
[coupling]
input_capacitance = "4.7 uF"
input_esr = "8 mOhm"
input_esl = "1.5 nH"
parasitic_capacitance = "35 pF"
[lisn]
model = "v-network-50uH"
lines = 2
[limits]
files = ["cispr32-class-b-conducted"]
guard = "6 dB"
[broadcast]
region = 1
distance = "3 m"
cable_length = "1.5 m"
environment = "residential"
)";

/// margins.csv and summary.json hold levels with 2 decimals: the difference of two such levels is
/// within 0.01 dB of the exact difference (plus float noise).
constexpr double two_rounded_levels_db = 0.01 + 1e-9;

/// The reading of `detector` at `frequency_hz` in margins.csv
/// (frequency_hz,detector,reading_dbuv,...).
double margins_reading(const std::string& csv, double frequency_hz, const std::string& detector) {
  std::istringstream in(csv);
  std::string line;
  std::getline(in, line);  // header
  while (std::getline(in, line)) {
    std::istringstream row(line);
    std::string f, d, reading;
    std::getline(row, f, ',');
    std::getline(row, d, ',');
    std::getline(row, reading, ',');
    if (d == detector && std::abs(std::stod(f) - frequency_hz) <= 1e-6 * frequency_hz)
      return std::stod(reading);
  }
  FAIL("no margins.csv row for " << detector << " at " << frequency_hz << " Hz");
  return 0.0;
}

}  // namespace

TEST_CASE("sensitivity --json agrees with two predict runs") {
  const fs::path dir = fresh_directory("spurcast-sensitivity-", "two-runs");
  write_text(dir / "base.toml", scenario);
  std::string changed = scenario;
  const std::string from = "parasitic_capacitance = \"35 pF\"";
  changed.replace(changed.find(from), from.size(), "parasitic_capacitance = \"38.5 pF\"");
  write_text(dir / "changed.toml", changed);

  const RunResult run = run_cli(dir, {"sensitivity", "base.toml", "--json", "--threads", "2"}, dir);
  REQUIRE(run.exit_code == 0);
  const nlohmann::json j = nlohmann::json::parse(run.out);
  REQUIRE(run_cli(dir, {"predict", "base.toml", "-o", "base-report"}, dir).exit_code <= 1);
  REQUIRE(run_cli(dir, {"predict", "changed.toml", "-o", "changed-report"}, dir).exit_code <= 1);
  const std::string base_csv = read_text(dir / "base-report" / "margins.csv");
  const std::string changed_csv = read_text(dir / "changed-report" / "margins.csv");
  const nlohmann::json base_summary =
      nlohmann::json::parse(read_text(dir / "base-report" / "summary.json"));
  const nlohmann::json changed_summary =
      nlohmann::json::parse(read_text(dir / "changed-report" / "summary.json"));

  int detectors = 0;
  int bands = 0;
  for (const nlohmann::json& s : j.at("sensitivities")) {
    REQUIRE(s.contains("key"));
    REQUIRE(s.contains("value"));
    REQUIRE(s.contains("value_si"));
    REQUIRE(s.contains("frequency_hz"));
    REQUIRE(s.contains("db_per_10_percent"));
    REQUIRE((s.contains("detector") || s.contains("band")));
    if (s.at("key") != "coupling.parasitic_capacitance") continue;
    CHECK(s.at("value") == "35 pF");
    CHECK(s.at("value_si").get<double>() == doctest::Approx(35e-12).epsilon(1e-12));
    const double f = s.at("frequency_hz").get<double>();
    const double db = s.at("db_per_10_percent").get<double>();
    if (s.contains("detector")) {
      const std::string d = s.at("detector");
      CAPTURE(d);
      CHECK(std::abs(db - (margins_reading(changed_csv, f, d) - margins_reading(base_csv, f, d))) <=
            two_rounded_levels_db);
      ++detectors;
    } else if (s.at("worst_frequency_after_hz").is_null()) {
      for (std::size_t b = 0; b < base_summary.at("bands").size(); ++b) {
        const nlohmann::json& before = base_summary.at("bands")[b];
        if (before.at("name") != s.at("band")) continue;
        const nlohmann::json& after = changed_summary.at("bands")[b];
        REQUIRE(std::abs(before.at("worst_channel_hz").get<double>() - f) < 1.0);
        CHECK(std::abs(db - (after.at("worst_level_dbuvm").get<double>() -
                             before.at("worst_level_dbuvm").get<double>())) <=
              two_rounded_levels_db);
        ++bands;
      }
    }
  }
  CHECK(detectors == 2);  // class B has a quasi-peak and an average line
  CHECK(bands >= 1);
  CHECK(j.at("skipped").is_array());
  CHECK(j.at("invalid").is_array());
}

TEST_CASE("sensitivity refuses a dithered source with exit 2 and a one-line error") {
  const fs::path dir = fresh_directory("spurcast-sensitivity-", "dither");
  std::string dithered = scenario;
  dithered.replace(dithered.find("rise = "), 0,
                   "dither = { profile = \"triangle\", deviation = \"8 %\", rate = \"12 kHz\" }\n");
  write_text(dir / "dithered.toml", dithered);
  const RunResult run = run_cli(dir, {"sensitivity", "dithered.toml"}, dir);
  CHECK(run.exit_code == 2);
  CHECK(run.out.empty());
  CHECK(run.err ==
        "spurcast: error: sensitivity needs a described source without dither: a dithered or "
        "captured source goes "
        "through the time-domain receiver, too slow to re-run for every key\n");
}
