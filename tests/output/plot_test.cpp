// Tests of core/output/plot: the log-frequency grid, label placement without overlap at common sizes,
// reduction of long curves, and that every SVG is well-formed XML (Debian's Python xml.etree).
#include <doctest/doctest.h>

#include <limits>

#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <tuple>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <string>
#include <vector>

#include "core/input/error.hpp"
#include "core/output/plot.hpp"

using namespace spurcast;

namespace {

const std::string checker = std::string(SPURCAST_SOURCE_DIR) + "/tests/data/report/check_report.py";
const std::string python = "/usr/bin/python3";

bool have_python() { return ::access(python.c_str(), X_OK) == 0; }

/// Writes `svg` to a temporary file and parses it with xml.etree; true when it parses.
bool parses_as_xml(const std::string& svg) {
  char path[] = "/tmp/spurcast-plot-test-XXXXXX";
  const int fd = ::mkstemp(path);
  REQUIRE(fd >= 0);
  ::close(fd);
  std::ofstream(path) << svg;
  const int status = std::system((python + " " + checker + " xml " + path).c_str());
  std::remove(path);
  return status == 0;
}

/// The shortwave and broadcast bands of ITU region 1 inside band B, roughly as the band plan lists
/// them (names and edges for the label test only; the values are not checked here).
std::vector<PlotSpan> crowded_spans() {
  const std::vector<std::tuple<const char*, double, double>> bands{
      {"LW", 148.5e3, 283.5e3}, {"MW", 526.5e3, 1606.5e3}, {"120 m", 2.3e6, 2.495e6}, {"90 m", 3.2e6, 3.4e6},
      {"75 m", 3.95e6, 4.0e6},  {"60 m", 4.75e6, 4.995e6}, {"60 m upper", 5.005e6, 5.06e6}, {"49 m", 5.9e6, 6.2e6},
      {"41 m", 7.2e6, 7.45e6},  {"31 m", 9.4e6, 9.9e6},    {"25 m", 11.6e6, 12.1e6},  {"22 m", 13.57e6, 13.87e6},
      {"19 m", 15.1e6, 15.8e6}, {"16 m", 17.48e6, 17.9e6}, {"15 m", 18.9e6, 19.02e6}, {"13 m", 21.45e6, 21.85e6},
      {"11 m", 25.67e6, 26.1e6}, {"FM OIRT", 65.9e6, 74e6}, {"FM", 87.5e6, 108e6}};
  std::vector<PlotSpan> spans;
  for (const auto& [name, low, high] : bands) spans.push_back({name, low, high, "#e8d9ae"});
  return spans;
}

SpectrumPlot sample_plot(double min_hz, double max_hz, double width, double height) {
  SpectrumPlot plot;
  plot.title = "Receiver readings at the LISN, CISPR band B (worst of the lines)";
  plot.min_hz = min_hz;
  plot.max_hz = max_hz;
  plot.width_px = width;
  plot.height_px = height;
  for (const char* name : {"peak", "quasi-peak", "average", "CISPR 32 class B / quasi-peak limit",
                           "CISPR 32 class B / average limit"}) {
    PlotTrace trace;
    trace.label = name;
    for (int i = 0; i <= 200; ++i) {
      const double f = min_hz * std::pow(max_hz / min_hz, i / 200.0);
      trace.frequency_hz.push_back(f);
      trace.level.push_back(40.0 + 20.0 * std::sin(i * 0.3));
    }
    plot.traces.push_back(trace);
  }
  plot.spans = crowded_spans();
  const double centre = std::sqrt(min_hz * max_hz);
  // Three markers close together, as three worst readings often are.
  plot.markers = {{centre, 58.0, "AV \xE2\x88\x92" "47.2 dB"}, {centre * 1.05, 57.0, "QP \xE2\x88\x92" "37.2 dB"},
                  {centre * 1.1, 59.0, "AV \xE2\x88\x92" "46.7 dB"}};
  return plot;
}

void check_no_overlap(const PlotLayout& layout, double width, double height) {
  REQUIRE(layout.text_boxes.size() == layout.texts.size());
  for (std::size_t i = 0; i < layout.text_boxes.size(); ++i) {
    const TextBox& a = layout.text_boxes[i];
    CAPTURE(layout.texts[i]);
    CHECK(a.x >= 0.0);
    CHECK(a.y >= 0.0);
    CHECK(a.x + a.width <= width);
    CHECK(a.y + a.height <= height);
    for (std::size_t j = i + 1; j < layout.text_boxes.size(); ++j) {
      CAPTURE(layout.texts[j]);
      CHECK_FALSE(boxes_overlap(a, layout.text_boxes[j]));
    }
    // No text covers a marker's dot (issue 19: markers collided with each other's labels).
    for (const TextBox& dot : layout.marker_boxes) CHECK_FALSE(boxes_overlap(a, dot));
  }
}

/// Every marker's label is either drawn once or listed as dropped, never silently lost.
void check_markers_accounted(const SpectrumPlot& plot, const PlotLayout& layout) {
  for (const PlotMarker& m : plot.markers) {
    CAPTURE(m.label);
    const auto drawn = std::count(layout.texts.begin(), layout.texts.end(), m.label);
    const auto dropped =
        std::count(layout.dropped_marker_labels.begin(), layout.dropped_marker_labels.end(), m.label);
    CHECK(drawn + dropped == 1);
  }
}

bool has_text(const PlotLayout& layout, const std::string& text) {
  return std::find(layout.texts.begin(), layout.texts.end(), text) != layout.texts.end();
}

}  // namespace

