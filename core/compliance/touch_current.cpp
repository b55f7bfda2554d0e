#include "core/compliance/touch_current.hpp"

#include <cmath>
#include <numbers>

#include "core/input/units.hpp"

namespace spurcast {

SafetySpec read_safety_section(TableReader& reader) {
  reader.finish({"touch_current", "mains_voltage", "mains_frequency"});
  SafetySpec spec;
  spec.given = true;
  auto read = [&](std::string_view key, Dimension dimension, double fallback) {
    const double value = reader.quantity_or(key, dimension, fallback);
    if (!(std::isfinite(value) && value > 0.0)) {
      reader.fail(key, "expected " + dimension_name(dimension) + " > 0, found " +
                           format_quantity(value, dimension));
    }
    return value;
  };
  spec.touch_current_a = read("touch_current", Dimension::current, spec.touch_current_a);
  spec.mains_voltage_v = read("mains_voltage", Dimension::voltage, spec.mains_voltage_v);
  spec.mains_frequency_hz = read("mains_frequency", Dimension::frequency, spec.mains_frequency_hz);
  return spec;
}

double max_y_capacitance_f(const SafetySpec& s) {
  return s.touch_current_a / (2.0 * std::numbers::pi * s.mains_frequency_hz * s.mains_voltage_v);
}

}  // namespace spurcast
