#include "core/output/plot.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <functional>
#include <limits>
#include <map>
#include <tuple>

#include "core/input/error.hpp"

namespace spurcast {

namespace {

// Our palette and type (our own choice): warm paper background, slate ink, muted grid.
constexpr const char* paper_colour = "#fbfaf6";
constexpr const char* ink_colour = "#22303a";
constexpr const char* soft_ink_colour = "#5b6770";
constexpr const char* major_grid_colour = "#c5cbd0";
constexpr const char* minor_grid_colour = "#e3e6e8";
constexpr const char* font_family = "'DejaVu Sans','Liberation Sans',Arial,sans-serif";

constexpr double title_font_px = 15.0;
constexpr double legend_font_px = 12.0;
constexpr double tick_font_px = 11.0;
constexpr double axis_title_font_px = 12.0;
constexpr double span_font_px = 10.0;
constexpr double marker_font_px = 11.0;
constexpr double marker_radius_px = 4.5;
constexpr double label_gap_px = 3.0;  // clearance kept around every label

std::string number(double value) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.1f", value);
  std::string text = buffer;
  if (text == "-0.0" && !(value < 0.0)) text = "0.0";  // a negative margin keeps its sign
  return text;
}

std::size_t code_points(std::string_view text) {
  std::size_t count = 0;
  for (unsigned char c : text) {
    if ((c & 0xC0) != 0x80) ++count;
  }
  return count;
}

/// FNV-1a of the text: a deterministic id prefix so several plots can share one HTML page.
std::string id_for(std::string_view text, std::string_view kind) {
  std::uint64_t hash = 1469598103934665603ull;
  for (unsigned char c : text) {
    hash ^= c;
    hash *= 1099511628211ull;
  }
  for (unsigned char c : kind) {
    hash ^= c;
    hash *= 1099511628211ull;
  }
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "p%08x", static_cast<unsigned>(hash & 0xffffffffu));
  return buffer;
}

TextBox inflate(const TextBox& box, double by) {
  return TextBox{box.x - by, box.y - by, box.width + 2 * by, box.height + 2 * by};
}

const char* anchor_name(TextAnchor anchor) {
  switch (anchor) {
    case TextAnchor::start: return "start";
    case TextAnchor::middle: return "middle";
    case TextAnchor::end: return "end";
  }
  return "start";
}

/// Collects the text of a plot: every accepted label is kept in the layout and drawn.
class TextPlacer {
 public:
  TextPlacer(PlotLayout& layout, std::string& svg, double width_px, double height_px)
      : layout_(layout), svg_(svg), width_px_(width_px), height_px_(height_px) {}

  /// Places the text if its box is inside the picture and clear of every placed box.
  bool try_place(std::string_view text, double x, double baseline_y, double font_px, TextAnchor anchor,
                 const std::string& attributes, std::optional<TextBox> bounds = std::nullopt) {
    const TextBox box = estimate_text_box(text, x, baseline_y, font_px, anchor);
    const TextBox area = bounds.value_or(TextBox{0.0, 0.0, width_px_, height_px_});
    if (box.x < area.x || box.y < area.y || box.x + box.width > area.x + area.width ||
        box.y + box.height > area.y + area.height) {
      return false;
    }
    for (const TextBox& other : layout_.text_boxes) {
      if (boxes_overlap(inflate(box, label_gap_px), other)) return false;
    }
    for (const TextBox& other : layout_.marker_boxes) {
      if (boxes_overlap(box, other)) return false;
    }
    place(text, x, baseline_y, font_px, anchor, attributes, box);
    return true;
  }

  /// Places the text unconditionally (titles), with an explicit box for rotated text.
  void place(std::string_view text, double x, double baseline_y, double font_px, TextAnchor anchor,
             const std::string& attributes, std::optional<TextBox> box = std::nullopt) {
    layout_.text_boxes.push_back(box.value_or(estimate_text_box(text, x, baseline_y, font_px, anchor)));
    layout_.texts.emplace_back(text);
    svg_ += "<text x=\"" + number(x) + "\" y=\"" + number(baseline_y) + "\" font-size=\"" + number(font_px) +
            "\" text-anchor=\"" + anchor_name(anchor) + "\"" + (attributes.empty() ? "" : " " + attributes) +
            ">" + xml_escape(text) + "</text>\n";
  }

 private:
  PlotLayout& layout_;
  std::string& svg_;
  double width_px_;
  double height_px_;
};

struct LogScale {
  double log_min, log_max, left, right;
  [[nodiscard]] double x(double value) const {
    return left + (std::log10(value) - log_min) / (log_max - log_min) * (right - left);
  }
};

struct LinearScale {
  double min, max, from_px, to_px;
  [[nodiscard]] double map(double value) const { return from_px + (value - min) / (max - min) * (to_px - from_px); }
};

/// Runs of drawable points: finite and above the level floor, broken at NaN and at floor values.
std::vector<std::vector<std::pair<double, double>>> drawable_runs(const PlotTrace& trace, const LogScale& xs,
                                                                  const LinearScale& ys) {
  std::vector<std::vector<std::pair<double, double>>> runs(1);
  const std::size_t n = std::min(trace.frequency_hz.size(), trace.level.size());
  for (std::size_t i = 0; i < n; ++i) {
    const double f = trace.frequency_hz[i];
    const double level = trace.level[i];
    if (!(f > 0.0) || !std::isfinite(level) || level <= level_floor_db + 1.0) {
      if (!runs.back().empty()) runs.emplace_back();
      continue;
    }
    runs.back().emplace_back(xs.x(f), ys.map(level));
  }
  if (runs.back().empty()) runs.pop_back();
  return runs;
}

/// Keeps the first, the lowest and the highest point of each pixel column, in order: a curve of
/// tens of thousands of scan points keeps every peak and costs at most ~3 points per pixel.
std::vector<std::pair<double, double>> decimate(const std::vector<std::pair<double, double>>& run) {
  if (run.size() < 4) return run;
  std::vector<std::pair<double, double>> out;
  std::size_t i = 0;
  while (i < run.size()) {
    const double column = std::floor(run[i].first);
    std::size_t lo = i, hi = i, j = i;
    while (j < run.size() && std::floor(run[j].first) == column) {
      if (run[j].second > run[lo].second) lo = j;  // SVG y grows downward: larger y = lower level
      if (run[j].second < run[hi].second) hi = j;
      ++j;
    }
    std::vector<std::size_t> keep{i, lo, hi, j - 1};
    std::sort(keep.begin(), keep.end());
    keep.erase(std::unique(keep.begin(), keep.end()), keep.end());
    for (std::size_t k : keep) out.push_back(run[k]);
    i = j;
  }
  return out;
}

