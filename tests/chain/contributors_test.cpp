// Contributors per peak (issue 17 item 1). External checks: the CM/DM decomposition at the LISN
// ports, V_DM = (V1 − V2)/2 and V_CM = (V1 + V2)/2 (C. R. Paul, Introduction to EMC, 2nd ed., ch.
// 6; docs/references.md §2.3), applied to the closed-form solution of a two-node circuit (nodal
// analysis by Cramer's rule written out here): two CISPR 16-1-2 V-networks 50 ‖ (5 Ω + jω·50 µH)
// (docs/references.md §2.1), the input capacitor between the lines, the pulsed current drawn from
// line 1 and returned into line 2, and the switch node over C_par to the reference ground.
#include "core/chain/contributors.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <numbers>
#include <string>

#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/input/units.hpp"

using namespace spurcast;
using cd = std::complex<double>;

namespace {

constexpr double share_tolerance = 1e-6;     ///< power fraction
constexpr double level_tolerance_db = 1e-6;  ///< dB
constexpr double c_in_f = 1e-6;
constexpr double c_par_f = 100e-12;

Scenario simple_scenario(const std::string& filters = "", const std::string& parasitic = "100 pF") {
  return scenario_from_text(
      "[switching]\nfrequency = \"1 MHz\"\nduty = 0.5\namplitude = \"10 V\"\ncurrent = \"1 A\"\n"
      "rise = \"20 ns\"\nfall = \"20 ns\"\n[coupling]\ninput_capacitance = \"1 uF\"\n"
      "input_esr = 0\ninput_esl = 0\nparasitic_capacitance = \"" +
          parasitic + "\"\n" + filters + "[lisn]\nmodel = \"v-network-50uH\"\nlines = 2\n",
      "contributors.toml", ".", locate_shipped_data());
}

LineSpectrum one_line(Quantity quantity, double f_hz, cd value) {
  LineSpectrum s;
  s.quantity = quantity;
  s.fundamental_hz = f_hz;
  s.harmonics = {value};
  return s;
}

/// Closed-form port voltages (V1, V2) of the two-node circuit for a current I drawn from node 1
/// into node 2 and a switch-node voltage V referred to node 2.
std::pair<cd, cd> closed_form_ports(double f_hz, cd current_a, cd switch_node_v) {
  const double w = 2.0 * std::numbers::pi * f_hz;
  const cd series(5.0, w * 50e-6);
  const cd y_l = 1.0 / (50.0 * series / (50.0 + series));
  const cd y_c(0.0, w * c_in_f);
  const cd y_p(0.0, w * c_par_f);
  // [y_l + y_c, −y_c; −y_c, y_l + y_c + y_p] [V1; V2] = [−I; I − y_p·V]
  const cd a = y_l + y_c, b = -y_c, c = -y_c, d = y_l + y_c + y_p;
  const cd r1 = -current_a, r2 = current_a - y_p * switch_node_v;
  const cd det = a * d - b * c;
  return {(r1 * d - b * r2) / det, (a * r2 - c * r1) / det};
}

Contributor one_contributor(const Scenario& s, cd current_a, cd switch_node_v) {
  const double f = 1e6;
  const LineSpectrum v = one_line(Quantity::voltage, f, switch_node_v);
  const LineSpectrum i = one_line(Quantity::current, f, current_a);
  const ConductedModel model(s.coupling, s.filters, s.lisn);
  const ConductedResult r = conduct(v, i, model);
  const auto list = contributors_at(s, r, v, i, {}, {f}, {9e3});
  REQUIRE(list.size() == 1);
  return list.front();
}

void check_against_closed_form(cd current_a, cd switch_node_v) {
  const Contributor c = one_contributor(simple_scenario(), current_a, switch_node_v);
  const auto [v1, v2] = closed_form_ports(1e6, current_a, switch_node_v);
  const cd dm = (v1 - v2) / 2.0, cm = (v1 + v2) / 2.0;
  const double dm_share = std::norm(dm) / (std::norm(dm) + std::norm(cm));
  CHECK(c.dm_share == doctest::Approx(dm_share).epsilon(share_tolerance));
  CHECK(c.cm_share == doctest::Approx(1.0 - dm_share).epsilon(share_tolerance));
  CHECK(c.dm_dbuv == doctest::Approx(volts_to_dbuv(std::abs(dm))).epsilon(level_tolerance_db));
  CHECK(c.cm_dbuv == doctest::Approx(volts_to_dbuv(std::abs(cm))).epsilon(level_tolerance_db));
  CHECK(c.harmonic == 1);
  CHECK(c.source == "harmonic 1 of 1 MHz");
}

}  // namespace

TEST_CASE("mode shares against the closed-form CM and DM dividers (Paul's decomposition)") {
  SUBCASE("differential-mode source alone") { check_against_closed_form(cd(1e-3, 0.0), 0.0); }
  SUBCASE("common-mode source alone") { check_against_closed_form(0.0, cd(10.0, 0.0)); }
  SUBCASE("both sources") { check_against_closed_form(cd(0.0, 1e-3), cd(3.0, -2.0)); }
}

TEST_CASE("the controlling path follows the dominant mode") {
  const Scenario s = simple_scenario();
  const Contributor dm = one_contributor(s, cd(1.0, 0.0), 0.0);
  CHECK(dm.dm_share > 0.99);
  // 1 µF at 1 MHz is 0.16 Ω: the capacitance, not ESR or ESL (both 0), sets the divider.
  CHECK(dm.path ==
        "differential mode: input capacitance (1 µF) straight into the LISNs (no differential-mode "
        "filter stage)");
  const Contributor cm = one_contributor(s, 0.0, cd(10.0, 0.0));
  CHECK(cm.cm_share > 0.99);
  CHECK(cm.path ==
        "common mode: switch-node capacitance to earth (100 pF) straight into the LISNs (no "
        "common-mode filter stage)");
}

