// Input-filter stability. External checks (R. W. Erickson and D. Maksimović, Fundamentals of Power
// Electronics, 2nd ed., ch. 10, from memory; docs/references.md §9.6): the converter's negative
// input resistance V²/P; the optimal R–C_b parallel damping R_opt = R0·√((2 + n)(4 + 3n)/(2n²(4 +
// n))) with the peak output impedance R0·√(2(2 + n))/n; and the undamped section's peak L/(C·R_s)
// (a parallel resonance with series loss R_s: Q = R0/R_s, peak Q·R0, common practice).
#include "core/coupling/input_stability.hpp"

#include <doctest/doctest.h>

#include <cmath>

#include "core/chain/scenario.hpp"
#include "core/input/error.hpp"

using namespace spurcast;

namespace {
constexpr double impedance_relative_tolerance = 2e-3;
constexpr double l_h = 100e-6, c_f = 10e-6;  // R0 = √(L/C) = 3.162 Ω
}  // namespace

TEST_CASE("Middlebrook: |Z_in| = V_in,min² / P_out") {
  ConverterPowerSpec c;
  c.min_input_voltage_v = 36.0;
  c.output_power_w = 60.0;
  CHECK(negative_input_resistance_ohm(c) == doctest::Approx(21.6).epsilon(1e-12));
  const Scenario s = scenario_from_text(
      "[switching]\nfrequency = \"100 kHz\"\nduty = 0.5\namplitude = \"10 V\"\ncurrent = \"1 "
      "A\"\nrise = \"10 ns\"\nfall = \"10 ns\"\n[converter]\nmin_input_voltage = \"18 V\"\n"
      "output_power = \"30 W\"\n",
      "converter.toml", ".", locate_shipped_data());
  CHECK(s.converter_power.given);
  CHECK(negative_input_resistance_ohm(s.converter_power) == doctest::Approx(10.8).epsilon(1e-12));
  CHECK_THROWS_WITH_AS(
      scenario_from_text("[switching]\nfrequency = \"100 kHz\"\nduty = 0.5\namplitude = \"10 "
                         "V\"\ncurrent = \"1 A\"\nrise = \"10 ns\"\nfall = \"10 ns\"\n[converter]\n"
                         "min_input_voltage = \"18 V\"\n",
                         "converter.toml", ".", locate_shipped_data()),
      "converter.toml:9:21: expected min_input_voltage and output_power together, found only this "
      "one",
      Error);
}

TEST_CASE("an undamped section peaks at Q·R0 = L/(C·R_s)") {
  DampedLc lc;
  lc.inductance_h = l_h;
  lc.capacitance_f = c_f;
  lc.inductor_resistance_ohm = 0.05;
  // With series loss the exact peak is R0·√(Q² + 1)·Q/√(Q² + ...) ≈ Q·R0 for Q ≫ 1 (Q = 63 here).
  CHECK(peak_output_impedance_ohm(lc) == doctest::Approx(l_h / (c_f * 0.05)).epsilon(2e-3));
}

TEST_CASE("Erickson's optimal parallel damping: the formulas and the minimum they describe") {
  for (const double n : {0.5, 1.0, 4.0}) {
    CAPTURE(n);
    const OptimalDamping d = optimal_parallel_damping(l_h, c_f, n);
    const double r0 = std::sqrt(l_h / c_f);
    CHECK(d.resistance_ohm ==
          doctest::Approx(r0 * std::sqrt((2 + n) * (4 + 3 * n) / (2 * n * n * (4 + n)))));
    CHECK(d.peak_output_impedance_ohm == doctest::Approx(r0 * std::sqrt(2 * (2 + n)) / n));
    DampedLc lc;
    lc.inductance_h = l_h;
    lc.capacitance_f = c_f;
    lc.damping_capacitance_f = n * c_f;
    lc.damping_resistance_ohm = d.resistance_ohm;
    // The numerically found peak of |Z_o| with R_opt is Erickson's value ...
    const double peak = peak_output_impedance_ohm(lc);
    CHECK(peak ==
          doctest::Approx(d.peak_output_impedance_ohm).epsilon(impedance_relative_tolerance));
    // ... and any other R gives a higher peak.
    for (const double factor : {0.7, 1.4}) {
      lc.damping_resistance_ohm = factor * d.resistance_ohm;
      CHECK(peak_output_impedance_ohm(lc) > peak);
    }
  }
  // The n that meets a target peak, back through the formula.
  const double n = damping_ratio_for_peak(l_h, c_f, 2.0);
  CHECK(optimal_parallel_damping(l_h, c_f, n).peak_output_impedance_ohm == doctest::Approx(2.0));
}
