#pragma once
/// Filter stages from SPICE netlists: `[[filter]] kind = "spice"`, `file`, `subckt`.
///
/// The subcircuit's five pins are, in order: LISN-side +, LISN-side −, converter-side +,
/// converter-side −, ground (the reference ground; node 0 anywhere is the ground too, as in SPICE).
/// A node given for two pins joins them: `.subckt dm 1 2 3 2 0` passes the negative line straight
/// through (only a line's two sides may share a node).
///
/// What is read, in the usual SPICE syntax (Nagel, "SPICE2: A computer program to simulate
/// semiconductor circuits", UCB/ERL M520, 1975, the input format every later SPICE keeps):
///  - R, L and C elements `Xname n1 n2 value` (ideal parts, as SPICE has them: a capacitor's ESR
///    and ESL, an inductor's winding capacitance are elements of the netlist) and coupled inductors
///    `Kname Lname1 Lname2 k` (dots on each inductor's first node, 0 ≤ k < 1; an inductor in at
///    most one K);
///  - values with the SPICE scale suffixes f p n u m k meg g t and mil, any case, and any letters
///    after them ignored ("10uH", "4.7u", "1kOhm"; "1F" is one femtofarad, as in SPICE);
///  - comments: a line starting with `*`, and from `;` to the end of a line; a line starting with
///    `+` continues the previous one; names and nodes are case-insensitive;
///  - the first line is the title when it starts with none of `*`, `;` or `.` (the SPICE deck
///    rule); `.subckt name pins...` ... `.ends [name]`, several subcircuits (each is checked, the
///    one named is used), `.end`.
/// Anything else (another element letter, a subcircuit instance, `.param`, `.model`, `.include`,
/// parameters after a value, an element outside a subcircuit) is an error naming the file, line,
/// column and element, never skipped.
#include <string>
#include <string_view>
#include <vector>

#include "core/coupling/filter.hpp"

namespace spurcast {

/// A SPICE number with its scale suffix, e.g. "4.7u" → 4.7e-6, "2Meg" → 2e6, "10uH" → 1e-5.
/// False if `text` is not one (no digits, or characters after the number that are not letters).
[[nodiscard]] bool parse_spice_value(std::string_view text, double& value);

/// The netlist elements of subcircuit `subckt` in SPICE text (`file` names it in messages), with
/// the pins mapped to the netlist stage's port names ("in+", "in-", "out+", "out-", "ground") and
/// every other node named "n:<node>". Throws Error "file:line:column: ..." on anything not read.
[[nodiscard]] std::vector<NetlistElement> parse_spice_subcircuit(std::string_view text,
                                                                 const std::string& file,
                                                                 const std::string& subckt);

/// Reads a file and parses it as above. Error "path: cannot open file".
[[nodiscard]] std::vector<NetlistElement> load_spice_subcircuit(const std::string& path,
                                                                const std::string& subckt);

}  // namespace spurcast