TEST_CASE("text boxes: width from the character count, overlap only with shared area") {
  const double tol_px = 1e-9;
  const TextBox box = estimate_text_box("0.15", 100.0, 50.0, 10.0, TextAnchor::middle);
  CHECK(box.width == doctest::Approx(4 * 10.0 * character_width_em).epsilon(tol_px));
  CHECK(box.x == doctest::Approx(100.0 - box.width / 2).epsilon(tol_px));
  CHECK(box.y == doctest::Approx(42.0).epsilon(tol_px));
  // A two-byte UTF-8 character counts once.
  CHECK(estimate_text_box("dB\xC2\xB5V", 0, 0, 10, TextAnchor::start).width ==
        doctest::Approx(4 * 10.0 * character_width_em));
  CHECK(boxes_overlap({0, 0, 10, 10}, {5, 5, 10, 10}));
  CHECK_FALSE(boxes_overlap({0, 0, 10, 10}, {10, 0, 10, 10}));  // touching edges
  CHECK_FALSE(boxes_overlap({0, 0, 10, 10}, {0, 20, 10, 10}));
}

TEST_CASE("log-frequency grid: decades major, 2 and 5 minor, ends labelled, labels in MHz") {
  // Common practice (log graph paper): lines at 1, 2 and 5 of every decade.
  const std::vector<AxisTick> ticks = log_frequency_ticks(150e3, 30e6);
  std::vector<std::string> labels;
  std::vector<std::string> majors;
  for (const AxisTick& t : ticks) {
    labels.push_back(t.label);
    if (t.major) majors.push_back(t.label);
  }
  CHECK(labels == std::vector<std::string>{"0.15", "0.2", "0.5", "1", "2", "5", "10", "20", "30"});
  CHECK(majors == std::vector<std::string>{"1", "10"});
  CHECK(mhz_label(9e3) == "0.009");
  CHECK(mhz_label(1e9) == "1000");
  CHECK(mhz_label(2.5e6) == "2.5");
  CHECK_THROWS_WITH_AS((void)log_frequency_ticks(0.0, 1e6), "axis range must satisfy 0 < min < max", Error);
  CHECK(linear_ticks(0.0, 10.0, 5) == std::vector<double>{0, 2, 4, 6, 8, 10});
}

TEST_CASE("labels never overlap at common sizes, and the decade labels survive") {
  const std::vector<std::pair<double, double>> sizes{{480, 320}, {640, 360}, {800, 400}, {960, 420}, {1280, 520}};
  const std::vector<std::pair<double, double>> ranges{{9e3, 150e3}, {150e3, 30e6}, {30e6, 1e9}, {100e3, 110e6}};
  for (const auto& [width, height] : sizes) {
    for (const auto& [low, high] : ranges) {
      CAPTURE(width);
      CAPTURE(low);
      const PlotLayout layout = layout_spectrum_plot(sample_plot(low, high, width, height));
      check_no_overlap(layout, width, height);
      for (const AxisTick& t : layout.x_ticks) {
        if (t.major) CHECK_MESSAGE(!t.label.empty(), "decade label dropped at ", t.value);
      }
    }
  }
  // Markers: five emissions crowded into a tenth of a decade at the report's size, as a dithered
  // source's neighbouring harmonics give; each label has its frequency and margin, none overlaps
  // another label or a dot, and all five find a place.
  for (const auto& [width, height] : sizes) {
    SpectrumPlot crowded = sample_plot(150e3, 30e6, width, height);
    crowded.markers.clear();
    for (int k = 0; k < 5; ++k) {
      const double f = 2.2e6 * std::pow(1.05, k);
      crowded.markers.push_back({f, 50.0 + (k % 2) * 3.0, format_quantity(f, Dimension::frequency, 4) + " QP \xE2\x88\x92" +
                                                            std::to_string(k) + ".5 dB"});
    }
    CAPTURE(width);
    const PlotLayout layout = layout_spectrum_plot(crowded);
    check_no_overlap(layout, width, height);
    check_markers_accounted(crowded, layout);
    CHECK(layout.marker_boxes.size() == 5);
    if (width >= 960) CHECK(layout.dropped_marker_labels.empty());
  }
  // At the report's size every band of band B keeps its name.
  const PlotLayout wide = layout_spectrum_plot(sample_plot(150e3, 30e6, 960, 420));
  CHECK(wide.dropped_span_labels.empty());
  CHECK(has_text(wide, "MW"));
  CHECK(has_text(wide, "frequency (MHz)"));
}

