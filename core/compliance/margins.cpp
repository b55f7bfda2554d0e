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

}  // namespace

MarginReport compare_with_limits(const std::vector<LevelReading>& readings, const std::vector<LimitSet>& sets,
                                 const MarginOptions& options) {
  if (!(options.guard_db >= 0.0)) {
    throw Error("expected a guard band of 0 dB or more, found " + format_quantity(options.guard_db, Dimension::decibel));
  }
  MarginReport report;
  report.guard_db = options.guard_db;
  report.readings = readings.size();
  for (const LevelReading& reading : readings) {
    bool compared = false;
    for (std::size_t s = 0; s < sets.size(); ++s) {
      const LimitSet& set = sets[s];
      for (const LimitLine& line : set.lines) {
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
        row.limit_label = line_label(set, line);
        row.uncertainty_db = cispr_uncertainty_db(set.measures, reading.frequency_hz);
        report.rows.push_back(std::move(row));
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
  if (report.worst) report.verdict = verdict_for(report.worst->margin_db, options.guard_db);

  // Closest to (or over) the limit: smallest margins first; at most one row per frequency and
  // reading detector, rows at least closest_separation_hz apart.
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

std::string margins_csv(const MarginReport& report) {
  std::string csv = "frequency_hz,detector,reading_dbuv,limit_dbuv,margin_db,limit\n";
  char buffer[160];
  for (const MarginRow& row : report.rows) {
    std::snprintf(buffer, sizeof buffer, "%.10g,%s,%.2f,%.2f,%.2f,", row.frequency_hz,
                  to_string(row.reading_detector).c_str(), row.reading, row.limit, row.margin_db);
    csv += buffer;
    csv += csv_field(row.limit_label);
    csv += '\n';
  }
  return csv;
}

}  // namespace spurcast
