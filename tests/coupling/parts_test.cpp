// Parts with their parasitics: winding capacitance, core-loss resistance, capacitor ESR and ESL.
// External checks: the self-resonance 1/(2π√(L·C)) of an inductor with its winding capacitance and
// the +20 dB/decade rise of a series part's transfer above it (closed form of L ∥ C); the Würth
// Elektronik input-filter example (docs/references.md §9.3: 34.7 dB at 350 kHz, 19.7 dB at 1 MHz);
// a common-mode choke resonating with the switch-node capacitance at 1/(2π√(L_cm·C)) with
// Q = √(L_cm/C)/R (series RLC, common practice), R the two LISNs in parallel plus the core loss
// converted to series at resonance, X0²/R_p (series–parallel conversion, common practice).
#include <doctest/doctest.h>

#include <cmath>
#include <complex>

#include "core/coupling/conducted.hpp"
#include "core/coupling/filter.hpp"
#include "core/coupling/lisn.hpp"
#include "core/coupling/network.hpp"
#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;
using cd = std::complex<double>;

namespace {

const double pi = 3.14159265358979323846;
const double rel_tol = 1e-9;       // MNA against a closed form of the same circuit
const double slope_tol_db = 0.01;  // asymptotic slope, far above resonance
const double wurth_tol_db = 0.05;  // the article's figures are given to 0.1 dB
const double frequency_rel_tol =
    0.01;  // resonance found against its closed form (LISN reactance shifts it)
const double q_rel_tol = 0.05;  // Q against the series-RLC closed form

FilterStage read_stage(const std::string& text) {
  const auto table = parse_toml_text(text, "s.toml");
  TableReader reader(table, "s.toml", "filter 1");
  return read_filter_stage(reader);
}

/// |V(load)| per volt for the stage in series between a 1 V source (LISN side) and `load_ohm` to
/// ground (converter side), on the positive line.
std::vector<cd> series_transfer(const FilterStage& stage, const std::vector<double>& f,
                                double load_ohm) {
  Network net;
  const NodeId in = net.node("in");
  net.add_voltage_source(in, Network::ground, "drive");
  const LinePair out = add_filter_stage(net, stage, LinePair{in, Network::ground}, "stage");
  net.add_resistor(out.positive, Network::ground, load_ohm);
  const Transfer t = NetworkSolver(net).transfer(f, {Probe::voltage(out.positive)});
  std::vector<cd> h;
  for (std::size_t i = 0; i < f.size(); ++i) h.push_back(t.at(i, 0, 0));
  return h;
}

}  // namespace

TEST_CASE(
    "winding capacitance: self-resonance 1/(2π√(LC)) and +20 dB/decade above it (closed form)") {
  const double l = 10e-6, c = 10e-12, r_core = 1e6, load = 0.01;
  const FilterStage stage = read_stage(
      "kind = \"netlist\"\nelements = [ { type = \"L\", from = \"in+\", to = \"out+\", value = "
      "\"10 uH\", "
      "winding_capacitance = \"10 pF\", core_loss_resistance = \"1 MOhm\" } ]\n");
  const double f0 = 1.0 / (2.0 * pi * std::sqrt(l * c));
  // Part impedance Z = 1/(1/(jωL) + jωC + 1/R): at f0 the reactances cancel and Z = R exactly.
  const std::vector<double> f{0.001 * f0, 0.01 * f0, f0, 10.0 * f0, 100.0 * f0, 1000.0 * f0};
  const std::vector<cd> h = series_transfer(stage, f, load);
  for (std::size_t i = 0; i < f.size(); ++i) {
    const double w = 2.0 * pi * f[i];
    const cd z = 1.0 / (1.0 / cd(0.0, w * l) + cd(0.0, w * c) + 1.0 / r_core);
    const cd expected = load / (load + z);
    CHECK(std::abs(h[i] - expected) <= rel_tol * std::abs(expected));
  }
  CHECK(std::abs(load / h[2] - load - r_core) <= 1e-6 * r_core);  // Z(f0) = R, real
  // Below f0 the inductor: −20 dB/decade; above, the capacitance: +20 dB/decade.
  CHECK(std::abs(20.0 * std::log10(std::abs(h[1] / h[0])) + 20.0) <= slope_tol_db);
  CHECK(std::abs(20.0 * std::log10(std::abs(h[5] / h[4])) - 20.0) <= slope_tol_db);
}

