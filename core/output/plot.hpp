#pragma once
/// SVG plots for the report, drawn here so the report needs nothing fetched from anywhere: readings
/// and limit lines on a log-frequency axis (decade grid with 2 and 5 minor lines, labels in MHz),
/// shaded and labelled broadcast bands, marked worst readings, a harmonic spectrum with its
/// envelope, and the margin / band verdicts of a sweep against the swept parameter.
///
/// Text never overlaps: every label is placed greedily against the boxes already placed, with its
/// box estimated from the font size and the character count (estimate_text_box), and left out when
/// it does not fit (tick labels of lower priority, band names that find no free row).
///
/// Example:
///   SpectrumPlot plot{.title = "Receiver readings, band B", .min_hz = 150e3, .max_hz = 30e6};
///   plot.traces.push_back({.label = "quasi-peak", .frequency_hz = f, .level = qp, .colour = "#c8553d"});
///   const std::string svg = spectrum_plot_svg(plot);
#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "core/input/units.hpp"

namespace spurcast {

// ---------------------------------------------------------------------------------------------
// Text boxes.

enum class TextAnchor { start, middle, end };

/// An axis-aligned box in SVG pixels (x to the right, y down); (x, y) is the top-left corner.
struct TextBox {
  double x = 0.0;
  double y = 0.0;
  double width = 0.0;
  double height = 0.0;
};

/// Average advance of one character as a fraction of the font size. 0.62 is a little wider than
/// the digits and lower-case letters of the common sans-serif faces (DejaVu Sans digits are 0.636 em,
/// Liberation Sans 0.556 em; common practice for estimates), so estimated boxes err on the large side.
inline constexpr double character_width_em = 0.62;

/// The box of `text` drawn at (x, baseline_y) with font size `font_px` and the given anchor:
/// width = font_px · character_width_em · characters (UTF-8 code points), height = font_px, from
/// baseline − 0.8·font_px to baseline + 0.2·font_px.
[[nodiscard]] TextBox estimate_text_box(std::string_view text, double x, double baseline_y, double font_px,
                                        TextAnchor anchor);
/// True when the boxes share interior area (touching edges do not count).
[[nodiscard]] bool boxes_overlap(const TextBox& a, const TextBox& b);

// ---------------------------------------------------------------------------------------------
// Axes.

struct AxisTick {
  double value = 0.0;  ///< in axis units (Hz for a frequency axis)
  std::string label;   ///< empty: grid line only
  bool major = false;  ///< decade (log axis) or labelled step (linear axis)
};

/// Grid of a log-frequency axis over [min_hz, max_hz]: decades (major), 2·10^n and 5·10^n (minor),
/// all labelled in MHz ("0.15", "1", "30"); the range ends are added as labelled ticks when they are
/// not on the grid. Labels are candidates: the plot drops those that would overlap.
[[nodiscard]] std::vector<AxisTick> log_frequency_ticks(double min_hz, double max_hz);

/// A frequency in MHz with up to 3 significant digits and no trailing zeros: 150e3 -> "0.15",
/// 1e6 -> "1", 30e6 -> "30", 9e3 -> "0.009".
[[nodiscard]] std::string mhz_label(double frequency_hz);

/// Linear ticks at a 1-2-5 step giving about `target_count` intervals over [min, max].
[[nodiscard]] std::vector<double> linear_ticks(double min, double max, int target_count);

// ---------------------------------------------------------------------------------------------
// The log-frequency plot.

/// A curve or a set of stems. NaN in `level` breaks the curve (a limit line's gap or step).
struct PlotTrace {
  std::string label;                ///< legend text ("" = not in the legend)
  std::vector<double> frequency_hz; ///< [Hz], ascending
  std::vector<double> level;        ///< [dB unit of the plot]; <= level_floor_db is not drawn
  std::string colour = "#22303a";
  double width_px = 1.5;
  std::string dash;                 ///< SVG stroke-dasharray ("" = solid)
  bool stems = false;               ///< vertical lines from the bottom of the plot (line spectra)
  /// The receiver detectors whose readings this trace draws ("peak", "quasi-peak", "average"; several
  /// when they coincide), written as the path's and legend entry's `data-detectors` attribute so the
  /// report's detector switches can hide it; empty for limit lines and everything else.
  std::vector<std::string> detectors;
};

/// A shaded frequency span with a name (a broadcast band).
struct PlotSpan {
  std::string label;
  double low_hz = 0.0;
  double high_hz = 0.0;
  std::string fill = "#e8d9ae";
};

/// A marked point with its text (a worst reading and its margin).
struct PlotMarker {
  double frequency_hz = 0.0;
  double level = 0.0;
  std::string label;
  std::string colour = "#a8321f";
};

struct SpectrumPlot {
  std::string title;
  std::string y_label = "level (dB\xC2\xB5V)";
  double width_px = 960.0;
  double height_px = 420.0;
  double min_hz = 150e3;  ///< axis range [Hz], 0 < min_hz < max_hz
  double max_hz = 30e6;
  std::optional<double> y_min;  ///< axis range [dB]; automatic from the data when absent
  std::optional<double> y_max;
  std::vector<PlotTrace> traces;   ///< drawn in order (later on top)
  std::vector<PlotSpan> spans;
  std::vector<PlotMarker> markers;
  std::string marker_legend = "worst reading (margin)";  ///< the legend entry of the markers
};

/// Everything with text that the plot placed, for the overlap tests.
struct PlotLayout {
  double plot_left = 0.0, plot_top = 0.0, plot_right = 0.0, plot_bottom = 0.0;  ///< plot area [px]
  double y_min = 0.0, y_max = 0.0;  ///< the y range used
  std::vector<AxisTick> x_ticks;    ///< every grid line; labels kept only where drawn
  std::vector<TextBox> text_boxes;  ///< every text drawn (titles, tick labels, legend, bands, markers)
  std::vector<std::string> texts;   ///< the text of each box, same order
  std::vector<std::string> dropped_span_labels;  ///< band names that found no free place
  std::vector<TextBox> marker_boxes;  ///< the marker dots (no text is placed over them)
  std::vector<std::string> dropped_marker_labels;  ///< marker labels that found no free place
  double height_px = 0.0;  ///< the picture's height (a sweep plot grows by the list under it)
};

/// The layout (positions of every text) of `plot`. Error on an invalid range or size.
[[nodiscard]] PlotLayout layout_spectrum_plot(const SpectrumPlot& plot);
/// The plot as a standalone SVG document (xmlns set, no XML declaration, so it can be inlined in
/// HTML as it is). Curves with more points than pixels are reduced to the min/max of each pixel
/// column, which keeps every peak visible.
[[nodiscard]] std::string spectrum_plot_svg(const SpectrumPlot& plot);

// ---------------------------------------------------------------------------------------------
// The sweep plot: for each value of the swept parameter, the worst margin (a curve, with the guard
// band and the zero line) and one row per broadcast band coloured by its verdict; the windows of the
// parameter that clear everything are highlighted across the plot.

struct SweepBandRow {
  std::string name;
  std::vector<std::string> verdicts;  ///< per parameter value: "clear", "watch" or "noisy"
};

struct SweepWindow {
  double from = 0.0;  ///< parameter values, from <= to
  double to = 0.0;
  /// Why the window stops at each end (which harmonic, channel or limit the value just outside it
  /// fails, RobustWindow::low_edge / high_edge); empty where the swept range ends the window. Each
  /// reason is tagged with a letter at its edge and written out in the list under the plot.
  std::string low_reason;
  std::string high_reason;
};

/// Most window edges the list under a sweep plot spells out; the rest are counted in one line
/// (judgement: more would make the picture a page of text; the sweep's text and JSON list them all).
inline constexpr std::size_t sweep_plot_listed_edges = 14;

struct SweepPlot {
  std::string title;
  std::string parameter_label = "switching frequency";
  Dimension parameter_dimension = Dimension::frequency;  ///< formats the tick labels (format_quantity)
  bool log_parameter = false;             ///< log axis for the parameter
  std::vector<double> parameter;          ///< ascending
  std::vector<double> worst_margin_db;    ///< per parameter value (NaN: not computed)
  double guard_db = 6.0;
  std::vector<SweepBandRow> bands;
  std::vector<SweepWindow> clear_windows;
  /// The legend entry of the highlighted windows: what they meet, in the words of what was asked
  /// ("windows where MW is clear and quasi-peak and average margins ≥ 6 dB"); empty: no entry.
  std::string windows_label;
  std::optional<double> recommended;      ///< the sweep's recommended value, marked and labelled
  /// Why it is recommended ("6.2 dB of headroom to the limits less the guard band"), written after
  /// the value at the head of the list under the plot.
  std::string recommended_reason;
  double width_px = 960.0;
  double height_px = 460.0;
};

/// The sweep plot as a standalone SVG: the picture is `height_px` tall plus one line per entry of
/// the list under it (the recommended value and the reason of each window edge, wrapped to the
/// width). Error when the vectors disagree in length or are empty.
[[nodiscard]] std::string sweep_plot_svg(const SweepPlot& plot);
/// The text boxes the sweep plot places (for tests).
[[nodiscard]] PlotLayout layout_sweep_plot(const SweepPlot& plot);

// ---------------------------------------------------------------------------------------------
// The channel strip of one broadcast band: the band on a linear frequency axis, every channel that
// hears a line drawn as a block coloured by its verdict (clear / watch / noisy), the rest of the band
// left white ("no line heard"), with a text legend that counts each verdict, so the strip reads
// without colour and without script.

struct StripChannel {
  double centre_hz = 0.0;
  std::string verdict;  ///< "clear", "watch" or "noisy"
};

struct ChannelStrip {
  std::string title;       ///< the band's name
  double low_hz = 0.0;     ///< band edges [Hz], low < high
  double high_hz = 0.0;
  double raster_hz = 0.0;  ///< channel spacing [Hz] (0: drawn as thin blocks)
  std::vector<StripChannel> channels;  ///< ascending
  bool not_computed = false;           ///< the whole band lies above the computed range
  double width_px = 960.0;
  double height_px = 78.0;
};

/// The strip as a standalone SVG. Error when the band edges are not 0 <= low < high.
[[nodiscard]] std::string channel_strip_svg(const ChannelStrip& strip);
/// The text boxes the strip places (for tests).
[[nodiscard]] PlotLayout layout_channel_strip(const ChannelStrip& strip);
/// The fill of a channel verdict in the strips and the sweep plot (our own palette).
[[nodiscard]] std::string verdict_fill(const std::string& verdict);

/// Escapes &, <, >, " and ' for XML text and attributes.
[[nodiscard]] std::string xml_escape(std::string_view text);

}  // namespace spurcast
