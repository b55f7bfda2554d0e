// Tests of core/output/report on a Prediction filled by hand (so every number is known), and on the real
// chain for one example: CSV columns and fixed decimals, the merged scan, summary.json keys and its
// agreement with the CSVs, the report's sections, and well-formed HTML (Debian's Python html.parser).
#include <doctest/doctest.h>

#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "core/compliance/limits.hpp"
#include "core/output/report.hpp"
#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/source/source.hpp"

using namespace spurcast;

namespace {

const std::string checker = std::string(SPURCAST_SOURCE_DIR) + "/tests/data/report/check_report.py";
const std::string python = "/usr/bin/python3";

constexpr const char* test_limits = R"(
name = "flat test line"
measures = "conducted-voltage"
unit = "dBuV"
source = "invented for this test"
confidence = "from memory: invented"
[[line]]
detector = "quasi-peak"
segment = [ { from = "150 kHz", to = "30 MHz", level = "60 dBuV" } ]
[[line]]
detector = "average"
segment = [ { from = "150 kHz", to = "30 MHz", level = "50 dBuV" } ]
)";

Reading reading(double f, double pk, double qp, double av) {
  Reading r;
  r.frequency_hz = f;
  r.peak_db = pk;
  r.quasi_peak_db = qp;
  r.average_db = av;
  return r;
}

/// A small prediction whose numbers are chosen by hand.
Prediction hand_prediction() {
  Prediction p;
  p.scenario.title = "R&D buck <bench>";
  p.scenario.file = "hand.toml";
  SwitchingSpec spec;
  spec.frequency_hz = 100e3;
  spec.duty = 0.5;
  spec.amplitude_v = 10.0;
  spec.current_a = 1.0;
  spec.rise_s = 10e-9;
  spec.fall_s = 10e-9;
  p.scenario.switching = spec;
  p.scenario.limits.sets.push_back(parse_limit_text(test_limits, "test-limits.toml"));
  p.scenario.limits.guard_db = 6.0;

  p.switch_node_v.quantity = Quantity::voltage;
  p.switch_node_v.fundamental_hz = 100e3;
  p.switch_node_v.harmonics = {{1e-3, 0.0}, {0.0, 1e-4}};  // 60 dBµV, 40 dBµV
  p.input_current_a.quantity = Quantity::current;
  p.input_current_a.fundamental_hz = 100e3;
  p.input_current_a.harmonics = {{1e-3, 0.0}};  // 60 dBµA

  ConductedResult c;
  c.fundamental_hz = 100e3;
  c.frequency_hz = {100e3, 200e3};
  c.line1_v = {{1e-3, 0.0}, {1e-5, 0.0}};   // 60, 20 dBµV
  c.line2_v = {{1e-4, 0.0}, {0.0, 1e-4}};   // 40, 40 dBµV
  c.dm_v = {{4.5e-4, 0.0}, {0.0, 0.0}};     // 53.06 dBµV, nothing
  c.cm_v = {{5.5e-4, 0.0}, {2e-6, 0.0}};    // 54.81, 6.02 dBµV
  p.conducted = c;

  BandScan b;
  b.band = CisprBand::B;
  b.worst.band = CisprBand::B;
  b.worst.bandwidth_6db_hz = 9e3;
  b.worst.step_hz = 2.25e3;
  b.worst.readings = {reading(1e6, 58.0, 55.0, 44.0), reading(2e6, 50.0, 48.0, 45.0), reading(30e6, 30.0, 29.0, 28.0)};
  b.line1 = b.worst;
  p.scans.push_back(b);
  BandScan cd;
  cd.band = CisprBand::C;
  cd.worst.band = CisprBand::C;
  cd.worst.bandwidth_6db_hz = 120e3;
  cd.worst.readings = {reading(30e6, 99.0, 99.0, 99.0), reading(31e6, 20.0, 19.0, 18.0)};
  cd.line1 = cd.worst;
  p.scans.push_back(cd);

  std::vector<LevelReading> readings = readings_from_scan(b.worst.readings, {Detector::quasi_peak, Detector::average});
  p.margins = compare_with_limits(readings, p.scenario.limits.sets, {.guard_db = 6.0});
  p.verdict = p.margins.verdict;

  BandReception mw;
  mw.band.name = "MW";
  mw.band.region = 1;
  mw.band.low_hz = 526.5e3;
  mw.band.high_hz = 1606.5e3;
  mw.verdict = ReceptionVerdict::noisy;
  ChannelReception channel;
  channel.centre_hz = 999e3;
  channel.level_dbuvm = 31.25;
  channel.verdict = ReceptionVerdict::noisy;
  mw.channels.push_back(channel);
  mw.worst_channel = 0;
  mw.caveats = {"near field"};
  p.reception.push_back(mw);
  p.setup_description = "two ideal V-networks";
  p.notes = {"a note with <markup> & ampersand"};
  return p;
}

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