double clamp(double value, double low, double high) { return std::max(low, std::min(high, value)); }

std::string svg_open(double width_px, double height_px, const std::string& title) {
  return "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 " + number(width_px) + " " + number(height_px) +
         "\" width=\"" + number(width_px) + "\" height=\"" + number(height_px) + "\" font-family=\"" +
         font_family + "\" role=\"img\" aria-label=\"" + xml_escape(title) + "\">\n<title>" + xml_escape(title) +
         "</title>\n<rect x=\"0\" y=\"0\" width=\"" + number(width_px) + "\" height=\"" + number(height_px) +
         "\" fill=\"" + paper_colour + "\"/>\n";
}

void check_size(double width_px, double height_px) {
  if (!(width_px >= 240.0 && height_px >= 160.0 && width_px <= 20000.0 && height_px <= 20000.0)) {
    throw Error("plot size must be between 240 x 160 and 20000 x 20000 px");
  }
}

struct LegendItem {
  std::string label;
  std::string colour;
  std::string dash;
  bool block = false;  // a filled swatch instead of a line
  std::vector<std::string> detectors;  // PlotTrace::detectors of the trace it names
};

/// ` data-detectors="peak quasi-peak"`, or "" for a trace of no detector.
std::string detectors_attribute(const std::vector<std::string>& detectors) {
  if (detectors.empty()) return "";
  std::string joined;
  for (const std::string& d : detectors) joined += (joined.empty() ? "" : " ") + d;
  return " data-detectors=\"" + xml_escape(joined) + "\"";
}

/// Lays the legend out in rows under the title, from `left` to `right`; returns the rows used.
int place_legend(TextPlacer& placer, std::string& svg, const std::vector<LegendItem>& items, double left,
                 double right, double first_baseline) {
  double x = left;
  int row = 0;
  for (const LegendItem& item : items) {
    const double text_width = estimate_text_box(item.label, 0, 0, legend_font_px, TextAnchor::start).width;
    const double item_width = 26.0 + text_width + 16.0;
    if (x > left && x + item_width > right) {
      x = left;
      ++row;
    }
    const double baseline = first_baseline + row * 17.0;
    const double mid = baseline - 4.0;
    if (!item.detectors.empty()) svg += "<g class=\"legend-item\"" + detectors_attribute(item.detectors) + ">\n";
    if (item.block) {
      svg += "<rect x=\"" + number(x) + "\" y=\"" + number(mid - 5) + "\" width=\"20\" height=\"10\" fill=\"" +
             item.colour + "\" stroke=\"" + soft_ink_colour + "\" stroke-width=\"0.5\"/>\n";
    } else {
      svg += "<line x1=\"" + number(x) + "\" y1=\"" + number(mid) + "\" x2=\"" + number(x + 20) + "\" y2=\"" +
             number(mid) + "\" stroke=\"" + item.colour + "\" stroke-width=\"2.5\"" +
             (item.dash.empty() ? "" : " stroke-dasharray=\"" + item.dash + "\"") + "/>\n";
    }
    placer.place(item.label, x + 26.0, baseline, legend_font_px, TextAnchor::start,
                 "fill=\"" + std::string(ink_colour) + "\"");
    if (!item.detectors.empty()) svg += "</g>\n";
    x += item_width;
  }
  return items.empty() ? 0 : row + 1;
}

/// Rows the legend will need (same rule as place_legend), to size the top margin first.
int legend_rows(const std::vector<LegendItem>& items, double left, double right) {
  double x = left;
  int row = 0;
  for (const LegendItem& item : items) {
    const double item_width =
        26.0 + estimate_text_box(item.label, 0, 0, legend_font_px, TextAnchor::start).width + 16.0;
    if (x > left && x + item_width > right) {
      x = left;
      ++row;
    }
    x += item_width;
  }
  return items.empty() ? 0 : row + 1;
}

/// Tick labels placed by priority: decades, then range ends, then 5s, then 2s.
int tick_priority(const AxisTick& tick, double min, double max) {
  const double rel = 1e-9;
  if (std::abs(tick.value - min) <= rel * min || std::abs(tick.value - max) <= rel * max) return 1;
  if (tick.major) return 0;
  const double mantissa = tick.value / std::pow(10.0, std::floor(std::log10(tick.value) + 1e-12));
  return std::abs(mantissa - 5.0) < 1e-6 ? 2 : 3;
}

void draw_x_ticks(TextPlacer& placer, std::string& svg, PlotLayout& layout, std::vector<AxisTick> ticks,
                  const std::function<double(double)>& x_of, double min, double max, bool log_axis) {
  // Grid lines first, every tick.
  for (const AxisTick& tick : ticks) {
    const double x = x_of(tick.value);
    svg += "<line x1=\"" + number(x) + "\" y1=\"" + number(layout.plot_top) + "\" x2=\"" + number(x) + "\" y2=\"" +
           number(layout.plot_bottom) + "\" stroke=\"" + (tick.major ? major_grid_colour : minor_grid_colour) +
           "\" stroke-width=\"1\"/>\n";
  }
  std::vector<std::size_t> order(ticks.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    const int pa = log_axis ? tick_priority(ticks[a], min, max) : (ticks[a].major ? 0 : 1);
    const int pb = log_axis ? tick_priority(ticks[b], min, max) : (ticks[b].major ? 0 : 1);
    return pa < pb;
  });
  std::vector<bool> drawn(ticks.size(), false);
  for (std::size_t i : order) {
    if (ticks[i].label.empty()) continue;
    drawn[i] = placer.try_place(ticks[i].label, x_of(ticks[i].value), layout.plot_bottom + 16.0, tick_font_px,
                                TextAnchor::middle, "fill=\"" + std::string(soft_ink_colour) + "\"");
  }
  for (std::size_t i = 0; i < ticks.size(); ++i) {
    if (!drawn[i]) ticks[i].label.clear();
  }
  layout.x_ticks = std::move(ticks);
}

/// Y ticks at a 5/10/20/50 dB step keeping labels at least 18 px apart.
double y_step(double y_min, double y_max, double height_px) {
  for (double step : {5.0, 10.0, 20.0, 50.0, 100.0}) {
    if (step / (y_max - y_min) * height_px >= 18.0) return step;
  }
  return 200.0;
}

