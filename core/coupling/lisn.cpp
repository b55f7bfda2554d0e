#include "core/coupling/lisn.hpp"

namespace spurcast {

std::string lisn_model_name(LisnModel model) {
  return model == LisnModel::v_network_50uh ? "v-network-50uH" : "v-network-5uH";
}

LisnSpec read_lisn_section(TableReader& reader) {
  LisnSpec spec;
  if (auto model = reader.optional_choice("model", {"v-network-50uH", "v-network-5uH"})) {
    spec.model = *model == "v-network-50uH" ? LisnModel::v_network_50uh : LisnModel::v_network_5uh;
  }
  if (auto lines = reader.optional_integer("lines")) {
    if (*lines != 1 && *lines != 2) {
      reader.fail("lines", "expected 1 or 2 supply lines, found " + std::to_string(*lines));
    }
    spec.lines = static_cast<int>(*lines);
  }
  if (auto circuit = reader.optional_choice("circuit", {"ideal", "practical"})) {
    spec.circuit = *circuit == "ideal" ? LisnCircuit::ideal : LisnCircuit::practical;
  }
  if (reader.has("file")) {
    if (reader.has("circuit")) reader.fail("circuit", "'circuit' does not apply to a measured network (file)");
    spec.measured = read_touchstone_file(reader, "file", 1, spec.file);
  }
  reader.finish({"model", "lines", "circuit", "file"});
  return spec;
}

LisnParts lisn_parts(LisnModel model) {
  LisnParts parts;
  if (model == LisnModel::v_network_50uh) {
    // CISPR 16-1-2 V-network 50 Ω ∥ (50 µH + 5 Ω) (docs/references.md §2.1). The coupling capacitor
    // and discharge resistor are from memory (docs/references.md §2.1 [M]: coupling 0.1 µF or 0.25 µF,
    // discharge 1 kΩ). The supply-side capacitor is a judgement: the drawings' 1 µF..8 µF [M] do not
    // keep the network within the standard's ±20 % / ±11.5° (docs/references.md §2.2 [M]) at the low
    // end of band A: 1 µF resonates with the 50 µH near 22.5 kHz (13.3 Ω at −69° at 9 kHz instead of
    // 5.2 Ω at +27°), 8 µF is 22° off at 9 kHz and in tolerance only above 13.5 kHz. 20 µF (0.88 Ω
    // at 9 kHz beside the 5 Ω) keeps it within 6 % and 8.8° from 9 kHz to 30 MHz
    // (tests/coupling/lisn_test.cpp checks it at the frequencies of the §2.2 table).
    parts.inductance_h = 50e-6;
    parts.damping_resistance_ohm = 5.0;
    parts.supply_capacitance_f = 20e-6;     // judgement (see above)
    parts.coupling_capacitance_f = 0.25e-6; // from memory
    parts.discharge_resistance_ohm = 1e3;   // from memory
  } else {
    // CISPR 25 artificial network (5 µH + 1 Ω) ∥ 50 Ω (docs/references.md §2.1 [F]); supply side 1 µF and
    // coupling 0.1 µF from memory (docs/references.md §2.1 [M]); the 1 kΩ discharge resistor from memory.
    parts.inductance_h = 5e-6;
    parts.damping_resistance_ohm = 1.0;
    parts.supply_capacitance_f = 1e-6;     // from memory
    parts.coupling_capacitance_f = 0.1e-6; // from memory
    parts.discharge_resistance_ohm = 1e3;  // from memory
  }
  parts.receiver_resistance_ohm = 50.0;
  return parts;
}

LisnNodes add_lisn(Network& network, NodeId terminal, LisnModel model, LisnCircuit circuit,
                   const std::string& prefix) {
  const LisnParts parts = lisn_parts(model);
  LisnNodes nodes;
  nodes.terminal = terminal;
  const NodeId supply = network.node(prefix + ".supply");
  network.add_inductor(terminal, supply, parts.inductance_h, 0.0, prefix + ".L");
  if (circuit == LisnCircuit::ideal) {
    // The defined impedance: the supply side is an RF short behind the damping resistor, and the
    // receiver's 50 Ω sits on the terminal itself (coupling capacitor taken as a short).
    network.add_resistor(supply, Network::ground, parts.damping_resistance_ohm, prefix + ".Rd");
    nodes.port = terminal;
    nodes.receiver = network.add_resistor(terminal, Network::ground, parts.receiver_resistance_ohm, prefix + ".receiver");
    return nodes;
  }
  // Practical: damping resistor in series with the supply-side capacitor; the supply itself reaches
  // the supply node through the network's mains-side decoupling, modelled as a 1 H DC return
  // (> 56 kΩ at 9 kHz, so it does not change the impedance in the bands we compute; it keeps the
  // DC path that the real supply provides). Simplification: the further decoupling stages of the
  // standard's schematic and the supply's own impedance are left out.
  const NodeId damping = network.node(prefix + ".damping");
  network.add_resistor(supply, damping, parts.damping_resistance_ohm, prefix + ".Rd");
  network.add_capacitor(damping, Network::ground, parts.supply_capacitance_f, 0.0, 0.0, prefix + ".Csupply");
  network.add_inductor(supply, Network::ground, 1.0, 0.0, prefix + ".supply-return");
  const NodeId port = network.node(prefix + ".port");
  network.add_capacitor(terminal, port, parts.coupling_capacitance_f, 0.0, 0.0, prefix + ".Ccoupling");
  network.add_resistor(port, Network::ground, parts.discharge_resistance_ohm, prefix + ".Rdischarge");
  nodes.port = port;
  nodes.receiver = network.add_resistor(port, Network::ground, parts.receiver_resistance_ohm, prefix + ".receiver");
  return nodes;
}

LisnNodes add_measured_lisn(Network& network, NodeId terminal, std::shared_ptr<const TouchstoneData> measured,
                            const std::string& prefix) {
  LisnNodes nodes;
  nodes.terminal = terminal;
  nodes.port = terminal;
  nodes.receiver = -1;
  network.add_tabulated(terminal, Network::ground, std::move(measured), prefix + ".measured");
  return nodes;
}

LisnNodes add_lisn(Network& network, NodeId terminal, const LisnSpec& spec, const std::string& prefix) {
  if (spec.measured) return add_measured_lisn(network, terminal, spec.measured, prefix);
  return add_lisn(network, terminal, spec.model, spec.circuit, prefix);
}

std::complex<double> lisn_nominal_impedance(LisnModel model, double frequency_hz) {
  const LisnParts parts = lisn_parts(model);
  const std::complex<double> series(parts.damping_resistance_ohm, 2.0 * M_PI * frequency_hz * parts.inductance_h);
  return parts.receiver_resistance_ohm * series / (parts.receiver_resistance_ohm + series);
}

}  // namespace spurcast
