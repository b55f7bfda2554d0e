#pragma once
/// Input-filter stages between the LISNs and the converter, read from [[filter]] tables and placed
/// into a Network. Stages are listed from the LISN side: the first stage's input faces the LISNs,
/// the last stage's output faces the converter's input capacitor.
///
/// Kinds and keys (quantities with units, e.g. "10 uH", "20 mOhm"):
///  - lc: a series inductor then a shunt capacitor across the lines (inductor on the LISN side,
///    capacitor on the converter side: the classic second-order input filter).
///      inductance (required), inductor_resistance (0), capacitance (required), capacitor_esr (0),
///      capacitor_esl (0), lines = "positive" | "negative" | "both" (default "positive": where the
///      series inductor sits; "both" puts one of `inductance` in each line).
///  - pi: shunt capacitor, series inductor, shunt capacitor.
///      inductance (required), inductor_resistance, capacitance (both capacitors) or
///      lisn_side_capacitance and converter_side_capacitance, capacitor_esr, capacitor_esl, lines.
///  - common-mode-choke: two coupled windings, one in each line, dots on the LISN side.
///      inductance (per winding, required), coupling (factor k, 0 ≤ k < 1) or leakage_inductance
///      (measured on one winding with the other shorted, L·(1 − k²)); default coupling 0.99;
///      winding_resistance (0).
///  - y-capacitors: a capacitor from each line to the reference ground.
///      capacitance (required), capacitor_esr, capacitor_esl, lines (default "both").
///  - netlist: elements = [{ type = "L", from = "in+", to = "out+", value = "10 uH" }, ...]
///      Port nodes: "in+", "in-" (LISN side), "out+", "out-" (converter side), "ground" (the
///      reference ground); any other name is a node internal to the stage. Element types:
///        R: value [Ω]
///        L: value [H], resistance [Ω] (series, optional)
///        C: value [F], esr [Ω], esl [H] (optional)
///        K: a coupled pair from/to and from_2/to_2, value = L1 [H], value_2 = L2 (default L1),
///           coupling (required), resistance, resistance_2
///      A port that no element names is the same node as its partner on the other side (in+ with
///      out+, in- with out-): the line passes straight through, so a shunt capacitor needs only
///      { type = "C", from = "in+", to = "in-" }. If both partners are named they are separate
///      nodes and the netlist must connect them itself.
#include <string>
#include <vector>

#include "core/input/error.hpp"
#include "core/coupling/network.hpp"
#include "core/input/toml_reader.hpp"

namespace spurcast {

enum class FilterKind { lc, pi, common_mode_choke, y_capacitors, netlist };

/// Which supply lines a stage's series inductor or Y-capacitor sits on.
enum class FilterLines { positive, negative, both };

/// "lc", "pi", "common-mode-choke", "y-capacitors", "netlist".
[[nodiscard]] std::string filter_kind_name(FilterKind kind);

/// One element of a netlist stage.
struct NetlistElement {
  char type = 'R';  ///< 'R', 'L', 'C' or 'K'
  std::string from, to;      ///< node names (ports or internal)
  std::string from_2, to_2;  ///< second winding of 'K'
  double value = 0.0;        ///< R [Ω], L [H], C [F], K: L1 [H]
  double value_2 = 0.0;      ///< K: L2 [H]
  double resistance_ohm = 0.0;    ///< L: series; K: winding 1
  double resistance_2_ohm = 0.0;  ///< K: winding 2
  double esr_ohm = 0.0;      ///< C
  double esl_h = 0.0;        ///< C
  double coupling = 0.0;     ///< K
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
  std::vector<NetlistElement> elements;  ///< netlist only
  SourcePosition where;  ///< the [[filter]] table, for messages
};

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
/// the network rejects a value.
LinePair add_filter_stage(Network& network, const FilterStage& stage, LinePair lisn_side, const std::string& prefix);

}  // namespace spurcast
