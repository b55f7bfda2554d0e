// Tests of core/output/sweep_output: a 5-point sweep of the invented example
// examples/greenhouse-buck.toml over the switching frequency, written as CSV (the columns its
// contract names: the axis key, method, limits_verdict, worst_margin_db, <detector>_margin_db,
// margin_db:<line>, verdict:<band>, robust:<criterion>, error), JSON that parses with
// nlohmann::json and holds the same margins with `files` last, the text with its closing lines,
// and the plot as SVG with the recommended value and each window edge's reason as the text gives them.
#include <doctest/doctest.h>

#include <nlohmann/json.hpp>

#include <algorithm>
#include <cmath>
#include <sstream>
#include <string>
#include <vector>

#include "core/chain/sweep.hpp"
#include "core/input/toml_reader.hpp"
#include "core/input/units.hpp"
#include "core/output/plot.hpp"
#include "core/output/sweep_output.hpp"

using namespace spurcast;

namespace {

constexpr double json_tol_db = 1e-12;     // [dB]
constexpr double csv_margin_resolution_db = 0.005 + 1e-12;  // [dB] 2 decimals, half a step

const SweepResult& example_sweep() {
  static const SweepResult result = [] {
    const std::string file = std::string(SPURCAST_SOURCE_DIR) + "/examples/greenhouse-buck.toml";
    const toml::table table = parse_toml_file(file, "scenario file");
    SweepOptions options;
    options.axes.push_back(make_axis(table, parse_vary("switching.frequency=300kHz:500kHz:5")));
    options.criteria.push_back(parse_window_criterion("MW"));
    options.threads = 2;
    return run_sweep(table, file, std::string(SPURCAST_SOURCE_DIR) + "/examples", locate_shipped_data(), options);
  }();
  return result;
}

/// One CSV line split into fields, double-quoted fields unquoted (RFC 4180 §2).
std::vector<std::string> split(const std::string& line) {
  std::vector<std::string> cells(1);
  bool quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (quoted) {
      if (c == '"' && i + 1 < line.size() && line[i + 1] == '"') {
        cells.back() += '"';
        ++i;
      } else if (c == '"') {
        quoted = false;
      } else {
        cells.back() += c;
      }
    } else if (c == '"') {
      quoted = true;
    } else if (c == ',') {
      cells.emplace_back();
    } else {
      cells.back() += c;
    }
  }
  return cells;
}

}  // namespace

TEST_CASE("sweep_csv: the contract's columns, one row per point, margins at 2 decimals") {
  const SweepResult& r = example_sweep();
  std::istringstream in(sweep_csv(r));
  std::string line;
  REQUIRE(std::getline(in, line));
  const std::vector<std::string> header = split(line);
  REQUIRE(header.size() >= 6);
  CHECK(header[0] == "switching.frequency");
  CHECK(header[1] == "method");
  CHECK(header[2] == "limits_verdict");
  CHECK(header[3] == "worst_margin_db");
  CHECK(header[4] == to_string(r.detectors.front()) + "_margin_db");
  REQUIRE_FALSE(r.limit_lines.empty());
  CHECK(header[4 + r.detectors.size()] == "margin_db:" + r.limit_lines.front());  // a label with a comma, quoted
  CHECK(header[header.size() - 2] == "robust:" + r.criteria.front().label());
  CHECK(header.back() == "error");
  for (const SweepPoint& p : r.points) {
    REQUIRE(std::getline(in, line));
    const std::vector<std::string> cells = split(line);
    REQUIRE(cells.size() == header.size());
    CHECK(std::abs(std::stod(cells[0]) - p.values[0]) <= 1e-9 * p.values[0]);
    REQUIRE(p.worst_margin_db.has_value());
    CHECK(std::abs(std::stod(cells[3]) - *p.worst_margin_db) <= csv_margin_resolution_db);
  }
  CHECK_FALSE(std::getline(in, line));
}

TEST_CASE("sweep_json: parses, holds the margins, and lists the files last") {
  const SweepResult& r = example_sweep();
  const std::string text = sweep_json(r, {"a.csv", "b \"quoted\".svg"});
  const nlohmann::ordered_json j = nlohmann::ordered_json::parse(text);
  REQUIRE(j["points"].size() == r.points.size());
  for (std::size_t i = 0; i < r.points.size(); ++i) {
    CHECK(std::abs(j["points"][i]["worst_margin_db"].get<double>() - *r.points[i].worst_margin_db) < json_tol_db);
  }
  CHECK(j.back() == nlohmann::ordered_json::array({"a.csv", "b \"quoted\".svg"}));
  CHECK(std::string((--j.end()).key()) == "files");
}

