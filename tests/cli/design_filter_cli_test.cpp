// `spurcast design-filter` end to end: exit codes (docs/design.md §4), the written scenario passes
// `spurcast predict` (exit 0), a file the command did not write is never replaced, and bad input is
// one line with exit 2. The JSON fields are interface (issue 17): y_capacitance_per_line_f,
// max_y_capacitance_f, stability.margin_db.
#include <doctest/doctest.h>

#include <cstdlib>
#include <nlohmann/json.hpp>
#include <string>

#include "cli_support.hpp"

using namespace spurcast::test;

TEST_CASE("design-filter writes a scenario that predict passes") {
  const fs::path dir = fresh_directory("spurcast-design-filter-", "ok");
  std::string scenario = read_text(fs::path(SPURCAST_SOURCE_DIR) / "examples/greenhouse-buck.toml");
  scenario += "\n[converter]\nmin_input_voltage = \"36 V\"\noutput_power = \"60 W\"\n";
  write_text(dir / "buck.toml", scenario);
  const RunResult r = run_cli(dir, {"design-filter", "buck.toml", "-o", "new.toml", "--json"}, dir);
  CHECK(r.exit_code == 0);
  CHECK(r.err.empty());
  const auto j = nlohmann::json::parse(r.out);
  CHECK(j["met"] == true);
  CHECK(j["max_y_capacitance_f"].get<double>() == doctest::Approx(6.92e-9).epsilon(1e-3));
  CHECK(j["y_capacitance_per_line_f"].get<double>() <= j["max_y_capacitance_f"].get<double>());
  CHECK(j["stability"]["computed"] == true);
  CHECK(j["stability"]["margin_db"].get<double>() >= 6.0);
  const RunResult p = run_cli(dir, {"predict", "new.toml", "-o", "report"}, dir);
  CHECK(p.exit_code == 0);
  // Run again: the file it wrote is replaced.
  CHECK(run_cli(dir, {"design-filter", "buck.toml", "-o", "new.toml"}, dir).exit_code == 0);
}

TEST_CASE(
    "design-filter exits 1 and names the binding constraint when no filter meets the limits") {
  const fs::path dir = fresh_directory("spurcast-design-filter-", "binding");
  std::string scenario = read_text(fs::path(SPURCAST_SOURCE_DIR) / "examples/greenhouse-buck.toml");
  scenario += "\n[safety]\ntouch_current = \"0.1 mA\"\n";
  // 470 pF to earth: the common-mode shortfall lies above any further choke's self-resonance.
  const std::string given = "parasitic_capacitance = \"35 pF\"";
  REQUIRE(scenario.find(given) != std::string::npos);
  scenario.replace(scenario.find(given), given.size(), "parasitic_capacitance = \"470 pF\"");
  write_text(dir / "buck.toml", scenario);
  const RunResult r = run_cli(dir, {"design-filter", "buck.toml", "-o", "new.toml"}, dir);
  CHECK(r.exit_code == 1);
  CHECK(r.out.find("not met: common mode: a larger choke would self-resonate below ") !=
        std::string::npos);
}

TEST_CASE("design-filter never replaces a file it did not write") {
  const fs::path dir = fresh_directory("spurcast-design-filter-", "foreign");
  fs::copy_file(fs::path(SPURCAST_SOURCE_DIR) / "examples/greenhouse-buck.toml", dir / "buck.toml");
  write_text(dir / "mine.toml", "# my notes\n");
  const RunResult r = run_cli(dir, {"design-filter", "buck.toml", "-o", "mine.toml"}, dir);
  CHECK(r.exit_code == 3);
  CHECK(
      r.err ==
      "spurcast: error: refusing to replace mine.toml: spurcast design-filter did not write it\n");
  CHECK(read_text(dir / "mine.toml") == "# my notes\n");
}

