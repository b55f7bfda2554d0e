#include "core/output/filter_design_output.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <nlohmann/json.hpp>

#include "core/input/units.hpp"
#include "core/output/text_table.hpp"

namespace spurcast {

namespace {

double rounded(double value, int decimals) {
  const double scale = std::pow(10.0, decimals);
  return std::round(value * scale) / scale;
}

std::string db_text(double value_db) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.1f dB", value_db);
  return buffer;
}

nlohmann::ordered_json margins_json(Verdict verdict, const std::vector<DetectorMargin>& margins) {
  nlohmann::ordered_json j;
  j["verdict"] = to_string(verdict);
  nlohmann::ordered_json worst = nlohmann::ordered_json::object();
  for (const DetectorMargin& d : margins)
    worst[to_string(d.detector)] = rounded(d.worst.margin_db, 2);
  j["worst_margin_db"] = worst;
  return j;
}

std::string margins_text(const std::vector<DetectorMargin>& margins) {
  std::string out;
  for (const DetectorMargin& d : margins) {
    out += (out.empty() ? "" : ", ") + to_string(d.detector) + " " + db_text(d.worst.margin_db) +
           " at " + format_quantity(d.worst.frequency_hz, Dimension::frequency, 4);
  }
  return out.empty() ? "no margin computed" : out;
}

}  // namespace

std::string filter_design_json(const FilterDesign& d, const std::string& output_path) {
  nlohmann::ordered_json j;
  j["met"] = d.met;
  j["binding"] = d.binding.empty() ? nlohmann::ordered_json() : nlohmann::ordered_json(d.binding);
  j["output"] = output_path;
  j["guard_db"] = rounded(d.guard_db, 2);
  j["before"] = margins_json(d.verdict_before, d.before);
  j["after"] = margins_json(d.verdict_after, d.after);
  nlohmann::ordered_json required = nlohmann::ordered_json::array();
  for (const RequiredAttenuation& r : d.required) {
    required.push_back({{"frequency_hz", rounded(r.frequency_hz, 1)},
                        {"detector", r.detector},
                        {"reading_dbuv", rounded(r.reading_dbuv, 2)},
                        {"limit_dbuv", rounded(r.limit_dbuv, 2)},
                        {"required_db", rounded(r.required_db, 2)},
                        {"dm_required_db", rounded(r.dm_required_db, 2)},
                        {"cm_required_db", rounded(r.cm_required_db, 2)}});
  }
  j["required"] = required;
  nlohmann::ordered_json parts = nlohmann::ordered_json::array();
  for (const ProposedPart& p : d.parts) {
    parts.push_back({{"stage", p.stage},
                     {"role", p.role},
                     {"value", p.value_text},
                     {"value_si", p.value},
                     {"parasitics", p.parasitics},
                     {"dc_resistance_ohm", p.dc_resistance_ohm},
                     {"current_a", p.current_a},
                     {"loss_w", p.loss_w},
                     {"self_resonance_hz", p.self_resonance_hz > 0.0
                                               ? nlohmann::ordered_json(p.self_resonance_hz)
                                               : nlohmann::ordered_json()}});
  }
  j["parts"] = parts;
  j["cm_shortfall_top_hz"] = d.cm_shortfall_top_hz > 0.0
                                 ? nlohmann::ordered_json(d.cm_shortfall_top_hz)
                                 : nlohmann::ordered_json();
  j["y_capacitance_per_line_f"] = d.y_capacitance_per_line_f;
  j["existing_y_capacitance_per_line_f"] = d.existing_y_capacitance_per_line_f;
  j["max_y_capacitance_f"] = d.max_y_capacitance_f;
  j["safety"] = {{"touch_current_a", d.safety.touch_current_a},
                 {"mains_voltage_v", d.safety.mains_voltage_v},
                 {"mains_frequency_hz", d.safety.mains_frequency_hz},
                 {"given", d.safety.given}};
  const StabilityCheck& s = d.stability;
  auto number = [&](double v, int decimals) {
    return s.computed ? nlohmann::ordered_json(rounded(v, decimals)) : nlohmann::ordered_json();
  };
  j["stability"] = {{"computed", s.computed},
                    {"note", s.note},
                    {"input_resistance_ohm", number(s.input_resistance_ohm, 4)},
                    {"peak_output_impedance_ohm", number(s.peak_output_impedance_ohm, 4)},
                    {"peak_frequency_hz", number(s.peak_frequency_hz, 1)},
                    {"margin_db", number(s.margin_db, 2)},
                    {"required_margin_db", rounded(s.required_margin_db, 2)},
                    {"damped", s.damped}};
  j["predictions"] = d.predictions;
  j["notes"] = d.notes;
  return j.dump(2) + "\n";
}

