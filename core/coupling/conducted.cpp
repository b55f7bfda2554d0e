#include "core/coupling/conducted.hpp"
#include "core/coupling/transfer_grid.hpp"


#include <fftw3.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <memory>
#include <mutex>
#include <numeric>

#include "core/input/error.hpp"
#include "core/source/fftw_lock.hpp"
#include "core/input/units.hpp"

namespace spurcast {

using cd = std::complex<double>;

CouplingSpec read_coupling_section(TableReader& reader) {
  reader.finish({"input_capacitance", "input_esr", "input_esl", "parasitic_capacitance"});
  CouplingSpec spec;
  auto read = [&](std::string_view key, Dimension dimension, double fallback, bool strictly_positive) {
    const double value = reader.quantity_or(key, dimension, fallback);
    if (!(std::isfinite(value) && (strictly_positive ? value > 0.0 : value >= 0.0))) {
      reader.fail(key, "expected " + dimension_name(dimension) + (strictly_positive ? " > 0" : " >= 0") +
                           ", found " + format_quantity(value, dimension));
    }
    return value;
  };
  spec.input_capacitance_f = read("input_capacitance", Dimension::capacitance, spec.input_capacitance_f, true);
  spec.input_esr_ohm = read("input_esr", Dimension::resistance, spec.input_esr_ohm, false);
  spec.input_esl_h = read("input_esl", Dimension::inductance, spec.input_esl_h, false);
  spec.parasitic_capacitance_f =
      read("parasitic_capacitance", Dimension::capacitance, spec.parasitic_capacitance_f, false);
  return spec;
}

namespace {

struct Built {
  Network network;
  std::vector<Probe> probes;
  Probe converter_terminals;  ///< V(conv+) − V(conv−)
};

Built build_network(const CouplingSpec& coupling, const std::vector<FilterStage>& filters, const LisnSpec& lisn,
                    const ConverterSpec& converter) {
  Built built;
  Network& net = built.network;
  // EUT-side line nodes and the LISN terminals; a 0 V source between them is the ammeter of the
  // line current (LISN → equipment), the usual SPICE device.
  const NodeId line1 = net.node("line1");
  const NodeId line2 = net.node("line2");
  const NodeId terminal1 = net.node("lisn1");
  const LisnNodes lisn1 = add_lisn(net, terminal1, lisn, "lisn1");
  LisnNodes lisn2;
  if (lisn.lines == 2) lisn2 = add_lisn(net, net.node("lisn2"), lisn, "lisn2");

  LinePair side{line1, line2};
  for (std::size_t i = 0; i < filters.size(); ++i) {
    side = add_filter_stage(net, filters[i], side, "filter" + std::to_string(i + 1));
  }
  if (converter.topology == Topology::netlist) {
    // The user's subcircuit (converter.hpp): pins 1, 2 on the filter side, the switching cell
    // between pins 3 and 4, the switch-node source from its node 'sw' to pin 4. Sources in the
    // order of the templates: 0 the input current, 1 the switch node.
    const LinePair cell = add_filter_stage(net, *converter.netlist, side, "converter");
    net.set_origin(converter.where);
    net.add_current_source(cell.positive, cell.negative, "input current");
    net.add_voltage_source(net.node("converter.n:sw"), cell.negative, "switch node");
    net.set_origin({});
  } else {
  const NodeId converter_positive = side.positive;
  const NodeId converter_negative = side.negative;
  net.add_capacitor(converter_positive, converter_negative, coupling.input_capacitance_f, coupling.input_esr_ohm,
                    coupling.input_esl_h, "input capacitor");
  built.converter_terminals = Probe::voltage(converter_positive, converter_negative);
  // Source 0: the pulsed input current, drawn from conv+ by the switch and returned into conv−.
  net.add_current_source(converter_positive, converter_negative, "input current");
  // Source 1: the switch-node voltage referred to conv−, driving the parasitic capacitance to ground.
  const NodeId switch_node = net.node("switch node");
  net.add_voltage_source(switch_node, converter_negative, "switch node");
  if (coupling.parasitic_capacitance_f > 0.0) {
    net.add_capacitor(switch_node, Network::ground, coupling.parasitic_capacitance_f, 0.0, 0.0, "parasitic capacitance");
  }
  if (converter.topology == Topology::flyback) {
    // The isolation barrier (header): the transformer's interwinding capacitance from the primary's
    // switched end into the secondary, whose earth capacitance closes the common-mode loop.
    const NodeId secondary = net.node("secondary");
    net.add_capacitor(switch_node, secondary, converter.interwinding_capacitance_f, 0.0, 0.0,
                      "interwinding capacitance");
    if (converter.secondary_capacitance_f > 0.0) {
      net.add_capacitor(secondary, Network::ground, converter.secondary_capacitance_f, 0.0, 0.0,
                        "secondary capacitance");
    }
    if (converter.y_capacitance_f > 0.0) {
      net.add_capacitor(secondary, converter_negative, converter.y_capacitance_f, 0.0, 0.0, "Y capacitor");
    }
    net.add_resistor(secondary, converter_negative, barrier_resistance_ohm, "barrier insulation");
  }
  }
  // Sources 2, 3: ammeters. With one network, line 2's "ammeter" is the bond of the return to the
  // reference ground at the equipment.
  const ElementId ammeter1 = net.add_voltage_source(terminal1, line1, "line 1 ammeter");
  const ElementId ammeter2 = lisn.lines == 2 ? net.add_voltage_source(lisn2.terminal, line2, "line 2 ammeter")
                                             : net.add_voltage_source(Network::ground, line2, "return bond");
  built.probes = {Probe::voltage(lisn1.port),
                  lisn.lines == 2 ? Probe::voltage(lisn2.port) : Probe::voltage(Network::ground),
                  Probe::current(ammeter1), Probe::current(ammeter2)};
  return built;
}

NetworkSolver make_solver(const CouplingSpec& coupling, const std::vector<FilterStage>& filters,
                          const LisnSpec& lisn, const ConverterSpec& converter, std::vector<Probe>& probes,
                          Probe& converter_terminals) {
  if (lisn.lines != 1 && lisn.lines != 2) {
    throw Error("expected 1 or 2 LISN lines, found " + std::to_string(lisn.lines));
  }
  Built built = build_network(coupling, filters, lisn, converter);
  probes = built.probes;
  converter_terminals = built.converter_terminals;
  // Errors point at the [[filter]] table (or netlist element) of the part to blame: each part
  // carries its position (add_filter_stage, Element::where).
  return NetworkSolver(std::move(built.network));
}

}  // namespace

ConductedModel::ConductedModel(const CouplingSpec& coupling, const std::vector<FilterStage>& filters,
                               const LisnSpec& lisn, const ConverterSpec& converter)
    : coupling_(coupling),
      converter_(converter),
      lisn_(lisn),
      probes_(),
      solver_(make_solver(coupling, filters, lisn, converter, probes_, converter_terminals_)) {}

std::string ConductedModel::setup_description() const {
  const bool cispr25 = lisn_.model == LisnModel::v_network_5uh;
  const std::string network = cispr25 ? "CISPR 25 artificial network" : "CISPR 16-1-2 V-network";
  const std::string impedance = lisn_.measured ? "impedance measured in " + lisn_.file
                                : cispr25       ? "50 \xCE\xA9 \xE2\x88\xA5 (5 \xC2\xB5H + 1 \xCE\xA9)"
                                                : "50 \xCE\xA9 \xE2\x88\xA5 (50 \xC2\xB5H + 5 \xCE\xA9)";
  std::string text;
  if (lisn_.lines == 2) {
    text = "two " + network + "s, " + impedance + " (one per supply line, to the reference ground); the differential-mode "
           "current loops through both 50 \xCE\xA9 receiver ports, so each port reads about 6 dB less than "
           "a single network with the return bonded at the equipment";
  } else {
    text = "one " + network + ", " + impedance + ", on the positive line, the return bonded to the reference ground at the "
           "equipment; the whole differential-mode voltage appears across the one port (about 6 dB more "
           "than with one network per line), and common-mode current returning through the bond is not "
           "measured";
  }
  if (lisn_.measured) {
    text += "; measured networks: the receiver port is the equipment terminal, the impedance interpolated "
            "between the file's points and never extrapolated beyond them";
  } else if (lisn_.circuit == LisnCircuit::ideal) {
    text += "; ideal networks: the receiver port is the equipment terminal, as read after the "
            "voltage-division-factor correction";
  } else {
    text += "; practical networks with coupling capacitor and 1 k\xCE\xA9 discharge resistor (part values "
            "from memory): the port reads the terminal voltage less the voltage division factor";
  }
  // Nothing added for a buck: its description is the one every earlier result carries.
  switch (converter_.topology) {
    case Topology::buck: break;
    case Topology::boost:
      text += "; boost converter: the input capacitor supplies the inductor's triangular ripple";
      break;
    case Topology::boost_pfc:
      text += "; boost PFC stage: the switching current follows the rectified mains over each half-cycle, the "
              "harmonic tables show the crest of the mains cycle";
      break;
    case Topology::netlist:
      text += "; converter: subcircuit '" + converter_.netlist->subckt + "' of " + converter_.netlist->file +
              " (the switching cell between its pins 3 and 4, the switch node at its node 'sw')";
      break;
    case Topology::flyback:
      text += "; flyback converter: the drain swing drives the transformer's interwinding capacitance into the "
              "secondary and its capacitance to earth";
      if (converter_.y_capacitance_f > 0.0) text += ", with a Y capacitor across the barrier";
      break;
  }
  return text;
}

TransferFunctions transfer_at(const ConductedModel& model, const std::vector<double>& frequency_hz) {
  const Transfer t = model.solver().transfer(frequency_hz, model.probes());
  TransferFunctions out;
  out.frequency_hz = frequency_hz;
  const std::size_t n = frequency_hz.size();
  for (auto* v : {&out.port1_per_input_current_ohm, &out.port1_per_switch_node, &out.port2_per_input_current_ohm,
                  &out.port2_per_switch_node, &out.line1_current_per_input_current,
                  &out.line1_current_per_switch_node_s, &out.line2_current_per_input_current,
                  &out.line2_current_per_switch_node_s}) {
    v->resize(n);
  }
  const auto i = static_cast<std::size_t>(ConductedModel::source_input_current);
  const auto v = static_cast<std::size_t>(ConductedModel::source_switch_node);
  for (std::size_t f = 0; f < n; ++f) {
    out.port1_per_input_current_ohm[f] = t.at(f, 0, i);
    out.port1_per_switch_node[f] = t.at(f, 0, v);
    out.port2_per_input_current_ohm[f] = t.at(f, 1, i);
    out.port2_per_switch_node[f] = t.at(f, 1, v);
    out.line1_current_per_input_current[f] = t.at(f, 2, i);
    out.line1_current_per_switch_node_s[f] = t.at(f, 2, v);
    out.line2_current_per_input_current[f] = t.at(f, 3, i);
    out.line2_current_per_switch_node_s[f] = t.at(f, 3, v);
  }
  return out;
}

LineSpectrum ConductedResult::line_spectrum(int line) const {
  if (line != 1 && line != 2) throw Error("expected line 1 or 2, found " + std::to_string(line));
  LineSpectrum spectrum;
  spectrum.quantity = Quantity::voltage;
  spectrum.fundamental_hz = fundamental_hz;
  spectrum.harmonics = line == 1 ? line1_v : line2_v;
  return spectrum;
}

ConductedResult conduct(const LineSpectrum& switch_node_v, const LineSpectrum& input_current_a,
                        const ConductedModel& model, LineSolve solve) {
  const bool has_v = !switch_node_v.harmonics.empty();
  const bool has_i = !input_current_a.harmonics.empty();
  if (has_v && switch_node_v.quantity != Quantity::voltage) {
    throw Error("expected a switch-node voltage spectrum, found a current");
  }
  if (has_i && input_current_a.quantity != Quantity::current) {
    throw Error("expected an input-current spectrum, found a voltage");
  }
  double f0 = has_v ? switch_node_v.fundamental_hz : input_current_a.fundamental_hz;
  if (has_v && has_i) {
    const double fi = input_current_a.fundamental_hz;
    if (!(std::abs(fi - f0) <= 1e-9 * std::max(std::abs(f0), std::abs(fi)))) {
      throw Error("the switch-node and input-current spectra have different fundamentals (" +
                  format_quantity(f0, Dimension::frequency) + ", " + format_quantity(fi, Dimension::frequency) + ")");
    }
  }
  ConductedResult result;
  result.setup = model.setup_description();
  if (!has_v && !has_i) {
    result.fundamental_hz = std::max(switch_node_v.fundamental_hz, input_current_a.fundamental_hz);
    return result;
  }
  if (!(std::isfinite(f0) && f0 > 0.0)) {
    throw Error("expected a fundamental frequency > 0 Hz, found " + format_quantity(f0, Dimension::frequency));
  }
  result.fundamental_hz = f0;
  const std::size_t count = std::max(switch_node_v.harmonics.size(), input_current_a.harmonics.size());
  result.frequency_hz.resize(count);
  for (std::size_t k = 0; k < count; ++k) result.frequency_hz[k] = static_cast<double>(k + 1) * f0;
  const TransferFunctions h = solve == LineSolve::adaptive_grid ? transfer_on_grid(model, result.frequency_hz)
                                                                : transfer_at(model, result.frequency_hz);
  for (auto* vec : {&result.line1_v, &result.line2_v, &result.dm_v, &result.cm_v, &result.line1_current_a,
                    &result.line2_current_a, &result.dm_current_a, &result.cm_current_a}) {
    vec->resize(count);
  }
  for (std::size_t k = 0; k < count; ++k) {
    const cd v = k < switch_node_v.harmonics.size() ? switch_node_v.harmonics[k] : cd(0.0, 0.0);
    const cd i = k < input_current_a.harmonics.size() ? input_current_a.harmonics[k] : cd(0.0, 0.0);
    // Superposition of the two sources in the linear network.
    const cd v1 = h.port1_per_input_current_ohm[k] * i + h.port1_per_switch_node[k] * v;
    const cd v2 = h.port2_per_input_current_ohm[k] * i + h.port2_per_switch_node[k] * v;
    const cd i1 = h.line1_current_per_input_current[k] * i + h.line1_current_per_switch_node_s[k] * v;
    const cd i2 = h.line2_current_per_input_current[k] * i + h.line2_current_per_switch_node_s[k] * v;
    result.line1_v[k] = v1;
    result.line2_v[k] = v2;
    // Mode decomposition, C. R. Paul, Introduction to EMC, 2nd ed., §6 (docs/references.md §2.3).
    result.dm_v[k] = 0.5 * (v1 - v2);
    result.cm_v[k] = 0.5 * (v1 + v2);
    result.line1_current_a[k] = i1;
    result.line2_current_a[k] = i2;
    result.dm_current_a[k] = 0.5 * (i1 - i2);
    result.cm_current_a[k] = 0.5 * (i1 + i2);
  }
  return result;
}

namespace {

/// conduct_modulated for lines whose fundamental varies over the instants (critical conduction):
/// the lines of every instant sit at their own frequencies k·f_j, so the transfer functions are
/// taken from the adaptive grid (transfer_grid.hpp) at the distinct frequencies of the lines that
/// are not zero, and each line is weighted by the transfer at its own frequency.
std::vector<ModulatedLines> conduct_swept(const ModulatedLines& switch_node_v, const ModulatedLines& input_current_a,
                                          const ConductedModel& model, std::size_t count) {
  const std::size_t phases = switch_node_v.phases.size();
  if (switch_node_v.instant_fundamental_hz != input_current_a.instant_fundamental_hz ||
      switch_node_v.instant_fundamental_hz.size() != phases) {
    throw Error("the switch-node and input-current lines of the mains cycle do not share their instants");
  }
  for (const double f : switch_node_v.instant_fundamental_hz) {
    if (!(std::isfinite(f) && f > 0.0)) {
      throw Error("expected a fundamental frequency > 0 Hz, found " + format_quantity(f, Dimension::frequency));
    }
  }
  auto phasor = [](const std::vector<cd>& lines, std::size_t k) { return k < lines.size() ? lines[k] : cd(0.0, 0.0); };
  std::vector<double> frequency_hz;
  for (std::size_t j = 0; j < phases; ++j) {
    const double f = switch_node_v.instant_fundamental_hz[j];
    for (std::size_t k = 0; k < count; ++k) {
      if (phasor(switch_node_v.phases[j], k) != cd(0.0, 0.0) || phasor(input_current_a.phases[j], k) != cd(0.0, 0.0)) {
        frequency_hz.push_back(static_cast<double>(k + 1) * f);
      }
    }
  }
  std::sort(frequency_hz.begin(), frequency_hz.end());
  frequency_hz.erase(std::unique(frequency_hz.begin(), frequency_hz.end()), frequency_hz.end());
  const TransferFunctions h =
      frequency_hz.empty() ? TransferFunctions{}
                           : transfer_on_grid(model, frequency_hz,
                                              {&TransferFunctions::port1_per_input_current_ohm,
                                               &TransferFunctions::port1_per_switch_node,
                                               &TransferFunctions::port2_per_input_current_ohm,
                                               &TransferFunctions::port2_per_switch_node});
  std::vector<ModulatedLines> ports(static_cast<std::size_t>(model.line_count()));
  for (std::size_t line = 0; line < ports.size(); ++line) {
    ModulatedLines& port = ports[line];
    port.quantity = Quantity::voltage;
    port.fundamental_hz = switch_node_v.fundamental_hz;
    port.modulation_period_s = switch_node_v.modulation_period_s;
    port.instant_fundamental_hz = switch_node_v.instant_fundamental_hz;
    port.phases.assign(phases, std::vector<cd>(count));
    const auto& per_i = line == 0 ? h.port1_per_input_current_ohm : h.port2_per_input_current_ohm;
    const auto& per_v = line == 0 ? h.port1_per_switch_node : h.port2_per_switch_node;
    for (std::size_t j = 0; j < phases; ++j) {
      const double f = switch_node_v.instant_fundamental_hz[j];
      for (std::size_t k = 0; k < count; ++k) {
        const cd v = phasor(switch_node_v.phases[j], k);
        const cd i = phasor(input_current_a.phases[j], k);
        if (v == cd(0.0, 0.0) && i == cd(0.0, 0.0)) continue;
        const auto at = static_cast<std::size_t>(
            std::lower_bound(frequency_hz.begin(), frequency_hz.end(), static_cast<double>(k + 1) * f) -
            frequency_hz.begin());
        // Superposition of the two sources, as conduct() does at each harmonic.
        port.phases[j][k] = per_i[at] * i + per_v[at] * v;
      }
    }
  }
  return ports;
}

}  // namespace

std::vector<ModulatedLines> conduct_modulated(const ModulatedLines& switch_node_v, const ModulatedLines& input_current_a,
                                              const ConductedModel& model) {
  const std::size_t phases = switch_node_v.phases.size();
  if (input_current_a.phases.size() != phases ||
      !(std::abs(switch_node_v.fundamental_hz - input_current_a.fundamental_hz) <= 1e-9 * switch_node_v.fundamental_hz) ||
      !(std::abs(switch_node_v.modulation_period_s - input_current_a.modulation_period_s) <=
        1e-9 * switch_node_v.modulation_period_s)) {
    throw Error("the switch-node and input-current lines of the mains cycle do not share their instants");
  }
  if (switch_node_v.quantity != Quantity::voltage || input_current_a.quantity != Quantity::current) {
    throw Error("expected switch-node voltage and input-current lines of the mains cycle");
  }
  const double f0 = switch_node_v.fundamental_hz;
  if (!(std::isfinite(f0) && f0 > 0.0)) {
    throw Error("expected a fundamental frequency > 0 Hz, found " + format_quantity(f0, Dimension::frequency));
  }
  std::size_t count = 0;
  for (std::size_t j = 0; j < phases; ++j) {
    count = std::max({count, switch_node_v.phases[j].size(), input_current_a.phases[j].size()});
  }
  if (!switch_node_v.instant_fundamental_hz.empty() || !input_current_a.instant_fundamental_hz.empty()) {
    return conduct_swept(switch_node_v, input_current_a, model, count);
  }
  std::vector<double> frequency_hz(count);
  for (std::size_t k = 0; k < count; ++k) frequency_hz[k] = static_cast<double>(k + 1) * f0;
  const TransferFunctions h = transfer_at(model, frequency_hz);
  std::vector<ModulatedLines> ports(static_cast<std::size_t>(model.line_count()));
  for (std::size_t line = 0; line < ports.size(); ++line) {
    ModulatedLines& port = ports[line];
    port.quantity = Quantity::voltage;
    port.fundamental_hz = f0;
    port.modulation_period_s = switch_node_v.modulation_period_s;
    port.phases.assign(phases, std::vector<cd>(count));
    const auto& per_i = line == 0 ? h.port1_per_input_current_ohm : h.port2_per_input_current_ohm;
    const auto& per_v = line == 0 ? h.port1_per_switch_node : h.port2_per_switch_node;
    for (std::size_t j = 0; j < phases; ++j) {
      const auto& v = switch_node_v.phases[j];
      const auto& i = input_current_a.phases[j];
      for (std::size_t k = 0; k < count; ++k) {
        // Superposition of the two sources, as conduct() does at each harmonic.
        port.phases[j][k] = per_i[k] * (k < i.size() ? i[k] : cd(0.0, 0.0)) + per_v[k] * (k < v.size() ? v[k] : cd(0.0, 0.0));
      }
    }
  }
  return ports;
}

namespace {

/// Stored magnetic and electric energy of each element at one frequency (phasor amplitudes; only
/// the ratios matter).
struct StoredEnergy {
  std::vector<double> magnetic, electric;
};

StoredEnergy stored_energy(const Network& network, const std::vector<cd>& v, double frequency_hz) {
  const double w = 2.0 * 3.14159265358979323846 * frequency_hz;
  const auto& elements = network.elements();
  StoredEnergy e{std::vector<double>(elements.size(), 0.0), std::vector<double>(elements.size(), 0.0)};
  auto across = [&](NodeId a, NodeId b) { return v[static_cast<std::size_t>(a)] - v[static_cast<std::size_t>(b)]; };
  for (std::size_t i = 0; i < elements.size(); ++i) {
    const Element& el = elements[i];
    switch (el.kind) {
      case ElementKind::inductor: {
        const cd current = across(el.nodes[0], el.nodes[1]) / cd(el.value_b, w * el.value_a);
        e.magnetic[i] = 0.5 * el.value_a * std::norm(current);
        break;
      }
      case ElementKind::capacitor: {
        const cd z(el.value_b, w * el.value_c - 1.0 / (w * el.value_a));
        const cd current = across(el.nodes[0], el.nodes[1]) / z;
        e.magnetic[i] = 0.5 * el.value_c * std::norm(current);
        e.electric[i] = std::norm(current) / (2.0 * w * w * el.value_a);
        break;
      }
      case ElementKind::coupled_inductors: {
        // [V1; V2] = [R1 + jωL1, jωM; jωM, R2 + jωL2]·[I1; I2]
        const double m = el.value_c * std::sqrt(el.value_a * el.value_b);
        const cd z11(el.value_d, w * el.value_a), z22(el.value_e, w * el.value_b), z12(0.0, w * m);
        const cd v1 = across(el.nodes[0], el.nodes[1]), v2 = across(el.nodes[2], el.nodes[3]);
        const cd det = z11 * z22 - z12 * z12;
        const cd i1 = (z22 * v1 - z12 * v2) / det, i2 = (z11 * v2 - z12 * v1) / det;
        e.magnetic[i] = 0.5 * (el.value_a * std::norm(i1) + el.value_b * std::norm(i2) +
                               2.0 * m * (i1 * std::conj(i2)).real());
        break;
      }
      default: break;
    }
  }
  return e;
}

/// The elements that together hold at least 80 % of `energy` (at most three), largest first.
std::vector<std::size_t> main_holders(const std::vector<double>& energy) {
  std::vector<std::size_t> order(energy.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return energy[a] > energy[b]; });
  const double total = std::accumulate(energy.begin(), energy.end(), 0.0);
  std::vector<std::size_t> out;
  double held = 0.0;
  for (const std::size_t i : order) {
    if (!(total > 0.0) || held >= 0.8 * total || out.size() == 3 || !(energy[i] > 0.0)) break;
    out.push_back(i);
    held += energy[i];
  }
  return out;
}

/// "filter1.choke winding 1 core loss" → "filter 1 choke winding 1 core loss"; "lisn2.L" → "LISN 2 L".
std::string part_label(const std::string& name) {
  for (const char* prefix : {"filter", "lisn"}) {
    const std::string p(prefix);
    if (name.rfind(p, 0) != 0) continue;
    const std::size_t dot = name.find('.');
    if (dot == std::string::npos || dot == p.size()) continue;
    return (p == "lisn" ? std::string("LISN") : p) + " " + name.substr(p.size(), dot - p.size()) + " " +
           name.substr(dot + 1);
  }
  return name;
}

}  // namespace