TEST_CASE(
    "Würth Elektronik CL input filter: 34.7 dB at 350 kHz, 19.7 dB at 1 MHz (docs/references.md "
    "§9.3)") {
  // The capacitor faces the 50 Ω load (LISN side), the inductor the noise source (converter side).
  auto insertion_loss_db = [](const std::string& c1, const std::string& l1, double frequency_hz,
                              bool bulk) {
    const FilterStage stage = read_stage(
        "kind = \"netlist\"\nelements = [\n"
        "  { type = \"C\", from = \"in+\", to = \"in-\", value = \"" +
        c1 +
        "\", esr = 0, esl = 0 },\n"
        "  { type = \"L\", from = \"in+\", to = \"out+\", value = \"" +
        l1 + "\", winding_capacitance = 0, core_loss_resistance = \"none\" },\n]\n");
    auto load_voltage = [&](const FilterStage* filter) {
      Network net;
      const NodeId emf = net.node("emf"), load = net.node("load");
      net.add_voltage_source(emf, Network::ground, "noise");
      net.add_resistor(load, Network::ground, 50.0);
      const NodeId source_side =
          filter ? add_filter_stage(net, *filter, LinePair{load, Network::ground}, "f").positive
                 : load;
      // The source impedance: the 220 µF / 100 mΩ bulk capacitor, or 0.1 Ω.
      if (bulk) {
        net.add_capacitor(emf, source_side, 220e-6, 0.1, 0.0, "bulk");
      } else {
        net.add_resistor(emf, source_side, 0.1, "source");
      }
      return NetworkSolver(net).transfer({frequency_hz}, {Probe::voltage(load)}).at(0, 0, 0);
    };
    return 20.0 * std::log10(std::abs(load_voltage(nullptr) / load_voltage(&stage)));
  };
  CHECK(std::abs(insertion_loss_db("47 uF", "240 nH", 350e3, true) - 34.7) <= wurth_tol_db);
  CHECK(std::abs(insertion_loss_db("4.7 uF", "55 nH", 1e6, false) - 19.7) <= wurth_tol_db);
}

TEST_CASE("parasitics: stated defaults, explicit ideal parts, exact error text") {
  const FilterStage lc =
      read_stage("kind = \"lc\"\ninductance = \"10 uH\"\ncapacitance = \"1 uF\"\n");
  CHECK(lc.capacitor_esr_ohm == default_capacitor_esr_ohm);
  CHECK(lc.capacitor_esl_h == default_capacitor_esl_h);
  CHECK(lc.winding_capacitance_f == default_inductor_winding_capacitance_f);
  CHECK(lc.core_loss_resistance_ohm == default_core_loss_resistance_ohm);
  for (const char* key :
       {"capacitor_esr", "capacitor_esl", "winding_capacitance", "core_loss_resistance"}) {
    CHECK(is_defaulted(lc.defaulted, key));
  }
  const FilterStage ideal = read_stage(
      "kind = \"common-mode-choke\"\ninductance = \"1 mH\"\nwinding_capacitance = "
      "0\ncore_loss_resistance = \"none\"\n");
  CHECK(ideal.winding_capacitance_f == 0.0);
  CHECK(std::isinf(ideal.core_loss_resistance_ohm));
  CHECK(ideal.interwinding_capacitance_f == default_choke_interwinding_capacitance_f);
  CHECK(ideal.defaulted == std::vector<std::string>{"interwinding_capacitance"});
  CHECK_THROWS_WITH_AS((void)read_stage("kind = \"lc\"\ninductance = \"10 uH\"\ncapacitance = \"1 "
                                        "uF\"\ncore_loss_resistance = \"0 Ohm\"\n"),
                       "s.toml:4:24: expected a resistance > 0, found 0 \xCE\xA9", Error);
  CHECK_THROWS_WITH_AS((void)read_stage("kind = \"pi\"\ninductance = \"10 uH\"\ncapacitance = \"1 "
                                        "uF\"\nwinding_capacitance = \"-2 pF\"\n"),
                       "s.toml:4:23: expected a capacitance >= 0, found -2 pF", Error);
  CHECK_THROWS_WITH_AS(
      (void)read_stage(
          "kind = \"y-capacitors\"\ncapacitance = \"1 nF\"\nwinding_capacitance = \"2 pF\"\n"),
      "s.toml:3:1: unknown key 'winding_capacitance' in [filter 1]", Error);
}

