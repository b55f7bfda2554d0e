#include "core/coupling/converter.hpp"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <vector>

#include "core/coupling/spice.hpp"
#include "core/input/units.hpp"

namespace spurcast {

std::string topology_name(Topology topology) {
  switch (topology) {
    case Topology::buck:
      return "buck";
    case Topology::boost:
      return "boost";
    case Topology::boost_pfc:
      return "boost-pfc";
    case Topology::flyback:
      return "flyback";
    case Topology::netlist:
      return "netlist";
  }
  return "buck";
}

ConverterSpec read_converter_section(TableReader& reader) {
  ConverterSpec spec;
  spec.where = reader.table_position();
  const std::string name =
      reader.optional_choice("topology", {"buck", "boost", "boost-pfc", "flyback", "netlist"})
          .value_or("buck");
  spec.topology = name == "boost"       ? Topology::boost
                  : name == "boost-pfc" ? Topology::boost_pfc
                  : name == "flyback"   ? Topology::flyback
                  : name == "netlist"   ? Topology::netlist
                                        : Topology::buck;
  const bool flyback = spec.topology == Topology::flyback;
  const bool boost = spec.topology == Topology::boost || spec.topology == Topology::boost_pfc;
  // Keys of another template: refused before anything else is read, at the key.
  for (const char* key : {"interwinding_capacitance", "secondary_capacitance", "y_capacitance"}) {
    if (!flyback && reader.has(key)) {
      reader.fail(key, std::string("'") + key + "' belongs to topology flyback, not " + name);
    }
  }
  for (const char* key : {"file", "subckt"}) {
    if (spec.topology != Topology::netlist && reader.has(key)) {
      reader.fail(key, std::string("'") + key + "' belongs to topology netlist, not " + name);
    }
  }
  for (const char* key : {"mains_frequency", "switching_threshold", "conduction"}) {
    if (spec.topology != Topology::boost_pfc && reader.has(key)) {
      reader.fail(key, std::string("'") + key + "' belongs to topology boost-pfc, not " + name);
    }
  }
  // min_input_voltage and output_power are read by read_converter_power (core/coupling/input_stability.hpp).
  reader.finish({"topology", "inductor_ripple", "interwinding_capacitance", "secondary_capacitance",
                 "y_capacitance", "min_input_voltage", "output_power", "file", "subckt", "mains_frequency",
                 "switching_threshold", "conduction"});
  auto checked = [&](std::string_view key, Dimension dimension, double value,
                     bool strictly_positive) {
    if (!(std::isfinite(value) && (strictly_positive ? value > 0.0 : value >= 0.0))) {
      reader.fail(key, "expected " + dimension_name(dimension) +
                           (strictly_positive ? " > 0" : " >= 0") + ", found " +
                           format_quantity(value, dimension));
    }
    return value;
  };
  if (spec.topology == Topology::boost_pfc &&
      reader.optional_choice("conduction", {"continuous", "critical"}).value_or("continuous") == "critical") {
    spec.mains.conduction = Conduction::critical;
    spec.conduction_where = reader.position("conduction");
    // The current returns to zero in every cycle: its ripple is 2·I, not a value of its own.
    if (reader.has("inductor_ripple")) {
      reader.fail("inductor_ripple", "'inductor_ripple' does not apply to conduction = \"critical\": the current's "
                                     "triangle runs from zero to twice `current` in every cycle");
    }
  }
  // A boost's input current is its ripple: required there, so that it is never a silent zero.
  if ((boost && spec.mains.conduction != Conduction::critical) || reader.has("inductor_ripple")) {
    spec.inductor_ripple_a =
        checked("inductor_ripple", Dimension::current,
                reader.required_quantity("inductor_ripple", Dimension::current), false);
    spec.ripple_where = reader.position("inductor_ripple");
  }
  if (spec.topology == Topology::boost_pfc) {
    spec.mains.mains_frequency_hz =
        reader.quantity_or("mains_frequency", Dimension::frequency, default_mains_frequency_hz);
    spec.mains_frequency_where = reader.has("mains_frequency") ? reader.position("mains_frequency") : spec.where;
    const double f = spec.mains.mains_frequency_hz;
    if (!(f >= min_mains_frequency_hz && f <= max_mains_frequency_hz)) {
      reader.fail("mains_frequency", "expected a mains frequency from " +
                                         format_quantity(min_mains_frequency_hz, Dimension::frequency) + " to " +
                                         format_quantity(max_mains_frequency_hz, Dimension::frequency) + ", found " +
                                         format_quantity(f, Dimension::frequency));
    }
    spec.mains.switching_threshold_v =
        checked("switching_threshold", Dimension::voltage,
                reader.quantity_or("switching_threshold", Dimension::voltage, 0.0), false);
    spec.threshold_where = reader.has("switching_threshold") ? reader.position("switching_threshold") : spec.where;
  }
  if (spec.topology == Topology::netlist) {
    auto stage = std::make_shared<FilterStage>();
    stage->kind = FilterKind::spice;
    stage->where = spec.where;
    stage->file = reader.required_string("file");
    stage->subckt = reader.required_string("subckt");
    std::filesystem::path path(stage->file);
    if (path.is_relative()) path = std::filesystem::path(reader.file()).parent_path() / path;
    stage->elements = load_spice_subcircuit(path.string(), stage->subckt);
    const bool has_switch_node = std::any_of(stage->elements.begin(), stage->elements.end(), [](const NetlistElement& e) {
      for (const std::string* node : {&e.from, &e.to, &e.from_2, &e.to_2}) {
        if (*node == "n:sw") return true;
      }
      return false;
    });
    if (!has_switch_node) {
      reader.fail("subckt", "expected a node 'sw' (the switch node) in subcircuit '" + stage->subckt + "' of " +
                                stage->file + ", found none");
    }
    spec.netlist = std::move(stage);
  }
  if (flyback) {
    spec.interwinding_capacitance_f =
        checked("interwinding_capacitance", Dimension::capacitance,
                reader.required_quantity("interwinding_capacitance", Dimension::capacitance), true);
    spec.secondary_capacitance_f =
        checked("secondary_capacitance", Dimension::capacitance,
                reader.required_quantity("secondary_capacitance", Dimension::capacitance), false);
    spec.y_capacitance_f =
        checked("y_capacitance", Dimension::capacitance,
                reader.quantity_or("y_capacitance", Dimension::capacitance, 0.0), false);
  }
  return spec;
}

}  // namespace spurcast
