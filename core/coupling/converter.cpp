#include "core/coupling/converter.hpp"

#include <cmath>
#include <vector>

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
  }
  return "buck";
}

ConverterSpec read_converter_section(TableReader& reader) {
  ConverterSpec spec;
  spec.where = reader.table_position();
  const std::string name =
      reader.optional_choice("topology", {"buck", "boost", "boost-pfc", "flyback"})
          .value_or("buck");
  spec.topology = name == "boost"       ? Topology::boost
                  : name == "boost-pfc" ? Topology::boost_pfc
                  : name == "flyback"   ? Topology::flyback
                                        : Topology::buck;
  const bool flyback = spec.topology == Topology::flyback;
  const bool boost = spec.topology == Topology::boost || spec.topology == Topology::boost_pfc;
  // Keys of another template: refused before anything else is read, at the key.
  for (const char* key : {"interwinding_capacitance", "secondary_capacitance", "y_capacitance"}) {
    if (!flyback && reader.has(key)) {
      reader.fail(key, std::string("'") + key + "' belongs to topology flyback, not " + name);
    }
  }
  // min_input_voltage and output_power are read by read_converter_power (core/coupling/input_stability.hpp).
  reader.finish({"topology", "inductor_ripple", "interwinding_capacitance", "secondary_capacitance",
                 "y_capacitance", "min_input_voltage", "output_power"});
  auto checked = [&](std::string_view key, Dimension dimension, double value,
                     bool strictly_positive) {
    if (!(std::isfinite(value) && (strictly_positive ? value > 0.0 : value >= 0.0))) {
      reader.fail(key, "expected " + dimension_name(dimension) +
                           (strictly_positive ? " > 0" : " >= 0") + ", found " +
                           format_quantity(value, dimension));
    }
    return value;
  };
  // A boost's input current is its ripple: required there, so that it is never a silent zero.
  if (boost || reader.has("inductor_ripple")) {
    spec.inductor_ripple_a =
        checked("inductor_ripple", Dimension::current,
                reader.required_quantity("inductor_ripple", Dimension::current), false);
    spec.ripple_where = reader.position("inductor_ripple");
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