/// "15.4 dB over the envelope": the marker text for an excess.
std::string fmt_excess(double excess_db) {
  char text[64];
  std::snprintf(text, sizeof text, "%.1f dB over the envelope", excess_db);
  return text;
}

bool have_python() { return ::access(python.c_str(), X_OK) == 0; }

/// Runs the HTML check; returns its stdout (JSON) or "" on failure.
std::string check_html(const std::string& page) {
  char path[] = "/tmp/spurcast-report-test-XXXXXX";
  const int fd = ::mkstemp(path);
  REQUIRE(fd >= 0);
  ::close(fd);
  std::ofstream(path) << page;
  const std::string out_path = std::string(path) + ".out";
  const int status = std::system((python + " " + checker + " html " + path + " > " + out_path).c_str());
  std::ifstream in(out_path);
  std::ostringstream text;
  text << in.rdbuf();
  std::remove(path);
  std::remove(out_path.c_str());
  return status == 0 ? text.str() : std::string();
}

}  // namespace

TEST_CASE("spectrum.csv: the LISN columns of docs/design.md section 4, level = the higher line, fixed decimals") {
  // dBµV = 20·log10(V / 1 µV) (definition of the unit): 1 mV = 60 dBµV, 10 µV = 20 dBµV.
  const std::vector<std::string> lines = lines_of(lisn_spectrum_csv(hand_prediction()));
  REQUIRE(lines.size() == 3);
  CHECK(lines[0] == "harmonic,frequency_hz,level_dbuv,line1_dbuv,line2_dbuv,dm_dbuv,cm_dbuv");
  CHECK(lines[1] == "1,100000.0,60.00,60.00,40.00,53.06,54.81");
  CHECK(lines[2] == "2,200000.0,40.00,20.00,40.00,-400.00,6.02");  // level_floor_db for a zero phasor
}

TEST_CASE("source_spectrum.csv carries Paul's trapezoid envelope") {
  const Prediction p = hand_prediction();
  const std::vector<std::string> lines = lines_of(source_spectrum_csv(p));
  REQUIRE(lines.size() == 3);
  CHECK(lines[0] == "harmonic,frequency_hz,level_dbuv,envelope_dbuv");
  // C. R. Paul, Introduction to EMC, 2nd ed., §3.2: bound 2·A·τ/T flat to f1 = 1/(π·τ), then
  // falling 20 dB per decade; RMS = /√2. A = 10 V, τ/T = 0.5, τ = 5 µs: f1 = 63.66 kHz; at 100 kHz
  // (below f2 = 1/(π·10 ns) = 31.8 MHz): 7.0711 V · 63.662/100 = 4.5016 V = 133.07 dBµV.
  const double expected_envelope_dbuv = 20.0 * std::log10(10.0 / std::sqrt(2.0) * (1.0 / (M_PI * 5e-6)) / 100e3 / 1e-6);
  double level = 0.0, envelope = 0.0;
  int harmonic = 0;
  double f = 0.0;
  REQUIRE(std::sscanf(lines[1].c_str(), "%d,%lf,%lf,%lf", &harmonic, &f, &level, &envelope) == 4);
  const double tol_db = 0.006;  // the CSV's two decimals
  CHECK(std::abs(level - 60.0) < tol_db);
  CHECK(std::abs(envelope - expected_envelope_dbuv) < tol_db);
  CHECK(lines[2].rfind("2,200000.0,40.00,", 0) == 0);
  CHECK(lines_of(source_current_spectrum_csv(p))[0] == "harmonic,frequency_hz,level_dbua,envelope_dbua");

  // A captured source has no envelope column.
  Prediction captured = p;
  captured.scenario.switching.reset();
  CHECK(lines_of(source_spectrum_csv(captured))[0] == "harmonic,frequency_hz,level_dbuv");
}

