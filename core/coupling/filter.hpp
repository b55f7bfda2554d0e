#pragma once
/// Input-filter stages between the LISNs and the converter, read from [[filter]] tables and placed
/// into a Network. Stages are listed from the LISN side: the first stage's input faces the LISNs,
/// the last stage's output faces the converter's input capacitor.
///
/// Kinds and keys (quantities with units, e.g. "10 uH", "20 mOhm"):
///  - lc: a series inductor then a shunt capacitor across the lines (inductor on the LISN side,
///    capacitor on the converter side: the classic second-order input filter).
///      inductance (required), inductor_resistance (0), capacitance (required), capacitor_esr,
///      capacitor_esl, winding_capacitance, core_loss_resistance (defaults below),
///      lines = "positive" | "negative" | "both" (default "positive": where the series inductor
///      sits; "both" puts one of `inductance` in each line).
///  - pi: shunt capacitor, series inductor, shunt capacitor.
///      inductance (required), inductor_resistance, capacitance (both capacitors) or
///      lisn_side_capacitance and converter_side_capacitance, capacitor_esr, capacitor_esl,
///      winding_capacitance, core_loss_resistance, lines.
///  - common-mode-choke: two coupled windings, one in each line, dots on the LISN side.
///      inductance (per winding, required), coupling (factor k, 0 ≤ k < 1) or leakage_inductance
///      (measured on one winding with the other shorted, L·(1 − k²)); default coupling 0.99;
///      winding_resistance (0), winding_capacitance and core_loss_resistance (across each winding),
///      interwinding_capacitance (between the windings, half at each end).
///  - y-capacitors: a capacitor from each line to the reference ground.
///      capacitance (required), capacitor_esr, capacitor_esl, lines (default "both").
///  - netlist: elements = [{ type = "L", from = "in+", to = "out+", value = "10 uH" }, ...]
///      Port nodes: "in+", "in-" (LISN side), "out+", "out-" (converter side), "ground" (the
///      reference ground); any other name is a node internal to the stage. Element types:
///        R: value [Ω]
///        L: value [H], resistance [Ω] (series, optional), winding_capacitance, core_loss_resistance
///        C: value [F], esr [Ω], esl [H]
///        K: a coupled pair from/to and from_2/to_2, value = L1 [H], value_2 = L2 (default L1),
///           coupling (required), resistance, resistance_2, winding_capacitance,
///           core_loss_resistance (each winding), interwinding_capacitance
///        touchstone: a measured two-terminal part, file = "part.s1p" (core/coupling/touchstone.hpp),
///           port from `from` to `to`
///      A port that no element names is the same node as its partner on the other side (in+ with
///      out+, in- with out-): the line passes straight through, so a shunt capacitor needs only
///      { type = "C", from = "in+", to = "in-" }. If both partners are named they are separate
///      nodes and the netlist must connect them itself.
///  - touchstone: a measured two-port, file = "filter.s2p" (a path relative to the scenario file):
///      port 1 across the LISN-side lines (in+ to in−), port 2 across the converter-side lines
///      (out+ to out−), the negative line passing straight through as the ports' common terminal
///      (how a two-port analyser measures a differential-mode filter: its common-mode behaviour is
///      not in the file).
///  - spice: file = "filter.cir" (relative to the scenario file), subckt = "name": a SPICE
///      subcircuit with pins LISN-side +, LISN-side −, converter-side +, converter-side −, ground
///      (core/coupling/spice.hpp), read into netlist elements.
///
/// Parasitics of the parts (docs/design.md §5): a real inductor or choke winding is L with its
/// series resistance, in parallel with its winding capacitance (self-resonance 1/(2π√(L·C))) and a
/// core-loss resistance (a frequency-independent parallel resistance: the simplest model that
/// bounds the impedance peak at self-resonance, as a ferrite's µ'' does); a capacitor is C with
/// ESR and ESL in series. A key left out takes the default below and the report says so; 0 for a
/// capacitance, ESR or ESL and "none" for core_loss_resistance ask for the ideal part. Values
/// built in code (not read) are ideal unless set.
#include <limits>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "core/input/error.hpp"
#include "core/coupling/network.hpp"
#include "core/coupling/touchstone.hpp"
#include "core/input/toml_reader.hpp"