void draw_y_axis(TextPlacer& placer, std::string& svg, const PlotLayout& layout, const LinearScale& ys,
                 const std::string& y_label, double step) {
  const double first = std::ceil(ys.min / step - 1e-9) * step;
  // Ticks by count, not by a running sum: over an infinite or huge range `value += step` never
  // reached the end, and predict never finished (issue 14). Levels are finite by then (the
  // receiver refuses others); this keeps a wrong axis an error, never a loop without end.
  const double tick_count = std::floor((ys.max + 1e-9 - first) / step) + 1.0;
  if (!std::isfinite(first) || !std::isfinite(tick_count) || tick_count > 1000.0) {
    char range[80];
    std::snprintf(range, sizeof range, "%g to %g", ys.min, ys.max);
    throw Error("plot level axis from " + std::string(range) + " is not a finite range of at most 1000 ticks");
  }
  for (int i = 0; i < static_cast<int>(std::max(tick_count, 0.0)); ++i) {
    const double value = first + static_cast<double>(i) * step;
    const double y = ys.map(value);
    svg += "<line x1=\"" + number(layout.plot_left) + "\" y1=\"" + number(y) + "\" x2=\"" +
           number(layout.plot_right) + "\" y2=\"" + number(y) + "\" stroke=\"" + minor_grid_colour +
           "\" stroke-width=\"1\"/>\n";
    char label[32];
    std::snprintf(label, sizeof label, "%.0f", value);
    std::string text = label;
    if (text == "-0") text = "0";
    placer.try_place(text, layout.plot_left - 6.0, y + 4.0, tick_font_px, TextAnchor::end,
                     "fill=\"" + std::string(soft_ink_colour) + "\"");
  }
  // Rotated axis title: its box is the estimate turned by 90 degrees.
  const double centre_y = (layout.plot_top + layout.plot_bottom) / 2.0;
  const double length = estimate_text_box(y_label, 0, 0, axis_title_font_px, TextAnchor::start).width;
  const double x = 16.0;
  const TextBox box{x - 0.8 * axis_title_font_px, centre_y - length / 2.0, axis_title_font_px, length};
  placer.place(y_label, x, centre_y, axis_title_font_px, TextAnchor::middle,
               "fill=\"" + std::string(ink_colour) + "\" transform=\"rotate(-90 " + number(x) + " " +
                   number(centre_y) + ")\"",
               box);
}

std::string polyline_path(const std::vector<std::vector<std::pair<double, double>>>& runs) {
  std::string d;
  for (const auto& run : runs) {
    const auto points = decimate(run);
    for (std::size_t i = 0; i < points.size(); ++i) {
      d += i == 0 ? 'M' : 'L';
      d += number(points[i].first);
      d += ' ';
      d += number(points[i].second);
    }
  }
  return d;
}

/// The title at the largest font from 15 px down to 11 px that fits `available_px`; below that it
/// is cut with an ellipsis.
std::pair<std::string, double> fit_title(const std::string& title, double available_px) {
  for (double font = title_font_px; font >= 11.0; font -= 1.0) {
    if (estimate_text_box(title, 0, 0, font, TextAnchor::start).width <= available_px) return {title, font};
  }
  const double font = 11.0;
  const auto fitting = static_cast<std::size_t>(std::max(1.0, available_px / (font * character_width_em)) - 1.0);
  std::string cut;  // whole code points only
  std::size_t count = 0;
  for (char c : title) {
    if ((static_cast<unsigned char>(c) & 0xC0) != 0x80) {
      if (count == fitting) break;
      ++count;
    }
    cut += c;
  }
  return {cut + "\xE2\x80\xA6", font};
}

void place_title(TextPlacer& placer, const std::string& title, double left, double right) {
  const auto [text, font] = fit_title(title, right - left);
  placer.place(text, left, 20.0, font, TextAnchor::start, "font-weight=\"bold\" fill=\"" + std::string(ink_colour) + "\"");
}

