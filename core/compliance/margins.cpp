#include "core/compliance/margins.hpp"

#include <algorithm>
#include <cstdio>

#include "core/input/error.hpp"

namespace spurcast {

std::string to_string(Verdict verdict) {
  switch (verdict) {
    case Verdict::pass: return "pass";
    case Verdict::marginal: return "marginal";
    case Verdict::fail: return "fail";
    case Verdict::incomplete: return "incomplete";
    case Verdict::no_limits: return "no limits";
  }
  return "pass";
}

Verdict verdict_for(double margin_db, double guard_db) {
  if (margin_db < 0.0) return Verdict::fail;
  if (margin_db < guard_db) return Verdict::marginal;
  return Verdict::pass;
}

std::optional<double> cispr_uncertainty_db(LimitQuantity measures, double frequency_hz) {
  // CISPR 16-4-2 U_cispr, docs/references.md §7 [M, medium-high] (from memory).
  switch (measures) {
    case LimitQuantity::conducted_voltage:
      if (frequency_hz >= 9e3 && frequency_hz < 150e3) return 3.8;  // from memory
      if (frequency_hz >= 150e3 && frequency_hz <= 30e6) return 3.4;  // from memory
      return std::nullopt;
    case LimitQuantity::radiated_field:
      if (frequency_hz >= 30e6 && frequency_hz <= 1e9) return 6.3;  // from memory
      if (frequency_hz > 1e9 && frequency_hz <= 6e9) return 5.2;    // from memory
      if (frequency_hz > 6e9 && frequency_hz <= 18e9) return 5.5;   // from memory
      return std::nullopt;
    case LimitQuantity::conducted_current: return std::nullopt;
  }
  return std::nullopt;
}

namespace {

int detector_rank(Detector detector) {
  switch (detector) {
    case Detector::peak: return 0;
    case Detector::quasi_peak: return 1;
    case Detector::average: return 2;
  }
  return 0;
}

bool compares(Detector reading, Detector line, bool peak_against_every_line) {
  return reading == line || (peak_against_every_line && reading == Detector::peak);
}

// A reading is compared only with a set that measures the same quantity, and a radiated-field
// reading only with a set of its measuring distance (a field falls with distance).
bool same_quantity(const LevelReading& reading, const LimitSet& set) {
  if (reading.quantity != set.measures) return false;
  if (set.measures != LimitQuantity::radiated_field) return true;
  return reading.distance_m && set.distance_m &&
         std::abs(*reading.distance_m - *set.distance_m) <= 1e-9 * *set.distance_m;
}

std::string quantity_words(const LimitSet& set) {
  switch (set.measures) {
    case LimitQuantity::conducted_voltage: return "LISN-port voltage";
    case LimitQuantity::radiated_field:
      return "radiated-field estimate at " + format_quantity(set.distance_m.value_or(0.0), Dimension::length);
    case LimitQuantity::conducted_current: return "conducted current";
  }
  return "reading";
}

}  // namespace

MarginReport compare_with_limits(const std::vector<LevelReading>& readings, const std::vector<LimitSet>& sets,
                                 const MarginOptions& options) {
  if (!(options.guard_db >= 0.0)) {
    throw Error("expected a guard band of 0 dB or more, found " + format_quantity(options.guard_db, Dimension::decibel));
  }
  MarginReport report;
  report.guard_db = options.guard_db;
  report.readings = readings.size();
  // Comparisons per line, to find the lines no reading reached.
  std::vector<std::vector<std::size_t>> line_rows(sets.size());
  for (std::size_t s = 0; s < sets.size(); ++s) line_rows[s].assign(sets[s].lines.size(), 0);
  for (const LevelReading& reading : readings) {
    bool compared = false;
    for (std::size_t s = 0; s < sets.size(); ++s) {
      const LimitSet& set = sets[s];
      if (!same_quantity(reading, set)) continue;
      for (std::size_t l = 0; l < set.lines.size(); ++l) {
        const LimitLine& line = set.lines[l];
        if (!compares(reading.detector, line.detector, options.peak_against_every_line)) continue;
        const auto limit = line.level_at(reading.frequency_hz);
        if (!limit) continue;
        MarginRow row;
        row.frequency_hz = reading.frequency_hz;
        row.reading_detector = reading.detector;
        row.reading = reading.level;
        row.limit = *limit;
        row.margin_db = *limit - reading.level;  // docs/design.md §6: margin = limit − reading
        row.limit_detector = line.detector;
        row.set_index = s;
        row.quantity = set.measures;
        row.limit_label = line_label(set, line);
        row.uncertainty_db = cispr_uncertainty_db(set.measures, reading.frequency_hz);
        report.rows.push_back(std::move(row));
        ++line_rows[s][l];
        compared = true;
      }
    }
    if (compared) {
      ++report.compared_readings;
    } else {
      ++report.not_compared;
    }
  }

  for (const MarginRow& row : report.rows) {
    if (!report.worst || row.margin_db < report.worst->margin_db) report.worst = row;
    auto found = std::find_if(report.worst_per_detector.begin(), report.worst_per_detector.end(),
                              [&](const DetectorMargin& d) { return d.detector == row.limit_detector; });
    if (found == report.worst_per_detector.end()) {
      report.worst_per_detector.push_back(DetectorMargin{row.limit_detector, 1, row});
    } else {
      ++found->comparisons;
      if (row.margin_db < found->worst.margin_db) found->worst = row;
    }
  }
  std::sort(report.worst_per_detector.begin(), report.worst_per_detector.end(),
            [](const DetectorMargin& a, const DetectorMargin& b) {
              return detector_rank(a.detector) < detector_rank(b.detector);
            });

  // What was not computed: the unread ranges where they meet a line of their quantity, and every
  // line that no reading reached at all.
  for (std::size_t s = 0; s < sets.size(); ++s) {
    const LimitSet& set = sets[s];
    for (std::size_t l = 0; l < set.lines.size(); ++l) {
      const LimitLine& line = set.lines[l];
      bool listed = false;
      for (const UnreadRange& gap : options.unread) {
        if (gap.quantity != set.measures) continue;
        for (const LimitSegment& segment : line.segments) {
          const double from_hz = std::max(gap.from_hz, segment.from_hz);
          const double to_hz = std::min(gap.to_hz, segment.to_hz);
          if (!(to_hz > from_hz * (1.0 + 1e-9))) continue;
          // Adjacent segments of one line merge into one part.
          if (!report.not_computed.empty() && listed && report.not_computed.back().reason == gap.reason &&
              std::abs(report.not_computed.back().to_hz - from_hz) <= 1e-9 * from_hz) {
            report.not_computed.back().to_hz = to_hz;
          } else {
            report.not_computed.push_back({line_label(set, line), from_hz, to_hz, gap.reason});
          }
          listed = true;
        }
      }
      if (!listed && line_rows[s][l] == 0) {
        report.not_computed.push_back({line_label(set, line), line.low_hz(), line.high_hz(),
                                       "no " + to_string(line.detector) + " reading of the " + quantity_words(set) +
                                           " falls on this line"});
      }
    }
  }
  if (sets.empty()) {
    report.verdict = Verdict::no_limits;
  } else if (report.worst && report.worst->margin_db < 0.0) {
    report.verdict = Verdict::fail;  // an exceeded limit is a fact whatever else was not read
  } else if (!report.not_computed.empty() || !report.worst) {
    report.verdict = Verdict::incomplete;
  } else {
    report.verdict = verdict_for(report.worst->margin_db, options.guard_db);
  }

  // Closest to (or over) the limit: smallest margins first; at most one row per frequency and
  // reading detector, rows at least closest_separation_hz apart.
  if (options.closest_count == 0) return report;
  std::vector<const MarginRow*> order;
  order.reserve(report.rows.size());
  if (options.closest_local_minima_only) {
    // Group the rows by (set, line, reading detector), sort each group by frequency, keep local minima.
    std::vector<const MarginRow*> all;
    all.reserve(report.rows.size());
    for (const MarginRow& row : report.rows) all.push_back(&row);
    std::stable_sort(all.begin(), all.end(), [](const MarginRow* a, const MarginRow* b) {
      if (a->set_index != b->set_index) return a->set_index < b->set_index;
      if (a->limit_detector != b->limit_detector) return detector_rank(a->limit_detector) < detector_rank(b->limit_detector);
      if (a->reading_detector != b->reading_detector) {
        return detector_rank(a->reading_detector) < detector_rank(b->reading_detector);
      }
      return a->frequency_hz < b->frequency_hz;
    });
    const auto same_group = [](const MarginRow* a, const MarginRow* b) {
      return a->set_index == b->set_index && a->limit_detector == b->limit_detector &&
             a->reading_detector == b->reading_detector;
    };
    // A local minimum is a run of equal margins with larger margins on both sides (a group end counts
    // as larger); its middle row stands for it. The smallest margin of each group always counts.
    std::size_t group_start = 0;
    while (group_start < all.size()) {
      std::size_t group_end = group_start + 1;
      while (group_end < all.size() && same_group(all[group_start], all[group_end])) ++group_end;
      std::size_t smallest = group_start;
      std::size_t run_start = group_start;
      while (run_start < group_end) {
        std::size_t run_end = run_start + 1;
        while (run_end < group_end && all[run_end]->margin_db == all[run_start]->margin_db) ++run_end;
        const double m = all[run_start]->margin_db;
        const bool left_higher = run_start == group_start || all[run_start - 1]->margin_db > m;
        const bool right_higher = run_end == group_end || all[run_end]->margin_db > m;
        const bool whole_group = run_start == group_start && run_end == group_end;
        if (left_higher && right_higher && !whole_group) order.push_back(all[(run_start + run_end - 1) / 2]);
        if (m < all[smallest]->margin_db) smallest = (run_start + run_end - 1) / 2;
        run_start = run_end;
      }
      if (std::find(order.begin(), order.end(), all[smallest]) == order.end()) order.push_back(all[smallest]);
      group_start = group_end;
    }
  } else {
    for (const MarginRow& row : report.rows) order.push_back(&row);
  }
  std::stable_sort(order.begin(), order.end(),
                   [](const MarginRow* a, const MarginRow* b) { return a->margin_db < b->margin_db; });
  for (const MarginRow* row : order) {
    if (report.closest.size() >= options.closest_count) break;
    const bool near_chosen = std::any_of(report.closest.begin(), report.closest.end(), [&](const MarginRow& c) {
      const double distance_hz = std::abs(c.frequency_hz - row->frequency_hz);
      if (c.reading_detector == row->reading_detector &&
          distance_hz <= 1e-9 * std::max(c.frequency_hz, row->frequency_hz)) {
        return true;
      }
      return options.closest_separation_hz > 0.0 && distance_hz < options.closest_separation_hz;
    });
    if (!near_chosen) report.closest.push_back(*row);
  }
  return report;
}

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\n\r") == std::string::npos) return text;
  std::string quoted = "\"";
  for (char c : text) {
    if (c == '"') quoted += '"';
    quoted += c;
  }
  return quoted + "\"";
}

