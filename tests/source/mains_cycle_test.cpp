// A boost PFC stage over the mains half-cycle (core/source/mains_cycle.hpp). External checks: the
// boost's conversion ratio D = 1 − V_in/V_out in continuous conduction and its ripple
// ΔI = V_in·D/(L·f) (common practice, any power-electronics text, e.g. Erickson & Maksimović,
// Fundamentals of Power Electronics, ch. 2, from memory), the rectified mains |sin θ| and the
// share of a half-cycle where |sin θ| ≥ s_th, 1 − (2/π)·asin(s_th) (trigonometry).
#include <doctest/doctest.h>

#include <cmath>
#include <numbers>

#include "core/input/error.hpp"
#include "core/source/mains_cycle.hpp"

using namespace spurcast;

namespace {

/// Relative tolerance of the closed-form checks (exact arithmetic, rounding only).
const double relative_tolerance = 1e-12;

SwitchingSpec crest() {
  SwitchingSpec s;
  s.frequency_hz = 65e3;
  s.duty = 0.2;  // 320 V in, 400 V out at the crest
  s.amplitude_v = 400.0;
  s.current_a = 4.0;
  s.input_current_shape = InputCurrentShape::triangular;
  s.current_ripple_a = 1.0;
  s.rise_s = 25e-9;
  s.fall_s = 20e-9;
  return s;
}

}  // namespace

TEST_CASE("at the crest the stage is the [switching] section; elsewhere it follows the rectified mains") {
  const SwitchingSpec c = crest();
  CHECK(crest_input_voltage_v(c) == doctest::Approx(320.0).epsilon(relative_tolerance));
  const auto at_crest = spec_at_mains_phase(c, MainsCycleSpec{}, std::numbers::pi / 2.0);
  REQUIRE(at_crest);
  CHECK(at_crest->duty == doctest::Approx(0.2).epsilon(relative_tolerance));
  CHECK(at_crest->current_a == doctest::Approx(4.0).epsilon(relative_tolerance));
  CHECK(at_crest->current_ripple_a == doctest::Approx(1.0).epsilon(relative_tolerance));
  // θ = π/6: v_in = 160 V, D = 1 − 160/400 = 0.6, I = 2 A; ΔI ∝ v_in·D: (160·0.6)/(320·0.2) = 1.5.
  const auto at_30 = spec_at_mains_phase(c, MainsCycleSpec{}, std::numbers::pi / 6.0);
  REQUIRE(at_30);
  CHECK(at_30->duty == doctest::Approx(0.6).epsilon(relative_tolerance));
  CHECK(at_30->current_a == doctest::Approx(2.0).epsilon(relative_tolerance));
  CHECK(at_30->current_ripple_a == doctest::Approx(1.5).epsilon(relative_tolerance));
  CHECK(at_30->amplitude_v == doctest::Approx(400.0).epsilon(relative_tolerance));  // V_out stays
  // Near the zero crossing the duty is held at the controller's maximum and the ripple at 2·I.
  const auto near_zero = spec_at_mains_phase(c, MainsCycleSpec{}, 1e-3);
  REQUIRE(near_zero);
  CHECK(near_zero->duty == doctest::Approx(max_mains_cycle_duty).epsilon(relative_tolerance));
  CHECK(near_zero->current_ripple_a <= 2.0 * near_zero->current_a * (1.0 + relative_tolerance));
  CHECK_FALSE(switching_problem(*near_zero));
  // Below the threshold the stage idles.
  CHECK_FALSE(spec_at_mains_phase(c, MainsCycleSpec{50.0, 170.0}, std::numbers::pi / 6.0));
  CHECK(spec_at_mains_phase(c, MainsCycleSpec{50.0, 150.0}, std::numbers::pi / 6.0));
}

TEST_CASE("the lines over the half-cycle: the crest instant's lines, the idle instants' zeros, the switching share") {
  const SwitchingSpec c = crest();
  const MainsCycleSpec mains{60.0, 100.0};
  const MainsCycle cycle = mains_cycle_lines(c, mains, 2e6, 128);
  CHECK(cycle.switch_node_v.modulation_period_s == doctest::Approx(1.0 / 120.0).epsilon(relative_tolerance));
  CHECK(cycle.switch_node_v.fundamental_hz == doctest::Approx(65e3).epsilon(relative_tolerance));
  REQUIRE(cycle.switch_node_v.phases.size() == 128);
  REQUIRE(cycle.input_current_a.phases.size() == 128);
  // |sin θ| ≥ 100/320 over 1 − (2/π)·asin(0.3125) of the half-cycle; sampled at 128 instants.
  const double share = 1.0 - 2.0 / std::numbers::pi * std::asin(100.0 / 320.0);
  CHECK(std::abs(cycle.switching_fraction() - share) <= 1.0 / 128.0);
  // The instant nearest the crest: its own spec's exact lines.
  const std::size_t j = 63;  // θ = π·63.5/128
  const auto spec = spec_at_mains_phase(c, mains, std::numbers::pi * 63.5 / 128.0);
  REQUIRE(spec);
  const LineSpectrum i = input_current_spectrum(*spec, 2e6);
  REQUIRE(cycle.input_current_a.phases[j].size() == i.harmonics.size());
  for (std::size_t k = 0; k < i.harmonics.size(); ++k) {
    CHECK(std::abs(cycle.input_current_a.phases[j][k] - i.harmonics[k]) <= 1e-12 * std::abs(i.harmonics[0]));
  }
  // The first instant idles (v_in = 320·sin(π/256) V, below 100 V): nothing switches.
  for (const auto& line : cycle.switch_node_v.phases[0]) CHECK(std::abs(line) < 1e-300);
  SwitchingSpec dithered = c;
  dithered.dither = DitherSpec{DitherProfile::triangle, 0.05, 1e3, {}, {}};
  CHECK_THROWS_WITH_AS(mains_cycle_lines(dithered, mains, 2e6),
                       "the mains cycle of a boost PFC stage is not modelled with dither", Error);
}
