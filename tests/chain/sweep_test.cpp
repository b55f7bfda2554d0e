// Sweep. External checks, each named beside it:
//  - common practice (no source): a switching frequency above the top of the medium-wave band (about
//    2.1-2.2 MHz) keeps the fundamental and every harmonic out of MW; a fundamental below 150 kHz
//    stays below the start of CISPR band B;
//  - hand-computed: the 10 kHz channel raster of region 2 MW (ITU RR Article 5, channels 530-1700
//    kHz, 9 kHz receiver passband: the shipped plan limits/bands/region2.toml) leaves 1 kHz gaps
//    between the passbands, so a fundamental at 1004.5-1005.5 kHz (exclusive) is heard by no channel;
//    the drift tolerance shrinks that window by hand-computed amounts;
//  - the slow twin: a grid over two keys equals individual predict() runs (receiver scans) at the
//    same points, and the sweep's own scan path.
#include <doctest/doctest.h>

#include <nlohmann/json.hpp>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "core/input/error.hpp"
#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/chain/sweep.hpp"
#include "core/output/sweep_output.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;

namespace {

/// A loud converter (no input filter, 100 pF to the chassis): every harmonic that a channel hears
/// makes it noisy, so "clear" means "no channel hears a line". Invented data (a test fixture).
std::string loud_scenario(int region) {
  return R"(title = "loud buck"
[switching]
frequency = "1 MHz"
duty = 0.25
amplitude = "48 V"
current = "6 A"
rise = "12 ns"
fall = "15 ns"
[coupling]
input_capacitance = "4.7 uF"
input_esr = "8 mOhm"
input_esl = "1.5 nH"
parasitic_capacitance = "100 pF"
[lisn]
model = "v-network-50uH"
lines = 2
[limits]
files = ["cispr32-class-b-conducted"]
guard = "6 dB"
[broadcast]
region = )" + std::to_string(region) +
         "\n";
}

toml::table table_of(const std::string& text) { return parse_toml_text(text, "test.toml"); }

SweepResult sweep_1d(const std::string& text, const std::string& vary, const std::vector<std::string>& clear,
                     double tolerance, unsigned threads = 2) {
  const toml::table table = table_of(text);
  SweepOptions options;
  options.axes.push_back(make_axis(table, parse_vary(vary)));
  for (const std::string& band : clear) options.criteria.push_back(parse_window_criterion(band));
  options.tolerance_fraction = tolerance;
  options.threads = threads;
  return run_sweep(table, "test.toml", ".", locate_shipped_data(), options);
}

std::vector<RobustWindow> windows_of(const SweepResult& result, std::size_t criterion) {
  std::vector<RobustWindow> out;
  for (const RobustWindow& w : result.windows) {
    if (w.criterion == criterion) out.push_back(w);
  }
  return out;
}

const double tol_hz = 1e-3;  // grid values are computed, not typed: compare within a millihertz

}  // namespace

TEST_CASE("--vary text: key, limits, count, spacing") {
  const VarySpec a = parse_vary("switching.frequency=100kHz:3MHz:1000");
  CHECK(a.key == "switching.frequency");
  CHECK(a.from_text == "100kHz");
  CHECK(a.to_text == "3MHz");
  CHECK(a.count == 1000);
  CHECK_FALSE(a.logarithmic);
  const VarySpec b = parse_vary("filter.1.inductance = 1 uH : 10 uH : 5 : log");
  CHECK(b.key == "filter.1.inductance");
  CHECK(b.from_text == "1 uH");
  CHECK(b.count == 5);
  CHECK(b.logarithmic);
  CHECK(parse_vary("switching.rise=5ns:20ns").count == default_sweep_point_count);
  CHECK_THROWS_WITH_AS((void)parse_vary("switching.frequency"),
                       "expected KEY=FROM:TO[:N] (e.g. \"switching.frequency=100kHz:3MHz:1000\"), found "
                       "\"switching.frequency\"",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse_vary("switching.frequency=1MHz:2MHz:0"),
                       "expected a point count >= 1 after TO, found \"0\"", Error);
  CHECK_THROWS_WITH_AS((void)parse_vary("frequency=1MHz:2MHz"),
                       "expected a dotted scenario key such as \"switching.frequency\", found \"frequency\"", Error);
}

