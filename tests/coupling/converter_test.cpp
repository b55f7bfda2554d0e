// The converter topologies ([converter], docs/design.md §5): the [converter] reader and the
// flyback's paths across the isolation barrier. External check: the closed-form capacitive divider
// of the common-mode loop, written out by hand below (series and parallel impedances, Kirchhoff's
// laws), with the LISN's defined impedance 50 Ω ∥ (5 Ω + jω·50 µH) (docs/references.md §2.2 [D])
// and the two networks in parallel for a common-mode source (docs/references.md §2.3 [D]).
#include "core/coupling/converter.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <string>

#include "core/coupling/conducted.hpp"
#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;
using cd = std::complex<double>;

namespace {

const double pi = 3.14159265358979323846;
// Same circuit, solved by MNA and by the hand formula; the 1 F input capacitor (1e-6 Ω at 150 kHz
// against the LISNs' 25 Ω) is the only approximation: 1e-6 relative.
const double divider_rel_tol = 1e-6;
// The hand-computed figure in the comment is rounded to four digits.
const double hand_figure_tol_db = 0.01;

ConverterSpec read_converter(const std::string& text) {
  const auto table = parse_toml_text(text, "c.toml");
  TableReader reader(table, "c.toml", "converter");
  return read_converter_section(reader);
}

/// The common-mode set-up with the DM path short-circuited: input capacitor 1 F without ESR or
/// ESL, no switch-node capacitance to earth (only the flyback's paths), two ideal 50 µH LISNs.
CouplingSpec shorted_input() {
  CouplingSpec c;
  c.input_capacitance_f = 1.0;
  c.input_esr_ohm = 0.0;
  c.input_esl_h = 0.0;
  c.parasitic_capacitance_f = 0.0;
  return c;
}

/// |V_port / V_sw| of the loop: V_sw → C_iw → secondary; from the secondary the earth branch
/// (C_sec, then the two LISNs in parallel, Z_L/2, back to the primary return) in parallel with the
/// barrier (C_Y ∥ R_b) straight back to the primary return.
double divider(double f, double c_iw, double c_sec, double c_y) {
  const double w = 2.0 * pi * f;
  const cd j(0.0, 1.0);
  const cd z_lisn = 1.0 / (1.0 / 50.0 + 1.0 / (5.0 + j * w * 50e-6));
  const cd z_earth = 1.0 / (j * w * c_sec) + z_lisn / 2.0;
  const cd y_barrier = j * w * c_y + 1.0 / barrier_resistance_ohm;
  const cd z_barrier = 1.0 / y_barrier;
  const cd z_after = z_barrier * z_earth / (z_barrier + z_earth);
  const cd i_total = 1.0 / (1.0 / (j * w * c_iw) + z_after);
  const cd i_earth = i_total * z_barrier / (z_barrier + z_earth);
  return std::abs(i_earth * z_lisn / 2.0);
}

}  // namespace