TEST_CASE("design-filter on a scenario without limits: one line, exit 2, nothing written") {
  const fs::path dir = fresh_directory("spurcast-design-filter-", "nolimits");
  write_text(dir / "s.toml",
             "[switching]\nfrequency = \"220 kHz\"\nduty = 0.25\namplitude = \"48 V\"\ncurrent = "
             "\"6 A\"\nrise = \"12 ns\"\nfall = \"15 ns\"\n");
  const RunResult r = run_cli(dir, {"design-filter", "s.toml", "-o", "new.toml"}, dir);
  CHECK(r.exit_code == 2);
  CHECK(r.err ==
        "spurcast: error: s.toml: design-filter needs limit lines to design against: give [limits] "
        "files\n");
  CHECK_FALSE(fs::exists(dir / "new.toml"));
}

TEST_CASE("design-filter --report writes the new scenario's report with the readings before") {
  // External check: the page parsed by Debian's Python html.parser and every inline SVG by
  // xml.etree (tests/data/report/check_report.py).
  const fs::path dir = fresh_directory("spurcast-design-filter-", "report");
  write_text(dir / "buck.toml",
             read_text(fs::path(SPURCAST_SOURCE_DIR) / "examples/greenhouse-buck.toml"));
  const RunResult r =
      run_cli(dir, {"design-filter", "buck.toml", "-o", "new.toml", "--report", "rep"}, dir);
  CHECK(r.exit_code == 0);
  CHECK(r.out.find("wrote the report of new.toml with the readings before in rep/report.html") !=
        std::string::npos);
  const std::string html = read_text(dir / "rep" / "report.html");
  // The before/after margin table: the example fails its average line by 7.16 dB before (shown to
  // 0.1 dB on the page, issue 19).
  CHECK(html.find("<h3 id=\"before-after\">Before and after</h3>") != std::string::npos);
  CHECK(html.find("<td class=\"num\">\xE2\x88\x92"
                  "7.2 dB</td>") != std::string::npos);
  CHECK(html.find("<p>Before: FAIL; after: PASS.</p>") != std::string::npos);
  // The before traces on the plot, in the page and in the SVG file.
  // The example's lines are steady, so its detectors coincide: one "before" trace says so (issue 19).
  CHECK(html.find("before: peak = quasi-peak = average (coincide: one line drawn)") != std::string::npos);
  CHECK(read_text(dir / "rep" / "scan-B.svg").find("before: peak = quasi-peak = average") != std::string::npos);
  const std::string check =
      "/usr/bin/python3 " +
      shell_quote(std::string(SPURCAST_SOURCE_DIR) + "/tests/data/report/check_report.py") +
      " html " + shell_quote((dir / "rep" / "report.html").string()) + " >/dev/null";
  CHECK(std::system(check.c_str()) == 0);
  // The report of NEW.toml is what predict makes of it: the same worst margins.
  const RunResult p = run_cli(dir, {"predict", "new.toml", "-o", "plain", "--json"}, dir);
  CHECK(p.exit_code == 0);
  const auto summary = nlohmann::json::parse(p.out);
  const auto reported = nlohmann::json::parse(read_text(dir / "rep" / "summary.json"));
  CHECK(summary["worst_margin_db"] == reported["worst_margin_db"]);
}

TEST_CASE("design-filter --report never replaces a folder it did not write") {
  const fs::path dir = fresh_directory("spurcast-design-filter-", "report-foreign");
  write_text(dir / "buck.toml",
             read_text(fs::path(SPURCAST_SOURCE_DIR) / "examples/greenhouse-buck.toml"));
  fs::create_directories(dir / "mine");
  write_text(dir / "mine" / "notes.txt", "my notes\n");
  const RunResult r =
      run_cli(dir, {"design-filter", "buck.toml", "-o", "new.toml", "--report", "mine"}, dir);
  CHECK(r.exit_code == 3);
  CHECK(read_text(dir / "mine" / "notes.txt") == "my notes\n");
  CHECK(!fs::exists(dir / "new.toml"));
}