TEST_CASE("sweep values: linear and geometric, both ends included") {
  const double tol = 1e-9;
  const auto lin = sweep_values(1.0, 2.0, 5, false);
  REQUIRE(lin.size() == 5);
  CHECK(std::abs(lin[1] - 1.25) < tol);
  CHECK(std::abs(lin[4] - 2.0) < tol);
  // Geometric: 1, 10, 100, 1000 (hand-computed).
  const auto geo = sweep_values(1.0, 1000.0, 4, true);
  CHECK(std::abs(geo[1] - 10.0) < 1e-9 * 10.0);
  CHECK(std::abs(geo[2] - 100.0) < 1e-9 * 100.0);
  CHECK(geo[3] == doctest::Approx(1000.0));
  CHECK_THROWS_WITH_AS((void)sweep_values(-1.0, 1.0, 3, true),
                       "a logarithmic sweep needs FROM and TO of one sign and non-zero, found -1 and 1", Error);
}

TEST_CASE("keys: dimensions from the scenario, values written back and re-read") {
  const std::string text = loud_scenario(1) + R"(
[[filter]]
kind = "lc"
inductance = "4.7 uH"
capacitance = "10 uF"
)";
  const toml::table table = table_of(text);
  CHECK(scenario_key_dimension(table, "switching.frequency", "1") == Dimension::frequency);
  CHECK(scenario_key_dimension(table, "coupling.parasitic_capacitance", "1") == Dimension::capacitance);
  CHECK(scenario_key_dimension(table, "filter.1.inductance", "1") == Dimension::inductance);
  CHECK(scenario_key_dimension(table, "switching.duty", "0.3") == Dimension::number);
  // Absent key: the unit of FROM decides.
  CHECK(scenario_key_dimension(table, "switching.ringing.decay", "10 ns") == Dimension::time);
  CHECK_THROWS_WITH_AS((void)scenario_key_dimension(table, "filter.3.inductance", "1 uH"),
                       "no [[filter]] 3 in the scenario (it has 1)", Error);
  CHECK_THROWS_WITH_AS((void)make_axis(table, parse_vary("switching.frequency=3V:5V:3")),
                       "--vary switching.frequency: expected a frequency (e.g. \"220 kHz\"), found \"3V\"", Error);

  toml::table copy = table;
  set_scenario_key(copy, "switching.frequency", 333e3, Dimension::frequency);
  set_scenario_key(copy, "filter.1.inductance", 2.2e-6, Dimension::inductance);
  set_scenario_key(copy, "lisn.lines", 1.0, Dimension::number);
  set_scenario_key(copy, "switching.ringing.frequency", 60e6, Dimension::frequency);
  set_scenario_key(copy, "switching.ringing.decay", 20e-9, Dimension::time);
  set_scenario_key(copy, "switching.ringing.amplitude", 0.3, Dimension::number);
  const Scenario s = scenario_from_table(copy, "test.toml", ".", locate_shipped_data());
  const double tol_rel = 1e-12;
  CHECK(std::abs(s.switching->frequency_hz - 333e3) < tol_rel * 333e3);
  CHECK(std::abs(s.filters.at(0).inductance_h - 2.2e-6) < tol_rel * 2.2e-6);
  CHECK(s.lisn.lines == 1);
  REQUIRE(s.switching->ringing);
  CHECK(std::abs(s.switching->ringing->frequency_hz - 60e6) < tol_rel * 60e6);
}

TEST_CASE("thread count: SPURCAST_THREADS or every core") {
  CHECK(sweep_thread_count("3") == 3);
  CHECK(sweep_thread_count(nullptr) >= 1);
  // The range is stated as 1..N (issue 14); the variable is named first.
  CHECK_THROWS_WITH_AS((void)sweep_thread_count("two"), "SPURCAST_THREADS: expected a thread count of 1..256, found \"two\"",
                       Error);
  CHECK(sweep_thread_count("256") == 256);
  CHECK_THROWS_WITH_AS((void)sweep_thread_count("257"), "SPURCAST_THREADS: expected a thread count of 1..256, found \"257\"",
                       Error);
}

