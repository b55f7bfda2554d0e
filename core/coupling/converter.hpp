#pragma once
/// The [converter] section: which converter topology the conducted model places between the supply
/// network and the noise sources (docs/design.md §5).
///
///   buck       the switching cell draws the pulsed input current from the input capacitor; the
///              switch node drives the parasitic capacitance to earth (today's model, the default);
///   boost      the input inductor sits between the input capacitor and the switch node, so the
///              input capacitor sees only the inductor's triangular ripple (continuous current);
///              the switch node (output-voltage swing) drives the parasitic capacitance to earth;
///   boost-pfc  a boost fed from rectified mains, taken at the crest of the mains cycle (the mains
///              gating of the switching-cell current is not modelled);
///   flyback    the primary draws a ramp during the on time and nothing during the off time; the
///              drain swing also drives the transformer's interwinding capacitance into the
///              secondary, which returns through its capacitance to earth (output cable, load) and
///              through a Y capacitor across the barrier to the primary return.
///
/// Example:
///   [converter]
///   topology = "flyback"
///   interwinding_capacitance = "25 pF"
///   secondary_capacitance = "150 pF"
///   y_capacitance = "1 nF"
#include <optional>
#include <string>

#include "core/input/toml_reader.hpp"

namespace spurcast {

enum class Topology { buck, boost, boost_pfc, flyback };

/// "buck", "boost", "boost-pfc", "flyback".
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
  SourcePosition ripple_where;   ///< of `inductor_ripple` (for messages), may be empty
  SourcePosition where;          ///< of the [converter] table, may be empty
};

/// Reads [converter]: topology (default "buck"); inductor_ripple (required for boost and boost-pfc,
/// optional for buck and flyback); interwinding_capacitance and secondary_capacitance (required for
/// flyback), y_capacitance (optional, flyback). A key of another topology is refused at its
/// position: "'interwinding_capacitance' belongs to topology flyback, not boost".
[[nodiscard]] ConverterSpec read_converter_section(TableReader& reader);

}  // namespace spurcast