TEST_CASE(
    "choke resonating with the switch-node capacitance: frequency, Q and parts (series RLC closed "
    "form)") {
  const double l = 10e-3, k = 0.99, c = 40e-12;
  const double l_cm = 0.5 * l * (1.0 + k);  // both windings in parallel for common mode: (L + M)/2
  const double f0 = 1.0 / (2.0 * pi * std::sqrt(l_cm * c));
  const double x0 = std::sqrt(l_cm / c);
  CouplingSpec coupling;
  coupling.parasitic_capacitance_f = c;
  FilterStage choke;
  choke.kind = FilterKind::common_mode_choke;
  choke.lines = FilterLines::both;
  choke.inductance_h = l;
  choke.coupling = k;
  const LisnSpec
      lisn;  // two ideal V-networks: 50 Ω ∥ (50 µH + 5 Ω) each, in parallel for common mode
  const double r_lisn = 0.5 * lisn_nominal_impedance(lisn.model, f0).real();

  const std::vector<Resonance> ideal =
      find_resonances(ConductedModel(coupling, {choke}, lisn), 150e3, 30e6, resonance_note_min_q);
  REQUIRE(ideal.size() == 1);
  CHECK(std::abs(ideal[0].frequency_hz / f0 - 1.0) <= frequency_rel_tol);
  CHECK(std::abs(ideal[0].q / (x0 / r_lisn) - 1.0) <= q_rel_tol);
  CHECK(ideal[0].source == ConductedModel::source_switch_node);
  CHECK(ideal[0].parts == std::vector<std::string>{"filter 1 choke", "parasitic capacitance"});
  const std::string note = resonance_note(ideal[0]);
  CHECK(note.rfind("resonance at 25", 0) == 0);
  CHECK(
      note.find(
          "common-mode path (switch-node drive), made by filter 1 choke, parasitic capacitance") !=
      std::string::npos);

  // A core-loss resistance across each winding: 1 MΩ in parallel for common mode, X0²/R_p in
  // series.
  choke.core_loss_resistance_ohm = 2e6;
  const std::vector<Resonance> lossy =
      find_resonances(ConductedModel(coupling, {choke}, lisn), 150e3, 30e6, resonance_note_min_q);
  REQUIRE(lossy.size() == 1);
  CHECK(std::abs(lossy[0].q / (x0 / (r_lisn + x0 * x0 / 1e6)) - 1.0) <= q_rel_tol);

  // Outside the computed range, or below the Q threshold: no note.
  CHECK(find_resonances(ConductedModel(coupling, {choke}, lisn), 1e6, 30e6, resonance_note_min_q)
            .empty());
  choke.core_loss_resistance_ohm = 200.0;
  CHECK(find_resonances(ConductedModel(coupling, {choke}, lisn), 150e3, 30e6, resonance_note_min_q)
            .empty());
}