std::string render_spectrum(const SpectrumPlot& plot, PlotLayout& layout) {
  check_size(plot.width_px, plot.height_px);
  if (!(plot.min_hz > 0.0 && plot.max_hz > plot.min_hz) || !std::isfinite(plot.max_hz)) {
    throw Error("plot frequency range must satisfy 0 < min < max");
  }
  layout = PlotLayout{};
  layout.height_px = plot.height_px;
  std::string svg = svg_open(plot.width_px, plot.height_px, plot.title);
  TextPlacer placer(layout, svg, plot.width_px, plot.height_px);

  std::vector<LegendItem> legend;
  for (const PlotTrace& trace : plot.traces) {
    if (!trace.label.empty()) legend.push_back({trace.label, trace.colour, trace.dash, false, trace.detectors});
  }
  if (!plot.spans.empty()) legend.push_back({"broadcast band", plot.spans.front().fill, "", true, {}});
  if (!plot.markers.empty()) legend.push_back({plot.marker_legend, plot.markers.front().colour, "", true, {}});

  layout.plot_left = 62.0;
  layout.plot_right = plot.width_px - 22.0;
  const int rows = legend_rows(legend, layout.plot_left, layout.plot_right);
  layout.plot_top = 30.0 + rows * 17.0 + 6.0;
  layout.plot_bottom = plot.height_px - 46.0;
  if (layout.plot_bottom - layout.plot_top < 60.0) throw Error("plot too small for its legend");

  // Y range: the data's, rounded to 10 dB, at most 120 dB tall.
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (const PlotTrace& trace : plot.traces) {
    for (double level : trace.level) {
      if (std::isfinite(level) && level > level_floor_db + 1.0) {
        lo = std::min(lo, level);
        hi = std::max(hi, level);
      }
    }
  }
  for (const PlotMarker& marker : plot.markers) hi = std::max(hi, marker.level);
  if (!std::isfinite(lo)) {
    lo = 0.0;
    hi = 100.0;
  }
  double y_max = plot.y_max.value_or(std::ceil((hi + 8.0) / 10.0) * 10.0);
  double y_min = plot.y_min.value_or(std::max(std::floor(lo / 10.0) * 10.0, y_max - 120.0));
  if (!(y_max > y_min)) y_min = y_max - 10.0;
  layout.y_min = y_min;
  layout.y_max = y_max;

  const LogScale xs{std::log10(plot.min_hz), std::log10(plot.max_hz), layout.plot_left, layout.plot_right};
  const LinearScale ys{y_min, y_max, layout.plot_bottom, layout.plot_top};
  const std::string clip = id_for(plot.title, "spectrum") + "-clip";

  // The marker dots are known first, so no text (band names, labels) is placed over one.
  std::vector<std::pair<double, double>> dots;
  for (const PlotMarker& marker : plot.markers) {
    if (marker.frequency_hz < plot.min_hz || marker.frequency_hz > plot.max_hz) {
      dots.emplace_back(std::numeric_limits<double>::quiet_NaN(), 0.0);
      continue;
    }
    const double x = xs.x(marker.frequency_hz);
    const double y = clamp(ys.map(marker.level), layout.plot_top, layout.plot_bottom);
    dots.emplace_back(x, y);
    layout.marker_boxes.push_back({x - marker_radius_px, y - marker_radius_px, 2 * marker_radius_px, 2 * marker_radius_px});
  }

  place_title(placer, plot.title, 12.0, plot.width_px - 12.0);
  place_legend(placer, svg, legend, layout.plot_left, layout.plot_right, 40.0);

  svg += "<defs><clipPath id=\"" + clip + "\"><rect x=\"" + number(layout.plot_left) + "\" y=\"" +
         number(layout.plot_top) + "\" width=\"" + number(layout.plot_right - layout.plot_left) + "\" height=\"" +
         number(layout.plot_bottom - layout.plot_top) + "\"/></clipPath></defs>\n";
  svg += "<rect x=\"" + number(layout.plot_left) + "\" y=\"" + number(layout.plot_top) + "\" width=\"" +
         number(layout.plot_right - layout.plot_left) + "\" height=\"" + number(layout.plot_bottom - layout.plot_top) +
         "\" fill=\"#ffffff\"/>\n";

  // Broadcast bands: shading behind the grid.
  for (const PlotSpan& span : plot.spans) {
    if (span.high_hz <= plot.min_hz || span.low_hz >= plot.max_hz) continue;
    const double x0 = xs.x(std::max(span.low_hz, plot.min_hz));
    const double x1 = xs.x(std::min(span.high_hz, plot.max_hz));
    svg += "<rect x=\"" + number(x0) + "\" y=\"" + number(layout.plot_top) + "\" width=\"" +
           number(std::max(1.0, x1 - x0)) + "\" height=\"" + number(layout.plot_bottom - layout.plot_top) +
           "\" fill=\"" + span.fill + "\" fill-opacity=\"0.55\"/>\n";
  }

  draw_x_ticks(placer, svg, layout, log_frequency_ticks(plot.min_hz, plot.max_hz),
               [&](double f) { return xs.x(f); }, plot.min_hz, plot.max_hz, true);
  placer.place("frequency (MHz)", (layout.plot_left + layout.plot_right) / 2.0, plot.height_px - 10.0,
               axis_title_font_px, TextAnchor::middle, "fill=\"" + std::string(ink_colour) + "\"");
  draw_y_axis(placer, svg, layout, ys, plot.y_label, y_step(y_min, y_max, layout.plot_bottom - layout.plot_top));

  // Band names along the top of the plot, in up to three rows.
  const TextBox plot_area{layout.plot_left, layout.plot_top, layout.plot_right - layout.plot_left,
                          layout.plot_bottom - layout.plot_top};
  for (const PlotSpan& span : plot.spans) {
    if (span.high_hz <= plot.min_hz || span.low_hz >= plot.max_hz || span.label.empty()) continue;
    const double x = (xs.x(std::max(span.low_hz, plot.min_hz)) + xs.x(std::min(span.high_hz, plot.max_hz))) / 2.0;
    bool placed = false;
    for (int row = 0; row < 3 && !placed; ++row) {
      placed = placer.try_place(span.label, x, layout.plot_top + 12.0 + row * 12.0, span_font_px,
                                TextAnchor::middle, "fill=\"#7a6630\"", plot_area);
    }
    if (!placed) layout.dropped_span_labels.push_back(span.label);
  }

  // Curves.
  svg += "<g clip-path=\"url(#" + clip + ")\" fill=\"none\" stroke-linejoin=\"round\">\n";
  for (const PlotTrace& trace : plot.traces) {
    const auto runs = drawable_runs(trace, xs, ys);
    if (runs.empty()) continue;
    std::string d;
    if (trace.stems) {
      for (const auto& run : runs) {
        for (const auto& [x, y] : run) {
          d += 'M';
          d += number(x);
          d += ' ';
          d += number(layout.plot_bottom);
          d += 'V';
          d += number(y);
        }
      }
    } else {
      d = polyline_path(runs);
    }
    svg += "<path d=\"" + d + "\" stroke=\"" + trace.colour + "\" stroke-width=\"" + number(trace.width_px) + "\"" +
           (trace.dash.empty() ? "" : " stroke-dasharray=\"" + trace.dash + "\"") +
           detectors_attribute(trace.detectors) + "/>\n";
  }
  svg += "</g>\n";
  svg += "<rect x=\"" + number(layout.plot_left) + "\" y=\"" + number(layout.plot_top) + "\" width=\"" +
         number(layout.plot_right - layout.plot_left) + "\" height=\"" + number(layout.plot_bottom - layout.plot_top) +
         "\" fill=\"none\" stroke=\"" + soft_ink_colour + "\" stroke-width=\"1\"/>\n";

  // Markers with their labels. Every dot is drawn first and kept clear of every label; each label
  // then takes the first free place of a ring of candidates around its dot (above, to a side,
  // below, then further out), in the markers' order (the worst first); a label that finds no free
  // place is left out and listed in layout.dropped_marker_labels.
  for (std::size_t m = 0; m < plot.markers.size(); ++m) {
    const auto [x, y] = dots[m];
    if (std::isnan(x)) continue;
    svg += "<circle cx=\"" + number(x) + "\" cy=\"" + number(y) + "\" r=\"" + number(marker_radius_px) + "\" fill=\"" +
           plot.markers[m].colour + "\" stroke=\"#ffffff\" stroke-width=\"1.5\"/>\n";
  }
  for (std::size_t m = 0; m < plot.markers.size(); ++m) {
    const PlotMarker& marker = plot.markers[m];
    const auto [x, y] = dots[m];
    if (std::isnan(x) || marker.label.empty()) continue;
    // A white halo keeps the label readable where it crosses a curve or a limit line.
    const std::string attributes = "fill=\"" + marker.colour +
                                   "\" font-weight=\"bold\" stroke=\"#ffffff\" stroke-width=\"3\" paint-order=\"stroke\"";
    const struct {
      double dx, dy;
      TextAnchor anchor;
    } candidates[] = {{0, -10, TextAnchor::middle}, {8, -8, TextAnchor::start},   {-8, -8, TextAnchor::end},
                      {0, 20, TextAnchor::middle},  {8, 16, TextAnchor::start},   {-8, 16, TextAnchor::end},
                      {0, -24, TextAnchor::middle}, {8, -22, TextAnchor::start},  {-8, -22, TextAnchor::end},
                      {0, 34, TextAnchor::middle},  {8, 30, TextAnchor::start},   {-8, 30, TextAnchor::end},
                      {0, -38, TextAnchor::middle}, {8, -36, TextAnchor::start},  {-8, -36, TextAnchor::end},
                      {0, 48, TextAnchor::middle},  {0, -52, TextAnchor::middle}, {0, 62, TextAnchor::middle}};
    bool placed = false;
    for (const auto& c : candidates) {
      placed = placer.try_place(marker.label, x + c.dx, y + c.dy, marker_font_px, c.anchor, attributes, plot_area);
      if (placed) break;
    }
    if (!placed) layout.dropped_marker_labels.push_back(marker.label);
  }
  svg += "</svg>\n";
  return svg;
}

}  // namespace

