#pragma once
/// The writers of a FilterDesign (core/chain/filter_design.hpp): the terminal text and JSON.
///
/// Example:
///   std::cout << (json ? filter_design_json(design, "new.toml") : filter_design_text(design,
///   "new.toml"));
#include <string>

#include "core/chain/filter_design.hpp"

namespace spurcast {

/// JSON: `met`, `binding` (null when met), `output` (NEW.toml), `guard_db`, `before` and `after`
/// ({verdict, worst_margin_db {detector: dB}}), `required` (frequency_hz, detector, reading_dbuv,
/// limit_dbuv, required_db, dm_required_db, cm_required_db), `parts` (stage, role, value, value_si,
/// parasitics, dc_resistance_ohm, current_a, loss_w), `y_capacitance_per_line_f`,
/// `existing_y_capacitance_per_line_f`, `max_y_capacitance_f`, `safety` (touch_current_a,
/// mains_voltage_v, mains_frequency_hz, given), `stability` (computed, note, input_resistance_ohm,
/// peak_output_impedance_ohm, margin_db, required_margin_db, damped; numbers null when not
/// computed), `predictions`, `notes`.
[[nodiscard]] std::string filter_design_json(const FilterDesign& design,
                                             const std::string& output_path);

/// The terminal text: before and after, the required attenuation (the ten largest), the parts, the
/// Y capacitance against its limit, the stability check, and what binds when the limits are not
/// met.
[[nodiscard]] std::string filter_design_text(const FilterDesign& design,
                                             const std::string& output_path);

}  // namespace spurcast