TEST_CASE("scan.csv: one ascending list over the bands; 30 MHz once, from band B") {
  const std::vector<std::string> lines = lines_of(scan_csv(hand_prediction()));
  REQUIRE(lines.size() == 5);
  CHECK(lines[0] == "frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv,at_floor");
  CHECK(lines[1] == "1000000.0,58.00,55.00,44.00,");
  CHECK(lines[2] == "2000000.0,50.00,48.00,45.00,");
  CHECK(lines[3] == "30000000.0,30.00,29.00,28.00,");  // CISPR 16-1-1: 30 MHz is the top of band B
  CHECK(lines[4] == "31000000.0,20.00,19.00,18.00,");
}

TEST_CASE("summary.json: the keys of docs/design.md section 4 and values as the CSVs print them") {
  const Prediction p = hand_prediction();
  const std::vector<std::string> files{"scan.csv", "summary.json"};
  const nlohmann::json j = nlohmann::json::parse(summary_json(p, files));
  // QP 55 against 60: margin 5 < guard 6 -> marginal; AV 45 against 50 at 2 MHz: margin 5.
  CHECK(j.at("verdict") == "marginal");
  const double tol_db = 1e-9;
  CHECK(j.at("worst_margin_db").at("quasi-peak").get<double>() == doctest::Approx(5.0).epsilon(tol_db));
  CHECK(j.at("worst_margin_db").at("average").get<double>() == doctest::Approx(5.0).epsilon(tol_db));
  CHECK_FALSE(j.at("worst_margin_db").contains("peak"));  // no peak line in the set
  REQUIRE(j.at("bands").size() == 1);
  CHECK(j.at("bands")[0].at("name") == "MW");
  CHECK(j.at("bands")[0].at("verdict") == "noisy");
  CHECK(j.at("bands")[0].at("worst_channel_hz").get<double>() == doctest::Approx(999e3));
  CHECK(j.at("files") == files);
  CHECK(j.at("title") == "R&D buck <bench>");
  CHECK(j.at("guard_db").get<double>() == doctest::Approx(6.0));
  CHECK(j.at("uncertainty_db").get<double>() == doctest::Approx(3.4));  // CISPR 16-4-2, docs/references.md §7 (from memory)
  // Worst frequencies are distinct emissions, smallest margin first.
  const auto& worst = j.at("worst_frequencies");
  REQUIRE(worst.size() == 3);
  CHECK(worst[0].at("margin_db").get<double>() <= worst[1].at("margin_db").get<double>());
  CHECK(worst[0].at("verdict") == "marginal");
}

TEST_CASE("worst frequencies are thinned to one per receiver bandwidth") {
  Prediction p = hand_prediction();
  // Three readings of one emission, 2.25 kHz apart (band B step), and one far away.
  const std::vector<Reading> scan{reading(1e6, 0, 57.0, 40), reading(1.00225e6, 0, 58.0, 40),
                                  reading(1.0045e6, 0, 57.5, 40), reading(5e6, 0, 50.0, 40)};
  p.margins = compare_with_limits(readings_from_scan(scan, {Detector::quasi_peak}), p.scenario.limits.sets);
  const std::vector<WorstFrequency> worst = worst_frequencies(p, 5);
  REQUIRE(worst.size() == 2);
  CHECK(worst[0].row.frequency_hz == doctest::Approx(1.00225e6));
  CHECK(worst[1].row.frequency_hz == doctest::Approx(5e6));
}