TEST_CASE("long curves are reduced to a few points per pixel column, keeping the peaks") {
  SpectrumPlot plot;
  plot.title = "dense";
  plot.width_px = 800;
  PlotTrace trace;
  trace.label = "peak";
  const int n = 40000;
  for (int i = 0; i < n; ++i) {
    trace.frequency_hz.push_back(150e3 * std::pow(200.0, i / double(n - 1)));
    trace.level.push_back(i == 20000 ? 95.0 : 20.0);
  }
  plot.traces.push_back(trace);
  const std::string svg = spectrum_plot_svg(plot);
  std::size_t points = 0;
  for (char c : svg) points += (c == 'L');
  CHECK(points < 4 * 800);
  const PlotLayout layout = layout_spectrum_plot(plot);
  CHECK(layout.y_max >= 95.0);  // the single peak sets the range: it was kept
}

TEST_CASE("every plot is well-formed XML, text is escaped, and bad input is refused") {
  SpectrumPlot plot = sample_plot(150e3, 30e6, 960, 420);
  plot.title = "R&D <draft> \"buck\"";
  const std::string svg = spectrum_plot_svg(plot);
  CHECK(svg.find("R&amp;D &lt;draft&gt; &quot;buck&quot;") != std::string::npos);
  CHECK(svg.rfind("<svg xmlns=\"http://www.w3.org/2000/svg\"", 0) == 0);

  SweepPlot sweep;
  sweep.title = "Sweep of the switching frequency";
  for (int i = 0; i < 60; ++i) {
    sweep.parameter.push_back(100e3 + i * 50e3);
    sweep.worst_margin_db.push_back(8.0 * std::sin(i * 0.2));
  }
  for (const char* name : {"LW", "MW", "49 m", "FM OIRT"}) {
    SweepBandRow row{name, {}};
    for (int i = 0; i < 60; ++i) row.verdicts.push_back(i % 7 < 3 ? "clear" : (i % 7 < 5 ? "watch" : "noisy"));
    sweep.bands.push_back(row);
  }
  sweep.clear_windows = {{300e3, 450e3, "", ""}, {2e6, 2.2e6, "", ""}};
  const std::string sweep_svg = sweep_plot_svg(sweep);
  for (const auto& [w, h] : std::vector<std::pair<double, double>>{{640, 400}, {960, 460}}) {
    SweepPlot sized = sweep;
    sized.width_px = w;
    sized.height_px = h;
    check_no_overlap(layout_sweep_plot(sized), w, h);
  }
  SweepPlot log_sweep = sweep;
  log_sweep.log_parameter = true;
  check_no_overlap(layout_sweep_plot(log_sweep), log_sweep.width_px, log_sweep.height_px);

  SweepPlot bad = sweep;
  bad.worst_margin_db.pop_back();
  CHECK_THROWS_WITH_AS((void)sweep_plot_svg(bad), "sweep plot: margins and parameter values differ in length", Error);
  bad = sweep;
  bad.bands[1].verdicts.pop_back();
  CHECK_THROWS_WITH_AS((void)sweep_plot_svg(bad), "sweep plot: verdicts of MW differ in length", Error);
  SpectrumPlot tiny = plot;
  tiny.width_px = 100;
  CHECK_THROWS_WITH_AS((void)spectrum_plot_svg(tiny), "plot size must be between 240 x 160 and 20000 x 20000 px", Error);
  // A level axis without end (issue 14: predict with levels of +inf never finished its tick loop):
  // an error, whatever the range. IEEE 754: inf - x = inf, and 1e300 + 5 == 1e300 in double.
  SpectrumPlot endless = plot;
  endless.y_min = 0.0;
  endless.y_max = std::numeric_limits<double>::infinity();
  CHECK_THROWS_WITH_AS((void)spectrum_plot_svg(endless), "plot level axis from 0 to inf is not a finite range of at most 1000 ticks", Error);
  endless.y_max = 1e300;
  CHECK_THROWS_WITH_AS((void)spectrum_plot_svg(endless), "plot level axis from 0 to 1e+300 is not a finite range of at most 1000 ticks", Error);

  if (!have_python()) {
    MESSAGE("skipped the XML parse: /usr/bin/python3 not found");
    return;
  }
  CHECK(parses_as_xml(svg));
  CHECK(parses_as_xml(sweep_svg));
  CHECK(parses_as_xml(sweep_plot_svg(log_sweep)));
}

