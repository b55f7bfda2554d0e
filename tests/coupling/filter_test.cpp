// Filter stages and their [[filter]] tables. External checks: the common-mode choke's mode
// impedances, CM jω(L + M) per winding and DM 2·jω(L − M) for the loop, and the leakage inductance
// measured with the other winding shorted, L·(1 − k²) (two-winding transformer relations, common
// practice). A netlist stage is the slow twin of the built-in kinds (same parts, same responses).
#include <doctest/doctest.h>

#include <cmath>
#include <complex>

#include "core/input/error.hpp"
#include "core/coupling/filter.hpp"
#include "core/coupling/network.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;
using cd = std::complex<double>;

namespace {

const double rel_tol = 1e-9;
const double pi = 3.14159265358979323846;

FilterStage read_stage(const std::string& text) {
  const auto table = parse_toml_text(text, "s.toml");
  TableReader reader(table, "s.toml", "filter 1");
  return read_filter_stage(reader);
}

/// The stage between a 50 Ω source on each line (LISN side) and a 1 Ω load on each line to ground
/// plus a 10 Ω load across the lines (converter side); responses of the four port voltages to a DM
/// and a CM drive.
Transfer drive(const FilterStage& stage, const std::vector<double>& f) {
  Network net;
  const NodeId sp = net.node("src+"), sn = net.node("src-"), ip = net.node("in+"), in = net.node("in-");
  net.add_voltage_source(sp, Network::ground, "dm+");
  net.add_voltage_source(sn, Network::ground, "dm-");
  net.add_resistor(sp, ip, 50.0);
  net.add_resistor(sn, in, 50.0);
  const LinePair out = add_filter_stage(net, stage, LinePair{ip, in}, "stage");
  net.add_resistor(out.positive, Network::ground, 1.0);
  net.add_resistor(out.negative, Network::ground, 1.0);
  net.add_resistor(out.positive, out.negative, 10.0);
  const NetworkSolver solver(net);
  return solver.transfer(f, {Probe::voltage(ip), Probe::voltage(in), Probe::voltage(out.positive),
                             Probe::voltage(out.negative)});
}

void check_same(const Transfer& a, const Transfer& b) {
  REQUIRE(a.values.size() == b.values.size());
  for (std::size_t i = 0; i < a.values.size(); ++i) {
    CHECK(std::abs(a.values[i] - b.values[i]) <= rel_tol * std::max(std::abs(b.values[i]), 1e-12));
  }
}

}  // namespace

TEST_CASE("lc stage from TOML equals its netlist twin") {
  const FilterStage lc = read_stage(
      "kind = \"lc\"\ninductance = \"10 uH\"\ninductor_resistance = \"20 mOhm\"\ncapacitance = \"22 uF\"\n"
      "capacitor_esr = \"5 mOhm\"\ncapacitor_esl = \"2 nH\"\nlines = \"both\"\n");
  CHECK(lc.kind == FilterKind::lc);
  CHECK(lc.lines == FilterLines::both);
  CHECK(lc.inductance_h == doctest::Approx(10e-6));
  CHECK(lc.converter_side_capacitance_f == doctest::Approx(22e-6));
  const FilterStage twin = read_stage(
      "kind = \"netlist\"\nelements = [\n"
      "  { type = \"L\", from = \"in+\", to = \"out+\", value = \"10 uH\", resistance = \"20 mOhm\" },\n"
      "  { type = \"L\", from = \"in-\", to = \"out-\", value = \"10 uH\", resistance = \"20 mOhm\" },\n"
      "  { type = \"C\", from = \"out+\", to = \"out-\", value = \"22 uF\", esr = \"5 mOhm\", esl = \"2 nH\" },\n]\n");
  const std::vector<double> f = {150e3, 1e6, 30e6};
  check_same(drive(lc, f), drive(twin, f));
}

TEST_CASE("pi stage and y-capacitors equal their netlist twins (pass-through ports)") {
  const FilterStage pi_stage = read_stage(
      "kind = \"pi\"\ninductance = \"4.7 uH\"\nlisn_side_capacitance = \"1 uF\"\n"
      "converter_side_capacitance = \"10 uF\"\ncapacitor_esr = \"10 mOhm\"\n");
  CHECK(pi_stage.lines == FilterLines::positive);
  const FilterStage pi_twin = read_stage(
      "kind = \"netlist\"\nelements = [\n"
      "  { type = \"C\", from = \"in+\", to = \"in-\", value = \"1 uF\", esr = \"10 mOhm\" },\n"
      "  { type = \"L\", from = \"in+\", to = \"out+\", value = \"4.7 uH\" },\n"
      "  { type = \"C\", from = \"out+\", to = \"in-\", value = \"10 uF\", esr = \"10 mOhm\" },\n]\n");
  const std::vector<double> f = {150e3, 2e6, 30e6};
  check_same(drive(pi_stage, f), drive(pi_twin, f));

  const FilterStage y = read_stage("kind = \"y-capacitors\"\ncapacitance = \"4.7 nF\"\n");
  CHECK(y.lines == FilterLines::both);
  const FilterStage y_twin = read_stage(
      "kind = \"netlist\"\nelements = [\n"
      "  { type = \"C\", from = \"in+\", to = \"ground\", value = \"4.7 nF\" },\n"
      "  { type = \"C\", from = \"in-\", to = \"ground\", value = \"4.7 nF\" },\n]\n");
  check_same(drive(y, f), drive(y_twin, f));
}