TEST_CASE("report.html: every section, escaped text, nothing fetched, the set-up and safety notes") {
  const Prediction p = hand_prediction();
  const std::string page = report_html(p, {"scan.csv", "report.html", "summary.json"});
  for (const std::string& id : report_section_ids()) {
    CAPTURE(id);
    CHECK(page.find("<section id=\"" + id + "\"") != std::string::npos);
  }
  CHECK(page.find("R&amp;D buck &lt;bench&gt;") != std::string::npos);
  CHECK(page.find("a note with &lt;markup&gt; &amp; ampersand") != std::string::npos);
  // Script is inline only (issue 19: hover readouts and detector switches); the switches are made by
  // the script, so the page as written (read without script) has no control.
  CHECK(page.find("<script src") == std::string::npos);
  CHECK(page.find("type=\"checkbox\"") == std::string::npos);
  CHECK(page.find("class=\"switches\"") == std::string::npos);
  CHECK(page.find("https://") == std::string::npos);
  CHECK(page.find("@import") == std::string::npos);
  // Common practice for a conducted test set-up, marked as such (issue 8).
  CHECK(page.find("0.8 m above the reference ground plane, 0.4 m from a vertical reference plane") != std::string::npos);
  CHECK(page.find("0.3\xE2\x80\x93" "0.4 m") != std::string::npos);
  CHECK(page.find("common practice (from memory; CISPR 16-2-1 / CISPR 32 describe the arrangement)") != std::string::npos);
  // docs/design.md §9.
  CHECK(page.find("hundreds of volts") != std::string::npos);
  CHECK(page.find("bond it to protective earth before mains is applied") != std::string::npos);
  CHECK(page.find("only an accredited test decides") != std::string::npos);
  CHECK(page.find("U<sub>cispr</sub> for this measurement: 3.4 dB") != std::string::npos);
  CHECK(page.find("MARGINAL") != std::string::npos);
  // Every scenario input with its unit.
  CHECK(page.find("<td>100 kHz</td>") != std::string::npos);
  CHECK(page.find("<td>50 %</td>") != std::string::npos);
  CHECK(page.find("<td>10 ns</td>") != std::string::npos);

  if (!have_python()) {
    MESSAGE("skipped the html.parser check: /usr/bin/python3 not found");
    return;
  }
  const std::string result = check_html(page);
  REQUIRE_FALSE(result.empty());
  const nlohmann::json parsed = nlohmann::json::parse(result);
  CHECK(parsed.at("ids").get<std::vector<std::string>>() == report_section_ids());
  // Two band plots, the source plot and the MW band's channel strip (issue 19 added the strips).
  CHECK(parsed.at("svg_count").get<int>() == 4);
  // A readout data block per band plot (B and C) and the page's script.
  CHECK(parsed.at("script_count").get<int>() == 3);
}

/// The JSON of the n-th readout data block of the page.
nlohmann::json readout_block(const std::string& page, int n) {
  const std::string open = "<script type=\"application/json\" class=\"readout-data\">";
  std::size_t at = 0;
  for (int i = 0; i <= n; ++i) {
    at = page.find(open, at);
    REQUIRE(at != std::string::npos);
    at += open.size();
  }
  return nlohmann::json::parse(page.substr(at, page.find("</script>", at) - at));
}

// The readings and limits of hand_prediction(): margin = limit − reading of the line's detector
// (CISPR 16-2-1: a reading is compared with the limit of its own detector), numbers by hand.
TEST_CASE("report.html: the hover readout data of a band plot holds each reading with its limits and margins") {
  constexpr double tolerance_db = 1e-9;
  const std::string page = report_html(hand_prediction(), {"report.html"});
  const nlohmann::json b = readout_block(page, 0);
  CHECK(b.at("detectors") == nlohmann::json::array({"peak", "quasi-peak", "average"}));
  CHECK(b.at("unit") == "dB\xC2\xB5V");
  REQUIRE(b.at("limits").size() == 2);
  CHECK(b["limits"][0].at("label") == "flat test line / quasi-peak limit");
  CHECK(b["limits"][0].at("detector") == "quasi-peak");
  CHECK(b["limits"][1].at("detector") == "average");
  // The three readings fall in three pixel columns of a 960 px plot.
  REQUIRE(b.at("f") == nlohmann::json::array({1e6, 2e6, 30e6}));
  const double levels[3][3] = {{58.0, 55.0, 44.0}, {50.0, 48.0, 45.0}, {30.0, 29.0, 28.0}};
  for (int i = 0; i < 3; ++i) {
    CAPTURE(i);
    for (int k = 0; k < 3; ++k) CHECK(std::abs(b["levels"][i][k].get<double>() - levels[i][k]) < tolerance_db);
    CHECK(std::abs(b["limit"][i][0].get<double>() - 60.0) < tolerance_db);
    CHECK(std::abs(b["limit"][i][1].get<double>() - 50.0) < tolerance_db);
    CHECK(std::abs(b["margin"][i][0].get<double>() - (60.0 - levels[i][1])) < tolerance_db);
    CHECK(std::abs(b["margin"][i][1].get<double>() - (50.0 - levels[i][2])) < tolerance_db);
  }
  // The plot area the script maps the pointer on is the SVG's own (layout_spectrum_plot).
  const PlotLayout layout = layout_spectrum_plot(readings_plot(hand_prediction(), hand_prediction().scans[0]));
  CHECK(std::abs(b.at("left").get<double>() - layout.plot_left) < tolerance_db);
  CHECK(std::abs(b.at("right").get<double>() - layout.plot_right) < tolerance_db);
  CHECK(std::abs(b.at("top").get<double>() - layout.plot_top) < tolerance_db);
  CHECK(std::abs(b.at("bottom").get<double>() - layout.plot_bottom) < tolerance_db);
}