std::string verdict_fill(const std::string& verdict) {
  if (verdict == "clear") return "#cfe5d3";
  if (verdict == "watch") return "#f1d98f";
  if (verdict == "noisy") return "#dc8e7c";
  return "#eeeeee";
}

namespace {

std::string render_strip(const ChannelStrip& strip, PlotLayout& layout) {
  if (!(strip.width_px >= 240.0 && strip.height_px >= 60.0 && strip.width_px <= 20000.0 && strip.height_px <= 2000.0)) {
    throw Error("channel strip size must be between 240 x 60 and 20000 x 2000 px");
  }
  if (!(strip.low_hz >= 0.0 && strip.high_hz > strip.low_hz) || !std::isfinite(strip.high_hz)) {
    throw Error("channel strip frequency range must satisfy 0 <= low < high");
  }
  layout = PlotLayout{};
  layout.height_px = strip.height_px;
  std::string svg = svg_open(strip.width_px, strip.height_px, strip.title + " channels");
  TextPlacer placer(layout, svg, strip.width_px, strip.height_px);
  // The strip starts after the band's name (a long user band name pushes it right, up to a third).
  const double title_width = estimate_text_box(strip.title, 0, 0, legend_font_px, TextAnchor::start).width;
  layout.plot_left = std::min(strip.width_px / 3.0, std::max(62.0, 8.0 + title_width + 10.0));
  layout.plot_right = strip.width_px - 22.0;
  layout.plot_top = 8.0;
  layout.plot_bottom = 30.0;
  const LinearScale xs{strip.low_hz, strip.high_hz, layout.plot_left, layout.plot_right};
  placer.place(strip.title, 8.0, 24.0, legend_font_px, TextAnchor::start,
               "fill=\"" + std::string(ink_colour) + "\" font-weight=\"bold\"");
  svg += "<rect x=\"" + number(layout.plot_left) + "\" y=\"" + number(layout.plot_top) + "\" width=\"" +
         number(layout.plot_right - layout.plot_left) + "\" height=\"" + number(layout.plot_bottom - layout.plot_top) +
         "\" fill=\"" + (strip.not_computed ? verdict_fill("not computed") : std::string("#ffffff")) + "\"/>\n";
  std::map<std::string, int> counts;
  if (!strip.not_computed) {
    // A channel is a block one raster wide (at least 1.5 px, so a single channel in a wide band shows).
    const double px_per_hz = (layout.plot_right - layout.plot_left) / (strip.high_hz - strip.low_hz);
    const double width = std::max(1.5, strip.raster_hz * px_per_hz);
    for (const StripChannel& c : strip.channels) {
      ++counts[c.verdict];
      const double x = clamp(xs.map(c.centre_hz) - width / 2.0, layout.plot_left, layout.plot_right - width);
      svg += "<rect x=\"" + number(x) + "\" y=\"" + number(layout.plot_top) + "\" width=\"" + number(width) +
             "\" height=\"" + number(layout.plot_bottom - layout.plot_top) + "\" fill=\"" + verdict_fill(c.verdict) +
             "\"><title>" + xml_escape(format_quantity(c.centre_hz, Dimension::frequency, 4) + ": " + c.verdict) +
             "</title></rect>\n";
    }
  }
  svg += "<rect x=\"" + number(layout.plot_left) + "\" y=\"" + number(layout.plot_top) + "\" width=\"" +
         number(layout.plot_right - layout.plot_left) + "\" height=\"" + number(layout.plot_bottom - layout.plot_top) +
         "\" fill=\"none\" stroke=\"" + soft_ink_colour + "\" stroke-width=\"1\"/>\n";
  // The band edges under the strip.
  const std::string tick_attributes = "fill=\"" + std::string(soft_ink_colour) + "\"";
  placer.try_place(format_quantity(strip.low_hz, Dimension::frequency, 4), layout.plot_left, layout.plot_bottom + 14.0,
                   tick_font_px, TextAnchor::start, tick_attributes);
  placer.try_place(format_quantity(strip.high_hz, Dimension::frequency, 4), layout.plot_right,
                   layout.plot_bottom + 14.0, tick_font_px, TextAnchor::end, tick_attributes);
  // The text legend: a swatch and a count per verdict, so the strip reads without telling colours apart.
  double x = layout.plot_left;
  const double baseline = strip.height_px - 10.0;
  std::vector<std::pair<std::string, std::string>> items;  // label, fill
  if (strip.not_computed) {
    items.push_back({"not computed (above the computed range)", verdict_fill("not computed")});
  } else {
    for (const char* verdict : {"noisy", "watch", "clear"}) {
      items.push_back({std::to_string(counts[verdict]) + " " + verdict, verdict_fill(verdict)});
    }
    items.push_back({"white: no line heard", "#ffffff"});
  }
  for (const auto& [label, fill] : items) {
    svg += "<rect x=\"" + number(x) + "\" y=\"" + number(baseline - 10.0) + "\" width=\"14\" height=\"10\" fill=\"" +
           fill + "\" stroke=\"" + soft_ink_colour + "\" stroke-width=\"0.6\"/>\n";
    placer.try_place(label, x + 20.0, baseline, legend_font_px, TextAnchor::start,
                     "fill=\"" + std::string(ink_colour) + "\"");
    x += 20.0 + estimate_text_box(label, 0, 0, legend_font_px, TextAnchor::start).width + 18.0;
  }
  svg += "</svg>\n";
  return svg;
}

constexpr const char* recommended_colour = "#1d5c8c";
constexpr const char* window_colour = "#2f7a4a";
constexpr double list_font_px = 11.0;
constexpr double list_line_px = 15.0;

/// `text` broken at spaces into lines whose estimated width fits `width_px` (a word longer than the
/// width keeps a line of its own).
std::vector<std::string> wrap_text(const std::string& text, double font_px, double width_px) {
  std::vector<std::string> lines;
  std::string line;
  std::size_t start = 0;
  while (start <= text.size()) {
    std::size_t end = text.find(' ', start);
    if (end == std::string::npos) end = text.size();
    const std::string word = text.substr(start, end - start);
    const std::string joined = line.empty() ? word : line + " " + word;
    if (!line.empty() && estimate_text_box(joined, 0, 0, font_px, TextAnchor::start).width > width_px) {
      lines.push_back(line);
      line = word;
    } else {
      line = joined;
    }
    start = end + 1;
  }
  if (!line.empty()) lines.push_back(line);
  return lines;
}

std::string render_sweep(const SweepPlot& plot, PlotLayout& layout) {
  check_size(plot.width_px, plot.height_px);
  const std::size_t n = plot.parameter.size();
  if (n == 0) throw Error("sweep plot needs at least one parameter value");
  if (plot.worst_margin_db.size() != n) throw Error("sweep plot: margins and parameter values differ in length");
  for (const SweepBandRow& row : plot.bands) {
    if (row.verdicts.size() != n) throw Error("sweep plot: verdicts of " + row.name + " differ in length");
  }
  for (std::size_t i = 1; i < n; ++i) {
    if (!(plot.parameter[i] > plot.parameter[i - 1])) throw Error("sweep plot: parameter values must ascend");
  }
  if (plot.log_parameter && !(plot.parameter.front() > 0.0)) throw Error("sweep plot: log axis needs values > 0");

  layout = PlotLayout{};
  // The list under the plot: the recommended value with its reason, then each window edge's reason
  // behind the letter that tags the edge in the plot.
  struct ListLine {
    std::string tag;   // "a", "b", ... on the first line of an edge's entry
    std::string text;
    std::string colour;
  };
  struct EdgeTag {
    std::string tag;
    double value;
  };
  std::vector<ListLine> list;
  std::vector<EdgeTag> edge_tags;
  const double list_left = 12.0, list_text_left = 30.0;
  const double list_width = plot.width_px - list_text_left - 12.0;
  auto add_entry = [&](const std::string& tag, const std::string& text, const std::string& colour) {
    bool first = true;
    for (const std::string& line : wrap_text(text, list_font_px, list_width)) {
      list.push_back({first ? tag : std::string(), line, colour});
      first = false;
    }
  };
  auto value_text = [&](double v) { return format_quantity(v, plot.parameter_dimension, 4); };
  if (plot.recommended) {
    add_entry("", "recommended: " + value_text(*plot.recommended) +
                      (plot.recommended_reason.empty() ? std::string() : " (" + plot.recommended_reason + ")"),
              recommended_colour);
  }
  std::size_t edge_count = 0;
  for (const SweepWindow& window : plot.clear_windows) {
    for (const bool low : {true, false}) {
      const std::string& reason = low ? window.low_reason : window.high_reason;
      if (reason.empty()) continue;
      if (++edge_count > sweep_plot_listed_edges) continue;
      const std::string tag(1, static_cast<char>('a' + edge_tags.size()));
      edge_tags.push_back({tag, low ? window.from : window.to});
      add_entry(tag,
                std::string(low ? "lower" : "upper") + " edge of " + value_text(window.from) + " to " +
                    value_text(window.to) + ": " + reason,
                window_colour);
    }
  }
  if (edge_count > sweep_plot_listed_edges) {
    add_entry("", "and " + std::to_string(edge_count - sweep_plot_listed_edges) +
                      " more window edges (the sweep's text and JSON give every reason)",
              soft_ink_colour);
  }
  layout.height_px = plot.height_px + (list.empty() ? 0.0 : 8.0 + static_cast<double>(list.size()) * list_line_px);
  std::string svg = svg_open(plot.width_px, layout.height_px, plot.title);
  TextPlacer placer(layout, svg, plot.width_px, layout.height_px);

  std::size_t longest_name = 0;
  for (const SweepBandRow& row : plot.bands) longest_name = std::max(longest_name, code_points(row.name));
  layout.plot_left = std::max(62.0, 14.0 + static_cast<double>(longest_name) * span_font_px * character_width_em);
  layout.plot_right = plot.width_px - 22.0;
  std::vector<LegendItem> legend{{"worst margin", ink_colour, "", false, {}},
                                 {"guard band", "#a8321f", "5 4", false, {}}};
  if (!plot.windows_label.empty()) legend.push_back({plot.windows_label, "#9fd3ae", "", true, {}});
  for (const char* verdict : {"clear", "watch", "noisy"}) legend.push_back({verdict, verdict_fill(verdict), "", true, {}});
  const int rows = legend_rows(legend, layout.plot_left, layout.plot_right);
  layout.plot_top = 30.0 + rows * 17.0 + 6.0;
  const double row_height = 13.0;
  const double bands_height = static_cast<double>(plot.bands.size()) * row_height;
  layout.plot_bottom = plot.height_px - 46.0;
  const double margin_bottom = layout.plot_bottom - bands_height - (plot.bands.empty() ? 0.0 : 10.0);
  if (margin_bottom - layout.plot_top < 60.0) throw Error("sweep plot too small for its bands");

  const double p_min = plot.parameter.front();
  const double p_max = n > 1 ? plot.parameter.back() : p_min * 1.01 + 1e-12;
  std::function<double(double)> x_of;
  if (plot.log_parameter) {
    const LogScale xs{std::log10(p_min), std::log10(p_max), layout.plot_left, layout.plot_right};
    x_of = [xs](double v) { return xs.x(v); };
  } else {
    const LinearScale xs{p_min, p_max, layout.plot_left, layout.plot_right};
    x_of = [xs](double v) { return xs.map(v); };
  }

  double lo = 0.0, hi = plot.guard_db;
  for (double m : plot.worst_margin_db) {
    if (std::isfinite(m)) {
      lo = std::min(lo, m);
      hi = std::max(hi, m);
    }
  }
  const LinearScale ys{std::floor((lo - 2.0) / 5.0) * 5.0, std::ceil((hi + 2.0) / 5.0) * 5.0, margin_bottom,
                       layout.plot_top};
  layout.y_min = ys.min;
  layout.y_max = ys.max;

  place_title(placer, plot.title, 12.0, plot.width_px - 12.0);
  place_legend(placer, svg, legend, layout.plot_left, layout.plot_right, 40.0);
  svg += "<rect x=\"" + number(layout.plot_left) + "\" y=\"" + number(layout.plot_top) + "\" width=\"" +
         number(layout.plot_right - layout.plot_left) + "\" height=\"" + number(margin_bottom - layout.plot_top) +
         "\" fill=\"#ffffff\"/>\n";

  // Cell edges halfway between parameter values.
  auto cell_edge = [&](std::size_t i, bool left) {
    if (n == 1) return left ? layout.plot_left : layout.plot_right;
    if (left) return i == 0 ? layout.plot_left : (x_of(plot.parameter[i - 1]) + x_of(plot.parameter[i])) / 2.0;
    return i + 1 == n ? layout.plot_right : (x_of(plot.parameter[i]) + x_of(plot.parameter[i + 1])) / 2.0;
  };
  for (const SweepWindow& window : plot.clear_windows) {
    const double x0 = clamp(x_of(std::max(window.from, p_min)), layout.plot_left, layout.plot_right);
    const double x1 = clamp(x_of(std::min(window.to, p_max)), layout.plot_left, layout.plot_right);
    svg += "<rect x=\"" + number(x0 - 1.0) + "\" y=\"" + number(layout.plot_top) + "\" width=\"" +
           number(std::max(2.0, x1 - x0 + 2.0)) + "\" height=\"" + number(layout.plot_bottom - layout.plot_top) +
           "\" fill=\"#9fd3ae\" fill-opacity=\"0.45\"/>\n";
  }

  std::vector<AxisTick> ticks;
  if (plot.log_parameter) {
    for (AxisTick tick : log_frequency_ticks(p_min, p_max)) {
      tick.label = format_quantity(tick.value, plot.parameter_dimension, 3);
      ticks.push_back(tick);
    }
  } else {
    for (double v : linear_ticks(p_min, p_max, 8)) {
      ticks.push_back({v, format_quantity(v, plot.parameter_dimension, 3), true});
    }
  }
  draw_x_ticks(placer, svg, layout, ticks, x_of, p_min, p_max, plot.log_parameter);
  placer.place(plot.parameter_label, (layout.plot_left + layout.plot_right) / 2.0, plot.height_px - 10.0,
               axis_title_font_px, TextAnchor::middle, "fill=\"" + std::string(ink_colour) + "\"");

  PlotLayout margin_layout = layout;  // the y axis of the margin panel only
  margin_layout.plot_bottom = margin_bottom;
  draw_y_axis(placer, svg, margin_layout, ys, "worst margin (dB)", y_step(ys.min, ys.max, margin_bottom - layout.plot_top));

  for (const auto& [value, colour, dash] :
       {std::tuple{0.0, std::string(ink_colour), std::string("")}, std::tuple{plot.guard_db, std::string("#a8321f"), std::string("5 4")}}) {
    const double y = ys.map(value);
    svg += "<line x1=\"" + number(layout.plot_left) + "\" y1=\"" + number(y) + "\" x2=\"" + number(layout.plot_right) +
           "\" y2=\"" + number(y) + "\" stroke=\"" + colour + "\" stroke-width=\"1.2\"" +
           (dash.empty() ? "" : " stroke-dasharray=\"" + dash + "\"") + "/>\n";
  }
  std::vector<std::vector<std::pair<double, double>>> runs(1);
  for (std::size_t i = 0; i < n; ++i) {
    if (!std::isfinite(plot.worst_margin_db[i])) {
      if (!runs.back().empty()) runs.emplace_back();
      continue;
    }
    runs.back().emplace_back(x_of(plot.parameter[i]), ys.map(plot.worst_margin_db[i]));
  }
  svg += "<path d=\"" + polyline_path(runs) + "\" fill=\"none\" stroke=\"" + ink_colour +
         "\" stroke-width=\"1.8\" stroke-linejoin=\"round\"/>\n";
  svg += "<rect x=\"" + number(layout.plot_left) + "\" y=\"" + number(layout.plot_top) + "\" width=\"" +
         number(layout.plot_right - layout.plot_left) + "\" height=\"" + number(margin_bottom - layout.plot_top) +
         "\" fill=\"none\" stroke=\"" + soft_ink_colour + "\" stroke-width=\"1\"/>\n";

  // One row of verdict cells per band, the name at the left.
  for (std::size_t r = 0; r < plot.bands.size(); ++r) {
    const SweepBandRow& row = plot.bands[r];
    const double y = margin_bottom + 10.0 + static_cast<double>(r) * row_height;
    for (std::size_t i = 0; i < n; ++i) {
      const double x0 = cell_edge(i, true), x1 = cell_edge(i, false);
      // Half a pixel of overlap so neighbouring cells show no seam.
      svg += "<rect x=\"" + number(x0) + "\" y=\"" + number(y) + "\" width=\"" + number(std::max(0.5, x1 - x0) + 0.5) +
             "\" height=\"" + number(row_height - 1.0) + "\" fill=\"" + verdict_fill(row.verdicts[i]) + "\"/>\n";
    }
    placer.try_place(row.name, layout.plot_left - 6.0, y + row_height - 3.0, span_font_px, TextAnchor::end,
                     "fill=\"" + std::string(ink_colour) + "\"");
  }
  // The clear windows outlined over both panels, so they stay visible above the verdict cells.
  for (const SweepWindow& window : plot.clear_windows) {
    const double x0 = clamp(x_of(std::max(window.from, p_min)), layout.plot_left, layout.plot_right);
    const double x1 = clamp(x_of(std::min(window.to, p_max)), layout.plot_left, layout.plot_right);
    svg += "<rect x=\"" + number(x0 - 1.0) + "\" y=\"" + number(layout.plot_top) + "\" width=\"" +
           number(std::max(2.0, x1 - x0 + 2.0)) + "\" height=\"" + number(layout.plot_bottom - layout.plot_top) +
           "\" fill=\"none\" stroke=\"#2f7a4a\" stroke-width=\"1.5\"/>\n";
  }
  if (plot.recommended && *plot.recommended >= p_min && *plot.recommended <= p_max) {
    const double x = x_of(*plot.recommended);
    svg += "<line x1=\"" + number(x) + "\" y1=\"" + number(layout.plot_top) + "\" x2=\"" + number(x) + "\" y2=\"" +
           number(layout.plot_bottom) + "\" stroke=\"#1d5c8c\" stroke-width=\"2\" stroke-dasharray=\"2 3\"/>\n";
    placer.try_place("recommended " + format_quantity(*plot.recommended, plot.parameter_dimension, 4), x + 4.0,
                     layout.plot_top + 14.0, span_font_px, TextAnchor::start,
                     "fill=\"" + std::string(recommended_colour) + "\"");
  }
  // Each edge's letter at the top of the margin panel, in the first free row.
  const TextBox margin_panel{layout.plot_left, layout.plot_top, layout.plot_right - layout.plot_left,
                             margin_bottom - layout.plot_top};
  const std::string tag_attributes = "fill=\"" + std::string(window_colour) +
                                     "\" font-weight=\"bold\" stroke=\"#ffffff\" stroke-width=\"3\" paint-order=\"stroke\"";
  for (const EdgeTag& edge : edge_tags) {
    const double x = clamp(x_of(std::clamp(edge.value, p_min, p_max)), layout.plot_left, layout.plot_right);
    bool placed = false;
    for (int row = 0; row < 4 && !placed; ++row) {
      placed = placer.try_place(edge.tag, x, layout.plot_top + 26.0 + row * 13.0, tick_font_px, TextAnchor::middle,
                                tag_attributes, margin_panel);
    }
    if (!placed) layout.dropped_span_labels.push_back(edge.tag);
  }
  for (std::size_t i = 0; i < list.size(); ++i) {
    const double baseline = plot.height_px + 14.0 + static_cast<double>(i) * list_line_px;
    if (!list[i].tag.empty()) {
      placer.place(list[i].tag, list_left, baseline, list_font_px, TextAnchor::start,
                   "fill=\"" + list[i].colour + "\" font-weight=\"bold\"");
    }
    placer.place(list[i].text, list[i].tag.empty() && i == 0 ? list_left : list_text_left, baseline, list_font_px,
                 TextAnchor::start, "fill=\"" + list[i].colour + "\"");
  }
  svg += "</svg>\n";
  return svg;
}

}  // namespace

