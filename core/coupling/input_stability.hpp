#pragma once
/// Input-filter stability (docs/references.md §9.6): Middlebrook's criterion and optimal R–C
/// damping, after R. W. Erickson and D. Maksimović, Fundamentals of Power Electronics, 2nd ed.,
/// ch. 10 (formulas from memory: the chapter's equations are not cited by number until read).
///  - A regulated converter draws constant power: its input behaves at low frequency as a negative
///    resistance of magnitude |Z_in| = V_in²/P (worst at the lowest input voltage).
///  - Middlebrook: the filter's output impedance must stay well below |Z_in| at every frequency;
///    the margin is 20·log10(|Z_in| / max|Z_o|).
///  - An LC section (L, C; R0 = √(L/C)) damped by R in series with C_b = n·C across C: the R that
///    minimises the peak of |Z_o| is R0·√((2 + n)(4 + 3n) / (2n²(4 + n))) and the peak is then
///    R0·√(2(2 + n))/n.
#include <vector>

#include "core/coupling/conducted.hpp"
#include "core/input/toml_reader.hpp"

namespace spurcast {

/// What [converter] says about the converter's input power (issue 17: min_input_voltage,
/// output_power). Both absent: the stability check is not computed.
struct ConverterPowerSpec {
  double min_input_voltage_v = 0.0;  ///< [V] > 0 when given
  double output_power_w = 0.0;       ///< [W] > 0 when given
  bool given = false;                ///< both keys were given
};

/// Reads the keys min_input_voltage and output_power of [converter] (both or neither). The
/// section's other keys, and unknown ones, are checked by read_converter_section
/// (core/coupling/converter.hpp).
[[nodiscard]] ConverterPowerSpec read_converter_power(TableReader& reader);

/// |Z_in| = V_in,min² / P_out [Ω].
[[nodiscard]] double negative_input_resistance_ohm(const ConverterPowerSpec& converter);

/// A single LC section with optional parallel R–C_b damping across its capacitor.
struct DampedLc {
  double inductance_h = 0.0;  ///< the series inductance seen by a DM current (loop inductance)
  double capacitance_f = 0.0;
  double damping_resistance_ohm = 0.0;  ///< 0 with damping_capacitance_f = 0: undamped
  double damping_capacitance_f = 0.0;
  double inductor_resistance_ohm = 0.0;  ///< series (DC) resistance of the loop
};

/// |Z_o(f)| of the section seen from its capacitor side with its input shorted [Ω].
[[nodiscard]] double output_impedance_ohm(const DampedLc& lc, double frequency_hz);
/// The peak of |Z_o| over 1 Hz–100 MHz (a log grid of 400 points per decade refined by
/// golden-section search around the largest) [Ω].
[[nodiscard]] double peak_output_impedance_ohm(const DampedLc& lc);

/// Erickson's optimal damping for C_b = n·C: the resistance and the peak output impedance.
struct OptimalDamping {
  double resistance_ohm = 0.0;
  double peak_output_impedance_ohm = 0.0;
};
[[nodiscard]] OptimalDamping optimal_parallel_damping(double inductance_h, double capacitance_f,
                                                      double n);

/// The smallest n (C_b/C) whose optimal peak R0·√(2(2 + n))/n is at most `target_ohm`.
[[nodiscard]] double damping_ratio_for_peak(double inductance_h, double capacitance_f,
                                            double target_ohm);

/// Middlebrook over the whole input network as the converter sees it: the LISN(s), every filter
/// stage and the converter's input capacitor (the planner's convention: the filter's inductors
/// resonate with it), solved by the network solver (core/coupling/network.hpp). The switch-node
/// source is taken as shorted (an ideal voltage source at rest) and the common-mode parts stay in
/// place.
struct NetworkImpedancePeak {
  double frequency_hz = 0.0;          ///< where |Z_o| is largest
  double impedance_ohm = 0.0;         ///< max |Z_o| [Ω]
  double from_hz = 0.0, to_hz = 0.0;  ///< the range searched [Hz]
};

/// |Z_o(f)| = |V(conv+) − V(conv−)| per ampere of the input current [Ω], at each frequency (> 0,
/// inside the range of any measured part).
[[nodiscard]] std::vector<double> converter_side_impedance_ohm(
    const ConductedModel& model, const std::vector<double>& frequency_hz);

/// The peak of |Z_o| over 1 Hz–100 MHz (narrowed to the range every measured part covers): a log
/// grid of 200 points per decade refined by golden-section search around the largest.
[[nodiscard]] NetworkImpedancePeak peak_converter_side_impedance(const ConductedModel& model);

}  // namespace spurcast