TEST_CASE("channel strip: a block per channel in its verdict's fill, a counting text legend, no overlap") {
  ChannelStrip strip;
  strip.title = "MW";
  strip.low_hz = 526.5e3;
  strip.high_hz = 1606.5e3;
  strip.raster_hz = 9e3;
  strip.channels = {{531e3, "noisy"}, {540e3, "noisy"}, {999e3, "watch"}, {1602e3, "clear"}};
  const std::string svg = channel_strip_svg(strip);
  CHECK(svg.find("fill=\"" + verdict_fill("noisy") + "\"><title>531 kHz: noisy</title>") != std::string::npos);
  CHECK(svg.find("<title>999 kHz: watch</title>") != std::string::npos);
  CHECK(svg.find(">2 noisy<") != std::string::npos);
  CHECK(svg.find(">1 watch<") != std::string::npos);
  CHECK(svg.find(">1 clear<") != std::string::npos);
  CHECK(svg.find("white: no line heard") != std::string::npos);
  // Our own fills, distinct per verdict.
  CHECK(verdict_fill("noisy") != verdict_fill("watch"));
  CHECK(verdict_fill("watch") != verdict_fill("clear"));
  for (const double width : {480.0, 960.0}) {
    strip.width_px = width;
    const PlotLayout layout = layout_channel_strip(strip);
    check_no_overlap(layout, width, strip.height_px);
    CHECK(has_text(layout, "MW"));
  }
  // A long band name pushes the strip right instead of running into it.
  strip.title = "60 m upper";
  const PlotLayout named = layout_channel_strip(strip);
  REQUIRE_FALSE(named.text_boxes.empty());
  CHECK(named.text_boxes.front().x + named.text_boxes.front().width <= named.plot_left);
  strip.not_computed = true;
  CHECK(channel_strip_svg(strip).find("not computed (above the computed range)") != std::string::npos);
  strip.high_hz = strip.low_hz;
  CHECK_THROWS_WITH_AS(channel_strip_svg(strip), "channel strip frequency range must satisfy 0 <= low < high",
                       Error);
  if (have_python()) {
    strip.high_hz = 1606.5e3;
    strip.not_computed = false;
    CHECK(parses_as_xml(channel_strip_svg(strip)));
  }
}

TEST_CASE("a detector's curve and legend entry carry its detectors, for the report's switches") {
  SpectrumPlot plot = sample_plot(150e3, 30e6, 960, 420);
  plot.traces[0].detectors = {"peak"};
  plot.traces[1].detectors = {"quasi-peak", "average"};  // coinciding readings: one line for both
  const std::string svg = spectrum_plot_svg(plot);
  // The curve (a <path>) and the legend entry (a <g> around its swatch and text) of each trace.
  auto count = [&](const std::string& text) {
    std::size_t n = 0;
    for (std::size_t at = svg.find(text); at != std::string::npos; at = svg.find(text, at + 1)) ++n;
    return n;
  };
  CHECK(count(" data-detectors=\"peak\"") == 2);
  CHECK(count(" data-detectors=\"quasi-peak average\"") == 2);
  CHECK(count("<g class=\"legend-item\" data-detectors=\"peak\">") == 1);
  CHECK(count("data-detectors") == 4);  // limit lines and the rest carry none
  // The attribute changes no position: the layout is the same as without it.
  SpectrumPlot plain = sample_plot(150e3, 30e6, 960, 420);
  const PlotLayout a = layout_spectrum_plot(plot), b = layout_spectrum_plot(plain);
  CHECK(a.texts == b.texts);
  REQUIRE(a.text_boxes.size() == b.text_boxes.size());
  for (std::size_t i = 0; i < a.text_boxes.size(); ++i) {
    CHECK(a.text_boxes[i].x == doctest::Approx(b.text_boxes[i].x));
    CHECK(a.text_boxes[i].y == doctest::Approx(b.text_boxes[i].y));
  }
  if (have_python()) CHECK(parses_as_xml(svg));
}

