// End-to-end tests of `spurcast predict` and `spurcast demo` through the built executable
// (SPURCAST_EXECUTABLE): exit codes, every file written, summary.json against the CSVs, SVG and HTML
// well-formed (Debian's Python xml.etree / html.parser), colour rules, an interrupted run, and the
// report rendered by a real browser (headless Debian chromium; skipped with a message if absent), and
// its hover readout and detector switches driven there, read against the CSVs of the same run.
#include <doctest/doctest.h>

#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <numbers>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "cli_support.hpp"

namespace fs = std::filesystem;

namespace {

const std::string executable = SPURCAST_EXECUTABLE;
const std::string source_dir = SPURCAST_SOURCE_DIR;
const std::string checker = source_dir + "/tests/data/report/check_report.py";
const std::string python = "/usr/bin/python3";

struct Run {
  int status = -1;  // exit code, or 128 + signal
  std::string out;
  std::string err;
};

std::string read_file(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

std::string quote(const std::string& text) {
  std::string out = "'";
  for (char c : text) out += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return out + "'";
}

/// Runs `command` with /bin/sh in `directory`, stdout and stderr captured.
Run run(const std::string& command, const std::string& directory) {
  const std::string out = directory + "/.stdout", err = directory + "/.stderr";
  const int raw = std::system(("cd " + quote(directory) + " && " + command + " > " + quote(out) + " 2> " + quote(err)).c_str());
  Run result;
  if (WIFEXITED(raw)) result.status = WEXITSTATUS(raw);
  else if (WIFSIGNALED(raw)) result.status = 128 + WTERMSIG(raw);
  result.out = read_file(out);
  result.err = read_file(err);
  fs::remove(out);
  fs::remove(err);
  return result;
}

std::string make_temp_dir() {
  std::string pattern = (fs::temp_directory_path() / "spurcast-predict-test-XXXXXX").string();
  REQUIRE(::mkdtemp(pattern.data()) != nullptr);
  return pattern;
}

bool have_python() { return ::access(python.c_str(), X_OK) == 0; }

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

std::vector<std::string> csv_cells(const std::string& line) {
  std::vector<std::string> cells;
  std::string cell;
  bool quoted = false;
  for (char c : line) {
    if (c == '"') quoted = !quoted;
    else if (c == ',' && !quoted) {
      cells.push_back(cell);
      cell.clear();
    } else cell += c;
  }
  cells.push_back(cell);
  return cells;
}

const std::vector<std::string> required_files{"report.html", "spectrum.csv", "source_spectrum.csv", "scan.csv",
                                              "margins.csv", "bands.csv",    "summary.json"};

/// Every check of one written report folder; returns the parsed summary.
nlohmann::json check_report_folder(const fs::path& folder) {
  REQUIRE(fs::is_directory(folder));
  const nlohmann::json summary = nlohmann::json::parse(read_file(folder / "summary.json"));
  for (const std::string& name : required_files) {
    CAPTURE(name);
    CHECK(fs::exists(folder / name));
    CHECK(std::find(summary.at("files").begin(), summary.at("files").end(), name) != summary.at("files").end());
  }
  std::vector<std::string> svgs;
  for (const auto& name : summary.at("files")) {
    CAPTURE(name.get<std::string>());
    CHECK(fs::file_size(folder / name.get<std::string>()) > 0);
    if (name.get<std::string>().ends_with(".svg")) svgs.push_back((folder / name.get<std::string>()).string());
  }
  // Nothing else in the folder but the marker that lets a later run replace it (issue 14).
  std::size_t count = 0;
  for ([[maybe_unused]] const auto& entry : fs::directory_iterator(folder)) ++count;
  CHECK(count == summary.at("files").size() + 1);
  CHECK(read_file(folder / ".spurcast-output").find("\ntool: spurcast ") != std::string::npos);

  const std::string verdict = summary.at("verdict");
  CHECK((verdict == "pass" || verdict == "marginal" || verdict == "fail" || verdict == "incomplete" ||
         verdict == "no limits"));

  // Column headers are interface (docs/design.md §4).
  CHECK(lines_of(read_file(folder / "spectrum.csv"))[0] == "harmonic,frequency_hz,level_dbuv,line1_dbuv,line2_dbuv,dm_dbuv,cm_dbuv");
  CHECK(lines_of(read_file(folder / "margins.csv"))[0] == "frequency_hz,detector,reading_dbuv,limit_dbuv,margin_db,limit,unit");
  CHECK(lines_of(read_file(folder / "bands.csv"))[0] == "band,region,low_hz,high_hz,verdict,worst_channel_hz,worst_level,unit");
  CHECK(lines_of(read_file(folder / "channels.csv"))[0] ==
        "band,channel_hz,level_dbuvm,antenna,clear_below_dbuvm,noisy_above_dbuvm,verdict,lines,strongest_line_offset_hz,tone,"
        "main_radiator,share_cable_cm,share_cable_dm,share_hot_loop");
  CHECK(summary.at("broadcast_assumptions").get<std::string>().starts_with("a portable radio "));
  const std::vector<std::string> scan = lines_of(read_file(folder / "scan.csv"));
  // A battery supply has no LISN port to read: the scan holds its header only.
  const bool battery = summary.at("lisn_setup").get<std::string>().starts_with("battery supply");
  REQUIRE(scan.size() >= 1);
  if (!battery) REQUIRE(scan.size() > 1);
  if (battery) CHECK(scan.size() == 1);
  CHECK(scan[0] == "frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv,at_floor");
  double previous = -1.0;
  bool ascending = true;
  for (std::size_t i = 1; i < scan.size(); ++i) {
    const double f = std::stod(csv_cells(scan[i])[0]);
    ascending = ascending && f > previous;
    previous = f;
  }
  CHECK(ascending);

  // summary.json against margins.csv: the smallest margin per line detector (the detector named at
  // the end of the `limit` label, core/compliance/limits.hpp line_label).
  std::map<std::string, double> smallest;
  double overall = INFINITY;
  const std::vector<std::string> margins = lines_of(read_file(folder / "margins.csv"));
  for (std::size_t i = 1; i < margins.size(); ++i) {
    const std::vector<std::string> cells = csv_cells(margins[i]);
    REQUIRE(cells.size() == 7);
    CHECK(cells[6] == "dB\xC2\xB5V");  // every example compares conducted-voltage lines
    const std::string detector = cells[5].substr(cells[5].rfind("/ ") + 2);
    const double margin = std::stod(cells[4]);
    if (!smallest.count(detector) || margin < smallest[detector]) smallest[detector] = margin;
    overall = std::min(overall, margin);
  }
  const double tol_db = 1e-9;
  CHECK(summary.at("worst_margin_db").size() == smallest.size());
  for (const auto& [detector, margin] : smallest) {
    CAPTURE(detector);
    CHECK(summary.at("worst_margin_db").at(detector).get<double>() == doctest::Approx(margin).epsilon(tol_db));
  }
  if (std::isfinite(overall)) {
    CHECK(summary.at("worst").at("margin_db").get<double>() == doctest::Approx(overall).epsilon(tol_db));
    CHECK(summary.at("worst_frequencies")[0].at("margin_db").get<double>() == doctest::Approx(overall).epsilon(tol_db));
    const double guard = summary.at("guard_db");
    const std::string expected = overall < 0 ? "fail" : (overall < guard ? "marginal" : "pass");
    CHECK(verdict == expected);
  }
  // summary.json against bands.csv: name and verdict of every band, in order.
  const std::vector<std::string> bands = lines_of(read_file(folder / "bands.csv"));
  REQUIRE(bands.size() == summary.at("bands").size() + 1);
  for (std::size_t i = 0; i < summary.at("bands").size(); ++i) {
    const std::vector<std::string> cells = csv_cells(bands[i + 1]);
    CHECK(cells[0] == summary.at("bands")[i].at("name").get<std::string>());
    CHECK(cells[4] == summary.at("bands")[i].at("verdict").get<std::string>());
  }

  const std::string page = read_file(folder / "report.html");
  for (const char* id : {"verdict", "plots", "changes", "margins", "bands", "pre-lab", "safety", "assumptions", "inputs"}) {
    CAPTURE(id);
    CHECK(page.find(std::string("<section id=\"") + id + "\"") != std::string::npos);
  }
  if (have_python()) {
    std::string command = python + " " + quote(checker) + " xml";
    for (const std::string& svg : svgs) command += " " + quote(svg);
    CHECK(run(command, folder.string()).status == 0);
    const Run html = run(python + " " + quote(checker) + " html report.html", folder.string());
    CHECK_MESSAGE(html.status == 0, html.err);
  }
  return summary;
}

}  // namespace

TEST_CASE("predict on every example writes a whole report and exits with the documented code") {
  if (!have_python()) MESSAGE("the SVG/HTML parse checks are skipped: /usr/bin/python3 not found");
  const std::string work = make_temp_dir();
  std::vector<fs::path> examples;
  for (const auto& entry : fs::directory_iterator(source_dir + "/examples")) {
    if (entry.path().extension() == ".toml") examples.push_back(entry.path());
  }
  std::sort(examples.begin(), examples.end());
  REQUIRE(examples.size() >= 4);
  for (const fs::path& example : examples) {
    CAPTURE(example.string());
    const std::string out = "out-" + example.stem().string();
    const Run r = run(quote(executable) + " predict " + quote(example.string()) + " -o " + out, work);
    CHECK_MESSAGE(r.err.empty(), r.err);
    const nlohmann::json summary = check_report_folder(fs::path(work) / out);
    // Exit codes (docs/design.md §4): 0 every limit met; 1 a limit exceeded or a margin under the guard.
    // "no limits" claims nothing, so nothing failed (exit 0).
    CHECK(r.status == (summary.at("verdict") == "pass" || summary.at("verdict") == "no limits" ? 0 : 1));
    CHECK(r.out.find("verdict: " + summary.at("verdict").get<std::string>()) != std::string::npos);
    CHECK(r.out.find("report written to " + out + "/") != std::string::npos);
    CHECK(r.out.find('\x1b') == std::string::npos);  // stdout is a file here: no colour
    if (!summary.at("worst").is_null()) CHECK(r.out.find("five worst frequencies:") != std::string::npos);
    // The band list says what the estimate assumes (issue 15).
    CHECK(r.out.find("broadcast bands (a portable radio ") != std::string::npos);
    // Nothing but the report folders in the working folder: no temporary sibling left.
    for (const auto& entry : fs::directory_iterator(work)) {
      CHECK(entry.path().filename().string().find(".tmp-") == std::string::npos);
    }
  }
  fs::remove_all(work);
}

TEST_CASE("--json prints summary.json; the default folder is spurcast-report; a rerun replaces it") {
  const std::string work = make_temp_dir();
  const std::string scenario = quote(source_dir + "/examples/greenhouse-buck.toml");
  const Run first = run(quote(executable) + " predict " + scenario + " --json", work);
  REQUIRE(fs::exists(work + "/spurcast-report/summary.json"));
  CHECK(first.out == read_file(work + "/spurcast-report/summary.json"));
  CHECK(nlohmann::json::parse(first.out).is_object());
  const Run second = run(quote(executable) + " predict " + scenario + " --json", work);
  CHECK(second.status == first.status);
  CHECK(second.out == first.out);  // byte-reproducible
  CHECK(read_file(work + "/spurcast-report/report.html").size() > 10000);
  fs::remove_all(work);
}

TEST_CASE("demo needs no files and writes spurcast-demo") {
  const std::string work = make_temp_dir();
  const Run r = run(quote(executable) + " demo", work);
  const nlohmann::json summary = check_report_folder(fs::path(work) / "spurcast-demo");
  CHECK(r.status == 0);  // the demo reports its verdict but exits 0 once it ran
  CHECK(summary.at("title") == "48 V to 12 V buck, greenhouse lighting controller");
  const Run json = run(quote(executable) + " demo -o other --json", work);
  CHECK(json.out == read_file(work + "/other/summary.json"));
  fs::remove_all(work);
}

TEST_CASE("bad input exits 2 with a message and writes nothing") {
  const std::string work = make_temp_dir();
  const Run missing = run(quote(executable) + " predict no-such.toml -o out", work);
  CHECK(missing.status == 2);
  CHECK(missing.err.rfind("spurcast: error: ", 0) == 0);
  std::ofstream(work + "/bad.toml") << "title = \"x\"\n[switching\nfrequency = \"220 kHz\"\n";  // TOML syntax error
  const Run bad = run(quote(executable) + " predict bad.toml -o out", work);
  CHECK(bad.status == 2);
  CHECK(bad.err.find("bad.toml:2:") != std::string::npos);  // the error names file:line:column
  const Run usage = run(quote(executable) + " predict", work);
  CHECK(usage.status == 2);
  CHECK_FALSE(fs::exists(work + "/out"));
  CHECK_FALSE(fs::exists(work + "/spurcast-report"));
  fs::remove_all(work);
}

TEST_CASE("colour only on a terminal, never with NO_COLOR") {
  // util-linux `script` gives the command a pseudo-terminal as stdout.
  if (::access("/usr/bin/script", X_OK) != 0) {
    MESSAGE("skipped: /usr/bin/script (util-linux) not found");
    return;
  }
  const std::string work = make_temp_dir();
  const std::string demo = quote(executable) + " demo -o d";
  const Run tty = run("env -u NO_COLOR /usr/bin/script -qec " + quote(demo) + " /dev/null", work);
  CHECK(tty.out.find("\x1b[") != std::string::npos);
  const Run no_colour = run("NO_COLOR=1 /usr/bin/script -qec " + quote(demo) + " /dev/null", work);
  CHECK(no_colour.out.find("verdict:") != std::string::npos);
  CHECK(no_colour.out.find("\x1b[3") == std::string::npos);  // no colour sequence (ESC [ 3x m)
  fs::remove_all(work);
}

TEST_CASE("progress on stderr only when stderr is a terminal, and cleared before the output") {
  // Issue 18: a run that takes more than a second says what it is doing, on a terminal only.
  if (::access("/usr/bin/script", X_OK) != 0) {
    MESSAGE("skipped: /usr/bin/script (util-linux) not found");
    return;
  }
  const std::string work = make_temp_dir();
  const std::string sweep = quote(executable) + " sweep " + quote(source_dir + "/examples/boat-cabin-led.toml") +
                            " --vary switching.dither.deviation=2%:12%:4 --meet-limits";
  const Run tty = run("NO_COLOR=1 /usr/bin/script -qec " + quote(sweep) + " /dev/null", work);
  CHECK(tty.out.find("\rspurcast: ") != std::string::npos);
  const Run piped = run(sweep, work);
  CHECK(piped.out.find("Sweep of switching.dither.deviation") != std::string::npos);
  CHECK(piped.out.find("spurcast: ") == std::string::npos);
  CHECK(piped.err.empty());
  fs::remove_all(work);
}

TEST_CASE("the report renders in a real browser (headless chromium screenshot is not blank)") {
  const std::string chromium = spurcast::test::find_chromium();
  if (chromium.empty() || !have_python()) {
    MESSAGE("skipped: headless chromium (apt-get install -y chromium) or /usr/bin/python3 not installed");
    return;
  }
  const std::string work = make_temp_dir();
  REQUIRE(run(quote(executable) + " demo -o shown", work).status <= 1);
  const std::string profile = work + "/profile";
  fs::create_directory(profile);
  const Run shot = run(chromium + " --headless --no-sandbox --disable-gpu --disable-quic --no-first-run "
                       "--disable-background-networking --disable-component-update --disable-sync --hide-scrollbars "
                       "--user-data-dir=" + quote(profile) + " --screenshot=" + quote(work + "/report.png") +
                       " --window-size=1280,2400 " + quote("file://" + work + "/shown/report.html"),
                       work);
  REQUIRE_MESSAGE(fs::exists(work + "/report.png"), shot.err);
  const Run png = run(python + " " + quote(checker) + " png report.png", work);
  REQUIRE_MESSAGE(png.status == 0, png.err);
  const nlohmann::json info = nlohmann::json::parse(png.out);
  CHECK(info.at("width") == 1280);
  CHECK(info.at("height") == 2400);
  // A blank page has one or two colours; the report has text, plots and shaded bands.
  CHECK(info.at("distinct").get<int>() > 50);
  fs::remove_all(work);
}

TEST_CASE("boost-pfc: summary.json names the mains-gated path, its mains and gating; the report lists them") {
  const std::string work = make_temp_dir();
  std::string text = read_file(source_dir + "/tests/data/bad/scenario/pfc-threshold-above-crest.toml");
  const std::string bad = "switching_threshold = \"330 V\"";
  REQUIRE(text.find(bad) != std::string::npos);
  text.replace(text.find(bad), bad.size(), "mains_frequency = \"60 Hz\"\nswitching_threshold = \"40 V\"");
  std::ofstream(work + "/pfc.toml") << text;
  const Run r = run(quote(executable) + " predict pfc.toml -o out --json", work);
  CHECK(r.status == 0);  // no limits: the chain ran
  const nlohmann::json summary = check_report_folder(fs::path(work) / "out");
  CHECK(summary.at("receiver_path") == "mains-gated-lines");
  const nlohmann::json& gating = summary.at("mains_gating");
  CHECK(gating.at("mains_frequency_hz").get<double>() == doctest::Approx(60.0));
  CHECK(gating.at("crest_input_v").get<double>() == doctest::Approx(324.0));
  CHECK(gating.at("switching_threshold_v").get<double>() == doctest::Approx(40.0));
  // |sin θ| >= 40/324 over 1 − (2/π)·asin(40/324) of the half-cycle, to 1/256.
  CHECK(std::abs(gating.at("switching_fraction").get<double>() - (1.0 - 2.0 / std::numbers::pi * std::asin(40.0 / 324.0))) <=
        1.0 / 256.0);
  CHECK(gating.at("instants") == 256);
  CHECK(gating.at("bands").at("B") == "quasi-static");
  bool noted = false;
  for (const auto& note : summary.at("notes")) noted = noted || note.get<std::string>().rfind("boost PFC stage: ", 0) == 0;
  CHECK(noted);
  const std::string html = read_file(work + "/out/report.html");
  CHECK(html.find("mains-cycle gating") != std::string::npos);
  CHECK(html.find("not modelled (crest of the mains cycle)") == std::string::npos);
  fs::remove_all(work);
}

TEST_CASE("boost-pfc in critical conduction: the swept path is named, the frequency range given, average below peak") {
  // examples/laundry-dryer-crm-pfc.toml (invented values): 100 kHz at the crest of 230 V mains,
  // t_on = 0.1875/100 kHz; the average detector reads the swept harmonics' linear mean over the
  // half-cycle, the peak their highest passage, so the average is below the peak (CISPR 16-1-1
  // detectors on a varying envelope, common practice).
  const std::string work = make_temp_dir();
  const Run r = run(quote(executable) + " predict " + quote(source_dir + "/examples/laundry-dryer-crm-pfc.toml") +
                        " -o out --json",
                    work);
  CHECK_MESSAGE(r.err.empty(), r.err);
  const nlohmann::json summary = check_report_folder(fs::path(work) / "out");
  CHECK(summary.at("receiver_path") == "mains-gated-lines");
  const nlohmann::json& gating = summary.at("mains_gating");
  CHECK(gating.at("conduction") == "critical");
  CHECK(gating.at("bands").at("B") == "swept");
  // f_sw = (1 − 325·s/400)/1.875 µs: 100 kHz at the crest (the instant nearest it: within 0.01 %),
  // clamped at 400 kHz near the zero crossing.
  CHECK(gating.at("lowest_switching_hz").get<double>() == doctest::Approx(100e3).epsilon(1e-4));
  CHECK(gating.at("highest_switching_hz").get<double>() == doctest::Approx(400e3).epsilon(1e-9));
  CHECK(gating.at("clamped_instants").get<int>() > 0);
  bool noted = false;
  for (const auto& note : summary.at("notes")) {
    const std::string text = note.get<std::string>();
    noted = noted || (text.rfind("critical-conduction boost PFC stage: ", 0) == 0 &&
                      text.find("path: swept mains-cycle lines") != std::string::npos &&
                      text.find("judgement") != std::string::npos);
  }
  CHECK(noted);
  // The highest average reading of band B below the highest peak reading, from scan CSV.
  const std::string csv = read_file(work + "/out/scan.csv");
  std::istringstream lines(csv);
  std::string line;
  std::getline(lines, line);
  REQUIRE(line.rfind("frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv", 0) == 0);
  double peak = -1e9, average = -1e9;
  while (std::getline(lines, line)) {
    std::istringstream row(line);
    std::string cell;
    std::vector<double> values;
    while (std::getline(row, cell, ',') && values.size() < 4) values.push_back(std::stod(cell));
    REQUIRE(values.size() == 4);
    peak = std::max(peak, values[1]);
    average = std::max(average, values[3]);
  }
  MESSAGE("band B: highest peak " << peak << " dBµV, highest average " << average << " dBµV");
  CHECK(average < peak - 3.0);
  const std::string html = read_file(work + "/out/report.html");
  CHECK(html.find("constant on time") != std::string::npos);
  fs::remove_all(work);
}

// The script the test adds to a copy of the report: it moves the pointer over the first readings plot
// at `target_hz`, reads the readout, switches the peak curve off and reports what the page shows.
constexpr const char* readout_probe = R"js(<script>
"use strict";
(function () {
  const figure = document.querySelector("figure.readout-plot");
  const svg = figure.querySelector("svg");
  const d = JSON.parse(figure.querySelector("script.readout-data").textContent);
  const x = d.left + Math.log(TARGET_HZ / d.min_hz) / Math.log(d.max_hz / d.min_hz) * (d.right - d.left);
  const at = new DOMPoint(x, (d.top + d.bottom) / 2).matrixTransform(svg.getScreenCTM());
  svg.dispatchEvent(new PointerEvent("pointermove", {clientX: at.x, clientY: at.y, bubbles: true}));
  const readout = figure.querySelector(".readout");
  function spans() {
    return Array.from(readout.querySelectorAll("span")).map(function (s) { return s.textContent; });
  }
  const result = {columns: d.f.length, px: d.right - d.left, min_hz: d.min_hz, max_hz: d.max_hz,
                  frequency_hz: Number(readout.getAttribute("data-frequency-hz")), before: spans(),
                  switches: Array.from(figure.querySelectorAll(".switches input")).map(function (i) { return i.value; })};
  figure.querySelector(".switches input[value='peak']").click();
  const shown = function (group) {
    return getComputedStyle(svg.querySelector("path[data-detectors='" + group + "']")).display !== "none";
  };
  result.peak_shown = shown("peak");
  result.quasi_peak_shown = shown("quasi-peak");
  result.after = spans();
  const out = document.createElement("pre");
  out.id = "probe";
  out.textContent = encodeURIComponent(JSON.stringify(result));
  document.body.appendChild(out);
})();
</script>
)js";