TextBox estimate_text_box(std::string_view text, double x, double baseline_y, double font_px, TextAnchor anchor) {
  const double width = static_cast<double>(code_points(text)) * font_px * character_width_em;
  double left = x;
  if (anchor == TextAnchor::middle) left = x - width / 2.0;
  if (anchor == TextAnchor::end) left = x - width;
  return TextBox{left, baseline_y - 0.8 * font_px, width, font_px};
}

bool boxes_overlap(const TextBox& a, const TextBox& b) {
  return a.x < b.x + b.width && b.x < a.x + a.width && a.y < b.y + b.height && b.y < a.y + a.height;
}

std::string mhz_label(double frequency_hz) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.3g", frequency_hz / 1e6);
  std::string text = buffer;
  // %.3g may give an exponent for large or small values; write those out in full.
  if (text.find('e') != std::string::npos) {
    std::snprintf(buffer, sizeof buffer, "%.6f", frequency_hz / 1e6);
    text = buffer;
    while (!text.empty() && text.back() == '0') text.pop_back();
    if (!text.empty() && text.back() == '.') text.pop_back();
  }
  return text;
}

std::vector<AxisTick> log_frequency_ticks(double min_hz, double max_hz) {
  if (!(min_hz > 0.0 && max_hz > min_hz)) throw Error("axis range must satisfy 0 < min < max");
  std::vector<AxisTick> ticks;
  const double rel = 1e-9;
  bool has_min = false, has_max = false;
  for (int exponent = static_cast<int>(std::floor(std::log10(min_hz))) - 1;
       exponent <= static_cast<int>(std::ceil(std::log10(max_hz))); ++exponent) {
    const double decade = std::pow(10.0, exponent);
    for (double mantissa : {1.0, 2.0, 5.0}) {
      const double value = mantissa * decade;
      if (value < min_hz * (1 - rel) || value > max_hz * (1 + rel)) continue;
      if (std::abs(value - min_hz) <= rel * min_hz) has_min = true;
      if (std::abs(value - max_hz) <= rel * max_hz) has_max = true;
      ticks.push_back({value, mhz_label(value), mantissa == 1.0});
    }
  }
  if (!has_min) ticks.push_back({min_hz, mhz_label(min_hz), false});
  if (!has_max) ticks.push_back({max_hz, mhz_label(max_hz), false});
  std::sort(ticks.begin(), ticks.end(), [](const AxisTick& a, const AxisTick& b) { return a.value < b.value; });
  return ticks;
}