std::string filter_design_text(const FilterDesign& d, const std::string& output_path) {
  std::string out;
  out += "before: " + to_string(d.verdict_before) + " (" + margins_text(d.before) + ")\n";
  out += "after:  " + to_string(d.verdict_after) + " (" + margins_text(d.after) + "), guard " +
         db_text(d.guard_db) + "\n";
  if (!d.required.empty()) {
    std::vector<const RequiredAttenuation*> order;
    for (const RequiredAttenuation& r : d.required) order.push_back(&r);
    std::stable_sort(order.begin(), order.end(),
                     [](const auto* a, const auto* b) { return a->required_db > b->required_db; });
    out += "\nrequired attenuation (reading - (limit - guard)), largest first:\n";
    std::vector<std::vector<std::string>> rows{{"frequency", "detector", "total", "DM", "CM"}};
    for (std::size_t i = 0; i < order.size() && i < 10; ++i) {
      rows.push_back({format_quantity(order[i]->frequency_hz, Dimension::frequency, 4),
                      order[i]->detector, db_text(order[i]->required_db),
                      db_text(order[i]->dm_required_db), db_text(order[i]->cm_required_db)});
    }
    out += format_columns(rows, {0, 2, 3, 4});
    if (order.size() > 10) out += "  (" + std::to_string(order.size() - 10) + " more in --json)\n";
  }
  if (!d.parts.empty()) {
    out += "\nproposed parts:\n";
    for (const ProposedPart& p : d.parts) {
      out += "  " + p.stage + ": " + p.role + " " + p.value_text + "; " + p.parasitics;
      if (p.dc_resistance_ohm > 0.0 && p.current_a > 0.0) {
        char buffer[96];
        std::snprintf(buffer, sizeof buffer, "; %.3g A DC, %.3g W", p.current_a, p.loss_w);
        out += "; DC resistance " + format_quantity(p.dc_resistance_ohm, Dimension::resistance, 3) +
               buffer;
      }
      out += "\n";
    }
  }
  out += "\nY capacitance per line: " +
         format_quantity(d.y_capacitance_per_line_f, Dimension::capacitance) + " (limit " +
         format_quantity(d.max_y_capacitance_f, Dimension::capacitance) + " = " +
         format_quantity(d.safety.touch_current_a, Dimension::current) + " / (2π · " +
         format_quantity(d.safety.mains_frequency_hz, Dimension::frequency) + " · " +
         format_quantity(d.safety.mains_voltage_v, Dimension::voltage) + "))\n";
  const StabilityCheck& s = d.stability;
  if (s.computed) {
    out += "stability (Middlebrook, the whole input network): peak output impedance " +
           format_quantity(s.peak_output_impedance_ohm, Dimension::resistance) +
           (s.peak_frequency_hz > 0.0
                ? " at " + format_quantity(s.peak_frequency_hz, Dimension::frequency)
                : std::string()) +
           " against |Z_in| " + format_quantity(s.input_resistance_ohm, Dimension::resistance) +
           ": margin " + db_text(s.margin_db) + " (asked " + db_text(s.required_margin_db) + ")" +
           (s.damped ? ", R-C damped" : "") + "\n";
  } else {
    out += "stability (Middlebrook): " + s.note + "\n";
  }
  for (const std::string& note : d.notes) out += "note: " + note + "\n";
  if (d.met) {
    out += "\nwrote " + output_path + ": predict it to see the limits met with the guard\n";
  } else {
    out += "\nnot met: " + d.binding + "\nwrote " + output_path +
           " with the largest filter considered\n";
  }
  return out;
}

}  // namespace spurcast