TEST_CASE("an unbalanced filter's mode conversion is named as such") {
  // An inductor in the positive line only, then Y capacitors to earth on the converter side: the
  // two lines no longer have equal impedances to earth, so part of the DM current returns as common
  // mode.
  const std::string y = "[[filter]]\nkind = \"y-capacitors\"\ncapacitance = \"47 nF\"\n";
  const std::string unbalanced =
      "[[filter]]\nkind = \"lc\"\ninductance = \"10 uH\"\ncapacitance = \"1 uF\"\n" + y;
  const Contributor c = one_contributor(simple_scenario(unbalanced, "0 pF"), cd(1.0, 0.0), 0.0);
  CHECK(c.dm_to_cm_fraction ==
        doctest::Approx(1.0).epsilon(share_tolerance));  // no CM source at all
  CHECK(c.cm_share > 0.1);
  CHECK(c.conversion ==
        "mode conversion by an unbalanced filter: filter 1 (lc), inductor in the positive line "
        "only turns the "
        "differential-mode source into 100 % of the common-mode power");
  // The same inductance in both lines: balanced, no common mode from the DM source.
  const std::string balanced =
      "[[filter]]\nkind = \"lc\"\ninductance = \"10 uH\"\ncapacitance = \"1 uF\"\nlines = "
      "\"both\"\n" +
      y;
  const Contributor b = one_contributor(simple_scenario(balanced, "0 pF"), cd(1.0, 0.0), 0.0);
  CHECK(b.cm_share < 1e-12);
  CHECK(b.conversion.empty());
}

TEST_CASE("predict fills the contributors of the five worst LISN-port readings") {
  const Scenario s = load_scenario(
      std::string(SPURCAST_SOURCE_DIR) + "/examples/greenhouse-buck.toml", locate_shipped_data());
  const Prediction p = predict(s);
  const auto worst = worst_frequencies(p, 5);
  REQUIRE(p.contributors.size() == worst.size());
  for (std::size_t i = 0; i < worst.size(); ++i) {
    CHECK(p.contributors[i].frequency_hz == doctest::Approx(worst[i].row.frequency_hz));
    CHECK(p.contributors[i].dm_share + p.contributors[i].cm_share ==
          doctest::Approx(1.0).epsilon(share_tolerance));
  }
  CHECK_THROWS_WITH_AS(
      contributors_at(s, *p.conducted, p.switch_node_v, p.input_current_a, {}, {1e6}, {}),
      "contributors: expected one bandwidth per frequency, found 0 for 1", Error);
}

TEST_CASE("contributors at a requested frequency against the closed-form CM and DM dividers") {
  // predict() with explain_at: the shares at 3 MHz (harmonic 3 of 1 MHz) must be those of Paul's
  // decomposition of the closed-form port voltages driven by the prediction's own source lines.
  const Scenario s = simple_scenario();
  PredictionOptions options;
  options.explain_at_hz = {3e6, 1.2e6};
  const Prediction p = predict(s, options);
  REQUIRE(p.contributors_requested.size() == 2);
  const Contributor& c = p.contributors_requested[0];
  CHECK(c.frequency_hz == doctest::Approx(3e6));
  CHECK(c.harmonic == 3);
  REQUIRE(p.input_current_a.harmonics.size() >= 3);
  REQUIRE(p.switch_node_v.harmonics.size() >= 3);
  const auto [v1, v2] =
      closed_form_ports(3e6, p.input_current_a.harmonics[2], p.switch_node_v.harmonics[2]);
  const cd dm = (v1 - v2) / 2.0, cm = (v1 + v2) / 2.0;
  const double dm_share = std::norm(dm) / (std::norm(dm) + std::norm(cm));
  CHECK(c.dm_share == doctest::Approx(dm_share).epsilon(share_tolerance));
  CHECK(c.cm_share == doctest::Approx(1.0 - dm_share).epsilon(share_tolerance));
  CHECK(c.dm_dbuv == doctest::Approx(volts_to_dbuv(std::abs(dm))).epsilon(level_tolerance_db));
  CHECK(c.cm_dbuv == doctest::Approx(volts_to_dbuv(std::abs(cm))).epsilon(level_tolerance_db));
  // 1.2 MHz has no line within the 9 kHz bandwidth: the nearest line, harmonic 1, is explained.
  CHECK(p.contributors_requested[1].harmonic == 1);
  CHECK(p.contributors_requested[1].frequency_hz == doctest::Approx(1.2e6));
}

TEST_CASE("a requested frequency outside the computed band is refused") {
  const Scenario s = simple_scenario();
  PredictionOptions options;
  options.explain_at_hz = {50e6};
  CHECK_THROWS_WITH_AS(static_cast<void>(predict(s, options)),
                       "explain-at: expected a frequency inside the computed band (band B 150 kHz "
                       "- 30 MHz), found 50 MHz",
                       Error);
  options.explain_at_hz = {100e3};
  CHECK_THROWS_WITH_AS(static_cast<void>(predict(s, options)),
                       "explain-at: expected a frequency inside the computed band (band B 150 kHz "
                       "- 30 MHz), found 100 kHz",
                       Error);
}
