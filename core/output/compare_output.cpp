#include "core/output/compare_output.hpp"

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <sstream>

#include "core/input/units.hpp"

namespace spurcast {

namespace {

std::string mhz(double hz) { return fmt::format("{:.4f} MHz", hz / 1e6); }

std::string detectors_text(const std::vector<Detector>& detectors) {
  std::string text;
  for (Detector d : detectors) text += (text.empty() ? "" : " + ") + to_string(d);
  return text;
}

nlohmann::json row_json(const MarginRow& row) {
  nlohmann::json j{{"frequency_hz", row.frequency_hz},
                   {"detector", to_string(row.reading_detector)},
                   {"reading", row.reading},
                   {"limit", row.limit},
                   {"margin_db", row.margin_db},
                   {"line", row.limit_label}};
  j["u_cispr_db"] = row.uncertainty_db ? nlohmann::json(*row.uncertainty_db) : nlohmann::json(nullptr);
  return j;
}

}  // namespace

std::string compare_json(const CompareResult& result, const std::vector<std::string>& written) {
  const MarginReport& report = result.report;
  const MeasuredTrace& trace = result.trace;
  const Detector trace_detector = result.detector;
  const double guard_db = result.guard_db;
  const std::vector<LimitSet>& sets = result.sets;
  const std::vector<RemeasurePoint>& remeasure = result.remeasure;
  const std::vector<PredictionCheck>& checks = result.checks;
  const std::vector<ScanCsvRow>& prediction = result.prediction;
  nlohmann::json j;
  j["verdict"] = to_string(report.verdict);
  j["guard_db"] = guard_db;
  j["trace"] = {{"file", result.trace_file},
                {"points", trace.frequency_hz.size()},
                {"unit", to_string(trace.unit)},
                {"detector", to_string(trace_detector)}};
  j["corrections"] = result.correction_files;
  nlohmann::json limits = nlohmann::json::array();
  for (const LimitSet& set : sets) {
    limits.push_back({{"name", set.name}, {"file", set.file}, {"source", set.source}, {"confidence", set.confidence_text}});
  }
  j["limits"] = limits;
  nlohmann::json worst = nlohmann::json::object();
  for (const DetectorMargin& d : report.worst_per_detector) worst[to_string(d.detector)] = d.worst.margin_db;
  j["worst_margin_db"] = worst;
  j["worst"] = report.worst ? row_json(*report.worst) : nlohmann::json(nullptr);
  nlohmann::json closest = nlohmann::json::array();
  for (const MarginRow& row : report.closest) closest.push_back(row_json(row));
  j["closest"] = closest;
  j["compared_points"] = report.compared_readings;
  j["not_compared_points"] = report.not_compared;
  nlohmann::json points = nlohmann::json::array();
  for (const RemeasurePoint& p : remeasure) {
    nlohmann::json detectors = nlohmann::json::array();
    for (Detector d : p.detectors) detectors.push_back(to_string(d));
    points.push_back({{"frequency_hz", p.frequency_hz},
                      {"frequency_from", p.from_prediction ? "prediction" : "trace"},
                      {"trace_frequency_hz", p.trace_frequency_hz},
                      {"peak", p.peak_dbuv},
                      {"detectors", detectors},
                      {"margin_db", p.margin_db},
                      {"line", p.limit_label}});
  }
  j["remeasure"] = points;
  j["remeasure_from_prediction"] = result.remeasure_from_prediction;
  j["notes"] = result.notes;
  if (!prediction.empty()) {
    nlohmann::json side = nlohmann::json::array();
    for (const PredictionCheck& c : checks) {
      nlohmann::json item{{"frequency_hz", c.frequency_hz},
                          {"measured_peak", c.measured_peak_dbuv},
                          {"predicted_is_bin_maximum", c.bin_maximum}};
      if (c.predicted) {
        item["predicted"] = {{"frequency_hz", c.predicted->frequency_hz},
                             {"peak", c.predicted->peak_dbuv},
                             {"quasi_peak", c.predicted->quasi_peak_dbuv},
                             {"average", c.predicted->average_dbuv}};
      } else {
        item["predicted"] = nullptr;
      }
      item["difference_db"] = c.difference_db ? nlohmann::json(*c.difference_db) : nlohmann::json(nullptr);
      side.push_back(item);
    }
    j["prediction"] = side;
  }
  j["files"] = written;
  return j.dump(2) + "\n";
}

std::string compare_text(const CompareResult& result, const std::vector<std::string>& written) {
  const MarginReport& report = result.report;
  const MeasuredTrace& trace = result.trace;
  const Detector trace_detector = result.detector;
  const double guard_db = result.guard_db;
  const std::vector<LimitSet>& sets = result.sets;
  const std::vector<CorrectionTable>& corrections = result.corrections;
  const std::vector<RemeasurePoint>& remeasure = result.remeasure;
  const std::vector<PredictionCheck>& checks = result.checks;
  const std::vector<ScanCsvRow>& prediction = result.prediction;
  const double separation_hz = result.separation_hz;
  const std::string unit_text = limit_unit_symbol(sets.front());
  std::ostringstream out;
  out << fmt::format("trace: {} ({} points, {} detector, levels in {}", result.trace_file,
                           trace.frequency_hz.size(), to_string(trace_detector),
                           describe_conversion(trace.unit));
  out << (corrections.empty() ? ")\n" : "; corrections added:");
  for (const CorrectionTable& c : corrections) {
    out << fmt::format(" {}{}", c.file,
                             c.covers(trace.frequency_hz.front()) && c.covers(trace.frequency_hz.back())
                                 ? ""
                                 : " (end values held outside its range)");
  }
  if (!corrections.empty()) out << ")\n";
  for (const LimitSet& set : sets) {
    out << fmt::format("limits: {} [{}]\n  source: {}\n  confidence: {}\n", set.name, set.file, set.source,
                             set.confidence_text);
  }
  out << fmt::format("guard band {:g} dB (6 dB is common practice); U_cispr: CISPR 16-4-2 measurement "
                           "uncertainty (values from memory)\n",
                           guard_db);
  if (trace_detector == Detector::peak) {
    out << "a peak trace is compared with every line: peak >= quasi-peak >= average, so a peak under "
                 "a line proves it is met\n";
  }
  out << "\nworst margin per line detector:\n";
  for (const DetectorMargin& d : report.worst_per_detector) {
    const MarginRow& w = d.worst;
    out << fmt::format("  {:<11} {:+7.2f} dB at {} ({} {:.2f} vs limit {:.2f} {}){}\n", to_string(d.detector),
                             w.margin_db, mhz(w.frequency_hz), to_string(w.reading_detector), w.reading, w.limit,
                             unit_text,
                             w.uncertainty_db ? fmt::format("  U_cispr {:.1f} dB", *w.uncertainty_db) : "");
  }
  out << fmt::format("\nclosest to the limit (at least {} apart):\n", format_quantity(separation_hz, Dimension::frequency));
  out << fmt::format("  {:>13}  {:<10} {:>8} {:>8} {:>8} {:>8}  {}\n", "frequency", "detector", "reading",
                           "limit", "margin", "U_cispr", "line");
  for (const MarginRow& row : report.closest) {
    out << fmt::format("  {:>13}  {:<10} {:>8.2f} {:>8.2f} {:>+8.2f} {:>8}  {}\n", mhz(row.frequency_hz),
                             to_string(row.reading_detector), row.reading, row.limit, row.margin_db,
                             row.uncertainty_db ? fmt::format("{:.1f}", *row.uncertainty_db) : "-", row.limit_label);
  }
  if (trace_detector == Detector::peak) {
    if (remeasure.empty()) {
      out << fmt::format("\nnothing to re-measure: the peak trace is at least {:g} dB under every "
                               "quasi-peak and average line\n",
                               guard_db);
    } else {
      out << fmt::format("\nre-measure with the quasi-peak / average detectors ({} local maxima within {:g} dB "
                               "of a line, merged within 3 RBW):\n",
                               remeasure.size(), guard_db);
      for (const RemeasurePoint& p : remeasure) {
        out << fmt::format("  {:>13}  peak {:7.2f}  {:<22} margin {:+7.2f} dB to {}{}\n", mhz(p.frequency_hz),
                           p.peak_dbuv, detectors_text(p.detectors), p.margin_db, p.limit_label,
                           p.from_prediction ? fmt::format(" (predicted line; trace point {})", mhz(p.trace_frequency_hz))
                                             : "");
      }
      out << "  (if the quasi-peak reading already meets the average limit, no average measurement is "
                   "needed: 47 CFR 18.307(d))\n";
    }
  }
  if (!prediction.empty()) {
    out << fmt::format("\nprediction ({}) beside the measurement at the re-measure frequencies:\n",
                             result.prediction_file);
    out << "  (the predicted row is the prediction's highest peak inside the trace point's bin, as the analyser "
           "saw it; * the nearest row within 3 RBW)\n";
    out << fmt::format("  {:>13}  {:>9}  {:>14} {:>9} {:>9} {:>9}  {:>10}\n", "frequency", "measured", "predicted at",
                       "pred. PK", "pred. QP", "pred. AV", "meas.-pred.");
    for (const PredictionCheck& c : checks) {
      if (!c.predicted) {
        out << fmt::format("  {:>13}  {:>9.2f}  (no predicted reading within 3 RBW)\n", mhz(c.frequency_hz),
                                 c.measured_peak_dbuv);
        continue;
      }
      out << fmt::format("  {:>13}  {:>9.2f}  {:>13}{} {:>9.2f} {:>9.2f} {:>9.2f}  {:>10}\n", mhz(c.frequency_hz),
                         c.measured_peak_dbuv, mhz(c.predicted->frequency_hz), c.bin_maximum ? " " : "*",
                         c.predicted->peak_dbuv, c.predicted->quasi_peak_dbuv, c.predicted->average_dbuv,
                         c.difference_db ? fmt::format("{:+.2f}", *c.difference_db) : "-");
    }
  }
  if (report.not_compared > 0) {
    out << fmt::format("\n{} of {} trace points lie outside every line: not compared\n", report.not_compared,
                             report.readings);
  }
  out << fmt::format("\nverdict: {} (worst margin {:+.2f} dB, guard {:g} dB)\n", to_string(report.verdict),
                           report.worst->margin_db, guard_db);
  if (report.verdict != Verdict::pass && trace_detector == Detector::peak &&
      report.worst->limit_detector != Detector::peak) {
    out << "  a pre-scan verdict: the peak trace is compared with quasi-peak/average lines; the "
                 "re-measurement with those detectors decides\n";
  }
  for (const std::string& file : written) out << "wrote " << file << "\n";
  out << "a prediction or pre-scan is not a compliance result: only an accredited test decides\n";
  return out.str();
}

}  // namespace spurcast