std::vector<double> linear_ticks(double min, double max, int target_count) {
  if (!(max > min) || target_count < 1) return {min};
  const double raw = (max - min) / target_count;
  const double magnitude = std::pow(10.0, std::floor(std::log10(raw)));
  double step = magnitude;
  for (double m : {1.0, 2.0, 5.0, 10.0}) {
    step = m * magnitude;
    if (step >= raw) break;
  }
  std::vector<double> ticks;
  for (double v = std::ceil(min / step - 1e-9) * step; v <= max + step * 1e-9; v += step) {
    ticks.push_back(std::abs(v) < step * 1e-9 ? 0.0 : v);
  }
  return ticks;
}

PlotLayout layout_spectrum_plot(const SpectrumPlot& plot) {
  PlotLayout layout;
  (void)render_spectrum(plot, layout);
  return layout;
}

std::string spectrum_plot_svg(const SpectrumPlot& plot) {
  PlotLayout layout;
  return render_spectrum(plot, layout);
}

std::string sweep_plot_svg(const SweepPlot& plot) {
  PlotLayout layout;
  return render_sweep(plot, layout);
}

std::string channel_strip_svg(const ChannelStrip& strip) {
  PlotLayout layout;
  return render_strip(strip, layout);
}

PlotLayout layout_channel_strip(const ChannelStrip& strip) {
  PlotLayout layout;
  (void)render_strip(strip, layout);
  return layout;
}

PlotLayout layout_sweep_plot(const SweepPlot& plot) {
  PlotLayout layout;
  (void)render_sweep(plot, layout);
  return layout;
}

std::string xml_escape(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      case '\'': out += "&#39;"; break;
      default: out += c;
    }
  }
  return out;
}

}  // namespace spurcast
