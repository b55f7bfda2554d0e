#include "core/output/prediction_text.hpp"

#include <cstdio>
#include <vector>

#include "core/input/units.hpp"
#include "core/output/report.hpp"
#include "core/output/text_table.hpp"

namespace spurcast {

namespace {

Colour verdict_colour(Verdict verdict) {
  switch (verdict) {
    case Verdict::pass: return Colour::green;
    case Verdict::marginal: return Colour::yellow;
    case Verdict::fail: return Colour::red;
    case Verdict::incomplete: return Colour::yellow;
    case Verdict::no_limits: return Colour::none;
  }
  return Colour::none;
}

std::string db_text(double value_db) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.1f dB", value_db);
  return buffer;
}

std::string level_text(double level, const std::string& unit) {
  char buffer[48];
  std::snprintf(buffer, sizeof buffer, "%.1f %s", level, unit.c_str());
  return buffer;
}

Colour reception_colour(const std::string& verdict) {
  if (verdict == "clear") return Colour::green;
  if (verdict == "watch") return Colour::yellow;
  if (verdict == "not computed") return Colour::dim;
  return Colour::red;
}

}  // namespace

std::string prediction_summary(const Prediction& p, const std::string& directory, bool colour) {
  const MarginReport& m = p.margins;
  std::string out;
  out += paint(p.scenario.title.empty() ? p.scenario.file : p.scenario.title, Colour::bold, colour) + "\n";
  // The verdict, and first of all what it does not cover (core/output/report.hpp).
  out += "verdict: " + paint(to_string(p.verdict), verdict_colour(p.verdict), colour) + " (" + verdict_sentence(p) + ")\n";
  if (const std::vector<std::string> missing = not_computed_lines(p); !missing.empty()) {
    out += "\nnot computed:\n";
    for (const std::string& line : missing) out += "  " + line + "\n";
  }

  if (!m.worst_per_detector.empty()) {
    out += "\nworst margin per detector of the limit line:\n";
    if (const std::string warning = single_path_warning(p); !warning.empty()) out += "  (" + warning + ")\n";
    std::vector<std::vector<std::string>> rows;
    for (const DetectorMargin& d : m.worst_per_detector) {
      const Verdict v = verdict_for(d.worst.margin_db, m.guard_db);
      rows.push_back({to_string(d.detector), paint(db_text(d.worst.margin_db), verdict_colour(v), colour),
                      "at " + format_quantity(d.worst.frequency_hz, Dimension::frequency, 4), d.worst.limit_label});
    }
    out += format_columns(rows, {1});
  }

  const std::vector<WorstFrequency> worst = worst_frequencies(p, 5);
  if (!worst.empty()) {
    out += "\nfive worst frequencies:\n";
    std::vector<std::vector<std::string>> rows{{"frequency", "detector", "reading", "limit", "margin", "line"}};
    for (const WorstFrequency& w : worst) {
      const Verdict v = verdict_for(w.row.margin_db, m.guard_db);
      rows.push_back({format_quantity(w.row.frequency_hz, Dimension::frequency, 4), to_string(w.row.reading_detector),
                      level_text(w.row.reading, row_unit_symbol(w.row)) +
                          (w.row.quantity == LimitQuantity::radiated_field ? " (estimate)" : ""),
                      level_text(w.row.limit, row_unit_symbol(w.row)),
                      paint(db_text(w.row.margin_db), verdict_colour(v), colour), w.row.limit_label});
    }
    out += format_columns(rows, {0, 2, 3, 4});
  }
  if (!p.contributors.empty()) {
    out += "\nwhat makes them (LISN-port mode shares at the strongest line):\n";
    for (const Contributor& c : p.contributors) out += "  " + contributor_line(c) + "\n";
  }
  if (!p.contributors_requested.empty()) {
    out += "\nat the frequencies asked for (LISN-port mode shares at the strongest line):\n";
    for (const Contributor& c : p.contributors_requested) out += "  " + contributor_line(c) + "\n";
  }

  if (!p.reception.empty()) {
    out += "\nbroadcast bands (" + p.reception_assumptions + "):\n";
    std::vector<std::vector<std::string>> rows;
    for (const BandReception& b : p.reception) {
      const std::string verdict_name = reception_verdict_name(b.verdict);
      std::vector<std::string> row{b.band.name,
                                   format_quantity(b.band.low_hz, Dimension::frequency, band_edge_digits) + " - " +
                                       format_quantity(b.band.high_hz, Dimension::frequency, band_edge_digits),
                                   paint(verdict_name, reception_colour(verdict_name), colour)};
      if (b.worst_channel) {
        const ChannelReception& c = b.channels[*b.worst_channel];
        row.push_back("worst channel " + format_quantity(c.centre_hz, Dimension::frequency, 4));
        row.push_back(level_text(c.level_dbuvm, "dB\xC2\xB5V/m"));
      }
      rows.push_back(std::move(row));
    }
    out += format_columns(rows, {});
  }
  out += "\nreport written to " + directory + "/ (open " + directory + "/report.html)\n";
  return out;
}

}  // namespace spurcast
