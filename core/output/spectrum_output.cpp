#include "core/output/spectrum_output.hpp"

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <sstream>
#include <vector>

#include "core/input/units.hpp"
#include "core/output/text_table.hpp"

namespace spurcast {

namespace {

nlohmann::json json_of(const SpectrumResult& result) {
  const std::string suffix = level_suffix(result.quantity);
  nlohmann::json harmonics = nlohmann::json::array();
  for (const SpectrumRow& row : result.rows) {
    nlohmann::json item{{"harmonic", row.harmonic}, {"frequency_hz", row.frequency_hz}, {"level_" + suffix, row.level_db}};
    if (row.envelope_db) item["envelope_" + suffix] = *row.envelope_db;
    if (row.line1_db) {
      item["line1_dbuv"] = *row.line1_db;
      item["line2_dbuv"] = *row.line2_db;
      item["dm_dbuv"] = *row.dm_db;
      item["cm_dbuv"] = *row.cm_db;
    }
    harmonics.push_back(item);
  }
  nlohmann::json out{{"at", result.at},
                     {"what", result.what},
                     {"quantity", result.quantity == Quantity::voltage ? "voltage" : "current"},
                     {"unit", level_unit(result.quantity)},
                     {"fundamental_hz", result.fundamental_hz},
                     {"fundamental_estimated", result.fundamental_estimated},
                     {"harmonics", harmonics},
                     {"notes", result.notes}};
  if (result.window) out["window"] = *result.window;
  if (result.capture) {
    const Capture& c = *result.capture;
    out["capture"] = {{"file", c.file},
                      {"sample_rate_hz", c.waveform.sample_rate_hz},
                      {"samples", result.capture_samples},
                      {"duration_s", result.capture_duration_s},
                      {"header_lines", c.header_lines},
                      {"time_unit_s", c.time_unit_s},
                      {"uniform", c.sampling.uniform},
                      {"resampled", c.sampling.resampled},
                      {"max_time_deviation_s", c.sampling.max_deviation_s}};
  }
  return out;
}

}  // namespace

std::string spectrum_csv(const SpectrumResult& result) {
  const std::string suffix = level_suffix(result.quantity);
  const bool lisn = !result.rows.empty() && result.rows.front().line1_db.has_value();
  const bool envelope = !result.rows.empty() && result.rows.front().envelope_db.has_value();
  std::string text = "harmonic,frequency_hz,level_" + suffix;
  if (envelope) text += ",envelope_" + suffix;
  if (lisn) text += ",line1_dbuv,line2_dbuv,dm_dbuv,cm_dbuv";
  text += "\n";
  for (const SpectrumRow& row : result.rows) {
    text += fmt::format("{},{:.9g},{:.3f}", row.harmonic, row.frequency_hz, row.level_db);
    if (envelope) text += fmt::format(",{:.3f}", *row.envelope_db);
    if (lisn) text += fmt::format(",{:.3f},{:.3f},{:.3f},{:.3f}", *row.line1_db, *row.line2_db, *row.dm_db, *row.cm_db);
    text += "\n";
  }
  return text;
}

std::string spectrum_json(const SpectrumResult& result) { return json_of(result).dump(2) + "\n"; }

std::string spectrum_text(const SpectrumResult& result, std::size_t top) {
  std::ostringstream out;
  const std::string unit = level_unit(result.quantity);
  out << "spectrum of the " << result.what << "\n";
  out << "fundamental: " << format_quantity(result.fundamental_hz, Dimension::frequency, 7);
  if (result.fundamental_estimated) out << " (estimated from the record)";
  out << "\n";
  if (result.capture) {
    const Capture& c = *result.capture;
    out << "capture: " << c.file << ", " << fmt::format("{:.6g} MSa/s, ", c.waveform.sample_rate_hz / 1e6) << result.capture_samples << " samples, "
              << format_quantity(result.capture_duration_s, Dimension::time)
              << (c.sampling.resampled ? " (resampled: non-uniform time stamps)" : "") << "\n";
  }
  if (result.window) out << "window: " << *result.window << "\n";
  for (const std::string& note : result.notes) out << "note: " << note << "\n";
  std::vector<SpectrumRow> sorted = result.rows;
  std::stable_sort(sorted.begin(), sorted.end(), [](const SpectrumRow& a, const SpectrumRow& b) { return a.level_db > b.level_db; });
  if (sorted.size() > top) sorted.resize(top);
  out << fmt::format("\nstrongest {} of {} harmonics:\n", sorted.size(), result.rows.size());
  out << fmt::format("{:>8}  {:>14}  {:>10}", "harmonic", "frequency", unit);
  const bool envelope = !sorted.empty() && sorted.front().envelope_db.has_value();
  const bool lisn = !sorted.empty() && sorted.front().line1_db.has_value();
  if (envelope) out << fmt::format("  {:>10}", "envelope");
  if (lisn) out << fmt::format("  {:>8}  {:>8}  {:>8}  {:>8}", "line 1", "line 2", "DM", "CM");
  out << "\n";
  for (const SpectrumRow& row : sorted) {
    out << fmt::format("{:>8}  {:>14}  {:>10}", row.harmonic, format_quantity(row.frequency_hz, Dimension::frequency, 4),
                             level_cell(row.level_db));
    if (envelope) out << fmt::format("  {:>10}", level_cell(*row.envelope_db));
    if (lisn) {
      out << fmt::format("  {:>8}  {:>8}  {:>8}  {:>8}", level_cell(*row.line1_db), level_cell(*row.line2_db),
                               level_cell(*row.dm_db), level_cell(*row.cm_db));
    }
    out << "\n";
  }
  return out.str();
}

}  // namespace spurcast