std::vector<Resonance> find_resonances(const ConductedModel& model, double low_hz, double high_hz, double min_q) {
  std::vector<Resonance> found;
  if (!(low_hz > 0.0 && high_hz > low_hz)) return found;
  const NetworkSolver& solver = model.solver();
  const int ports = model.line_count();
  constexpr double points_per_decade = 200.0;
  // A measured part has no value outside its file's range: the scan stays inside it.
  const std::array<double, 2> measured = solver.network().tabulated_range();
  const double start = std::max(low_hz / 2.0, measured[0]), stop = std::min(high_hz * 2.0, measured[1]);
  if (!(start > 0.0 && stop > start * 1.01)) return found;
  const auto count = static_cast<std::size_t>(std::ceil(std::log10(stop / start) * points_per_decade)) + 1;
  std::vector<double> grid(count);
  for (std::size_t i = 0; i < count; ++i) grid[i] = start * std::pow(10.0, static_cast<double>(i) / points_per_decade);
  std::vector<Probe> probes(model.probes().begin(), model.probes().begin() + ports);
  const Transfer t = solver.transfer(grid, probes);
  for (int port = 0; port < ports; ++port) {
    for (const int source : {ConductedModel::source_input_current, ConductedModel::source_switch_node}) {
      const auto p = static_cast<std::size_t>(port), s = static_cast<std::size_t>(source);
      auto magnitude = [&](double f) { return std::abs(solver.transfer({f}, {probes[p]}).at(0, 0, s)); };
      for (std::size_t i = 1; i + 1 < count; ++i) {
        const double m = std::abs(t.at(i, p, s));
        if (!(m > std::abs(t.at(i - 1, p, s)) && m >= std::abs(t.at(i + 1, p, s)))) continue;
        // Golden-section search for the peak in log frequency between the neighbours.
        double a = std::log(grid[i - 1]), b = std::log(grid[i + 1]);
        const double g = 0.5 * (std::sqrt(5.0) - 1.0);
        double c = b - g * (b - a), d = a + g * (b - a);
        double mc = magnitude(std::exp(c)), md = magnitude(std::exp(d));
        for (int it = 0; it < 60; ++it) {
          if (mc > md) {
            b = d, d = c, md = mc, c = b - g * (b - a), mc = magnitude(std::exp(c));
          } else {
            a = c, c = d, mc = md, d = a + g * (b - a), md = magnitude(std::exp(d));
          }
        }
        const double f0 = std::exp(0.5 * (a + b));
        const double peak = std::max({magnitude(f0), mc, md, m});
        if (f0 < low_hz || f0 > high_hz) continue;
        const double half_power = peak / std::sqrt(2.0);
        // Half-power frequencies by bisection in [f0/2, f0] and [f0, 2·f0].
        auto crossing = [&](double inside, double outside) -> double {
          outside = std::clamp(outside, start, stop);
          if (!(magnitude(outside) < half_power)) return std::nan("");
          for (int it = 0; it < 60; ++it) {
            const double mid = std::sqrt(inside * outside);
            (magnitude(mid) >= half_power ? inside : outside) = mid;
          }
          return std::sqrt(inside * outside);
        };
        const double f1 = crossing(f0, f0 / 2.0), f2 = crossing(f0, 2.0 * f0);
        if (!(std::isfinite(f1) && std::isfinite(f2) && f2 > f1)) continue;
        const double q = f0 / (f2 - f1);
        if (!(q >= min_q)) continue;
        const auto same = std::find_if(found.begin(), found.end(), [&](const Resonance& r) {
          return std::abs(r.frequency_hz - f0) <= 0.01 * f0;
        });
        if (same != found.end() && same->q >= q) continue;
        Resonance r;
        r.frequency_hz = f0;
        r.q = q;
        r.source = source;
        std::vector<cd> drive(solver.network().source_count(), cd(0.0, 0.0));
        drive[s] = cd(1.0, 0.0);
        const StoredEnergy energy = stored_energy(solver.network(), solver.node_voltages(f0, drive), f0);
        for (const auto* kind : {&energy.magnetic, &energy.electric}) {
          for (const std::size_t e : main_holders(*kind)) {
            const std::string label = part_label(solver.network().elements()[e].name);
            if (std::find(r.parts.begin(), r.parts.end(), label) == r.parts.end()) r.parts.push_back(label);
          }
        }
        if (same != found.end()) {
          *same = r;
        } else {
          found.push_back(r);
        }
      }
    }
  }
  std::sort(found.begin(), found.end(), [](const Resonance& a, const Resonance& b) { return a.frequency_hz < b.frequency_hz; });
  return found;
}

