#pragma once
/// The [safety] section: the touch-current limit that bounds the Y capacitance per line
/// (docs/references.md §9.6). A Y capacitor from a line to protective earth passes
/// I = 2π·f·V·C at the mains frequency, so C ≤ I/(2π·f·V) [D: Ohm's law]; 0.5 mA, 230 V, 50 Hz
/// allow 6.92 nF.
#include "core/input/toml_reader.hpp"

namespace spurcast {

struct SafetySpec {
  /// [A] the allowed touch (earth-leakage) current; 0.5 mA is a common limit for hand-held class I
  /// equipment (from memory, docs/references.md §9.6: verify against the product's standard).
  double touch_current_a = 0.5e-3;
  double mains_voltage_v = 230.0;    ///< [V] RMS line to earth (from memory: the European nominal)
  double mains_frequency_hz = 50.0;  ///< [Hz] (from memory: the European nominal)
  bool given = false;                ///< whether the scenario had a [safety] section
};

/// Reads [safety]: touch_current, mains_voltage, mains_frequency (each optional, > 0).
[[nodiscard]] SafetySpec read_safety_section(TableReader& reader);

/// The largest Y capacitance per line [F]: I/(2π·f·V).
[[nodiscard]] double max_y_capacitance_f(const SafetySpec& safety);

}  // namespace spurcast
