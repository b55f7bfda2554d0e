#include "core/radio/product.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"
#include "core/input/units.hpp"

namespace spurcast {

std::string supply_kind_name(SupplyKind kind) {
  switch (kind) {
    case SupplyKind::mains:
      return "mains";
    case SupplyKind::dc:
      return "dc";
    case SupplyKind::battery:
      return "battery";
  }
  return "mains";
}

SupplySpec read_supply_section(TableReader& reader) {
  SupplySpec spec;
  spec.position = reader.table_position();
  const std::string kind =
      reader.optional_choice("kind", {"mains", "dc", "battery"}).value_or("mains");
  spec.kind = kind == "battery" ? SupplyKind::battery
              : kind == "dc"    ? SupplyKind::dc
                                : SupplyKind::mains;
  const bool battery = spec.kind == SupplyKind::battery;
  for (const char* key : {"lead_length", "internal_resistance", "product_size"}) {
    if (!battery && reader.has(key)) {
      reader.fail(key, std::string(key) + " applies to kind = \"battery\" (a " + kind +
                           " supply's cable is [broadcast] cable_length)");
    }
  }
  spec.lead_length_m = reader.quantity_or("lead_length", Dimension::length, spec.lead_length_m);
  if (!(spec.lead_length_m > 0.0)) reader.fail("lead_length", "lead length must be positive");
  spec.lead_spacing_m = reader.quantity_or("lead_spacing", Dimension::length, spec.lead_spacing_m);
  if (!(spec.lead_spacing_m > 0.0)) reader.fail("lead_spacing", "lead spacing must be positive");
  if (battery && !(spec.lead_spacing_m > battery_wire_diameter_m)) {
    reader.fail("lead_spacing", "lead spacing must exceed the wire diameter (1 mm)");
  }
  spec.internal_resistance_ohm = reader.quantity_or("internal_resistance", Dimension::resistance,
                                                    spec.internal_resistance_ohm);
  if (!(spec.internal_resistance_ohm >= 0.0)) {
    reader.fail("internal_resistance", "internal resistance must not be negative");
  }
  spec.product_size_m = reader.quantity_or("product_size", Dimension::length, spec.product_size_m);
  if (!(spec.product_size_m > 0.0)) reader.fail("product_size", "product size must be positive");
  reader.finish({"kind", "lead_length", "lead_spacing", "internal_resistance", "product_size"});
  return spec;
}

BoardSpec read_board_section(TableReader& reader) {
  BoardSpec spec;
  if (const toml::node* area = reader.node("hot_loop_area")) {
    if (const auto* text = area->as_string()) {
      try {
        spec.hot_loop_area_m2 = parse_area_m2(text->get());
      } catch (const Error& e) {
        reader.fail("hot_loop_area", e.message());
      }
    } else {
      spec.hot_loop_area_m2 = quantity_from_node(*area, Dimension::number, reader.file());
      if (!(*spec.hot_loop_area_m2 > 0.0))
        reader.fail("hot_loop_area", "hot loop area must be positive");
    }
  }
  reader.finish({"hot_loop_area"});
  return spec;
}

double product_self_capacitance_f(double size_m) {
  return 4.0 * std::numbers::pi * epsilon0_f_per_m * 0.5 * size_m;
}

double two_wire_inductance_h(double length_m, double spacing_m, double diameter_m) {
  return mu0_h_per_m / std::numbers::pi * std::acosh(spacing_m / diameter_m) * length_m;
}

BatteryCurrents battery_lead_currents(const SupplySpec& supply, const CouplingSpec& coupling,
                                      const LineSpectrum& switch_node_v,
                                      const LineSpectrum& input_current_a) {
  BatteryCurrents out;
  const double f0 = !input_current_a.harmonics.empty() ? input_current_a.fundamental_hz
                                                       : switch_node_v.fundamental_hz;
  const std::size_t count =
      std::max(switch_node_v.harmonics.size(), input_current_a.harmonics.size());
  const double lead_h =
      two_wire_inductance_h(supply.lead_length_m, supply.lead_spacing_m, battery_wire_diameter_m);
  const double self_f = product_self_capacitance_f(supply.product_size_m);
  const double c_par = coupling.parasitic_capacitance_f;
  // Series combination: the parasitic capacitance to the surroundings, then back through the
  // product's own capacitance to them.
  const double c_cm = c_par > 0.0 ? c_par * self_f / (c_par + self_f) : 0.0;
  const std::complex<double> j{0.0, 1.0};
  for (std::size_t k = 0; k < count; ++k) {
    const double f = static_cast<double>(k + 1) * f0;
    const double w = 2.0 * std::numbers::pi * f;
    out.frequency_hz.push_back(f);
    const std::complex<double> z_cap = coupling.input_esr_ohm + j * w * coupling.input_esl_h +
                                       1.0 / (j * w * coupling.input_capacitance_f);
    const std::complex<double> z_leads = supply.internal_resistance_ohm + j * w * lead_h;
    const std::complex<double> source =
        k < input_current_a.harmonics.size() ? input_current_a.harmonics[k] : 0.0;
    out.dm_a.push_back(source * z_cap / (z_cap + z_leads));
    const std::complex<double> v =
        k < switch_node_v.harmonics.size() ? switch_node_v.harmonics[k] : 0.0;
    out.cm_per_conductor_a.push_back(0.5 * j * w * c_cm * v);
  }
  return out;
}

RadiationSetup radiation_setup(const BroadcastSpec& broadcast, const SupplySpec& supply,
                               const BoardSpec& board) {
  RadiationSetup setup;
  setup.distance_m = broadcast.distance_m;
  setup.cable_length_m =
      supply.kind == SupplyKind::battery ? supply.lead_length_m : broadcast.cable_length_m;
  setup.cable_spacing_m = supply.lead_spacing_m;
  setup.hot_loop_area_m2 = board.hot_loop_area_m2;
  setup.ground_reflection = broadcast.ground_reflection;
  return setup;
}

}  // namespace spurcast