std::string resonance_note(const Resonance& resonance) {
  char q[32];
  std::snprintf(q, sizeof q, "%.3g", resonance.q);
  std::string parts;
  for (std::size_t i = 0; i < resonance.parts.size(); ++i) parts += (i == 0 ? "" : ", ") + resonance.parts[i];
  return "resonance at " + format_quantity(resonance.frequency_hz, Dimension::frequency) + " with Q â " +
         q + " in the " +
         (resonance.source == ConductedModel::source_switch_node ? "common-mode path (switch-node drive)"
                                                                  : "differential-mode path (input-current drive)") +
         ", made by " + parts +
         " (peak of the transfer to the LISN port; Q from its half-power bandwidth): the level there depends on "
         "the damping of these parts";
}

namespace {

// Plans are made and destroyed under the library's one planner lock (core/source/fftw_lock.hpp): FFTW's
// planner is not thread-safe; executing a plan is safe from any thread.

struct FftwFree {
  void operator()(void* p) const { fftw_free(p); }
};

/// FFTW plans made and destroyed under the planner lock, executed outside it.
struct LockedPlan {
  fftw_plan plan = nullptr;
  template <typename Make>
  explicit LockedPlan(Make make) {
    const std::lock_guard<std::mutex> lock(fftw_planner_mutex());
    plan = make();
  }
  LockedPlan(const LockedPlan&) = delete;
  LockedPlan& operator=(const LockedPlan&) = delete;
  ~LockedPlan() {
    const std::lock_guard<std::mutex> lock(fftw_planner_mutex());
    fftw_destroy_plan(plan);
  }
};

template <typename T>
std::unique_ptr<T, FftwFree> fftw_array(std::size_t count) {
  auto* p = static_cast<T*>(fftw_malloc(sizeof(T) * std::max<std::size_t>(count, 1)));
  if (p == nullptr) throw std::bad_alloc();
  return std::unique_ptr<T, FftwFree>(p);
}

/// The two transfer functions of the receiver port of `line` (1 or 2): per switch-node volt and per
/// input-current ampere.
std::vector<TransferMember> port_functions(int line) {
  if (line == 1) return {&TransferFunctions::port1_per_switch_node, &TransferFunctions::port1_per_input_current_ohm};
  return {&TransferFunctions::port2_per_switch_node, &TransferFunctions::port2_per_input_current_ohm};
}

}  // namespace