TEST_CASE("common practice: a switching frequency above the top of MW keeps every harmonic out of MW") {
  // Region 1 MW: 526.5-1606.5 kHz, channels 531-1602 kHz (9 kHz raster). Common practice, no source:
  // about 2.1-2.2 MHz is clear of the band.
  const SweepResult r = sweep_1d(loud_scenario(1), "switching.frequency=1.5MHz:2.5MHz:201", {"MW"}, 0.0);
  const auto w = windows_of(r, 0);
  REQUIRE(w.size() >= 1);
  const RobustWindow& top = w.back();
  CHECK(top.from_value <= 2.1e6);
  CHECK(top.to_value >= 2.5e6 - tol_hz);
  // The window begins beyond the highest channel's reach: its Gaussian response (9 kHz at −6 dB) is cut
  // 60 dB down, 1.578 × 9 kHz = 14.2 kHz off, at 1616.2 kHz; this loud line is above the ambient
  // anywhere inside it. 1620 kHz is the first grid point of 5 kHz steps past it. (A brick-wall
  // passband ended at 1606.5 kHz; the skirt is heard as well, core/radio/bands.hpp.)
  CHECK(std::abs(top.from_value - 1.62e6) < tol_hz);
  // With a 5 % drift the fundamental's range f0·(1 ± 0.05) must stay above 1616.2 kHz:
  // f0 > 1616.2 / 0.95 = 1701.3 kHz, so the window starts at the grid point 1705 kHz.
  const SweepResult drift = sweep_1d(loud_scenario(1), "switching.frequency=1.5MHz:2.5MHz:201", {"MW"}, 0.05);
  const auto wd = windows_of(drift, 0);
  REQUIRE(wd.size() >= 1);
  CHECK(std::abs(wd.back().from_value - 1.705e6) < tol_hz);
  CHECK(wd.back().to_value >= 2.5e6 - tol_hz);
}

TEST_CASE("common practice: a fundamental below 150 kHz stays below the start of CISPR band B") {
  const SweepResult r = sweep_1d(loud_scenario(1), "switching.frequency=100kHz:200kHz:101", {"B"}, 0.0);
  const auto w = windows_of(r, 0);
  REQUIRE(w.size() == 1);
  CHECK(std::abs(w[0].from_value - 100e3) < tol_hz);
  CHECK(std::abs(w[0].to_value - 149e3) < tol_hz);  // 1 kHz grid, 150 kHz itself is in band B
  // 5 % drift: f0·1.05 < 150 kHz, f0 < 142.857 kHz -> last grid point 142 kHz (hand-computed).
  const SweepResult d = sweep_1d(loud_scenario(1), "switching.frequency=100kHz:200kHz:101", {"B"}, 0.05);
  const auto wd = windows_of(d, 0);
  REQUIRE(wd.size() == 1);
  CHECK(std::abs(wd[0].to_value - 142e3) < tol_hz);
}

TEST_CASE("region 2 MW: a fundamental between two 10 kHz channels is heard in both, no window in the gap") {
  // With a brick-wall 9 kHz passband (±4.5 kHz) the channels at 1000 and 1010 kHz left (1004.5,
  // 1005.5) kHz unheard, and the sweep offered it as a window. A receiver hears a line there as a 5 kHz
  // whistle: the shaped response (docs/references.md §5.5: a 9 kHz Gaussian passes a line 5 kHz off
  // centre at −7.4 dB) weights it in both channels, so no offset is clear for a loud line. The second
  // harmonic (2009-2011 kHz) is above MW (1705 kHz), so the fundamental is MW's only line.
  const std::string vary = "switching.frequency=1000kHz:1010kHz:1001";  // 10 Hz steps
  const SweepResult r = sweep_1d(loud_scenario(2), vary, {"MW"}, 0.0);
  CHECK(windows_of(r, 0).empty());
  const auto mw = std::find(r.bands.begin(), r.bands.end(), "MW");
  REQUIRE(mw != r.bands.end());
  const auto index = static_cast<std::size_t>(mw - r.bands.begin());
  for (const SweepPoint& p : r.points) {
    CAPTURE(p.values[0]);
    CHECK_FALSE(p.robust[0]);
    REQUIRE(p.bands.size() > index);
    CHECK(p.bands[index].verdict != ReceptionVerdict::clear);
  }
}