std::string row_unit_symbol(const MarginRow& row) {
  switch (row.quantity) {
    case LimitQuantity::conducted_voltage: return unit_symbol(Dimension::level_dbuv);
    case LimitQuantity::radiated_field: return unit_symbol(Dimension::level_dbuvm);
    case LimitQuantity::conducted_current: return unit_symbol(Dimension::level_dbua);
  }
  return unit_symbol(Dimension::level_dbuv);
}

std::string describe(const NotComputed& part) {
  const std::string to = std::isfinite(part.to_hz) ? format_quantity(part.to_hz, Dimension::frequency, 4) : "up";
  return format_quantity(part.from_hz, Dimension::frequency, 4) + "-" + to + " of " + part.limit_label + ": " +
         part.reason;
}

std::string margins_csv(const MarginReport& report) {
  std::string csv = "frequency_hz,detector,reading_dbuv,limit_dbuv,margin_db,limit,unit\n";
  char buffer[160];
  for (const MarginRow& row : report.rows) {
    std::snprintf(buffer, sizeof buffer, "%.10g,%s,%.2f,%.2f,%.2f,", row.frequency_hz,
                  to_string(row.reading_detector).c_str(), row.reading, row.limit, row.margin_db);
    csv += buffer;
    csv += csv_field(row.limit_label);
    csv += ',' + row_unit_symbol(row);
    csv += '\n';
  }
  return csv;
}

}  // namespace spurcast