Waveform lisn_port_waveform(const Waveform& switch_node_v, const Waveform& input_current_a,
                            const ConductedModel& model, int line) {
  if (line != 1 && line != 2) throw Error("expected line 1 or 2, found " + std::to_string(line));
  const bool has_v = !switch_node_v.samples.empty();
  const bool has_i = !input_current_a.samples.empty();
  if (has_v && switch_node_v.quantity != Quantity::voltage) {
    throw Error("expected a switch-node voltage waveform, found a current");
  }
  if (has_i && input_current_a.quantity != Quantity::current) {
    throw Error("expected an input-current waveform, found a voltage");
  }
  const Waveform& first = has_v ? switch_node_v : input_current_a;
  Waveform out;
  out.quantity = Quantity::voltage;
  out.sample_rate_hz = first.sample_rate_hz;
  out.start_time_s = first.start_time_s;
  if (!has_v && !has_i) return out;
  if (has_v && has_i) {
    if (switch_node_v.samples.size() != input_current_a.samples.size() ||
        std::abs(switch_node_v.sample_rate_hz - input_current_a.sample_rate_hz) >
            1e-9 * switch_node_v.sample_rate_hz) {
      throw Error("the switch-node and input-current records differ in length or sample rate");
    }
  }
  if (!(std::isfinite(first.sample_rate_hz) && first.sample_rate_hz > 0.0)) {
    throw Error("expected a sample rate > 0 Hz, found " + format_quantity(first.sample_rate_hz, Dimension::frequency));
  }
  const std::size_t n = first.samples.size();
  const std::size_t bins = n / 2 + 1;
  // The record is taken as one period of a periodic signal: multiplying DFT bins is a circular
  // convolution with the network's impulse response.
  std::vector<double> frequency_hz;
  for (std::size_t k = 1; k < bins; ++k) {
    frequency_hz.push_back(static_cast<double>(k) * first.sample_rate_hz / static_cast<double>(n));
  }
  // One forward plan for both records and one inverse plan, on FFTW's own aligned buffers; the
  // two spectra are combined in place in the first (no copies of the spectra).
  auto time_buffer = fftw_array<double>(n);
  auto spectrum = fftw_array<fftw_complex>(bins);
  auto other = fftw_array<fftw_complex>(bins);
  const LockedPlan forward_plan([&] {
    return fftw_plan_dft_r2c_1d(static_cast<int>(n), time_buffer.get(), spectrum.get(), FFTW_ESTIMATE);
  });
  const LockedPlan inverse_plan([&] {
    return fftw_plan_dft_c2r_1d(static_cast<int>(n), spectrum.get(), time_buffer.get(), FFTW_ESTIMATE);
  });
  auto transform = [&](const std::vector<double>& samples, fftw_complex* into) {
    std::copy(samples.begin(), samples.end(), time_buffer.get());
    fftw_execute_dft_r2c(forward_plan.plan, time_buffer.get(), into);
  };
  if (has_v) transform(switch_node_v.samples, spectrum.get());
  if (has_i) transform(input_current_a.samples, other.get());
  fftw_complex* result = spectrum.get();
  result[0][0] = result[0][1] = 0.0;  // DC stays 0: the receiver does not measure it
  if (bins > 1) {
    // Solved on an adaptive grid and interpolated to every bin (transfer_grid.hpp), not at each
    // bin; only this port's two functions are kept.
    const TransferFunctions h = transfer_on_grid(model, frequency_hz, port_functions(line));
    const auto& per_v = line == 1 ? h.port1_per_switch_node : h.port2_per_switch_node;
    const auto& per_i = line == 1 ? h.port1_per_input_current_ohm : h.port2_per_input_current_ohm;
    for (std::size_t k = 1; k < bins; ++k) {
      cd value(0.0, 0.0);
      if (has_v) value += per_v[k - 1] * cd(result[k][0], result[k][1]);
      if (has_i) value += per_i[k - 1] * cd(other.get()[k][0], other.get()[k][1]);
      result[k][0] = value.real();
      result[k][1] = value.imag();
    }
    // For even n the Nyquist bin of a real signal is real; keep the real part (c2r ignores the rest).
    if (n % 2 == 0) result[bins - 1][1] = 0.0;
  }
  fftw_execute(inverse_plan.plan);  // c2r destroys its input; it is ours
  out.samples.resize(n);
  const double scale = 1.0 / static_cast<double>(n);  // FFTW transforms are unnormalised
  for (std::size_t j = 0; j < n; ++j) out.samples[j] = time_buffer.get()[j] * scale;
  return out;
}