TEST_CASE("sweep_text and sweep_svg") {
  const SweepResult& r = example_sweep();
  const std::string text = sweep_text(r, {"a.csv"});
  CHECK(text.rfind("Sweep of switching.frequency: 5 points, 2 threads", 0) == 0);
  CHECK(text.find("\n" + r.criteria.front().label() + ":\n") != std::string::npos);
  const std::string ending = "wrote a.csv\na prediction is not a compliance result: only an accredited test decides\n";
  CHECK(text.substr(text.size() - ending.size()) == ending);
  const std::string svg = sweep_svg(r, "sweep of switching.frequency");
  CHECK(svg.find("<svg") != std::string::npos);
  CHECK(svg.find("sweep of switching.frequency") != std::string::npos);
  CHECK(sweep_goal_met(r) == std::any_of(r.windows.begin(), r.windows.end(), [](const RobustWindow& w) { return w.criterion == 0; }));
}

TEST_CASE("sweep_svg: the recommended value and every closed window edge with its reason, as the text gives them") {
  // Medium wave clears above about 1.7 MHz for the greenhouse buck (README): a window with a closed
  // lower edge inside this range.
  const std::string file = std::string(SPURCAST_SOURCE_DIR) + "/examples/greenhouse-buck.toml";
  const toml::table table = parse_toml_file(file, "scenario file");
  SweepOptions options;
  options.axes.push_back(make_axis(table, parse_vary("switching.frequency=1.2MHz:2.5MHz:14")));
  options.criteria.push_back(parse_window_criterion("MW"));
  options.tolerance_fraction = 0.05;
  options.threads = 2;
  const SweepResult r = run_sweep(table, file, std::string(SPURCAST_SOURCE_DIR) + "/examples", locate_shipped_data(), options);
  const std::string svg = sweep_svg(r, "sweep of switching.frequency");
  // Every text of the picture in order, joined by spaces: the list's wrapped lines read as one.
  std::string texts;
  for (std::size_t at = svg.find("<text"); at != std::string::npos; at = svg.find("<text", at + 1)) {
    const std::size_t open = svg.find('>', at) + 1;
    texts += svg.substr(open, svg.find("</text>", open) - open) + " ";
  }
  int closed_edges = 0;
  for (const RobustWindow& w : r.windows) {
    if (!w.open_low) {
      ++closed_edges;
      CHECK(texts.find(xml_escape(w.low_edge)) != std::string::npos);
    }
    if (!w.open_high) {
      ++closed_edges;
      CHECK(texts.find(xml_escape(w.high_edge)) != std::string::npos);
    }
  }
  CHECK(closed_edges >= 1);
  REQUIRE(r.recommended);
  // The value at the plot's 4 digits, and what the text output says sets it.
  const double value = r.points[r.recommended->point].values.front();
  CHECK(texts.find("recommended: " + format_quantity(value, Dimension::frequency, 4) + " (") != std::string::npos);
  REQUIRE(!r.recommended->headroom_to.empty());
  CHECK(texts.find(xml_escape(r.recommended->headroom_to) + ")") != std::string::npos);
  CHECK(sweep_text(r, {}).find(r.recommended->headroom_to) != std::string::npos);
}

TEST_CASE("sweep_svg: the windows' legend names what was asked, with the detectors and guard of --meet-limits") {
  const std::string file = std::string(SPURCAST_SOURCE_DIR) + "/examples/greenhouse-buck.toml";
  const toml::table table = parse_toml_file(file, "scenario file");
  SweepOptions options;
  options.axes.push_back(make_axis(table, parse_vary("switching.frequency=1.2MHz:2.5MHz:6")));
  options.criteria.push_back(parse_window_criterion("MW"));
  options.criteria.push_back(WindowCriterion{WindowCriterion::Kind::limits_met, ""});
  options.tolerance_fraction = 0.05;
  options.threads = 2;
  const SweepResult r = run_sweep(table, file, std::string(SPURCAST_SOURCE_DIR) + "/examples", locate_shipped_data(), options);
  // Two criteria: the sweep adds "all criteria", whose windows the plot highlights.
  REQUIRE(r.criteria.back().kind == WindowCriterion::Kind::all);
  // CISPR 32 Annex A (the class B AC mains port, as CISPR 22 before it) sets the conducted limit for
  // the quasi-peak and the average detector and none for peak (common practice; the same two lines
  // as limits/cispr32-class-b-conducted.toml); the example's guard band is 6 dB.
  const std::string label = "windows where MW is clear and quasi-peak and average margins \xE2\x89\xA5 6 dB "
                            "(robust to \xC2\xB1" "5 % frequency drift)";
  CHECK(sweep_windows_label(r) == label);
  const std::string svg = sweep_svg(r, "sweep of switching.frequency");
  CHECK(svg.find(">" + xml_escape(label) + "</text>") != std::string::npos);
  CHECK(svg.find("clears every band and limit") == std::string::npos);

  // One criterion alone, no drift: that criterion's words only.
  const SweepResult& mw = example_sweep();
  CHECK(sweep_windows_label(mw) == "windows where MW is clear");
  CHECK(sweep_svg(mw, "sweep").find(">windows where MW is clear</text>") != std::string::npos);
}
