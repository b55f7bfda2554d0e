#include "cli/terminal.hpp"

#include <unistd.h>

#include <algorithm>
#include <cstdio>
#include <cstdlib>
#include <iostream>

#include "cli/commands.hpp"
#include "core/input/error.hpp"
#include "core/output/output_dir.hpp"
#include "core/output/report.hpp"
#include "core/input/units.hpp"

namespace spurcast::cli {

bool stdout_wants_colour() {
  const char* no_colour = std::getenv("NO_COLOR");
  if (no_colour != nullptr && no_colour[0] != '\0') return false;
  return ::isatty(STDOUT_FILENO) == 1;
}

bool stderr_is_terminal() { return ::isatty(STDERR_FILENO) == 1; }

std::string paint(const std::string& text, Colour colour, bool enabled) {
  if (!enabled || colour == Colour::none) return text;
  const char* code = "";
  switch (colour) {
    case Colour::none: return text;
    case Colour::green: code = "\x1b[32m"; break;
    case Colour::yellow: code = "\x1b[33m"; break;
    case Colour::red: code = "\x1b[31m"; break;
    case Colour::bold: code = "\x1b[1m"; break;
    case Colour::dim: code = "\x1b[2m"; break;
  }
  return code + text + "\x1b[0m";
}

std::size_t display_width(const std::string& text) {
  std::size_t width = 0;
  for (std::size_t i = 0; i < text.size(); ++i) {
    const auto c = static_cast<unsigned char>(text[i]);
    if (c == 0x1b) {  // CSI ... final byte in @..~
      ++i;
      if (i < text.size() && text[i] == '[') {
        while (i + 1 < text.size() && !(text[i + 1] >= '@' && text[i + 1] <= '~')) ++i;
        ++i;
      }
      continue;
    }
    if ((c & 0xC0) != 0x80) ++width;
  }
  return width;
}

std::string format_columns(const std::vector<std::vector<std::string>>& rows, const std::vector<std::size_t>& right_aligned,
                           const std::string& indent) {
  std::vector<std::size_t> widths;
  for (const auto& row : rows) {
    if (row.size() > widths.size()) widths.resize(row.size(), 0);
    for (std::size_t c = 0; c < row.size(); ++c) widths[c] = std::max(widths[c], display_width(row[c]));
  }
  std::string out;
  for (const auto& row : rows) {
    std::string line = indent;
    for (std::size_t c = 0; c < row.size(); ++c) {
      const std::size_t pad = widths[c] - display_width(row[c]);
      const bool right = std::find(right_aligned.begin(), right_aligned.end(), c) != right_aligned.end();
      if (c > 0) line += "  ";
      if (right) line += std::string(pad, ' ');
      line += row[c];
      if (!right && c + 1 < row.size()) line += std::string(pad, ' ');
    }
    while (!line.empty() && line.back() == ' ') line.pop_back();
    out += line + "\n";
  }
  return out;
}

Progress::Progress() : enabled_(stderr_is_terminal()) {}
Progress::~Progress() { clear(); }

void Progress::show(const std::string& stage, double fraction) {
  if (!enabled_) return;
  std::string line = "spurcast: " + stage;
  if (fraction >= 0.0 && fraction <= 1.0) {
    char percent[16];
    std::snprintf(percent, sizeof percent, " %3.0f %%", fraction * 100.0);
    line += percent;
  }
  const std::size_t width = display_width(line);
  std::string erase = width < shown_width_ ? std::string(shown_width_ - width, ' ') : "";
  std::cerr << "\r" << line << erase << std::flush;
  shown_width_ = width;
}

void Progress::clear() {
  if (!enabled_ || shown_width_ == 0) return;
  std::cerr << "\r" << std::string(shown_width_, ' ') << "\r" << std::flush;
  shown_width_ = 0;
}

namespace {

Colour verdict_colour(Verdict verdict) {
  switch (verdict) {
    case Verdict::pass: return Colour::green;
    case Verdict::marginal: return Colour::yellow;
    case Verdict::fail: return Colour::red;
  }
  return Colour::none;
}

std::string db_text(double value_db) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.2f dB", value_db);
  return buffer;
}

std::string level_text(double level, const std::string& unit) {
  char buffer[48];
  std::snprintf(buffer, sizeof buffer, "%.2f %s", level, unit.c_str());
  return buffer;
}

Colour reception_colour(const std::string& verdict) {
  if (verdict == "clear") return Colour::green;
  if (verdict == "watch") return Colour::yellow;
  return Colour::red;
}

}  // namespace