SampledSpectrum lisn_port_spectrum(const SampledSpectrum& switch_node_v, const SampledSpectrum& input_current_a,
                                   const ConductedModel& model, int line) {
  if (line != 1 && line != 2) throw Error("expected line 1 or 2, found " + std::to_string(line));
  const bool has_v = !switch_node_v.bins.empty();
  const bool has_i = !input_current_a.bins.empty();
  if (has_v && switch_node_v.quantity != Quantity::voltage) throw Error("expected a switch-node voltage spectrum, found a current");
  if (has_i && input_current_a.quantity != Quantity::current) throw Error("expected an input-current spectrum, found a voltage");
  const SampledSpectrum& first = has_v ? switch_node_v : input_current_a;
  SampledSpectrum out;
  out.quantity = Quantity::voltage;
  out.sample_rate_hz = first.sample_rate_hz;
  out.record_samples = first.record_samples;
  out.first_bin = first.first_bin;
  if (!has_v && !has_i) return out;
  if (has_v && has_i &&
      (switch_node_v.record_samples != input_current_a.record_samples || switch_node_v.first_bin != input_current_a.first_bin ||
       switch_node_v.bins.size() != input_current_a.bins.size() ||
       std::abs(switch_node_v.sample_rate_hz - input_current_a.sample_rate_hz) > 1e-9 * switch_node_v.sample_rate_hz)) {
    throw Error("the switch-node and input-current spectra differ in bins, record length or sample rate");
  }
  if (!(std::isfinite(first.sample_rate_hz) && first.sample_rate_hz > 0.0)) {
    throw Error("expected a sample rate > 0 Hz, found " + format_quantity(first.sample_rate_hz, Dimension::frequency));
  }
  const std::size_t count = first.bins.size();
  const std::size_t n = first.record_samples;
  out.bins.assign(count, cd(0.0, 0.0));  // bin 0 (DC) stays 0: the receiver does not measure it
  const std::size_t skip = first.first_bin == 0 ? 1 : 0;
  std::vector<double> frequency_hz;
  frequency_hz.reserve(count - std::min(count, skip));
  for (std::size_t i = skip; i < count; ++i) {
    frequency_hz.push_back(static_cast<double>(first.first_bin + i) * first.sample_rate_hz / static_cast<double>(n));
  }
  if (frequency_hz.empty()) return out;
  // Solved on an adaptive grid and interpolated to every bin (transfer_grid.hpp), not at each bin;
  // only this port's two functions are kept.
  const TransferFunctions h = transfer_on_grid(model, frequency_hz, port_functions(line));
  std::vector<double>().swap(frequency_hz);
  const auto& per_v = line == 1 ? h.port1_per_switch_node : h.port2_per_switch_node;
  const auto& per_i = line == 1 ? h.port1_per_input_current_ohm : h.port2_per_input_current_ohm;
  for (std::size_t i = skip; i < count; ++i) {
    cd value(0.0, 0.0);
    if (has_v) value += per_v[i - skip] * switch_node_v.bins[i];
    if (has_i) value += per_i[i - skip] * input_current_a.bins[i];
    out.bins[i] = value;
  }
  // For even n the Nyquist bin of a real signal is real; keep the real part (c2r ignores the rest).
  if (n % 2 == 0 && out.end_bin() == n / 2 + 1) out.bins.back() = cd(out.bins.back().real(), 0.0);
  return out;
}

}  // namespace spurcast