TEST_CASE(
    "flyback: the common-mode level through the interwinding capacitance is the capacitive "
    "divider") {
  ConverterSpec flyback;
  flyback.topology = Topology::flyback;
  flyback.interwinding_capacitance_f = 20e-12;
  flyback.secondary_capacitance_f = 100e-12;
  const LisnSpec lisn;  // two ideal 50 µH networks
  const ConductedModel model(shorted_input(), {}, lisn, flyback);
  // Hand computation at 1 MHz: Z_L = 50 ∥ (5 + j314.16) = 48.65 + j7.72 Ω, Z_L/2 = 24.32 + j3.86 Ω;
  // 20 pF is −j7957.7 Ω and 100 pF −j1591.5 Ω; the series loop is 24.32 − j9545.3 Ω (100 MΩ across
  // the barrier changes nothing at four digits), so |V_port/V_sw| = 24.63/9545.3 = 2.580e-3
  // (−51.77 dB).
  const TransferFunctions at_1mhz = transfer_at(model, {1e6});
  CHECK(std::abs(20.0 * std::log10(std::abs(at_1mhz.port1_per_switch_node[0])) + 51.77) <=
        hand_figure_tol_db);
  const std::vector<double> f{150e3, 1e6, 5e6, 30e6};
  const TransferFunctions h = transfer_at(model, f);
  for (std::size_t n = 0; n < f.size(); ++n) {
    const double expected = divider(f[n], 20e-12, 100e-12, 0.0);
    CHECK(std::abs(std::abs(h.port1_per_switch_node[n]) - expected) <= divider_rel_tol * expected);
    CHECK(std::abs(std::abs(h.port2_per_switch_node[n]) - expected) <= divider_rel_tol * expected);
  }

  // A 1 nF Y capacitor across the barrier returns most of the current to the primary before it
  // reaches earth: the level falls by |Z_Y / (Z_Y + Z_earth)|, about 20 dB at 1 MHz.
  flyback.y_capacitance_f = 1e-9;
  const ConductedModel with_y(shorted_input(), {}, lisn, flyback);
  const TransferFunctions hy = transfer_at(with_y, f);
  for (std::size_t n = 0; n < f.size(); ++n) {
    const double expected = divider(f[n], 20e-12, 100e-12, 1e-9);
    CHECK(std::abs(std::abs(hy.port1_per_switch_node[n]) - expected) <= divider_rel_tol * expected);
  }
  CHECK(20.0 * std::log10(std::abs(at_1mhz.port1_per_switch_node[0]) /
                          std::abs(hy.port1_per_switch_node[1])) >
        19.0);
}

TEST_CASE("a buck, boost or boost-pfc has no barrier: the model is today's") {
  for (const Topology t : {Topology::buck, Topology::boost, Topology::boost_pfc}) {
    ConverterSpec converter;
    converter.topology = t;
    CouplingSpec coupling;
    const ConductedModel with(coupling, {}, LisnSpec{}, converter),
        without(coupling, {}, LisnSpec{});
    const TransferFunctions a = transfer_at(with, {150e3, 3e6}),
                            b = transfer_at(without, {150e3, 3e6});
    for (std::size_t n = 0; n < 2; ++n) {
      CHECK(a.port1_per_switch_node[n] == b.port1_per_switch_node[n]);
      CHECK(a.port1_per_input_current_ohm[n] == b.port1_per_input_current_ohm[n]);
    }
  }
}

TEST_CASE("[converter] reader: topology, its own keys, and the keys of another topology refused") {
  const ConverterSpec none = read_converter("");
  CHECK(none.topology == Topology::buck);
  CHECK(!none.inductor_ripple_a);
  const ConverterSpec boost = read_converter("topology = \"boost\"\ninductor_ripple = \"1.5 A\"\n");
  CHECK(boost.topology == Topology::boost);
  REQUIRE(boost.inductor_ripple_a);
  CHECK(*boost.inductor_ripple_a == doctest::Approx(1.5));
  const ConverterSpec flyback = read_converter(
      "topology = \"flyback\"\ninterwinding_capacitance = \"30 pF\"\nsecondary_capacitance = \"150 "
      "pF\"\n");
  CHECK(flyback.interwinding_capacitance_f == doctest::Approx(30e-12));
  CHECK(flyback.secondary_capacitance_f == doctest::Approx(150e-12));
  CHECK(flyback.y_capacitance_f == 0.0);

  CHECK_THROWS_WITH_AS(
      read_converter("topology = \"boost\"\ninductor_ripple = \"1 A\"\ny_capacitance = \"1 nF\"\n"),
      "c.toml:3:17: 'y_capacitance' belongs to topology flyback, not boost", Error);
  CHECK_THROWS_WITH_AS(read_converter("secondary_capacitance = \"1 nF\"\n"),
                       "c.toml:1:25: 'secondary_capacitance' belongs to topology flyback, not buck",
                       Error);
  CHECK_THROWS_WITH_AS(
      read_converter("topology = \"sepic\"\n"),
      "c.toml:1:12: expected one of buck, boost, boost-pfc, flyback or netlist, found \"sepic\"", Error);
  CHECK_THROWS_AS(read_converter("topology = \"boost-pfc\"\n"), Error);  // a boost needs its ripple
  CHECK_THROWS_AS(read_converter("topology = \"flyback\"\nsecondary_capacitance = \"1 nF\"\n"),
                  Error);
  CHECK_THROWS_WITH_AS(read_converter("topology = \"flyback\"\ninterwinding_capacitance = \"0 "
                                      "pF\"\nsecondary_capacitance = \"1 nF\"\n"),
                       "c.toml:2:28: expected a capacitance > 0, found 0 F", Error);
}