TEST_CASE("report.html: readings in one pixel column are read out as the highest of them") {
  constexpr double tolerance_db = 1e-9;
  Prediction p = hand_prediction();
  // 1 MHz and 1.0001 MHz are 0.01 px apart on a 0.15–30 MHz axis 876 px wide: one column.
  p.scans[0].worst.readings = {reading(1e6, 40.0, 39.0, 38.0), reading(1.0001e6, 52.0, 51.0, 50.0),
                               reading(5e6, 30.0, 29.0, 28.0)};
  const nlohmann::json b = readout_block(report_html(p, {"report.html"}), 0);
  REQUIRE(b.at("f") == nlohmann::json::array({1.0001e6, 5e6}));
  CHECK(std::abs(b["levels"][0][0].get<double>() - 52.0) < tolerance_db);
  // A detector the limit line names but the receiver did not read gives no margin.
  p.scenario.receiver.detectors = {Detector::peak, Detector::quasi_peak};
  const nlohmann::json only = readout_block(report_html(p, {"report.html"}), 0);
  CHECK(only["margin"][0][1].is_null());
  CHECK(std::abs(only["limit"][0][1].get<double>() - 50.0) < tolerance_db);
}

TEST_CASE("report.html leads with the answer: verdict, plots, what to change, margins, bands, lab, inputs last") {
  // The order of issue 19: the verdict (with what was not computed and the band summary), the plots,
  // what to change, the margins, the broadcast bands, the page for the lab, and the inputs as an appendix.
  const std::vector<std::string> expected{"verdict", "plots",  "changes",     "margins", "bands",
                                          "pre-lab", "safety", "assumptions", "inputs",  "files"};
  CHECK(report_section_ids() == expected);
  Prediction p = hand_prediction();
  p.margins.not_computed.push_back({.limit_label = "a line", .from_hz = 482e3, .to_hz = 30e6, .reason = "a test reason"});
  const std::string page = report_html(p, {"report.html"});
  std::size_t previous = 0;
  for (const std::string& id : expected) {
    CAPTURE(id);
    const std::size_t at = page.find("<section id=\"" + id + "\"");
    REQUIRE(at != std::string::npos);
    CHECK(at > previous);
    previous = at;
  }
  // The verdict section holds its reason, what was not computed, and every band's verdict.
  const std::size_t verdict_at = page.find("<section id=\"verdict\"");
  const std::string verdict = page.substr(verdict_at, page.find("</section>", verdict_at) - verdict_at);
  CHECK(verdict.find("MARGINAL") != std::string::npos);
  CHECK(verdict.find("worst margin") != std::string::npos);
  CHECK(verdict.find("<h3>Not computed</h3>") != std::string::npos);
  CHECK(verdict.find("a test reason") != std::string::npos);
  CHECK(verdict.find("Broadcast bands: MW <span class=\"tag noisy\">noisy</span>") != std::string::npos);
  // The first plot comes before any input is echoed.
  CHECK(page.find("<svg") < page.find("<h2>Appendix: inputs</h2>"));
  // A print stylesheet: page breaks before the major sections, plots kept whole, nothing fixed.
  CHECK(page.find("@media print") != std::string::npos);
  CHECK(page.find("break-before: page") != std::string::npos);
  CHECK(page.find("figure, svg, tr, .verdict-head, .not-computed { break-inside: avoid; }") != std::string::npos);
  CHECK(page.find("position: fixed") == std::string::npos);
  CHECK(page.find("position:fixed") == std::string::npos);

  if (!have_python()) {
    MESSAGE("skipped the html.parser check: /usr/bin/python3 not found");
    return;
  }
  const std::string result = check_html(page);
  REQUIRE_FALSE(result.empty());
  CHECK(nlohmann::json::parse(result).at("ids").get<std::vector<std::string>>() == expected);
}