TEST_CASE("sweep plot: the recommended value and each window edge's reason, tagged, listed under it, no overlap") {
  SweepPlot sweep;
  sweep.title = "sweep of switching.frequency";
  for (int i = 0; i < 60; ++i) {
    sweep.parameter.push_back(100e3 + i * 50e3);
    sweep.worst_margin_db.push_back(8.0 * std::sin(i * 0.2));
  }
  const std::string long_reason =
      "at 1.15 MHz: MW channel 1.152 MHz noisy at 31.4 dB\xC2\xB5V/m (harmonic 7), within +/-5 % of 1.2 MHz where "
      "the average limit of CISPR 32 class B, AC mains port is exceeded by 2.3 dB at 1.2 MHz";
  sweep.clear_windows = {{100e3, 450e3, "", "at 500 kHz: MW channel 999 kHz noisy (harmonic 2)"},
                         {1.2e6, 1.4e6, long_reason, "at 1.45 MHz: quasi-peak margin 4.1 dB under the guard band"}};
  sweep.recommended = 300e3;
  sweep.recommended_reason = "6.2 dB of headroom to the limits less the guard band";
  for (const auto& [w, h] : std::vector<std::pair<double, double>>{{640, 400}, {960, 460}}) {
    CAPTURE(w);
    SweepPlot sized = sweep;
    sized.width_px = w;
    sized.height_px = h;
    const PlotLayout layout = layout_sweep_plot(sized);
    // The list makes the picture taller; every text stays inside it and clear of the others.
    CHECK(layout.height_px > h);
    check_no_overlap(layout, w, layout.height_px);
    CHECK(has_text(layout, "recommended 300 kHz"));
    // The list, read in order: the recommendation, then each edge behind its letter (wrapped lines
    // joined again with a space). Three edges: the first window starts where the sweep does.
    std::string list;
    for (std::size_t i = 0; i < layout.texts.size(); ++i) {
      if (layout.text_boxes[i].y > h) list += layout.texts[i] + " ";
    }
    CHECK(list == "recommended: 300 kHz (6.2 dB of headroom to the limits less the guard band) a upper edge of "
                  "100 kHz to 450 kHz: at 500 kHz: MW channel 999 kHz noisy (harmonic 2) b lower edge of 1.2 MHz to "
                  "1.4 MHz: " + long_reason + " c upper edge of 1.2 MHz to 1.4 MHz: at 1.45 MHz: quasi-peak margin "
                  "4.1 dB under the guard band ");
    // Each letter is also in the plot, at its edge (or counted as dropped).
    for (const char* tag : {"a", "b", "c"}) {
      CAPTURE(tag);
      const auto in_plot = std::count_if(layout.texts.begin(), layout.texts.end(), [&](const std::string& t) { return t == tag; });
      const auto dropped = std::count(layout.dropped_span_labels.begin(), layout.dropped_span_labels.end(), tag);
      CHECK(in_plot + dropped == 2);  // once in the plot or dropped, once in the list
    }
  }
  const std::string svg = sweep_plot_svg(sweep);
  const PlotLayout layout = layout_sweep_plot(sweep);
  char height[32];
  std::snprintf(height, sizeof height, "height=\"%.1f\"", layout.height_px);  // the SVG's number format
  CHECK(svg.find(height) != std::string::npos);
  if (have_python()) CHECK(parses_as_xml(svg));

  // More edges than the list spells out: the rest are counted, never dropped silently.
  SweepPlot many = sweep;
  many.clear_windows.clear();
  for (int i = 0; i < 10; ++i) {
    many.clear_windows.push_back({200e3 + i * 250e3, 300e3 + i * 250e3, "low reason " + std::to_string(i),
                                  "high reason " + std::to_string(i)});
  }
  const PlotLayout crowded = layout_sweep_plot(many);
  check_no_overlap(crowded, many.width_px, crowded.height_px);
  CHECK(has_text(crowded, "and 6 more window edges (the sweep's text and JSON give every reason)"));
  CHECK(has_text(crowded, "n"));  // the 14th letter
}
