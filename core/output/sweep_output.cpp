#include "core/output/sweep_output.hpp"

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <cmath>
#include <optional>

#include "core/compliance/margins.hpp"
#include "core/input/units.hpp"
#include "core/output/plot.hpp"
#include "core/radio/reception.hpp"

namespace spurcast {

namespace {

std::string margin_cell(const std::optional<double>& margin) {
  return margin ? fmt::format("{:.2f}", *margin) : std::string();
}

std::string detector_column(Detector d) { return to_string(d) + "_margin_db"; }

}  // namespace

std::string sweep_csv(const SweepResult& result) {
  std::string csv;
  std::vector<std::string> header;
  for (const SweepAxis& axis : result.axes) header.push_back(csv_field(axis.key));
  header.insert(header.end(), {"method", "limits_verdict", "worst_margin_db"});
  for (const Detector d : result.detectors) header.push_back(detector_column(d));
  for (const std::string& line : result.limit_lines) header.push_back(csv_field("margin_db:" + line));
  for (const std::string& band : result.bands) header.push_back(csv_field("verdict:" + band));
  for (const WindowCriterion& c : result.criteria) header.push_back(csv_field("robust:" + c.label()));
  header.push_back("error");
  for (std::size_t i = 0; i < header.size(); ++i) csv += (i ? "," : "") + header[i];
  csv += "\n";
  for (const SweepPoint& p : result.points) {
    std::string row;
    for (const double v : p.values) row += fmt::format("{:.12g},", v);
    if (p.error) {
      row += ",,";
    } else {
      row += p.method + "," + to_string(p.limits_verdict) + ",";
    }
    row += margin_cell(p.worst_margin_db);
    for (std::size_t d = 0; d < result.detectors.size(); ++d) {
      row += ',';
      row += (d < p.detectors.size() ? margin_cell(p.detectors[d].margin_db) : std::string());
    }
    for (std::size_t l = 0; l < result.limit_lines.size(); ++l) {
      row += ',';
      row += (l < p.limit_lines.size() ? margin_cell(p.limit_lines[l].margin_db) : std::string());
    }
    for (std::size_t b = 0; b < result.bands.size(); ++b) {
      row += ',';
      row += (b < p.bands.size() ? reception_verdict_name(p.bands[b].verdict) : std::string());
    }
    for (std::size_t c = 0; c < result.criteria.size(); ++c) {
      row += ',';
      row += std::string(c < p.robust.size() && p.robust[c] ? "1" : "0");
    }
    row += ',';
    row += (p.error ? csv_field(*p.error) : std::string());
    csv += row + "\n";
  }
  return csv;
}

std::string sweep_json(const SweepResult& result, const std::vector<std::string>& written) {
  using nlohmann::ordered_json;
  auto optional_number = [](const std::optional<double>& v) { return v ? ordered_json(*v) : ordered_json(nullptr); };
  ordered_json j;
  j["axes"] = ordered_json::array();
  for (const SweepAxis& axis : result.axes) {
    j["axes"].push_back({{"key", axis.key}, {"unit", unit_symbol(axis.dimension)}, {"points", axis.values.size()},
                         {"from", axis.values.front()}, {"to", axis.values.back()}});
  }
  j["tolerance_fraction"] = result.tolerance_fraction;
  j["guard_db"] = result.guard_db;
  j["detectors"] = ordered_json::array();
  for (const Detector d : result.detectors) j["detectors"].push_back(to_string(d));
  j["limit_lines"] = result.limit_lines;
  j["bands"] = result.bands;
  j["criteria"] = ordered_json::array();
  for (const WindowCriterion& c : result.criteria) j["criteria"].push_back(c.label());
  j["windows"] = ordered_json::array();
  for (const RobustWindow& w : result.windows) {
    j["windows"].push_back({{"criterion", result.criteria[w.criterion].label()},
                            {"fixed_values", w.fixed_values},
                            {"from", w.from_value},
                            {"to", w.to_value},
                            {"points", w.point_count},
                            {"open_low", w.open_low},
                            {"open_high", w.open_high},
                            {"low_edge", w.open_low ? ordered_json(nullptr) : ordered_json(w.low_edge)},
                            {"high_edge", w.open_high ? ordered_json(nullptr) : ordered_json(w.high_edge)}});
  }
  if (result.recommended) {
    const SweepRecommendation& r = *result.recommended;
    ordered_json rec;
    rec["value"] = result.points[r.point].values.front();
    rec["values"] = result.points[r.point].values;
    rec["margin_db"] = r.headroom_db ? ordered_json(*r.headroom_db) : ordered_json(nullptr);
    rec["margin_to"] = r.headroom_to.empty() ? ordered_json(nullptr) : ordered_json(r.headroom_to);
    rec["window"] = {{"from", result.windows[r.window].from_value}, {"to", result.windows[r.window].to_value}};
    j["recommended"] = rec;
  } else {
    j["recommended"] = nullptr;
  }
  j["invalid_points"] = result.invalid_points;
  j["notes"] = result.notes;
  j["points"] = ordered_json::array();
  for (const SweepPoint& p : result.points) {
    ordered_json point;
    point["values"] = p.values;
    if (p.error) {
      point["error"] = *p.error;
      j["points"].push_back(point);
      continue;
    }
    point["method"] = p.method;
    point["switching_frequency_hz"] = p.switching_frequency_hz;
    point["limits_verdict"] = to_string(p.limits_verdict);
    point["worst_margin_db"] = optional_number(p.worst_margin_db);
    ordered_json detectors = ordered_json::object();
    for (const DetectorMarginPoint& d : p.detectors) {
      detectors[to_string(d.detector)] = {{"margin_db", optional_number(d.margin_db)}, {"frequency_hz", d.frequency_hz}};
    }
    point["worst_margin_per_detector"] = detectors;
    ordered_json lines = ordered_json::object();
    for (std::size_t l = 0; l < p.limit_lines.size() && l < result.limit_lines.size(); ++l) {
      lines[result.limit_lines[l]] = {{"margin_db", optional_number(p.limit_lines[l].margin_db)},
                                      {"frequency_hz", p.limit_lines[l].frequency_hz}};
    }
    point["limit_lines"] = lines;
    ordered_json bands = ordered_json::array();
    for (std::size_t b = 0; b < p.bands.size() && b < result.bands.size(); ++b) {
      const BandPoint& band = p.bands[b];
      bands.push_back({{"band", result.bands[b]},
                       {"verdict", reception_verdict_name(band.verdict)},
                       {"channels_hit", band.channels_hit},
                       {"worst_channel_hz", optional_number(band.worst_channel_hz)},
                       {"worst_level_dbuvm", optional_number(band.worst_level_dbuvm)}});
    }
    point["bands"] = bands;
    ordered_json robust = ordered_json::object();
    for (std::size_t c = 0; c < result.criteria.size() && c < p.robust.size(); ++c) {
      robust[result.criteria[c].label()] = static_cast<bool>(p.robust[c]);
    }
    point["robust"] = robust;
    j["points"].push_back(point);
  }
  // The files written go in as the last member, on one line (after the closing brace is taken off,
  // which leaves the comma on a line of its own: kept, since scripts may compare the bytes).
  std::string files = "[";
  for (std::size_t i = 0; i < written.size(); ++i) files += (i ? ", " : "") + nlohmann::json(written[i]).dump();
  files += "]";
  std::string text = j.dump(2);
  text.pop_back();  // the closing brace
  return text + ",\n  \"files\": " + files + "\n}\n";
}

std::string sweep_text(const SweepResult& result, const std::vector<std::string>& written) {
  const SweepAxis& axis = result.axes.front();
  std::string text = fmt::format("Sweep of {}: {} points", axis.key, result.points.size());
  text += result.axes.size() > 1 ? " (grid)" : "";
  text += fmt::format(", {} thread{}", result.threads, result.threads == 1 ? "" : "s");
  if (result.tolerance_fraction > 0.0) text += fmt::format(", windows robust to +/-{:g} %", 100.0 * result.tolerance_fraction);
  text += fmt::format(", guard {:g} dB\n", result.guard_db);
  // The overall picture: best and worst margins over the valid points.
  std::optional<double> best, worst;
  for (const SweepPoint& p : result.points) {
    if (p.error || !p.worst_margin_db) continue;
    if (!best || *p.worst_margin_db > *best) best = *p.worst_margin_db;
    if (!worst || *p.worst_margin_db < *worst) worst = *p.worst_margin_db;
  }
  if (best) text += fmt::format("worst margin over the sweep: {:.1f} dB at the worst point, {:.1f} dB at the best\n", *worst, *best);
  if (result.criteria.empty()) {
    text += "no window asked for (use --clear BAND and/or --meet-limits)\n";
  }
  for (std::size_t c = 0; c < result.criteria.size(); ++c) {
    text += '\n';
    text += result.criteria[c].label();
    text += ":\n";
    bool any = false;
    for (const RobustWindow& w : result.windows) {
      if (w.criterion != c) continue;
      any = true;
      std::string fixed;
      for (std::size_t a = 1; a < result.axes.size() && a - 1 < w.fixed_values.size(); ++a) {
        fixed += fmt::format("  at {} = {}", result.axes[a].key, sweep_value_text(w.fixed_values[a - 1], result.axes[a].dimension));
      }
      text += fmt::format("  {:>12} to {:<12} {:>7} point{}{}\n", sweep_value_text(w.from_value, axis.dimension),
                          sweep_value_text(w.to_value, axis.dimension), w.point_count, w.point_count == 1 ? " " : "s",
                          fixed);
      text += "      from: " + (w.open_low ? std::string("open (the swept range starts here)") : w.low_edge) + "\n";
      text += "      to:   " + (w.open_high ? std::string("open (the swept range ends here)") : w.high_edge) + "\n";
    }
    if (!any) text += "  no window\n";
  }
  if (result.recommended) {
    const SweepRecommendation& r = *result.recommended;
    const SweepPoint& p = result.points[r.point];
    std::string where;
    for (std::size_t a = 0; a < result.axes.size() && a < p.values.size(); ++a) {
      where += (a ? ", " : "") + result.axes[a].key + " = " + sweep_value_text(p.values[a], result.axes[a].dimension);
    }
    text += "\nrecommended: " + where;
    if (r.headroom_db) {
      text += fmt::format(" ({:.1f} dB of headroom to the {}{})", *r.headroom_db, r.headroom_to,
                          result.tolerance_fraction > 0.0
                              ? fmt::format(", the least over +/-{:g} %", 100.0 * result.tolerance_fraction)
                              : std::string());
    } else if (!r.headroom_to.empty()) {
      text += " (" + r.headroom_to + ")";
    }
    text += "\n";
  } else if (!result.criteria.empty()) {
    text += "\nno recommendation: no window meets " + result.criteria.back().label() + "\n";
  }
  for (const std::string& note : result.notes) text += "note: " + note + "\n";
  for (const std::string& file : written) text += "wrote " + file + "\n";
  text += "a prediction is not a compliance result: only an accredited test decides\n";
  return text;
}

std::string sweep_windows_label(const SweepResult& result) {
  if (result.criteria.empty()) return "";
  const auto words = [&](const WindowCriterion& c) -> std::string {
    switch (c.kind) {
      case WindowCriterion::Kind::band_clear: return c.band + " is clear";
      case WindowCriterion::Kind::fundamental_outside: return "the fundamental is outside band " + c.band;
      case WindowCriterion::Kind::limits_met: {
        std::vector<std::string> names;
        for (const Detector d : result.detectors) names.push_back(to_string(d));
        const std::string guard = fmt::format(" \xE2\x89\xA5 {:g} dB", result.guard_db);
        if (names.empty()) return "every margin" + guard + " (no limit compared)";
        std::string text = names.front();
        for (std::size_t i = 1; i < names.size(); ++i) text += (i + 1 == names.size() ? " and " : ", ") + names[i];
        return text + (names.size() == 1 ? " margin" : " margins") + guard;
      }
      case WindowCriterion::Kind::all: return "";
    }
    return "";
  };
  std::vector<std::string> parts;
  if (result.criteria.back().kind == WindowCriterion::Kind::all) {
    for (const WindowCriterion& c : result.criteria) {
      if (c.kind != WindowCriterion::Kind::all) parts.push_back(words(c));
    }
  } else {
    parts.push_back(words(result.criteria.back()));
  }
  std::string text = "windows where " + parts.front();
  for (std::size_t i = 1; i < parts.size(); ++i) text += (i + 1 == parts.size() ? " and " : ", ") + parts[i];
  if (result.tolerance_fraction > 0.0) {
    text += fmt::format(" (robust to \xC2\xB1{:g} % frequency drift)", 100.0 * result.tolerance_fraction);
  }
  return text;
}

/// The sweep plot of the report module: worst margin and band verdicts along the first axis (the
/// first group of a grid), the windows of the last criterion highlighted.
std::string sweep_svg(const SweepResult& result, const std::string& title) {
  const SweepAxis& axis = result.axes.front();
  const std::size_t n = axis.values.size();
  std::vector<std::size_t> order(n);
  for (std::size_t i = 0; i < n; ++i) order[i] = i;
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return axis.values[a] < axis.values[b]; });
  SweepPlot plot;
  plot.title = title;
  plot.parameter_label = axis.key;
  plot.parameter_dimension = axis.dimension;
  plot.guard_db = result.guard_db;
  const bool positive = axis.values.front() > 0.0 && axis.values.back() > 0.0;
  plot.log_parameter = positive && std::max(axis.values.front(), axis.values.back()) >
                                       20.0 * std::min(axis.values.front(), axis.values.back());
  for (const std::string& band : result.bands) plot.bands.push_back(SweepBandRow{band, {}});
  for (const std::size_t i : order) {
    const SweepPoint& p = result.points[i];
    plot.parameter.push_back(axis.values[i]);
    plot.worst_margin_db.push_back(p.worst_margin_db ? *p.worst_margin_db : std::nan(""));
    for (std::size_t b = 0; b < plot.bands.size(); ++b) {
      plot.bands[b].verdicts.push_back(b < p.bands.size() && !p.error ? reception_verdict_name(p.bands[b].verdict)
                                                                      : "noisy");
    }
  }
  if (!result.criteria.empty()) {
    plot.windows_label = sweep_windows_label(result);
    const std::size_t last = result.criteria.size() - 1;
    for (const RobustWindow& w : result.windows) {
      if (w.criterion == last && w.last_point < n) {
        plot.clear_windows.push_back({w.from_value, w.to_value, w.open_low ? std::string() : w.low_edge,
                                      w.open_high ? std::string() : w.high_edge});
      }
    }
    if (result.recommended && result.recommended->point < n) {
      const SweepRecommendation& r = *result.recommended;
      plot.recommended = result.points[r.point].values.front();
      // The same words as the text output's "recommended:" line.
      if (r.headroom_db) {
        plot.recommended_reason = fmt::format("{:.1f} dB of headroom to the {}{}", *r.headroom_db, r.headroom_to,
                                              result.tolerance_fraction > 0.0
                                                  ? fmt::format(", the least over +/-{:g} %", 100.0 * result.tolerance_fraction)
                                                  : std::string());
      } else {
        plot.recommended_reason = r.headroom_to;
      }
    }
  }
  return sweep_plot_svg(plot);
}

}  // namespace spurcast
