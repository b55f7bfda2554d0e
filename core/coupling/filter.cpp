#include "core/coupling/filter.hpp"

#include "core/coupling/spice.hpp"

#include <algorithm>
#include <cmath>
#include <filesystem>

namespace spurcast {

std::string filter_kind_name(FilterKind kind) {
  switch (kind) {
    case FilterKind::lc: return "lc";
    case FilterKind::pi: return "pi";
    case FilterKind::common_mode_choke: return "common-mode-choke";
    case FilterKind::y_capacitors: return "y-capacitors";
    case FilterKind::netlist: return "netlist";
    case FilterKind::touchstone: return "touchstone";
    case FilterKind::spice: return "spice";
  }
  return "lc";
}

namespace {

double positive(TableReader& reader, std::string_view key, Dimension dimension) {
  const double value = reader.required_quantity(key, dimension);
  if (!(value > 0.0)) {
    reader.fail(key, "expected " + dimension_name(dimension) + " > 0, found " + format_quantity(value, dimension));
  }
  return value;
}

double non_negative(TableReader& reader, std::string_view key, Dimension dimension) {
  const double value = reader.quantity_or(key, dimension, 0.0);
  if (!(value >= 0.0)) {
    reader.fail(key, "expected " + dimension_name(dimension) + " >= 0, found " + format_quantity(value, dimension));
  }
  return value;
}

double optional_positive(TableReader& reader, std::string_view key, Dimension dimension, double fallback) {
  if (!reader.has(key)) return fallback;
  return positive(reader, key, dimension);
}

/// A parasitic ≥ 0 with a default (recorded in `defaulted` when used).
double parasitic(TableReader& reader, std::string_view key, Dimension dimension, double fallback,
                 std::vector<std::string>& defaulted) {
  if (!reader.has(key)) {
    defaulted.emplace_back(key);
    return fallback;
  }
  return non_negative(reader, key, dimension);
}

/// core_loss_resistance: a resistance > 0, or "none" for an ideal core; default recorded.
double core_loss(TableReader& reader, std::string_view key, std::vector<std::string>& defaulted) {
  if (!reader.has(key)) {
    defaulted.emplace_back(key);
    return default_core_loss_resistance_ohm;
  }
  const toml::node* node = reader.node(key);
  if (node != nullptr && node->is_string() && node->value<std::string>() == std::string("none")) return no_core_loss;
  return positive(reader, key, Dimension::resistance);
}

void read_capacitor_parasitics(TableReader& reader, std::string_view esr_key, std::string_view esl_key,
                               double& esr_ohm, double& esl_h, std::vector<std::string>& defaulted) {
  esr_ohm = parasitic(reader, esr_key, Dimension::resistance, default_capacitor_esr_ohm, defaulted);
  esl_h = parasitic(reader, esl_key, Dimension::inductance, default_capacitor_esl_h, defaulted);
}

FilterLines read_lines(TableReader& reader, FilterLines fallback) {
  const auto text = reader.optional_choice("lines", {"positive", "negative", "both"});
  if (!text) return fallback;
  if (*text == "positive") return FilterLines::positive;
  if (*text == "negative") return FilterLines::negative;
  return FilterLines::both;
}

double read_coupling(TableReader& reader, std::string_view key) {
  const double k = reader.required_quantity(key, Dimension::fraction);
  if (!(k >= 0.0 && k < 1.0)) {
    reader.fail(key, "expected a coupling factor in [0, 1), found " + format_quantity(k, Dimension::number));
  }
  return k;
}

NetlistElement read_netlist_element(const toml::table& table, const std::string& file, const std::string& where) {
  TableReader reader(table, file, where);
  NetlistElement element;
  element.where = reader.table_position();
  const std::string type = reader.required_choice("type", {"R", "L", "C", "K", "touchstone"});
  element.type = type == "touchstone" ? 'T' : type[0];
  switch (element.type) {
    case 'R': reader.finish({"type", "from", "to", "value"}); break;
    case 'L':
      reader.finish({"type", "from", "to", "value", "resistance", "winding_capacitance", "core_loss_resistance"});
      break;
    case 'C': reader.finish({"type", "from", "to", "value", "esr", "esl"}); break;
    case 'T': reader.finish({"type", "from", "to", "file"}); break;
    default:
      reader.finish({"type", "from", "to", "from_2", "to_2", "value", "value_2", "coupling", "resistance",
                     "resistance_2", "winding_capacitance", "core_loss_resistance", "interwinding_capacitance"});
      break;
  }
  auto node_name = [&](std::string_view key) {
    std::string name = reader.required_string(key);
    if (name.empty()) reader.fail(key, "expected a node name, found an empty string");
    return name;
  };
  element.from = node_name("from");
  element.to = node_name("to");
  switch (element.type) {
    case 'R': element.value = positive(reader, "value", Dimension::resistance); break;
    case 'L':
      element.value = positive(reader, "value", Dimension::inductance);
      element.resistance_ohm = non_negative(reader, "resistance", Dimension::resistance);
      element.winding_capacitance_f = parasitic(reader, "winding_capacitance", Dimension::capacitance,
                                                default_inductor_winding_capacitance_f, element.defaulted);
      element.core_loss_resistance_ohm = core_loss(reader, "core_loss_resistance", element.defaulted);
      break;
    case 'C':
      element.value = positive(reader, "value", Dimension::capacitance);
      read_capacitor_parasitics(reader, "esr", "esl", element.esr_ohm, element.esl_h, element.defaulted);
      break;
    case 'T': element.touchstone = read_touchstone_file(reader, "file", 1, element.file); break;
    default:
      element.from_2 = node_name("from_2");
      element.to_2 = node_name("to_2");
      element.value = positive(reader, "value", Dimension::inductance);
      element.value_2 = optional_positive(reader, "value_2", Dimension::inductance, element.value);
      element.coupling = read_coupling(reader, "coupling");
      element.resistance_ohm = non_negative(reader, "resistance", Dimension::resistance);
      element.resistance_2_ohm = non_negative(reader, "resistance_2", Dimension::resistance);
      element.winding_capacitance_f = parasitic(reader, "winding_capacitance", Dimension::capacitance,
                                                default_choke_winding_capacitance_f, element.defaulted);
      element.core_loss_resistance_ohm = core_loss(reader, "core_loss_resistance", element.defaulted);
      element.interwinding_capacitance_f = parasitic(reader, "interwinding_capacitance", Dimension::capacitance,
                                                     default_choke_interwinding_capacitance_f, element.defaulted);
      break;
  }
  return element;
}

void read_inductor_parasitics(TableReader& reader, FilterStage& stage) {
  stage.winding_capacitance_f = parasitic(reader, "winding_capacitance", Dimension::capacitance,
                                          default_inductor_winding_capacitance_f, stage.defaulted);
  stage.core_loss_resistance_ohm = core_loss(reader, "core_loss_resistance", stage.defaulted);
}

}  // namespace

bool is_defaulted(const std::vector<std::string>& defaulted, std::string_view key) {
  return std::find(defaulted.begin(), defaulted.end(), key) != defaulted.end();
}

FilterStage read_filter_stage(TableReader& reader) {
  FilterStage stage;
  stage.where = reader.table_position();
  const std::string kind =
      reader.required_choice("kind", {"lc", "pi", "common-mode-choke", "y-capacitors", "netlist", "touchstone", "spice"});
  // Unknown keys first, so a misspelt required key reads "unknown key ...; did you mean" rather
  // than "missing key".
  if (kind == "lc") {
    stage.kind = FilterKind::lc;
    reader.finish({"kind", "inductance", "inductor_resistance", "capacitance", "capacitor_esr", "capacitor_esl",
                   "winding_capacitance", "core_loss_resistance", "lines"});
    stage.inductance_h = positive(reader, "inductance", Dimension::inductance);
    stage.inductor_resistance_ohm = non_negative(reader, "inductor_resistance", Dimension::resistance);
    stage.converter_side_capacitance_f = positive(reader, "capacitance", Dimension::capacitance);
    read_capacitor_parasitics(reader, "capacitor_esr", "capacitor_esl", stage.capacitor_esr_ohm, stage.capacitor_esl_h,
                              stage.defaulted);
    read_inductor_parasitics(reader, stage);
    stage.lines = read_lines(reader, FilterLines::positive);
  } else if (kind == "pi") {
    stage.kind = FilterKind::pi;
    reader.finish({"kind", "inductance", "inductor_resistance", "capacitance", "lisn_side_capacitance",
                   "converter_side_capacitance", "capacitor_esr", "capacitor_esl", "winding_capacitance",
                   "core_loss_resistance", "lines"});
    stage.inductance_h = positive(reader, "inductance", Dimension::inductance);
    stage.inductor_resistance_ohm = non_negative(reader, "inductor_resistance", Dimension::resistance);
    if (reader.has("capacitance")) {
      for (const char* side : {"lisn_side_capacitance", "converter_side_capacitance"}) {
        if (reader.has(side)) {
          reader.fail(side, std::string("give either 'capacitance' (both capacitors) or '") + side + "', not both");
        }
      }
      stage.lisn_side_capacitance_f = positive(reader, "capacitance", Dimension::capacitance);
      stage.converter_side_capacitance_f = stage.lisn_side_capacitance_f;
    } else {
      if (!reader.has("lisn_side_capacitance") && !reader.has("converter_side_capacitance")) {
        reader.fail("capacitance", "missing key 'capacitance' in [" + reader.where() +
                                       "] (or lisn_side_capacitance and converter_side_capacitance)");
      }
      stage.lisn_side_capacitance_f = positive(reader, "lisn_side_capacitance", Dimension::capacitance);
      stage.converter_side_capacitance_f = positive(reader, "converter_side_capacitance", Dimension::capacitance);
    }
    read_capacitor_parasitics(reader, "capacitor_esr", "capacitor_esl", stage.capacitor_esr_ohm, stage.capacitor_esl_h,
                              stage.defaulted);
    read_inductor_parasitics(reader, stage);
    stage.lines = read_lines(reader, FilterLines::positive);
  } else if (kind == "common-mode-choke") {
    stage.kind = FilterKind::common_mode_choke;
    stage.lines = FilterLines::both;
    reader.finish({"kind", "inductance", "coupling", "leakage_inductance", "winding_resistance", "winding_capacitance",
                   "core_loss_resistance", "interwinding_capacitance"});
    stage.inductance_h = positive(reader, "inductance", Dimension::inductance);
    stage.inductor_resistance_ohm = non_negative(reader, "winding_resistance", Dimension::resistance);
    stage.winding_capacitance_f = parasitic(reader, "winding_capacitance", Dimension::capacitance,
                                            default_choke_winding_capacitance_f, stage.defaulted);
    stage.core_loss_resistance_ohm = core_loss(reader, "core_loss_resistance", stage.defaulted);
    stage.interwinding_capacitance_f = parasitic(reader, "interwinding_capacitance", Dimension::capacitance,
                                                 default_choke_interwinding_capacitance_f, stage.defaulted);
    if (reader.has("coupling") && reader.has("leakage_inductance")) {
      reader.fail("leakage_inductance", "give either 'coupling' or 'leakage_inductance', not both");
    }
    if (reader.has("coupling")) {
      stage.coupling = read_coupling(reader, "coupling");
    } else if (reader.has("leakage_inductance")) {
      // Leakage measured on one winding with the other shorted: L_leak = L·(1 − k²) (two-winding
      // transformer, equal windings; common practice).
      const double leakage_h = positive(reader, "leakage_inductance", Dimension::inductance);
      if (!(leakage_h < stage.inductance_h)) {
        reader.fail("leakage_inductance", "expected a leakage inductance below the inductance (" +
                                              format_quantity(stage.inductance_h, Dimension::inductance) +
                                              "), found " + format_quantity(leakage_h, Dimension::inductance));
      }
      stage.coupling = std::sqrt(1.0 - leakage_h / stage.inductance_h);
    }
  } else if (kind == "y-capacitors") {
    stage.kind = FilterKind::y_capacitors;
    reader.finish({"kind", "capacitance", "capacitor_esr", "capacitor_esl", "lines"});
    stage.converter_side_capacitance_f = positive(reader, "capacitance", Dimension::capacitance);
    read_capacitor_parasitics(reader, "capacitor_esr", "capacitor_esl", stage.capacitor_esr_ohm, stage.capacitor_esl_h,
                              stage.defaulted);
    stage.lines = read_lines(reader, FilterLines::both);
  } else if (kind == "touchstone") {
    stage.kind = FilterKind::touchstone;
    reader.finish({"kind", "file"});
    stage.touchstone = read_touchstone_file(reader, "file", 2, stage.file);
  } else if (kind == "spice") {
    stage.kind = FilterKind::spice;
    reader.finish({"kind", "file", "subckt"});
    stage.file = reader.required_string("file");
    stage.subckt = reader.required_string("subckt");
    std::filesystem::path path(stage.file);
    if (path.is_relative()) path = std::filesystem::path(reader.file()).parent_path() / path;
    stage.elements = load_spice_subcircuit(path.string(), stage.subckt);
  } else {
    stage.kind = FilterKind::netlist;
    reader.finish({"kind", "elements"});
    const auto tables = reader.table_array("elements");
    if (tables.empty()) reader.fail("elements", "a netlist stage needs at least one element in 'elements'");
    for (std::size_t i = 0; i < tables.size(); ++i) {
      stage.elements.push_back(
          read_netlist_element(*tables[i], reader.file(), reader.where() + " element " + std::to_string(i + 1)));
    }
  }
  return stage;
}

namespace {

bool on_positive(FilterLines lines) { return lines != FilterLines::negative; }
bool on_negative(FilterLines lines) { return lines != FilterLines::positive; }

/// A winding's parallel parasitics: its winding capacitance and core-loss resistance across a→b.
void winding_parasitics(Network& network, NodeId a, NodeId b, double capacitance_f, double core_loss_ohm,
                        const std::string& name) {
  if (capacitance_f > 0.0) network.add_capacitor(a, b, capacitance_f, 0.0, 0.0, name + " winding capacitance");
  if (std::isfinite(core_loss_ohm)) network.add_resistor(a, b, core_loss_ohm, name + " core loss");
}

/// A coupled pair with its parasitics: each winding's parallel C and R, and the capacitance between
/// the windings lumped half at each end (the symmetric lumped approximation of a distributed
/// capacitance, common practice).
void coupled_pair(Network& network, NodeId a1, NodeId b1, NodeId a2, NodeId b2, double l1_h, double l2_h,
                  double k, double r1_ohm, double r2_ohm, double winding_capacitance_f, double core_loss_ohm,
                  double interwinding_capacitance_f, const std::string& name) {
  network.add_coupled_inductors(a1, b1, a2, b2, l1_h, l2_h, k, r1_ohm, r2_ohm, name);
  winding_parasitics(network, a1, b1, winding_capacitance_f, core_loss_ohm, name + " winding 1");
  winding_parasitics(network, a2, b2, winding_capacitance_f, core_loss_ohm, name + " winding 2");
  if (interwinding_capacitance_f > 0.0) {
    network.add_capacitor(a1, a2, 0.5 * interwinding_capacitance_f, 0.0, 0.0, name + " interwinding capacitance");
    network.add_capacitor(b1, b2, 0.5 * interwinding_capacitance_f, 0.0, 0.0, name + " interwinding capacitance");
  }
}

/// Series inductors on the chosen lines, with their parasitics; returns the far-side pair.
LinePair series_inductors(Network& network, const FilterStage& stage, LinePair in, const std::string& prefix) {
  LinePair out = in;
  if (on_positive(stage.lines)) {
    out.positive = network.node(prefix + ".out+");
    network.add_inductor(in.positive, out.positive, stage.inductance_h, stage.inductor_resistance_ohm, prefix + ".L+");
    winding_parasitics(network, in.positive, out.positive, stage.winding_capacitance_f,
                       stage.core_loss_resistance_ohm, prefix + ".L+");
  }
  if (on_negative(stage.lines)) {
    out.negative = network.node(prefix + ".out-");
    network.add_inductor(in.negative, out.negative, stage.inductance_h, stage.inductor_resistance_ohm, prefix + ".L-");
    winding_parasitics(network, in.negative, out.negative, stage.winding_capacitance_f,
                       stage.core_loss_resistance_ohm, prefix + ".L-");
  }
  return out;
}

void shunt_capacitor(Network& network, const FilterStage& stage, LinePair at, double capacitance_f,
                     const std::string& name) {
  network.add_capacitor(at.positive, at.negative, capacitance_f, stage.capacitor_esr_ohm, stage.capacitor_esl_h, name);
}

}  // namespace

LinePair add_filter_stage(Network& network, const FilterStage& stage, LinePair lisn_side, const std::string& prefix) {
  // The stage's parts carry its [[filter]] table's position (a netlist element its own), so a solve
  // that fails on one of them points there; the parts added after the stage are built in again.
  struct OriginScope {
    Network& network;
    SourcePosition previous;
    ~OriginScope() { network.set_origin(previous); }
  } scope{network, network.origin()};
  network.set_origin(stage.where);
  try {
    switch (stage.kind) {
      case FilterKind::lc: {
        const LinePair out = series_inductors(network, stage, lisn_side, prefix);
        shunt_capacitor(network, stage, out, stage.converter_side_capacitance_f, prefix + ".C");
        return out;
      }
      case FilterKind::pi: {
        shunt_capacitor(network, stage, lisn_side, stage.lisn_side_capacitance_f, prefix + ".C1");
        const LinePair out = series_inductors(network, stage, lisn_side, prefix);
        shunt_capacitor(network, stage, out, stage.converter_side_capacitance_f, prefix + ".C2");
        return out;
      }
      case FilterKind::common_mode_choke: {
        const LinePair out{network.node(prefix + ".out+"), network.node(prefix + ".out-")};
        coupled_pair(network, lisn_side.positive, out.positive, lisn_side.negative, out.negative, stage.inductance_h,
                     stage.inductance_h, stage.coupling, stage.inductor_resistance_ohm, stage.inductor_resistance_ohm,
                     stage.winding_capacitance_f, stage.core_loss_resistance_ohm, stage.interwinding_capacitance_f,
                     prefix + ".choke");
        return out;
      }
      case FilterKind::y_capacitors: {
        if (on_positive(stage.lines) && lisn_side.positive != Network::ground) {
          network.add_capacitor(lisn_side.positive, Network::ground, stage.converter_side_capacitance_f,
                                stage.capacitor_esr_ohm, stage.capacitor_esl_h, prefix + ".Cy+");
        }
        if (on_negative(stage.lines) && lisn_side.negative != Network::ground) {
          network.add_capacitor(lisn_side.negative, Network::ground, stage.converter_side_capacitance_f,
                                stage.capacitor_esr_ohm, stage.capacitor_esl_h, prefix + ".Cy-");
        }
        return lisn_side;
      }
      case FilterKind::touchstone: {
        // Port 1 across the LISN-side lines, port 2 across the converter-side lines; the negative
        // line is the common terminal and passes through.
        const LinePair out{network.node(prefix + ".out+"), lisn_side.negative};
        network.add_tabulated_two_port(lisn_side.positive, lisn_side.negative, out.positive, out.negative,
                                       stage.touchstone, prefix + ".two-port");
        return out;
      }
      case FilterKind::spice:
      case FilterKind::netlist: {
        auto named = [&](const std::string& port) {
          for (const NetlistElement& e : stage.elements) {
            if (e.from == port || e.to == port || e.from_2 == port || e.to_2 == port) return true;
          }
          return false;
        };
        LinePair out = lisn_side;
        if (named("in+") && named("out+")) out.positive = network.node(prefix + ".out+");
        if (named("in-") && named("out-")) out.negative = network.node(prefix + ".out-");
        auto node = [&](const std::string& name) -> NodeId {
          if (name == "in+") return lisn_side.positive;
          if (name == "in-") return lisn_side.negative;
          if (name == "out+") return out.positive;
          if (name == "out-") return out.negative;
          if (name == "ground" || name == "gnd" || name == "0") return Network::ground;
          return network.node(prefix + "." + name);
        };
        for (std::size_t i = 0; i < stage.elements.size(); ++i) {
          const NetlistElement& e = stage.elements[i];
          const std::string name = prefix + ".element" + std::to_string(i + 1);
          network.set_origin(e.where.file.empty() ? stage.where : e.where);
          try {
            switch (e.type) {
              case 'R': network.add_resistor(node(e.from), node(e.to), e.value, name); break;
              case 'L':
                network.add_inductor(node(e.from), node(e.to), e.value, e.resistance_ohm, name);
                winding_parasitics(network, node(e.from), node(e.to), e.winding_capacitance_f,
                                   e.core_loss_resistance_ohm, name);
                break;
              case 'C': network.add_capacitor(node(e.from), node(e.to), e.value, e.esr_ohm, e.esl_h, name); break;
              case 'T': network.add_tabulated(node(e.from), node(e.to), e.touchstone, name); break;
              default:
                coupled_pair(network, node(e.from), node(e.to), node(e.from_2), node(e.to_2), e.value, e.value_2,
                             e.coupling, e.resistance_ohm, e.resistance_2_ohm, e.winding_capacitance_f,
                             e.core_loss_resistance_ohm, e.interwinding_capacitance_f, name);
                break;
            }
          } catch (const Error& error) {
            if (!error.where().file.empty()) throw;
            throw Error(e.where, error.message());
          }
        }
        return out;
      }
    }
  } catch (const Error& error) {
    if (!error.where().file.empty()) throw;
    throw Error(stage.where, error.message());
  }
  return lisn_side;
}

}  // namespace spurcast