TEST_CASE("output order does not depend on the thread count") {
  const std::string vary = "switching.frequency=150kHz:2MHz:60";
  const SweepResult one = sweep_1d(loud_scenario(1), vary, {"MW"}, 0.05, 1);
  const SweepResult three = sweep_1d(loud_scenario(1), vary, {"MW"}, 0.05, 3);
  CHECK(sweep_csv(one) == sweep_csv(three));
  SweepResult three_as_one = three;
  three_as_one.threads = one.threads;  // the only field that may differ
  CHECK(sweep_json(one, {}) == sweep_json(three_as_one, {}));
}

TEST_CASE("a grid over two keys equals individual predict() runs at the same points") {
  const std::string text = loud_scenario(1);
  const toml::table table = table_of(text);
  SweepOptions options;
  // Even kHz fundamentals, and an explicit 2 kHz scan step below, so predict()'s grid holds every
  // harmonic as well as its spot readings.
  options.axes.push_back(make_axis(table, parse_vary("switching.frequency=400kHz:1.2MHz:3")));
  options.axes.push_back(make_axis(table, parse_vary("coupling.parasitic_capacitance=20pF:80pF:2")));
  options.criteria.push_back(parse_window_criterion("MW"));
  options.criteria.push_back(WindowCriterion{WindowCriterion::Kind::limits_met, ""});
  options.threads = 2;
  const SweepResult fast = run_sweep(table, "test.toml", ".", locate_shipped_data(), options);
  REQUIRE(fast.points.size() == 6);
  options.exact_lines = false;  // the sweep's own slow path: predict() with scans
  const SweepResult slow = run_sweep(table, "test.toml", ".", locate_shipped_data(), options);

  const double tol_db = 0.05;  // QP and AV of a CW in steady state read its RMS within this
  for (std::size_t i = 0; i < fast.points.size(); ++i) {
    const SweepPoint& p = fast.points[i];
    CAPTURE(p.values[0]);
    CAPTURE(p.values[1]);
    CHECK(p.method == "lines");
    CHECK(slow.points[i].method == "scan");
    // The point as its own scenario, run through predict() with its receiver scans.
    toml::table copy = table;
    set_scenario_key(copy, "switching.frequency", p.values[0], Dimension::frequency);
    set_scenario_key(copy, "coupling.parasitic_capacitance", p.values[1], Dimension::capacitance);
    const Scenario scenario = scenario_from_table(copy, "test.toml", ".", locate_shipped_data());
    const Prediction prediction = predict(scenario);
    REQUIRE(prediction.margins.worst);
    REQUIRE(p.worst_margin_db);
    CHECK(std::abs(*p.worst_margin_db - prediction.margins.worst->margin_db) < tol_db);
    for (const DetectorMargin& d : prediction.margins.worst_per_detector) {
      CAPTURE(to_string(d.detector));
      bool found = false;
      for (const DetectorMarginPoint& cell : p.detectors) {
        if (cell.detector != d.detector) continue;
        found = true;
        REQUIRE(cell.margin_db);
        CHECK(std::abs(*cell.margin_db - d.worst.margin_db) < tol_db);
      }
      CHECK(found);
    }
    CHECK(to_string(p.limits_verdict) == to_string(prediction.verdict));
    REQUIRE(p.bands.size() == prediction.reception.size());
    for (std::size_t b = 0; b < p.bands.size(); ++b) {
      CAPTURE(fast.bands[b]);
      CHECK(reception_verdict_name(p.bands[b].verdict) == reception_verdict_name(prediction.reception[b].verdict));
      CHECK(p.bands[b].channels_hit == prediction.reception[b].channels.size());
      CHECK(reception_verdict_name(slow.points[i].bands[b].verdict) ==
            reception_verdict_name(prediction.reception[b].verdict));
    }
    REQUIRE(slow.points[i].worst_margin_db);
    CHECK(std::abs(*slow.points[i].worst_margin_db - prediction.margins.worst->margin_db) < 1e-9);
  }
}

TEST_CASE("the receiver scan takes over when the harmonics are closer than 2 x B6") {
  // Band B: B6 = 9 kHz (CISPR 16-1-1), so 15 kHz harmonics share the IF passband and 25 kHz ones do not.
  const SweepResult r = sweep_1d(loud_scenario(1), "switching.frequency=15kHz:25kHz:2", {}, 0.0);
  CHECK(r.points[0].method == "scan");
  CHECK(r.points[1].method == "lines");
  CHECK(r.notes.front().rfind("1 point went through the receiver scan", 0) == 0);
}

