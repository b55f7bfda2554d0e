#pragma once
/// The [converter] section: which converter topology the conducted model places between the supply
/// network and the noise sources (docs/design.md §5).
///
///   buck       the switching cell draws the pulsed input current from the input capacitor; the
///              switch node drives the parasitic capacitance to earth (today's model, the default);
///   boost      the input inductor sits between the input capacitor and the switch node, so the
///              input capacitor sees only the inductor's triangular ripple (continuous current);
///              the switch node (output-voltage swing) drives the parasitic capacitance to earth;
///   boost-pfc  a boost fed from rectified mains: [switching] describes the crest of the mains
///              cycle; over each half-cycle the duty, the switching-cell current and its ripple
///              follow the rectified mains, and the stage idles where the input is below
///              `switching_threshold` (core/source/mains_cycle.hpp); `mains_frequency` (default
///              50 Hz) sets the half-cycle the receiver reads; `conduction` = "continuous"
///              (default: fixed frequency) or "critical" (constant on time: the frequency varies
///              over the half-cycle and the current returns to zero in every cycle, so
///              `inductor_ripple` is refused with it);
///   flyback    the primary draws a ramp during the on time and nothing during the off time; the
///              drain swing also drives the transformer's interwinding capacitance into the
///              secondary, which returns through its capacitance to earth (output cable, load) and
///              through a Y capacitor across the barrier to the primary return;
///   netlist    the user's own circuit, a SPICE subcircuit (`file`, `subckt`, read by
///              core/coupling/spice.hpp) with the same five pins as a filter stage, in order:
///              1 input + and 2 input − (where the filter, or the LISN, connects), 3 switching cell +
///              and 4 switching cell − (the cell's current source draws the input current from pin
///              3 through itself into pin 4), 5 ground (earth). The subcircuit's node named `sw` is
///              the switch node: the switch-node voltage source drives V(sw) − V(pin 4). A pin may
///              repeat pin 1 or 2 (`.subckt conv 1 2 1 2 0`: the cell sits across the input). The
///              subcircuit holds the input capacitors and every common-mode path, so [coupling] is
///              refused with it. The source waveforms are those of a buck (pulsed input current).
///
/// Example:
///   [converter]
///   topology = "flyback"
///   interwinding_capacitance = "25 pF"
///   secondary_capacitance = "150 pF"
///   y_capacitance = "1 nF"
#include <memory>
#include <optional>
#include <string>

#include "core/coupling/filter.hpp"
#include "core/input/toml_reader.hpp"
#include "core/source/mains_cycle.hpp"

namespace spurcast {

enum class Topology { buck, boost, boost_pfc, flyback, netlist };

/// "buck", "boost", "boost-pfc", "flyback", "netlist".
[[nodiscard]] std::string topology_name(Topology topology);

/// The insulation resistance placed across the isolation barrier of a flyback (secondary to the
/// primary return) so that the secondary has the DC path every node of the network needs: 100 MΩ
/// (common practice: the usual pass level of an insulation-resistance test). At 150 kHz it is
/// 10^4 times the impedance of 100 pF, so it changes no computed level.
inline constexpr double barrier_resistance_ohm = 100e6;

struct ConverterSpec {
  Topology topology = Topology::buck;
  /// Peak-to-peak ripple of the inductor (flyback: magnetising) current [A], ≥ 0; nullopt: not
  /// given (buck and flyback then have a flat-topped pulse, as without [converter]).
  std::optional<double> inductor_ripple_a;
  double interwinding_capacitance_f = 0.0;  ///< flyback: primary switch node to secondary [F], > 0
  double secondary_capacitance_f = 0.0;  ///< flyback: secondary (output, cable) to earth [F], ≥ 0
  double y_capacitance_f = 0.0;  ///< flyback: secondary to primary return [F], ≥ 0 (0: none)
  /// boost-pfc: the mains frequency and the switching threshold (mains_frequency, switching_threshold).
  MainsCycleSpec mains;
  SourcePosition mains_frequency_where;  ///< of `mains_frequency` (or the table), may be empty
  SourcePosition threshold_where;        ///< of `switching_threshold` (or the table), may be empty
  SourcePosition conduction_where;       ///< of `conduction = "critical"`, may be empty
  /// netlist: the subcircuit as a SPICE stage (its file, subckt and elements; pins as above).
  std::shared_ptr<const FilterStage> netlist;
  SourcePosition ripple_where;   ///< of `inductor_ripple` (for messages), may be empty
  SourcePosition where;          ///< of the [converter] table, may be empty
};

/// Reads [converter]: topology (default "buck"); inductor_ripple (required for boost and boost-pfc,
/// optional for buck and flyback); interwinding_capacitance and secondary_capacitance (required for
/// flyback), y_capacitance (optional, flyback), file and subckt (required for netlist: a SPICE file
/// relative to the scenario's folder and the subcircuit's name); mains_frequency (10 Hz to 1 kHz,
/// default 50 Hz), switching_threshold (a voltage ≥ 0, default 0 V) and conduction ("continuous",
/// the default, or "critical"; inductor_ripple is then refused) for boost-pfc only. A key
/// of another topology is refused at its position: "'interwinding_capacitance' belongs to topology
/// flyback, not boost". The threshold against the crest input voltage is checked with [switching]
/// (core/chain/scenario.cpp).
[[nodiscard]] ConverterSpec read_converter_section(TableReader& reader);

}  // namespace spurcast
