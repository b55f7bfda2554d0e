// The Y capacitance allowed by a touch current. External check: C ≤ I/(2π·f·V) (Ohm's law for the
// capacitor's reactance at the mains frequency, docs/references.md §9.6): 0.5 mA at 230 V, 50 Hz
// gives 6.92 nF.
#include "core/compliance/touch_current.hpp"

#include <doctest/doctest.h>

#include "core/chain/scenario.hpp"
#include "core/input/error.hpp"

using namespace spurcast;

namespace {
constexpr double capacitance_tolerance_f = 0.005e-9;  ///< the figure is given to 0.01 nF
const std::string source =
    "[switching]\nfrequency = \"100 kHz\"\nduty = 0.5\namplitude = \"10 V\"\ncurrent = \"1 "
    "A\"\nrise = \"10 ns\"\nfall = \"10 ns\"\n";
}  // namespace

TEST_CASE("0.5 mA at 230 V and 50 Hz allows 6.92 nF per line") {
  SafetySpec s;
  s.touch_current_a = 0.5e-3;
  s.mains_voltage_v = 230.0;
  s.mains_frequency_hz = 50.0;
  CHECK(max_y_capacitance_f(s) ==
        doctest::Approx(6.92e-9).epsilon(capacitance_tolerance_f / 6.92e-9));
  // The defaults are those values.
  CHECK(max_y_capacitance_f(SafetySpec{}) ==
        doctest::Approx(6.92e-9).epsilon(capacitance_tolerance_f / 6.92e-9));
}

TEST_CASE("[safety] is read with units and checked") {
  const Scenario s = scenario_from_text(source +
                                            "[safety]\ntouch_current = \"0.25 mA\"\nmains_voltage "
                                            "= \"120 V\"\nmains_frequency = \"60 Hz\"\n",
                                        "safety.toml", ".", locate_shipped_data());
  CHECK(s.safety.given);
  // 0.25 mA / (2π · 60 Hz · 120 V) = 5.526 nF.
  CHECK(max_y_capacitance_f(s.safety) == doctest::Approx(5.526e-9).epsilon(1e-3));
  CHECK_THROWS_WITH_AS(scenario_from_text(source + "[safety]\ntouch_current = \"0 mA\"\n",
                                          "safety.toml", ".", locate_shipped_data()),
                       "safety.toml:9:17: expected a current > 0, found 0 A", Error);
}