TEST_CASE("a point the scenario rejects is kept with its message; all rejected is an error") {
  // rise 12 ns + fall 15 ns do not fit in the 12.5 ns on-time of 20 MHz at duty 0.25.
  const SweepResult r = sweep_1d(loud_scenario(1), "switching.frequency=1MHz:20MHz:2", {"MW"}, 0.0);
  CHECK(r.invalid_points == 1);
  REQUIRE(r.points[1].error);
  CHECK_FALSE(r.points[0].error);
  CHECK_FALSE(r.points[1].robust[0]);
  CHECK_THROWS_AS((void)sweep_1d(loud_scenario(1), "switching.frequency=20MHz:30MHz:2", {}, 0.0), Error);
  CHECK_THROWS_WITH_AS((void)sweep_1d(loud_scenario(1), "switching.frequency=1MHz:2MHz:2", {"XW"}, 0.0),
                       doctest::Contains("no band \"XW\" in the scenario's band plan"), Error);
}

TEST_CASE("CLI: sweep writes its CSV and finds the MW window") {
  namespace fs = std::filesystem;
  const fs::path folder = fs::temp_directory_path() / ("spurcast-sweep-test-" + std::to_string(std::rand()));
  fs::create_directories(folder);
  const fs::path scenario = folder / "loud.toml";
  std::ofstream(scenario) << loud_scenario(1);
  const fs::path csv = folder / "sweep.csv";
  const std::string command = std::string("SPURCAST_THREADS=2 ") + SPURCAST_EXECUTABLE + " sweep " + scenario.string() +
                              " --vary switching.frequency=1.5MHz:2.5MHz:21 --clear MW --tolerance 5% --csv " +
                              csv.string() + " > " + (folder / "out.txt").string();
  const int status = std::system(command.c_str());
  CHECK(WEXITSTATUS(status) == 0);
  std::ifstream in(csv);
  std::string header;
  std::getline(in, header);
  CHECK(header.rfind("switching.frequency,method,limits_verdict,worst_margin_db,", 0) == 0);
  CHECK(header.find("verdict:MW") != std::string::npos);
  std::stringstream out;
  out << std::ifstream(folder / "out.txt").rdbuf();
  CHECK(out.str().find("MW clear:") != std::string::npos);
  fs::remove_all(folder);
}

TEST_CASE("window edges say why they stop; an end of the swept range is open") {
  // The MW window of the loud converter starts at 1620 kHz (see above): the grid point below it,
  // 1615 kHz, is itself heard by the top channel (1602 kHz, region 1) through its skirt, and noisy.
  const SweepResult r = sweep_1d(loud_scenario(1), "switching.frequency=1.5MHz:2.5MHz:201", {"MW"}, 0.0);
  const auto w = windows_of(r, 0);
  REQUIRE(w.size() >= 1);
  const RobustWindow& top = w.back();
  CHECK_FALSE(top.open_low);
  CHECK(top.open_high);
  CHECK(top.high_edge.empty());
  CAPTURE(top.low_edge);
  CHECK(top.low_edge.starts_with("at 1.615 MHz: MW channel 1.602 MHz noisy at "));
  CHECK(top.low_edge.ends_with(" dBµV/m (harmonic 1)"));
  // Inside the window no MW channel hears a line: the headroom is unbounded, so the recommendation
  // is the middle of the window, (1620 + 2500) / 2 = 2060 kHz, on the 5 kHz grid.
  REQUIRE(r.recommended);
  CHECK(std::abs(r.points[r.recommended->point].values[0] - 2.06e6) < tol_hz);
  CHECK_FALSE(r.recommended->headroom_db);
  CHECK(r.recommended->headroom_to == "no MW channel hears a line");
  const std::string text = sweep_text(r, {});
  CHECK(text.find("\nrecommended: switching.frequency = 2.06 MHz (no MW channel hears a line)\n") != std::string::npos);
  CHECK(text.find("      to:   open (the swept range ends here)\n") != std::string::npos);
}