TEST_CASE("the readings plot: one marker per emission with frequency and margin, coinciding detectors drawn once") {
  Prediction p = hand_prediction();
  BandScan& b = p.scans[0];
  // 1.005 MHz is a skirt of the 1 MHz line (within the 9 kHz bandwidth) and worse; 1.04 MHz is the
  // same harmonic (10 of 100 kHz) further out. One emission: only 1.005 MHz QP (60 − 56 = 4 dB) is marked.
  b.worst.readings = {reading(1e6, 58.0, 55.0, 44.0), reading(1.005e6, 59.0, 56.0, 45.0),
                      reading(1.04e6, 57.0, 54.0, 43.0), reading(2e6, 50.0, 48.0, 45.0)};
  p.margins = compare_with_limits(readings_from_scan(b.worst.readings, {Detector::quasi_peak, Detector::average}),
                                  p.scenario.limits.sets, {.guard_db = 6.0});
  const SpectrumPlot plot = readings_plot(p, b);
  REQUIRE(plot.markers.size() == 2);
  CHECK(plot.markers[0].label == "1.005 MHz QP 4.0 dB");
  CHECK(plot.markers[1].label == "2 MHz AV 5.0 dB");
  // Lines closer than a fortieth of the plot's 2.3 decades (a factor 1.14) cannot be told apart on it:
  // 1.1 MHz (harmonic 11, margin 4.5 dB) is left to the worse 1.005 MHz marker.
  b.worst.readings.push_back(reading(1.1e6, 58.0, 55.5, 44.0));
  std::sort(b.worst.readings.begin(), b.worst.readings.end(),
            [](const Reading& x, const Reading& y) { return x.frequency_hz < y.frequency_hz; });
  p.margins = compare_with_limits(readings_from_scan(b.worst.readings, {Detector::quasi_peak, Detector::average}),
                                  p.scenario.limits.sets, {.guard_db = 6.0});
  CHECK(readings_plot(p, b).markers.size() == 2);
  std::vector<std::string> labels;
  for (const PlotTrace& trace : plot.traces) labels.push_back(trace.label);
  CHECK(std::count(labels.begin(), labels.end(), "peak") == 1);  // the detectors differ: three traces
  CHECK(std::count(labels.begin(), labels.end(), "average") == 1);

  // A steady line reads the same on every detector: one trace, and the legend says so.
  for (Reading& r : b.worst.readings) r.quasi_peak_db = r.average_db = r.peak_db;
  const SpectrumPlot steady = readings_plot(p, b);
  std::vector<std::string> steady_labels;
  for (const PlotTrace& trace : steady.traces) steady_labels.push_back(trace.label);
  CHECK(std::count(steady_labels.begin(), steady_labels.end(), "peak = quasi-peak = average (coincide: one line drawn)") == 1);
  CHECK(std::count(steady_labels.begin(), steady_labels.end(), "peak") == 0);
}

TEST_CASE("limit sets get their own colour, detectors their own dash; the radiated plot draws its radiated line") {
  Prediction p = hand_prediction();
  LimitSet second = p.scenario.limits.sets.front();
  second.name = "a second set";
  p.scenario.limits.sets.push_back(second);
  const SpectrumPlot plot = readings_plot(p, p.scans[0]);
  std::map<std::string, std::pair<std::string, std::string>> style;  // label -> colour, dash
  for (const PlotTrace& trace : plot.traces) style[trace.label] = {trace.colour, trace.dash};
  REQUIRE(style.count("flat test line / quasi-peak limit") == 1);
  REQUIRE(style.count("a second set / quasi-peak limit") == 1);
  CHECK(style["flat test line / quasi-peak limit"].first != style["a second set / quasi-peak limit"].first);
  CHECK(style["flat test line / quasi-peak limit"].second != style["flat test line / average limit"].second);

  constexpr const char* radiated_limits = R"(
name = "radiated test line"
measures = "radiated-field"
unit = "dBuV/m"
distance = "10 m"
source = "invented for this test"
confidence = "from memory: invented"
[[line]]
detector = "quasi-peak"
segment = [ { from = "30 MHz", to = "230 MHz", level = "30 dBuV/m" } ]
)";
  p.scenario.limits.sets.push_back(parse_limit_text(radiated_limits, "radiated.toml"));
  RadiatedScan rs;
  rs.band = CisprBand::C;
  rs.distance_m = 10.0;
  rs.scan.band = CisprBand::C;
  rs.scan.bandwidth_6db_hz = 120e3;
  rs.scan.readings = {reading(60e6, 40.0, 35.0, 20.0), reading(100e6, 20.0, 18.0, 10.0)};
  p.radiated_scans.push_back(rs);
  const SpectrumPlot radiated = radiated_plot(p, rs);
  bool has_radiated_line = false, has_conducted_line = false;
  for (const PlotTrace& trace : radiated.traces) {
    has_radiated_line = has_radiated_line || trace.label == "radiated test line / quasi-peak limit";
    has_conducted_line = has_conducted_line || trace.label.find("flat test line") != std::string::npos;
  }
  CHECK(has_radiated_line);
  CHECK_FALSE(has_conducted_line);  // a limit only with a reading of its own quantity
  CHECK(radiated.y_label == "field (dB\xC2\xB5V/m)");
  CHECK(radiated_distance_name(10.0) == "10m");
  const std::vector<OutputFile> files = report_files(p);
  CHECK(std::any_of(files.begin(), files.end(), [](const OutputFile& f) { return f.name == "radiated-C-10m.svg"; }));
}