namespace spurcast {

enum class FilterKind { lc, pi, common_mode_choke, y_capacitors, netlist, touchstone, spice };

/// Defaults of the parasitics, used by the readers when a key is left out. All are engineering
/// judgements for small filter parts (judgement, no source): a surface-mount ceramic or small film
/// capacitor with short connections; a single-layer power inductor; a toroidal ferrite choke with
/// separated windings.
inline constexpr double default_capacitor_esr_ohm = 10e-3;   ///< judgement
inline constexpr double default_capacitor_esl_h = 2e-9;      ///< judgement
inline constexpr double default_inductor_winding_capacitance_f = 3e-12;  ///< judgement (lc, pi, netlist L)
inline constexpr double default_choke_winding_capacitance_f = 10e-12;    ///< judgement (each winding)
inline constexpr double default_choke_interwinding_capacitance_f = 5e-12;  ///< judgement
inline constexpr double default_core_loss_resistance_ohm = 10e3;  ///< judgement (inductors and chokes)
/// "No core-loss resistance" (an ideal core).
inline constexpr double no_core_loss = std::numeric_limits<double>::infinity();

/// Which supply lines a stage's series inductor or Y-capacitor sits on.
enum class FilterLines { positive, negative, both };

/// "lc", "pi", "common-mode-choke", "y-capacitors", "netlist", "touchstone", "spice".
[[nodiscard]] std::string filter_kind_name(FilterKind kind);

/// One element of a netlist stage.
struct NetlistElement {
  char type = 'R';  ///< 'R', 'L', 'C', 'K' or 'T' (touchstone)
  std::string from, to;      ///< node names (ports or internal)
  std::string from_2, to_2;  ///< second winding of 'K'
  double value = 0.0;        ///< R [Ω], L [H], C [F], K: L1 [H]
  double value_2 = 0.0;      ///< K: L2 [H]
  double resistance_ohm = 0.0;    ///< L: series; K: winding 1
  double resistance_2_ohm = 0.0;  ///< K: winding 2
  double esr_ohm = 0.0;      ///< C
  double esl_h = 0.0;        ///< C
  double coupling = 0.0;     ///< K
  double winding_capacitance_f = 0.0;  ///< L, K (each winding): parallel capacitance; 0: none
  double core_loss_resistance_ohm = no_core_loss;  ///< L, K (each winding): parallel resistance
  double interwinding_capacitance_f = 0.0;  ///< K: between the windings (half at each end); 0: none
  std::vector<std::string> defaulted;  ///< keys the reader filled with a default
  std::string file;  ///< T: the Touchstone file as given
  std::shared_ptr<const TouchstoneData> touchstone;  ///< T: its contents (a one-port)
  SourcePosition where;
};

/// One [[filter]] stage.
struct FilterStage {
  FilterKind kind = FilterKind::lc;
  FilterLines lines = FilterLines::positive;
  double inductance_h = 0.0;
  double inductor_resistance_ohm = 0.0;  ///< series resistance of each inductor / winding
  double lisn_side_capacitance_f = 0.0;       ///< pi only
  double converter_side_capacitance_f = 0.0;  ///< lc, pi; y-capacitors: each capacitor
  double capacitor_esr_ohm = 0.0;
  double capacitor_esl_h = 0.0;
  double coupling = 0.99;  ///< common-mode choke k, 0 ≤ k < 1; default a typical wound toroid (common practice, no source)
  double winding_capacitance_f = 0.0;  ///< across each inductor / winding; 0: none
  double core_loss_resistance_ohm = no_core_loss;  ///< across each inductor / winding
  double interwinding_capacitance_f = 0.0;  ///< common-mode choke: between the windings, half at each end
  std::vector<std::string> defaulted;  ///< keys the reader filled with a default (for the report)
  std::vector<NetlistElement> elements;  ///< netlist and spice
  std::string file;  ///< touchstone, spice: the file as given
  std::string subckt;  ///< spice: the subcircuit's name
  std::shared_ptr<const TouchstoneData> touchstone;  ///< touchstone: its contents (a two-port)
  SourcePosition where;  ///< the [[filter]] table, for messages
};

/// Whether `key` of a stage or element was filled with its default by the reader.
[[nodiscard]] bool is_defaulted(const std::vector<std::string>& defaulted, std::string_view key);

/// Reads one [[filter]] table (reader.where() is e.g. "filter 1"). Rejects unknown keys with
/// "did you mean", and values out of range (e.g. coupling ≥ 1) at their position.
[[nodiscard]] FilterStage read_filter_stage(TableReader& reader);

/// The two supply-line nodes on one side of a stage.
struct LinePair {
  NodeId positive = 0;
  NodeId negative = 0;
};

/// Places `stage` in `network` with its LISN side on `lisn_side` and returns its converter-side
/// pair (new nodes where the stage has series parts, the same nodes where a line passes straight
/// through). Internal nodes are named `prefix` + "." + name. Throws Error at the stage's position if
/// the network rejects a value. The parts it adds carry the stage's position (a netlist element's own) as
/// Element::where, so a failed solve can point at them.
LinePair add_filter_stage(Network& network, const FilterStage& stage, LinePair lisn_side, const std::string& prefix);

}  // namespace spurcast
