#pragma once
/// Line impedance stabilisation networks (artificial mains networks) as sub-circuits of a Network:
/// the CISPR 16-1-2 V-network, 50 Ω ∥ (50 µH + 5 Ω) as seen by the equipment, and the CISPR 25
/// artificial network, 50 Ω ∥ (5 µH + 1 Ω). One network per supply line, to the reference ground.
///
/// Two circuit levels:
///  - ideal: the impedance the standards define, seen from the EUT terminal; the receiver's 50 Ω is
///    connected straight to the terminal, so the port voltage is the terminal voltage. This is what a
///    lab reports after its voltage-division-factor correction (docs/references.md §2.3).
///  - practical: the schematic's parts, values from memory (docs/references.md §2.1 [M]) except the
///    50 µH network's supply-side capacitor (20 µF, a judgement that keeps the impedance within the
///    standard's tolerance down to 9 kHz, see lisn.cpp): the supply-side capacitor in series with the
///    damping resistor, the coupling capacitor into the 50 Ω receiver
///    and the 1 kΩ discharge resistor across the receiver port; the port then reads less than the
///    terminal at the low end (the voltage division factor).
///
/// A measured network: `[lisn] file = "lisn.s1p"` gives each line's impedance, EUT terminal to the
/// reference ground, from a Touchstone one-port (the impedance a lab measures at the EUT terminal
/// with the receiver port terminated in 50 Ω). It replaces the model's circuit: the port reads the
/// terminal voltage, as with the ideal circuit. Frequencies outside the file's range are an error
/// naming the file and its range, never an extrapolation.
#include <memory>
#include <string>
#include <vector>

#include "core/coupling/network.hpp"
#include "core/coupling/touchstone.hpp"
#include "core/input/toml_reader.hpp"

namespace spurcast {

enum class LisnModel {
  v_network_50uh,  ///< "v-network-50uH": CISPR 16-1-2, 50 Ω ∥ (50 µH + 5 Ω)
  v_network_5uh,   ///< "v-network-5uH": CISPR 25, 50 Ω ∥ (5 µH + 1 Ω)
};

enum class LisnCircuit {
  ideal,      ///< "ideal": the defined impedance, port = terminal
  practical,  ///< "practical": with coupling capacitor, supply-side capacitor and 1 kΩ discharge resistor
};

/// The [lisn] section of a scenario.
struct LisnSpec {
  LisnModel model = LisnModel::v_network_50uh;
  /// 2: one network per supply line (the usual set-up); 1: a single network on the positive line,
  /// the return bonded to the reference ground at the equipment.
  int lines = 2;
  LisnCircuit circuit = LisnCircuit::ideal;
  /// `file` as given in the scenario ("" when the model's circuit is used).
  std::string file;
  /// The measured one-port impedance of each network (nullptr: the model's circuit).
  std::shared_ptr<const TouchstoneData> measured;
};

/// Reads [lisn]: model = "v-network-50uH" | "v-network-5uH" (default the first), lines = 1 | 2
/// (default 2), circuit = "ideal" | "practical" (default "ideal"), file = a Touchstone .s1p, relative
/// to the scenario file's folder (the measured impedance of each network; `circuit` is then refused,
/// "'circuit' does not apply to a measured network (file)"; `model` still names the standard the
/// network is built to). Rejects unknown keys.
[[nodiscard]] LisnSpec read_lisn_section(TableReader& reader);

/// "v-network-50uH" / "v-network-5uH".
[[nodiscard]] std::string lisn_model_name(LisnModel model);

/// Part values of one network [Ω, H, F]. For the ideal circuit the capacitors are not used.
struct LisnParts {
  double inductance_h = 0.0;            ///< series inductor, EUT terminal to supply side
  double damping_resistance_ohm = 0.0;  ///< supply side to ground (5 Ω / 1 Ω)
  double supply_capacitance_f = 0.0;    ///< in series with the damping resistor (practical only)
  double coupling_capacitance_f = 0.0;  ///< EUT terminal to receiver port (practical only)
  double discharge_resistance_ohm = 0.0;  ///< across the receiver port (practical only)
  double receiver_resistance_ohm = 50.0;  ///< the measuring receiver's input
};

/// The part values used for `model` (see lisn.cpp for each value's source).
[[nodiscard]] LisnParts lisn_parts(LisnModel model);

/// Nodes of one network placed in a Network.
struct LisnNodes {
  NodeId terminal = 0;  ///< where the EUT's supply line connects
  NodeId port = 0;      ///< the receiver port (the node across the 50 Ω receiver input)
  ElementId receiver = -1;  ///< the 50 Ω receiver resistor (its current × 50 Ω = port voltage)
};

/// Adds one network from `terminal` to the ground. Internal nodes are named `prefix` + ".supply",
/// ".port" (practical) so several networks can share a Network.
LisnNodes add_lisn(Network& network, NodeId terminal, LisnModel model, LisnCircuit circuit,
                   const std::string& prefix);

/// Adds one measured network from `terminal` to the ground: the Touchstone one-port `measured`,
/// named `prefix` + ".measured"; the port is the terminal (as for the ideal circuit) and there is no
/// separate receiver element (LisnNodes::receiver is −1).
LisnNodes add_measured_lisn(Network& network, NodeId terminal, std::shared_ptr<const TouchstoneData> measured,
                            const std::string& prefix);

/// Adds the network `spec` describes (measured when spec.measured is set, else add_lisn).
LisnNodes add_lisn(Network& network, NodeId terminal, const LisnSpec& spec, const std::string& prefix);

/// The impedance the standard defines for `model`, closed form: Z = R_rx ∥ (R_d + jωL)
/// (docs/references.md §2.2 [D]). For the tests' cross-check of the MNA sub-circuit.
[[nodiscard]] std::complex<double> lisn_nominal_impedance(LisnModel model, double frequency_hz);

}  // namespace spurcast