TEST_CASE("a channel strip per broadcast band: each channel that hears a line with its verdict") {
  const Prediction p = hand_prediction();
  const ChannelStrip strip = channel_strip(p.reception.front());
  CHECK(strip.title == "MW");
  CHECK(strip.low_hz == doctest::Approx(526.5e3));
  REQUIRE(strip.channels.size() == 1);
  CHECK(strip.channels[0].verdict == "noisy");
  CHECK_FALSE(strip.not_computed);
  const std::string page = report_html(p, {"report.html"});
  const std::size_t bands_at = page.find("<section id=\"bands\"");
  const std::string bands = page.substr(bands_at, page.find("</section>", bands_at) - bands_at);
  CHECK(bands.find("<figure class=\"channel-strip\">") != std::string::npos);
  CHECK(bands.find("999 kHz: noisy") != std::string::npos);  // the channel's own readout, no script needed
  CHECK(bands.find(">1 noisy<") != std::string::npos);        // the text legend counts it
  BandReception above = p.reception.front();
  above.verdict = ReceptionVerdict::not_computed;
  above.channels.clear();
  CHECK(channel_strip(above).not_computed);
}

TEST_CASE("the files of a report are byte-reproducible and summary.json comes last") {
  const Prediction p = hand_prediction();
  const std::vector<OutputFile> first = report_files(p);
  const std::vector<OutputFile> second = report_files(p);
  REQUIRE(first.size() == second.size());
  for (std::size_t i = 0; i < first.size(); ++i) {
    CHECK(first[i].name == second[i].name);
    CHECK(first[i].content == second[i].content);
  }
  CHECK(first.back().name == "summary.json");
  std::vector<std::string> names;
  for (const OutputFile& f : first) names.push_back(f.name);
  const std::vector<std::string> expected{"spectrum.csv", "source_spectrum.csv", "source_current_spectrum.csv",
                                          "scan.csv", "margins.csv", "bands.csv", "channels.csv", "scan-B.svg", "scan-C.svg",
                                          "source.svg", "report.html", "summary.json"};
  CHECK(names == expected);
  CHECK(nlohmann::json::parse(first.back().content).at("files").get<std::vector<std::string>>() == expected);
}

TEST_CASE("the real chain on the greenhouse example: summary.json agrees with margins.csv and bands.csv") {
  const Scenario scenario = load_scenario(std::string(SPURCAST_SOURCE_DIR) + "/examples/greenhouse-buck.toml", locate_shipped_data());
  const Prediction p = predict(scenario);
  const nlohmann::json j = nlohmann::json::parse(summary_json(p, {}));
  // Smallest margin_db per line detector, read back from the margins CSV text.
  std::map<std::string, double> smallest;
  const std::vector<std::string> rows = lines_of(margins_csv(p.margins));
  for (std::size_t i = 1; i < rows.size(); ++i) {
    std::vector<std::string> cells;
    std::string cell;
    bool quoted = false;
    for (char ch : rows[i]) {
      if (ch == '"') quoted = !quoted;
      else if (ch == ',' && !quoted) { cells.push_back(cell); cell.clear(); }
      else cell += ch;
    }
    cells.push_back(cell);
    REQUIRE(cells.size() == 7);
    const std::string line_detector = cells[5].substr(cells[5].rfind("/ ") + 2);
    const double margin = std::stod(cells[4]);
    if (!smallest.count(line_detector) || margin < smallest[line_detector]) smallest[line_detector] = margin;
  }
  REQUIRE_FALSE(smallest.empty());
  const double tol_db = 1e-9;
  for (const auto& [detector, margin] : smallest) {
    CAPTURE(detector);
    CHECK(j.at("worst_margin_db").at(detector).get<double>() == doctest::Approx(margin).epsilon(tol_db));
  }
  const std::vector<std::string> band_rows = lines_of(bands_csv(p.reception));
  REQUIRE(band_rows.size() == j.at("bands").size() + 1);
  for (std::size_t i = 0; i < j.at("bands").size(); ++i) {
    const std::string expected = j.at("bands")[i].at("name").get<std::string>() + ",";
    CHECK(band_rows[i + 1].find(expected) != std::string::npos);
    CHECK(band_rows[i + 1].find("," + j.at("bands")[i].at("verdict").get<std::string>() + ",") != std::string::npos);
  }
}

