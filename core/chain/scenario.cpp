#include "core/chain/scenario.hpp"

#include <filesystem>

#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"
#include "core/input/units.hpp"

namespace spurcast {

const std::vector<std::string>& scenario_sections() {
  static const std::vector<std::string> sections{"title",  "description", "switching", "capture",
                                                 "coupling", "filter",    "lisn",      "receiver",
                                                 "limits", "broadcast", "supply",   "board",
                                                 "converter", "safety"};
  return sections;
}

Scenario scenario_from_table(const toml::table& table, const std::string& file, const std::string& directory,
                             const ShippedData& data) {
  Scenario scenario;
  scenario.file = file;
  scenario.directory = directory;
  scenario.data = data;
  TableReader top(table, file, "scenario");
  scenario.title = top.optional_string("title").value_or("");
  scenario.description = top.optional_string("description").value_or("");

  if (const toml::table* section = top.optional_table("switching")) {
    TableReader reader(*section, file, "switching");
    scenario.switching = read_switching_section(reader);
  }
  if (const toml::table* section = top.optional_table("capture")) {
    TableReader reader(*section, file, "capture");
    scenario.capture = read_capture_section(reader);  // resolves the file against the scenario's folder
  }
  if (scenario.switching && scenario.capture) {
    throw Error(top.position("capture"), "give either [switching] or [capture], not both");
  }
  if (!scenario.switching && !scenario.capture) {
    throw Error(SourcePosition{file, 1, 1}, "a scenario needs a source: a [switching] or a [capture] section");
  }
  if (const toml::table* section = top.optional_table("coupling")) {
    TableReader reader(*section, file, "coupling");
    scenario.coupling = read_coupling_section(reader);
    scenario.has_coupling = true;
  }
  if (const toml::table* section = top.optional_table("converter")) {
    TableReader reader(*section, file, "converter");
    scenario.converter = read_converter_section(reader);
    const ConverterSpec& converter = scenario.converter;
    if (converter.topology == Topology::netlist && scenario.has_coupling) {
      throw Error(top.position("coupling"), "[coupling] does not apply to topology netlist: the subcircuit holds the "
                                            "input capacitors and the common-mode paths");
    }
    if (converter.inductor_ripple_a && !scenario.switching) {
      throw Error(converter.ripple_where, "'inductor_ripple' shapes the described input current: it needs [switching]");
    }
    if (scenario.switching) {
      // The source stage knows the input current's shape, not the topology (docs/design.md §5).
      SwitchingSpec& spec = *scenario.switching;
      const bool boost = converter.topology == Topology::boost || converter.topology == Topology::boost_pfc;
      spec.input_current_shape = boost ? InputCurrentShape::triangular : InputCurrentShape::pulsed;
      spec.current_ripple_a = converter.inductor_ripple_a.value_or(0.0);
      // Critical conduction: the triangle runs from zero to 2·I (core/source/mains_cycle.hpp).
      if (converter.topology == Topology::boost_pfc && converter.mains.conduction == Conduction::critical) {
        spec.current_ripple_a = 2.0 * spec.current_a;
      }
      if (const auto problem = switching_problem(spec)) {
        throw Error(problem->key == "inductor_ripple" ? converter.ripple_where : converter.where, problem->message);
      }
      if (converter.topology == Topology::boost_pfc) {
        // The mains cycle (core/source/mains_cycle.hpp): many switching cycles per half-cycle, and
        // an input that rises above the threshold somewhere.
        const double f_mains = converter.mains.mains_frequency_hz;
        if (spec.frequency_hz < min_switching_to_mains_ratio * f_mains) {
          throw Error(converter.mains_frequency_where,
                      "expected a mains frequency of at most 1/100 of the switching frequency (" +
                          format_quantity(spec.frequency_hz / min_switching_to_mains_ratio, Dimension::frequency) +
                          "), found " + format_quantity(f_mains, Dimension::frequency));
        }
        const double crest_v = crest_input_voltage_v(spec);
        if (!(converter.mains.switching_threshold_v < crest_v)) {
          throw Error(converter.threshold_where,
                      "expected a switching threshold below the crest input voltage ((1 - duty) x amplitude = " +
                          format_quantity(crest_v, Dimension::voltage) + "), found " +
                          format_quantity(converter.mains.switching_threshold_v, Dimension::voltage));
        }
      }
    }
  }
  int index = 0;
  for (const toml::table* stage : top.table_array("filter")) {
    TableReader reader(*stage, file, "filter " + std::to_string(++index));
    scenario.filters.push_back(read_filter_stage(reader));
  }
  if (const toml::table* section = top.optional_table("lisn")) {
    TableReader reader(*section, file, "lisn");
    scenario.lisn = read_lisn_section(reader);
  }
  if (const toml::table* section = top.optional_table("receiver")) {
    TableReader reader(*section, file, "receiver");
    scenario.receiver = read_receiver_section(reader);
  }
  if (const toml::table* section = top.optional_table("limits")) {
    TableReader reader(*section, file, "limits");
    scenario.limits = read_limits_section(reader, directory, data);
  }
  if (const toml::table* section = top.optional_table("broadcast")) {
    TableReader reader(*section, file, "broadcast");
    scenario.broadcast = read_broadcast_section(reader, data);
  }
  if (const toml::table* section = top.optional_table("supply")) {
    TableReader reader(*section, file, "supply");
    scenario.supply = read_supply_section(reader);
  }
  if (const toml::table* section = top.optional_table("board")) {
    TableReader reader(*section, file, "board");
    scenario.board = read_board_section(reader);
  }
  if (const toml::table* section = top.optional_table("converter")) {
    TableReader reader(*section, file, "converter");
    scenario.converter_power = read_converter_power(reader);
  }
  if (const toml::table* section = top.optional_table("safety")) {
    TableReader reader(*section, file, "safety");
    scenario.safety = read_safety_section(reader);
  }
  if (scenario.supply.kind == SupplyKind::battery) {
    // No network and no limit: a battery product has no conducted measurement to compare.
    for (const char* section : {"lisn", "filter", "limits"}) {
      if (top.has(section)) {
        throw Error(top.position(section), std::string("a battery supply has no LISN and no conducted limits: remove [") +
                                               section + "] or set [supply] kind = \"mains\" or \"dc\"");
      }
    }
  }
  top.finish(scenario_sections());
  return scenario;
}

Scenario load_scenario(const std::string& path, const ShippedData& data) {
  const toml::table table = parse_toml_file(path, "scenario file");
  const std::filesystem::path folder = std::filesystem::path(path).parent_path();
  return scenario_from_table(table, path, folder.empty() ? "." : folder.string(), data);
}

Scenario scenario_from_text(std::string_view text, const std::string& name, const std::string& directory,
                            const ShippedData& data) {
  return scenario_from_table(parse_toml_text(text, name), name, directory, data);
}

}  // namespace spurcast