TEST_CASE("the recommended value has the largest headroom that holds over the tolerance") {
  // A faint converter meets the limits everywhere in 0.2-2 MHz; the recommendation must be the
  // point whose smallest (margin − guard) over the points within ±5 % is largest (recomputed here
  // from the points themselves).
  std::string text = loud_scenario(1);
  text.replace(text.find("\"48 V\""), 6, "\"0.1 V\"");
  text.replace(text.find("\"6 A\""), 5, "\"5 mA\"");
  text.replace(text.find("\"100 pF\""), 8, "\"1 pF\"");
  const toml::table table = table_of(text);
  SweepOptions options;
  options.axes.push_back(make_axis(table, parse_vary("switching.frequency=200kHz:2MHz:181")));
  options.criteria.push_back(WindowCriterion{WindowCriterion::Kind::limits_met, ""});
  options.tolerance_fraction = 0.05;
  options.threads = 2;
  const SweepResult r = run_sweep(table, "test.toml", ".", locate_shipped_data(), options);
  REQUIRE(r.criteria.size() == 1);
  REQUIRE(r.criteria[0].kind == WindowCriterion::Kind::limits_met);
  REQUIRE(windows_of(r, 0).size() == 1);
  REQUIRE(r.recommended);
  double best = -1e9;
  std::size_t best_point = r.points.size();
  for (std::size_t i = 0; i < r.points.size(); ++i) {
    if (!r.points[i].robust[0]) continue;
    const double v = r.points[i].values[0];
    double least = 1e9;
    for (const SweepPoint& q : r.points) {
      if (q.values[0] < v * 0.95 || q.values[0] > v * 1.05) continue;
      REQUIRE(q.worst_margin_db);
      least = std::min(least, *q.worst_margin_db - r.guard_db);
    }
    if (least > best) {
      best = least;
      best_point = i;
    }
  }
  REQUIRE(best_point < r.points.size());
  REQUIRE(r.recommended->headroom_db);
  CHECK(*r.recommended->headroom_db == doctest::Approx(best).epsilon(1e-12));
  CHECK(r.points[r.recommended->point].values[0] == doctest::Approx(r.points[best_point].values[0]));
  CHECK(r.recommended->headroom_to == "limits less the guard band");
  CHECK(*r.recommended->headroom_db > 0.0);
  const nlohmann::json j = nlohmann::json::parse(sweep_json(r, {}));
  CHECK(j.at("recommended").at("margin_db").get<double>() == doctest::Approx(best));
  CHECK(j.at("windows").at(0).at("open_low").get<bool>());
  CHECK(j.at("windows").at(0).at("low_edge").is_null());
}

TEST_CASE("progress: one call per point, serialised, counting up to the total") {
  const toml::table table = table_of(loud_scenario(1));
  SweepOptions options;
  options.axes.push_back(make_axis(table, parse_vary("switching.frequency=1MHz:2MHz:37")));
  options.threads = 2;
  std::vector<std::size_t> seen;
  std::size_t total_seen = 0;
  options.on_point_done = [&](std::size_t done, std::size_t total) {
    seen.push_back(done);  // no lock here: the sweep serialises the calls
    total_seen = total;
  };
  (void)run_sweep(table, "test.toml", ".", locate_shipped_data(), options);
  REQUIRE(seen.size() == 37);
  CHECK(total_seen == 37);
  for (std::size_t i = 0; i < seen.size(); ++i) CHECK(seen[i] == i + 1);
}

TEST_CASE("without a limit line no point meets the limits, and the note says so") {
  // DESIGN §10: nothing that was not compared is reported as met. The loud buck without [limits].
  std::string text = loud_scenario(1);
  const std::size_t limits_at = text.find("[limits]");
  const std::size_t broadcast_at = text.find("[broadcast]");
  text.erase(limits_at, broadcast_at - limits_at);
  const toml::table table = table_of(text);
  SweepOptions options;
  options.axes.push_back(make_axis(table, parse_vary("switching.frequency=1MHz:2MHz:5")));
  options.criteria.push_back(WindowCriterion{WindowCriterion::Kind::limits_met, ""});
  const SweepResult r = run_sweep(table, "test.toml", ".", locate_shipped_data(), options);
  CHECK(std::find(r.notes.begin(), r.notes.end(),
                  "the scenario gives no limit line: no point was compared with limits, so none meets them") != r.notes.end());
  CHECK(windows_of(r, 0).empty());
  CHECK_FALSE(sweep_goal_met(r));
  for (const SweepPoint& p : r.points) CHECK(p.limits_verdict == Verdict::no_limits);
}
