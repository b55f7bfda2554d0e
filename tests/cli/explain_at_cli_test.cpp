// `spurcast predict --explain-at FREQ` end to end (issue 17 item 1: contributors at any frequency).
// External checks: summary.json read with nlohmann; report.html parsed by Debian's Python
// html.parser (tests/data/report/check_report.py); a requested frequency that is one of the worst
// readings must be explained exactly as the worst-reading list explains it (the same closed-form
// mode split, V_DM = (V1 − V2)/2, V_CM = (V1 + V2)/2, C. R. Paul, Introduction to EMC, 2nd ed.,
// ch. 6; docs/references.md §2.3).
#include <doctest/doctest.h>

#include <cmath>
#include <cstdlib>
#include <nlohmann/json.hpp>
#include <string>

#include "cli_support.hpp"

using namespace spurcast::test;

namespace {

/// A buck without an input filter, two lines, class B. Invented data.
const std::string scenario = R"(title = "explain-at test buck"
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
)";

/// summary.json rounds shares to 4 decimals.
constexpr double rounded_share = 1e-4 + 1e-12;

}  // namespace

TEST_CASE("predict --explain-at adds the contributors at the frequencies asked for") {
  const fs::path dir = fresh_directory("spurcast-", "explain-at");
  write_text(dir / "buck.toml", scenario);
  const RunResult plain = run_cli(dir, {"predict", "buck.toml", "-o", "plain", "--json"}, dir);
  REQUIRE(plain.exit_code == 1);
  const nlohmann::json before = nlohmann::json::parse(plain.out);
  REQUIRE(!before["contributors"].empty());
  CHECK(before["contributors_requested"].empty());
  const nlohmann::json& worst = before["contributors"][0];
  const double worst_hz = worst["frequency_hz"].get<double>();

  const RunResult run =
      run_cli(dir,
              {"predict", "buck.toml", "-o", "asked", "--json", "--explain-at", "660kHz",
               "--explain-at", std::to_string(worst_hz) + " Hz", "--explain-at", "1.2 MHz"},
              dir);
  REQUIRE(run.exit_code == 1);
  const nlohmann::json summary = nlohmann::json::parse(run.out);
  // The worst-reading list is unchanged; the requested list is separate and in the order given.
  CHECK(summary["contributors"] == before["contributors"]);
  const nlohmann::json& asked = summary["contributors_requested"];
  REQUIRE(asked.size() == 3);
  CHECK(asked[0]["frequency_hz"].get<double>() == doctest::Approx(660e3));
  CHECK(asked[0]["harmonic"] == 3);
  CHECK(asked[0]["dm_share"].get<double>() + asked[0]["cm_share"].get<double>() ==
        doctest::Approx(1.0).epsilon(rounded_share));
  // 1.2 MHz is 5.45 × 220 kHz, no line within band B's 9 kHz: the nearest line, harmonic 5.
  CHECK(asked[2]["harmonic"] == 5);
  // A worst frequency asked for is explained as the worst-reading list explains it.
  CHECK(asked[1]["harmonic"] == worst["harmonic"]);
  CHECK(std::abs(asked[1]["dm_share"].get<double>() - worst["dm_share"].get<double>()) <=
        rounded_share);
  CHECK(asked[1]["path"] == worst["path"]);
  CHECK(asked[1]["source"] == worst["source"]);

  // The same in the report: its own table, and the page still parses.
  const std::string html = read_text(dir / "asked" / "report.html");
  CHECK(html.find("At the frequencies asked for") != std::string::npos);
  CHECK(html.find("<td class=\"num\">660 kHz</td>") != std::string::npos);
  const std::string check =
      "/usr/bin/python3 " +
      shell_quote(std::string(SPURCAST_SOURCE_DIR) + "/tests/data/report/check_report.py") +
      " html " + shell_quote((dir / "asked" / "report.html").string()) + " >/dev/null";
  CHECK(std::system(check.c_str()) == 0);

  // And in the terminal summary.
  const RunResult text =
      run_cli(dir, {"predict", "buck.toml", "-o", "text", "--explain-at", "660kHz"}, dir);
  CHECK(text.exit_code == 1);
  CHECK(text.out.find("at the frequencies asked for") != std::string::npos);
  CHECK(text.out.find("\n  660 kHz: DM ") != std::string::npos);
}

TEST_CASE("predict --explain-at refuses a frequency it cannot explain") {
  const fs::path dir = fresh_directory("spurcast-", "explain-at-bad");
  write_text(dir / "buck.toml", scenario);
  const RunResult outside =
      run_cli(dir, {"predict", "buck.toml", "-o", "out", "--explain-at", "50MHz"}, dir);
  CHECK(outside.exit_code == 2);
  CHECK(outside.err ==
        "spurcast: error: explain-at: expected a frequency inside the computed band (band B "
        "150 kHz - 30 MHz), found 50 MHz\n");
  CHECK(!fs::exists(dir / "out"));
  const RunResult unit =
      run_cli(dir, {"predict", "buck.toml", "-o", "out", "--explain-at", "3 V"}, dir);
  CHECK(unit.exit_code == 2);
  CHECK(unit.err ==
        "spurcast: error: --explain-at: expected a frequency (e.g. \"220 kHz\"), found \"3 V\"\n");
  CHECK(!fs::exists(dir / "out"));
}