TEST_CASE("the source plot labels the plain trapezoid's envelope and marks the ringing harmonics above it") {
  // Without ringing every harmonic lies under the envelope of the plain trapezoid (C. R. Paul §3.2,
  // checked above): no trace of harmonics above it, no marker.
  const SpectrumPlot plain = source_plot(hand_prediction());
  REQUIRE(plain.traces.size() == 2);
  CHECK(plain.traces[1].label == "plain trapezoid's envelope (no ringing)");
  CHECK(plain.markers.empty());
  // The greenhouse example rings at 85 MHz: its harmonics there stand above the envelope, each such
  // line is in the "above" trace (checked against the envelope formula at the same frequency), and the
  // largest excess is marked with its value.
  const Prediction p = predict(load_scenario(std::string(SPURCAST_SOURCE_DIR) + "/examples/greenhouse-buck.toml", locate_shipped_data()));
  const SpectrumPlot ringing = source_plot(p);
  REQUIRE(ringing.traces.size() == 3);
  const PlotTrace& above = ringing.traces[2];
  CHECK(above.label == "above the plain trapezoid's envelope (ringing)");
  REQUIRE_FALSE(above.frequency_hz.empty());
  const SwitchingSpec& spec = *p.scenario.switching;
  double largest_db = 0.0;
  for (std::size_t i = 0; i < above.frequency_hz.size(); ++i) {
    const double excess_db = above.level[i] - volts_to_dbuv(trapezoid_envelope_rms(spec, spec.amplitude_v, above.frequency_hz[i]));
    CHECK(excess_db > 0.0);
    largest_db = std::max(largest_db, excess_db);
  }
  REQUIRE(ringing.markers.size() == 1);
  CHECK(ringing.markers[0].label == fmt_excess(largest_db));
  CHECK(ringing.marker_legend == "largest excess over the envelope");
}

TEST_CASE("the inputs name [switching] current by what it is: pulsed for a buck, DC for a boost") {
  // A boost's input current is DC plus the triangular inductor ripple (Erickson & Maksimović, ch. 2):
  // `current` is its DC value, not a pulse.
  const std::string base = R"(title = "t"
[switching]
frequency = "100 kHz"
duty = 0.4
amplitude = "400 V"
current = "2 A"
rise = "20 ns"
fall = "20 ns"
[coupling]
input_capacitance = "1 uF"
parasitic_capacitance = "20 pF"
[lisn]
model = "v-network-50uH"
lines = 2
)";
  const auto html_of = [](const std::string& text) {
    for (const OutputFile& f : report_files(predict(scenario_from_text(text, "t.toml", ".", locate_shipped_data())))) {
      if (f.name == "report.html") return f.content;
    }
    return std::string();
  };
  const std::string buck = html_of(base);
  CHECK(buck.find("current (pulsed input current)") != std::string::npos);
  const std::string boost = html_of(base + "[converter]\ntopology = \"boost\"\ninductor_ripple = \"1 A\"\n");
  CHECK(boost.find("current (DC input current, triangular ripple on it)") != std::string::npos);
  CHECK(boost.find("current (pulsed input current)") == std::string::npos);
}

TEST_CASE("a margin just below zero reads −0.0 on the page, never 0.0 beside a fail") {
  // 0.1 dB on the page (issue 19): an average reading of 50.04 dBµV against the 50 dBµV line is a
  // fail by 0.04 dB, which rounds to zero; its sign must stay.
  Prediction p = hand_prediction();
  p.scans[0].worst.readings[1].average_db = 50.04;
  const std::vector<LevelReading> readings =
      readings_from_scan(p.scans[0].worst.readings, {Detector::quasi_peak, Detector::average});
  p.margins = compare_with_limits(readings, p.scenario.limits.sets, {.guard_db = 6.0});
  p.verdict = p.margins.verdict;
  REQUIRE(p.verdict == Verdict::fail);
  const std::string page = report_html(p, {"report.html"});
  CHECK(page.find("\xE2\x88\x92" "0.0 dB") != std::string::npos);  // U+2212 minus
  CHECK(page.find(">0.0 dB<") == std::string::npos);  // an unsigned zero margin cell
}
