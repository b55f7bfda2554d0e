// Input-filter stability. External checks (R. W. Erickson and D. Maksimović, Fundamentals of Power
// Electronics, 2nd ed., ch. 10, from memory; docs/references.md §9.6): the converter's negative
// input resistance V²/P; the optimal R–C_b parallel damping R_opt = R0·√((2 + n)(4 + 3n)/(2n²(4 +
// n))) with the peak output impedance R0·√(2(2 + n))/n; and the undamped section's peak L/(C·R_s)
// (a parallel resonance with series loss R_s: Q = R0/R_s, peak Q·R0, common practice); and the
// whole input network's output impedance against its closed form for an LC section between the
// converter and two CISPR 16-1-2 V-networks.
#include "core/coupling/input_stability.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <numbers>

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

TEST_CASE("Middlebrook over the whole input network: an LC section and the LISNs, closed form") {
  // The converter sees, between its input terminals: its input capacitor C_in, the section's
  // capacitor C, and through the section's inductor (L + R_L, positive line) the two LISNs in
  // series, each 50 Ω ∥ (5 Ω + jω·50 µH) (CISPR 16-1-2 V-network, docs/references.md §2.1):
  //   Z_o = 1 / (jω(C + C_in) + 1 / (R_L + jωL + 2·Z_LISN)).
  // Written out here (nodal analysis by hand), its peak found on a dense grid.
  // 2 mH and 1 µF + 1 µF: R0 = 31.6 Ω, well above the LISNs' 9.1 Ω at low frequency, so the
  // resonance, not the LISNs' resistance, sets the peak.
  constexpr double section_l_h = 2e-3, section_c_f = 1e-6, c_in_f = 1e-6, r_l_ohm = 0.05;
  CouplingSpec coupling;
  coupling.input_capacitance_f = c_in_f;
  coupling.input_esr_ohm = 0.0;
  coupling.input_esl_h = 0.0;
  coupling.parasitic_capacitance_f = 0.0;
  FilterStage lc;
  lc.kind = FilterKind::lc;
  lc.lines = FilterLines::positive;
  lc.inductance_h = section_l_h;
  lc.inductor_resistance_ohm = r_l_ohm;
  lc.converter_side_capacitance_f = section_c_f;
  const ConductedModel model(coupling, {lc}, LisnSpec{});
  auto closed_form = [&](double f) {
    using cd = std::complex<double>;
    const double w = 2.0 * std::numbers::pi * f;
    const cd lisn = 1.0 / (1.0 / 50.0 + 1.0 / cd(5.0, w * 50e-6));
    const cd series = cd(r_l_ohm, w * section_l_h) + 2.0 * lisn;
    return std::abs(1.0 / (cd(0.0, w * (section_c_f + c_in_f)) + 1.0 / series));
  };
  for (const double f : {10.0, 1e3, 2.5e3, 100e3, 1e6, 10e6}) {
    CHECK(converter_side_impedance_ohm(model, {f})[0] ==
          doctest::Approx(closed_form(f)).epsilon(impedance_relative_tolerance));
  }
  double peak = 0.0, peak_f = 0.0;
  for (int i = 0; i <= 80000; ++i) {
    const double f = std::pow(10.0, i / 10000.0);  // 1 Hz – 100 MHz
    if (closed_form(f) > peak) peak = closed_form(f), peak_f = f;
  }
  const NetworkImpedancePeak found = peak_converter_side_impedance(model);
  CHECK(found.impedance_ohm == doctest::Approx(peak).epsilon(impedance_relative_tolerance));
  CHECK(found.frequency_hz == doctest::Approx(peak_f).epsilon(0.01));
  // The resonance of L with C + C_in, damped by the LISNs: near 1/(2π√(L(C + C_in))) = 2.52 kHz.
  CHECK(found.frequency_hz ==
        doctest::Approx(1.0 / (2.0 * std::numbers::pi * std::sqrt(section_l_h * (section_c_f + c_in_f))))
            .epsilon(0.05));
  // Middlebrook margin against 24 V, 50 W: |Z_in| = 11.52 Ω.
  ConverterPowerSpec converter;
  converter.min_input_voltage_v = 24.0;
  converter.output_power_w = 50.0;
  const double margin_db =
      20.0 * std::log10(negative_input_resistance_ohm(converter) / found.impedance_ohm);
  CHECK(margin_db == doctest::Approx(20.0 * std::log10(11.52 / peak)).epsilon(1e-3));
}