TEST_CASE("[converter] boost-pfc: mains_frequency (50 Hz by default) and switching_threshold (0 V)") {
  // 50 Hz: the mains frequency of most of the world (common practice).
  const ConverterSpec plain = read_converter("topology = \"boost-pfc\"\ninductor_ripple = \"1 A\"\n");
  CHECK(plain.mains.mains_frequency_hz == doctest::Approx(50.0));
  CHECK(plain.mains.switching_threshold_v == doctest::Approx(0.0));
  const ConverterSpec given = read_converter(
      "topology = \"boost-pfc\"\ninductor_ripple = \"1 A\"\nmains_frequency = \"60 Hz\"\nswitching_threshold = \"25 V\"\n");
  CHECK(given.mains.mains_frequency_hz == doctest::Approx(60.0));
  CHECK(given.mains.switching_threshold_v == doctest::Approx(25.0));
  CHECK_THROWS_WITH_AS(read_converter("topology = \"boost-pfc\"\ninductor_ripple = \"1 A\"\nmains_frequency = \"5 Hz\"\n"),
                       "c.toml:3:19: expected a mains frequency from 10 Hz to 1 kHz, found 5 Hz", Error);
  CHECK_THROWS_WITH_AS(read_converter("topology = \"flyback\"\ninterwinding_capacitance = \"30 pF\"\n"
                                      "secondary_capacitance = \"1 nF\"\nswitching_threshold = \"20 V\"\n"),
                       "c.toml:4:23: 'switching_threshold' belongs to topology boost-pfc, not flyback", Error);
}

TEST_CASE("[converter] boost-pfc: conduction continuous (default) or critical, which takes no inductor_ripple") {
  // Critical (transition-mode) conduction: the inductor current starts from zero in every cycle, so
  // its ripple is twice its mean (common practice), never a value of its own.
  CHECK(read_converter("topology = \"boost-pfc\"\ninductor_ripple = \"1 A\"\n").mains.conduction == Conduction::continuous);
  CHECK(read_converter("topology = \"boost-pfc\"\ninductor_ripple = \"1 A\"\nconduction = \"continuous\"\n").mains.conduction ==
        Conduction::continuous);
  const ConverterSpec critical = read_converter("topology = \"boost-pfc\"\nconduction = \"critical\"\n");
  CHECK(critical.mains.conduction == Conduction::critical);
  CHECK_FALSE(critical.inductor_ripple_a);
  CHECK(conduction_name(critical.mains.conduction) == "critical");
  CHECK_THROWS_WITH_AS(read_converter("topology = \"boost-pfc\"\nconduction = \"critical\"\ninductor_ripple = \"1 A\"\n"),
                       "c.toml:3:19: 'inductor_ripple' does not apply to conduction = \"critical\": the current's triangle "
                       "runs from zero to twice `current` in every cycle",
                       Error);
  CHECK_THROWS_WITH_AS(read_converter("topology = \"boost-pfc\"\ninductor_ripple = \"1 A\"\nconduction = \"boundary\"\n"),
                       "c.toml:3:14: expected one of continuous or critical, found \"boundary\"", Error);
  CHECK_THROWS_WITH_AS(read_converter("topology = \"buck\"\nconduction = \"critical\"\n"),
                       "c.toml:2:14: 'conduction' belongs to topology boost-pfc, not buck", Error);
}