TEST_CASE("the report's hover readout and detector switches work in a real browser and agree with the CSVs") {
  const std::string chromium = spurcast::test::find_chromium();
  if (chromium.empty()) {
    MESSAGE("skipped: headless chromium not installed (apt-get install -y chromium)");
    return;
  }
  // The readings shown are rounded to 0.1 dB from the CSVs' 0.01 dB (core/output/report.hpp).
  constexpr double display_rounding_db = 0.05 + 1e-9;
  const std::string work = make_temp_dir();
  // A dithered example: its peak, quasi-peak and average readings differ, so each has its own curve.
  REQUIRE(run(quote(executable) + " predict " + quote(source_dir + "/examples/boat-cabin-led.toml") + " -o shown", work)
              .status <= 1);
  const fs::path folder = fs::path(work) / "shown";
  const nlohmann::json summary = nlohmann::json::parse(read_file(folder / "summary.json"));
  const double target_hz = summary.at("worst").at("frequency_hz").get<double>();
  std::string page = read_file(folder / "report.html");
  std::string probe = readout_probe;
  probe.replace(probe.find("TARGET_HZ"), 9, std::to_string(target_hz));
  page.insert(page.rfind("</body>"), probe);
  std::ofstream(folder / "probe.html") << page;
  fs::create_directory(work + "/profile");
  const Run shown = run(chromium + " --headless --no-sandbox --disable-gpu --disable-quic --no-first-run "
                        "--disable-background-networking --disable-component-update --disable-sync "
                        "--user-data-dir=" + quote(work + "/profile") + " --window-size=1280,2400 --dump-dom " +
                        quote("file://" + (folder / "probe.html").string()),
                        work);
  const std::smatch found = [&] {
    std::smatch m;
    std::regex_search(shown.out, m, std::regex("<pre id=\"probe\">([^<]*)</pre>"));
    return m;
  }();
  REQUIRE_MESSAGE(!found.empty(), shown.err);
  // encodeURIComponent's %XX back to bytes.
  std::string text;
  const std::string encoded = found[1].str();
  for (std::size_t i = 0; i < encoded.size(); ++i) {
    if (encoded[i] == '%' && i + 2 < encoded.size()) {
      text += static_cast<char>(std::stoi(encoded.substr(i + 1, 2), nullptr, 16));
      i += 2;
    } else {
      text += encoded[i];
    }
  }
  const nlohmann::json r = nlohmann::json::parse(text);
  CHECK(r.at("switches") == nlohmann::json::array({"peak", "quasi-peak", "average"}));

  // The readout is of a reading within two pixel columns of the pointer.
  const double column_decades = std::log10(r["max_hz"].get<double>() / r["min_hz"].get<double>()) / r["px"].get<double>();
  const double frequency_hz = r.at("frequency_hz").get<double>();
  CHECK(std::abs(std::log10(frequency_hz / target_hz)) <= 2.0 * column_decades);
  // Its levels are scan.csv's at that frequency.
  std::vector<std::string> row;
  for (const std::string& line : lines_of(read_file(folder / "scan.csv"))) {
    const std::vector<std::string> cells = csv_cells(line);
    if (cells.size() >= 4 && cells[0] != "frequency_hz" && std::abs(std::stod(cells[0]) - frequency_hz) < 0.05) row = cells;
  }
  REQUIRE(row.size() >= 4);
  const std::regex level_text("^(peak|quasi-peak|average) (-?[0-9]+\\.[0-9]) dB\xC2\xB5V( \\(noise floor\\))?$");
  std::map<std::string, double> csv_level{{"peak", std::stod(row[1])}, {"quasi-peak", std::stod(row[2])},
                                          {"average", std::stod(row[3])}};
  int detectors_read = 0, limits_read = 0;
  // The limit lines and margins are margins.csv's at that frequency.
  std::map<std::string, std::pair<double, double>> csv_margin;  // limit label -> (limit, margin)
  for (const std::string& line : lines_of(read_file(folder / "margins.csv"))) {
    const std::vector<std::string> cells = csv_cells(line);
    if (cells.size() >= 6 && cells[0] != "frequency_hz" && std::abs(std::stod(cells[0]) - frequency_hz) < 0.05) {
      csv_margin[cells[5]] = {std::stod(cells[3]), std::stod(cells[4])};
    }
  }
  REQUIRE(!csv_margin.empty());
  const std::regex limit_text("^(.*) limit (-?[0-9]+\\.[0-9]) dB\xC2\xB5V, margin (\xE2\x88\x92)?([0-9]+\\.[0-9]) dB$");
  for (const nlohmann::json& span : r.at("before")) {
    const std::string s = span.get<std::string>();
    CAPTURE(s);
    std::smatch m;
    if (std::regex_match(s, m, level_text)) {
      ++detectors_read;
      CHECK(std::abs(std::stod(m[2]) - csv_level.at(m[1])) <= display_rounding_db);
    } else if (std::regex_match(s, m, limit_text)) {
      ++limits_read;
      REQUIRE(csv_margin.count(m[1]) == 1);
      const auto [limit, margin] = csv_margin.at(m[1]);
      CHECK(std::abs(std::stod(m[2]) - limit) <= display_rounding_db);
      CHECK(std::abs((m[3].matched ? -1.0 : 1.0) * std::stod(m[4]) - margin) <= display_rounding_db);
    } else {
      FAIL("unexpected readout text");
    }
  }
  CHECK(detectors_read == 3);
  CHECK(limits_read == static_cast<int>(csv_margin.size()));

  // Switching peak off hides its curve and its reading; quasi-peak stays.
  CHECK_FALSE(r.at("peak_shown").get<bool>());
  CHECK(r.at("quasi_peak_shown").get<bool>());
  for (const nlohmann::json& span : r.at("after")) CHECK(span.get<std::string>().rfind("peak ", 0) != 0);
  CHECK(r.at("after").size() == r.at("before").size() - 1);
  fs::remove_all(work);
}