std::string prediction_summary(const Prediction& p, const std::string& directory, bool colour) {
  const MarginReport& m = p.margins;
  const std::string uv = "dB\xC2\xB5V";
  std::string out;
  out += paint(p.scenario.title.empty() ? p.scenario.file : p.scenario.title, Colour::bold, colour) + "\n";
  std::string verdict = "verdict: " + paint(to_string(p.verdict), verdict_colour(p.verdict), colour);
  if (m.worst) {
    verdict += " (worst margin " + db_text(m.worst->margin_db) + ", guard " + format_quantity(m.guard_db, Dimension::decibel) + ")";
  } else {
    verdict += p.scenario.limits.sets.empty() ? " (no limit lines given)" : " (nothing compared)";
  }
  out += verdict + "\n";

  if (!m.worst_per_detector.empty()) {
    out += "\nworst margin per detector of the limit line:\n";
    std::vector<std::vector<std::string>> rows;
    for (const DetectorMargin& d : m.worst_per_detector) {
      const Verdict v = verdict_for(d.worst.margin_db, m.guard_db);
      rows.push_back({to_string(d.detector), paint(db_text(d.worst.margin_db), verdict_colour(v), colour),
                      "at " + format_quantity(d.worst.frequency_hz, Dimension::frequency, 5), d.worst.limit_label});
    }
    out += format_columns(rows, {1});
  }

  const std::vector<WorstFrequency> worst = worst_frequencies(p, 5);
  if (!worst.empty()) {
    out += "\nfive worst frequencies:\n";
    std::vector<std::vector<std::string>> rows{{"frequency", "detector", "reading", "limit", "margin", "line"}};
    for (const WorstFrequency& w : worst) {
      const Verdict v = verdict_for(w.row.margin_db, m.guard_db);
      rows.push_back({format_quantity(w.row.frequency_hz, Dimension::frequency, 5), to_string(w.row.reading_detector),
                      level_text(w.row.reading, uv), level_text(w.row.limit, uv),
                      paint(db_text(w.row.margin_db), verdict_colour(v), colour), w.row.limit_label});
    }
    out += format_columns(rows, {0, 2, 3, 4});
  }

  if (!p.reception.empty()) {
    out += "\nbroadcast bands:\n";
    std::vector<std::vector<std::string>> rows;
    for (const BandReception& b : p.reception) {
      const std::string verdict_name = reception_verdict_name(b.verdict);
      std::vector<std::string> row{b.band.name,
                                   format_quantity(b.band.low_hz, Dimension::frequency, band_edge_digits) + " - " +
                                       format_quantity(b.band.high_hz, Dimension::frequency, band_edge_digits),
                                   paint(verdict_name, reception_colour(verdict_name), colour)};
      if (b.worst_channel) {
        const ChannelReception& c = b.channels[*b.worst_channel];
        row.push_back("worst channel " + format_quantity(c.centre_hz, Dimension::frequency, 5));
        row.push_back(level_text(c.level_dbuvm, "dB\xC2\xB5V/m"));
      }
      rows.push_back(std::move(row));
    }
    out += format_columns(rows, {});
  }
  out += "\nreport written to " + directory + "/ (open " + directory + "/report.html)\n";
  return out;
}

int write_report_and_summarise(const Prediction& prediction, const std::string& directory, bool json) {
  Progress progress;
  progress.show("writing the report");
  const std::vector<OutputFile> files = report_files(prediction);
  OutputDirectoryOptions options;
  if (const char* hook = std::getenv("SPURCAST_TEST_ABORT_AFTER_FILES"); hook != nullptr && hook[0] != '\0') {
    options.abort_after_files = static_cast<std::size_t>(std::strtoul(hook, nullptr, 10));
  }
  write_output_directory(directory, files, options);
  progress.clear();
  if (json) {
    for (const OutputFile& f : files) {
      if (f.name == "summary.json") std::cout << f.content;
    }
  } else {
    std::cout << prediction_summary(prediction, directory, stdout_wants_colour());
  }
  return prediction.verdict == Verdict::pass ? exit_ok : exit_limit_exceeded;
}

}  // namespace spurcast::cli
