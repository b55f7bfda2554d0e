#pragma once
/// The product as a radiator: how it is supplied ([supply]) and the switching cell's loop on its
/// board
/// ([board]), and the currents a battery-powered product drives into its leads.
///
/// [supply]
///   kind = "mains"            mains (default: a LISN set-up, the [broadcast] cable_length is the
///   mains
///                             cable) | dc (a DC LISN set-up, same cable) | battery (no network:
///                             the leads, no conducted limits apply)
///   lead_length = "100 mm"    battery only: the leads between the battery and the converter
///   (default 10 cm) lead_spacing = "5 mm"     the two conductors' spacing, any kind (default 5 mm:
///   a two-core cord or a
///                             lead pair, judgement)
///   internal_resistance = "100 mOhm"  battery only: its internal resistance (default 100 mΩ,
///   judgement:
///                             small cells are 0.05–0.3 Ω)
///   product_size = "100 mm"   battery only: the product's largest dimension, for its
///   self-capacitance
/// [board]
///   hot_loop_area = "2 cm2"   the switching cell's loop (switch, diode or synchronous switch,
///   input
///                             capacitor): carries the pulsed source current; no hot-loop field
///                             when absent
///
/// Example:
///   const SupplySpec supply = read_supply_section(reader);
///   const BatteryCurrents leads = battery_lead_currents(supply, coupling, switch_node_v,
///   input_current_a);
#include <complex>
#include <optional>
#include <string>
#include <vector>

#include "core/coupling/conducted.hpp"
#include "core/radio/bands.hpp"
#include "core/radio/radiated.hpp"
#include "core/source/waveform.hpp"

namespace spurcast {

class TableReader;

enum class SupplyKind { mains, dc, battery };
/// "mains", "dc", "battery".
[[nodiscard]] std::string supply_kind_name(SupplyKind kind);

/// Diameter of a battery lead's conductor [m] for the pair's inductance: 1 mm (judgement, a
/// 0.5–0.75 mm² wire with its strands).
inline constexpr double battery_wire_diameter_m = 1e-3;

struct SupplySpec {
  SupplyKind kind = SupplyKind::mains;
  double lead_length_m = 0.1;            ///< battery leads [m]
  double lead_spacing_m = 5e-3;          ///< conductor spacing of the cable or leads [m]
  double internal_resistance_ohm = 0.1;  ///< battery [Ω]
  double product_size_m = 0.1;           ///< battery product's largest dimension [m]
  SourcePosition position;               ///< of the [supply] table
};

/// Reads [supply]; calls reader.finish(). Battery-only keys with another kind are an error at the
/// key.
[[nodiscard]] SupplySpec read_supply_section(TableReader& reader);

struct BoardSpec {
  std::optional<double> hot_loop_area_m2;
};
/// Reads [board]; calls reader.finish().
[[nodiscard]] BoardSpec read_board_section(TableReader& reader);

/// The self-capacitance of a product of largest dimension `size_m`, taken as an isolated sphere of
/// diameter `size_m`: C = 4π·ε0·a, a = size/2 (docs/references.md §6.5, textbook physics): 5.6 pF
/// for 10 cm.
[[nodiscard]] double product_self_capacitance_f(double size_m);

/// Inductance [H] of a two-wire line of `length_m`, centre spacing `spacing_m` and wire diameter
/// `diameter_m`: L = (µ0/π)·acosh(s/d)·length (any transmission-line text). Spacing > diameter.
[[nodiscard]] double two_wire_inductance_h(double length_m, double spacing_m, double diameter_m);

/// The currents in a battery product's leads at the harmonics (RMS phasors [A]):
///  - differential mode: the pulsed source current divides between the input capacitor (C, ESR, ESL
///  of
///    [coupling]) and the leads with the battery (internal resistance + the pair's inductance);
///  - common mode: the switch-node voltage drives its parasitic capacitance to the surroundings in
///  series
///    with the product's self-capacitance, through which the current returns along the leads (a
///    stated estimate: all of it flows on the leads); total current, per conductor half of it.
struct BatteryCurrents {
  std::vector<double> frequency_hz;
  std::vector<std::complex<double>> dm_a;
  std::vector<std::complex<double>> cm_per_conductor_a;
};
[[nodiscard]] BatteryCurrents battery_lead_currents(const SupplySpec& supply,
                                                    const CouplingSpec& coupling,
                                                    const LineSpectrum& switch_node_v,
                                                    const LineSpectrum& input_current_a);

/// The radiation geometry of a scenario: distance and ground reflection from [broadcast], the cable
/// (the mains cable of [broadcast] cable_length, or the battery leads) and its spacing from
/// [supply], the hot loop from [board].
[[nodiscard]] RadiationSetup radiation_setup(const BroadcastSpec& broadcast,
                                             const SupplySpec& supply, const BoardSpec& board);

}  // namespace spurcast