TEST_CASE("common-mode choke: CM jω(L + M), DM 2jω(L − M); leakage L·(1 − k²) (common practice)") {
  const FilterStage choke = read_stage(
      "kind = \"common-mode-choke\"\ninductance = \"1 mH\"\nleakage_inductance = \"10 uH\"\n"
      // The ideal windings: these relations hold for the inductances alone (parasitics default on).
      "winding_capacitance = 0\ncore_loss_resistance = \"none\"\ninterwinding_capacitance = 0\n");
  const double k = std::sqrt(1.0 - 10e-6 / 1e-3);
  CHECK(choke.coupling == doctest::Approx(k).epsilon(1e-12));
  const double l = 1e-3, m = k * l, r_load = 1e-3;
  const double f = 100e3, w = 2.0 * pi * f;
  Network net;
  const NodeId ip = net.node("in+"), in = net.node("in-");
  const LinePair out = add_filter_stage(net, choke, LinePair{ip, in}, "choke");
  net.add_resistor(out.positive, Network::ground, r_load);
  net.add_resistor(out.negative, Network::ground, r_load);
  // Source 0, 1: 1 A into each input (CM); source 2: 1 A around the loop (DM).
  net.add_current_source(Network::ground, ip);
  net.add_current_source(Network::ground, in);
  net.add_current_source(in, ip);
  const NetworkSolver solver(net);
  const Transfer t = solver.transfer({f}, {Probe::voltage(ip), Probe::voltage(ip, in)});
  const cd v_cm = t.at(0, 0, 0) + t.at(0, 0, 1);
  const cd expected_cm = cd(r_load, w * (l + m));
  CHECK(std::abs(v_cm - expected_cm) <= rel_tol * std::abs(expected_cm));
  const cd v_dm = t.at(0, 1, 2);
  const cd expected_dm = cd(2.0 * r_load, 2.0 * w * (l - m));
  CHECK(std::abs(v_dm - expected_dm) <= 1e-6 * std::abs(expected_dm));  // L − M is a difference of near-equals
}

TEST_CASE("[[filter]] reader: exact error text") {
  CHECK_THROWS_WITH_AS((void)read_stage("kind = \"lc\"\ninductanse = \"10 uH\"\ncapacitance = \"1 uF\"\n"),
                       "s.toml:2:1: unknown key 'inductanse' in [filter 1]; did you mean 'inductance'?", Error);
  CHECK_THROWS_WITH_AS((void)read_stage("kind = \"lc\"\ncapacitance = \"1 uF\"\n"),
                       "s.toml:1:1: missing key 'inductance' in [filter 1] (expected an inductance)", Error);
  CHECK_THROWS_WITH_AS((void)read_stage("kind = \"common-mode-choke\"\ninductance = \"1 mH\"\ncoupling = 1.0\n"),
                       "s.toml:3:12: expected a coupling factor in [0, 1), found 1", Error);
  CHECK_THROWS_WITH_AS((void)read_stage("kind = \"lc\"\ninductance = \"-1 uH\"\ncapacitance = \"1 uF\"\n"),
                       "s.toml:2:14: expected an inductance > 0, found -1 \xC2\xB5H", Error);
  CHECK_THROWS_WITH_AS((void)read_stage("kind = \"ladder\"\n"),
                       "s.toml:1:8: expected one of lc, pi, common-mode-choke, y-capacitors, netlist, touchstone or spice, found "
                       "\"ladder\"",
                       Error);
  CHECK_THROWS_WITH_AS((void)read_stage("kind = \"netlist\"\nelements = [ { type = \"X\", from = \"in+\", to = \"out+\" } ]\n"),
                       "s.toml:2:23: expected one of R, L, C, K or touchstone, found \"X\"; did you mean 'R'?", Error);
  CHECK_THROWS_WITH_AS(
      (void)read_stage("kind = \"netlist\"\nelements = [ { type = \"R\", from = \"in+\", to = \"out+\", valeu = 1 } ]\n"),
      "s.toml:2:55: unknown key 'valeu' in [filter 1 element 1]; did you mean 'value'?", Error);
}
