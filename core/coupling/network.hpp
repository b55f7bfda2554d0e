#pragma once
/// A small linear circuit (R, L with series resistance, C with ESR and ESL, a coupled inductor pair,
/// ideal voltage and current sources) and its complex modified-nodal-analysis (MNA) solution at many
/// frequencies. The stamp pattern is built once; each frequency only fills the values and solves a
/// small dense system (Eigen PartialPivLU).
///
/// Method: modified nodal analysis, Ho, Ruehli & Brennan, "The modified nodal approach to network
/// analysis", IEEE Trans. Circuits Syst. CAS-22 (1975); node voltages are the unknowns, plus one
/// branch current per ideal voltage source. Passive two-terminal elements and the coupled pair are
/// stamped as admittances, which is valid for every frequency > 0.
///
/// Example:
///   Network net;
///   const NodeId in = net.node("in"), out = net.node("out");
///   net.add_voltage_source(in, Network::ground);
///   net.add_resistor(in, out, 1e3);
///   net.add_capacitor(out, Network::ground, 1e-9);
///   const NetworkSolver solver(net);
///   const Transfer t = solver.transfer({1e3, 1e6}, {Probe::voltage(out)});
///   // t.at(1, 0, 0) == V(out) per volt of the source at 1 MHz
#include <Eigen/Dense>

#include <array>
#include <complex>
#include <cstddef>
#include <memory>
#include <string>
#include <vector>

#include "core/input/error.hpp"

namespace spurcast {

using NodeId = int;     ///< 0 is the reference ground
using ElementId = int;  ///< index into Network::elements()

/// A measured part given by its admittance at any frequency inside a range (a Touchstone file's
/// S-parameters converted to Y). One-port: admittance()[0]; two-port: Y11, Y12, Y21, Y22.
class TabulatedAdmittance {
 public:
  virtual ~TabulatedAdmittance() = default;
  [[nodiscard]] virtual int port_count() const = 0;
  [[nodiscard]] virtual double lowest_hz() const = 0;
  [[nodiscard]] virtual double highest_hz() const = 0;
  /// For messages, e.g. the file name.
  [[nodiscard]] virtual const std::string& describe() const = 0;
  /// The admittance [S] at `frequency_hz` (inside the range; the caller checks).
  [[nodiscard]] virtual std::array<std::complex<double>, 4> admittance(double frequency_hz) const = 0;
};

enum class ElementKind {
  resistor,           ///< value_a = R [Ω]
  inductor,           ///< value_a = L [H], value_b = series resistance [Ω]
  capacitor,          ///< value_a = C [F], value_b = ESR [Ω], value_c = ESL [H]
  coupled_inductors,  ///< two windings nodes[0]→nodes[1], nodes[2]→nodes[3] (dots at nodes[0], nodes[2]);
                      ///< value_a = L1, value_b = L2 [H], value_c = k, value_d = R1, value_e = R2 [Ω]
  voltage_source,     ///< V(nodes[0]) − V(nodes[1]) = value given at solve time
  current_source,     ///< drives its value from nodes[0] through itself into nodes[1]
  tabulated,          ///< a measured one-port nodes[0]→nodes[1], or two-port (nodes[0]→nodes[1] port 1,
                      ///< nodes[2]→nodes[3] port 2); Element::table gives the admittance
};

struct Element {
  ElementKind kind = ElementKind::resistor;
  std::array<NodeId, 4> nodes{0, 0, 0, 0};
  double value_a = 0.0, value_b = 0.0, value_c = 0.0, value_d = 0.0, value_e = 0.0;
  std::string name;  ///< for messages ("" allowed)
  int source_index = -1;  ///< for sources: position among the sources (order of addition)
  std::shared_ptr<const TabulatedAdmittance> table;  ///< tabulated only
  SourcePosition where;  ///< where an input file describes it (Network::set_origin; empty for built-in parts)
};

/// A netlist with named nodes. Node 0 is the reference ground, named "0"; the names "gnd" and
/// "ground" also mean node 0.
class Network {
 public:
  static constexpr NodeId ground = 0;

  Network();

  /// The node called `name`, created if new.
  NodeId node(const std::string& name);
  /// The node called `name`, or -1.
  [[nodiscard]] NodeId find_node(const std::string& name) const;
  [[nodiscard]] const std::string& node_name(NodeId node) const;
  /// Number of nodes including the ground.
  [[nodiscard]] std::size_t node_count() const noexcept { return node_names_.size(); }

  /// Values are checked: R ≥ 0 (0 is allowed only for series parts of L/C and windings; a resistor
  /// needs R > 0), L > 0, C > 0, ESR, ESL ≥ 0, 0 ≤ k < 1. Throws Error naming the element otherwise.
  ElementId add_resistor(NodeId a, NodeId b, double resistance_ohm, std::string name = "");
  ElementId add_inductor(NodeId a, NodeId b, double inductance_h, double series_resistance_ohm = 0.0,
                         std::string name = "");
  ElementId add_capacitor(NodeId a, NodeId b, double capacitance_f, double esr_ohm = 0.0,
                          double esl_h = 0.0, std::string name = "");
  /// Two magnetically coupled windings, a1→b1 and a2→b2, dots at a1 and a2: M = k·√(L1·L2).
  /// A common-mode choke has both windings' dots on the same side.
  ElementId add_coupled_inductors(NodeId a1, NodeId b1, NodeId a2, NodeId b2, double l1_h, double l2_h,
                                  double coupling_factor, double r1_ohm = 0.0, double r2_ohm = 0.0,
                                  std::string name = "");
  /// A measured one-port between a and b (table->port_count() == 1), or a two-port with port 1
  /// a1→b1 and port 2 a2→b2 (port_count() == 2); the current of each port enters at a, leaves at b.
  /// A tabulated part counts as a DC path (its admittance is finite and non-zero in its range, and
  /// the network is never solved outside it). Solving at a frequency outside the table's range
  /// throws Error.
  ElementId add_tabulated(NodeId a, NodeId b, std::shared_ptr<const TabulatedAdmittance> table, std::string name = "");
  ElementId add_tabulated_two_port(NodeId a1, NodeId b1, NodeId a2, NodeId b2,
                                   std::shared_ptr<const TabulatedAdmittance> table, std::string name = "");
  /// The frequency range every tabulated part covers ([0, ∞] when there is none).
  [[nodiscard]] std::array<double, 2> tabulated_range() const;
  /// Throws Error if a tabulated part does not cover `frequency_hz`, e.g.
  /// "part.s1p: frequency 110 MHz is outside the file's range, 100 kHz to 30 MHz (no extrapolation)".
  void check_tabulated_range(double frequency_hz) const;

  /// V(plus) − V(minus) = the source's phasor (given at solve time).
  ElementId add_voltage_source(NodeId plus, NodeId minus, std::string name = "");
  /// Drives the source's phasor from `from` through the source into `to`.
  ElementId add_current_source(NodeId from, NodeId to, std::string name = "");

  /// Elements added from now on carry `where` (the input-file position they were read from), so a
  /// solve that fails because of one of them can point at it; {} for built-in parts (the default).
  void set_origin(SourcePosition where) { origin_ = std::move(where); }
  [[nodiscard]] const SourcePosition& origin() const noexcept { return origin_; }

  [[nodiscard]] const std::vector<Element>& elements() const noexcept { return elements_; }
  [[nodiscard]] std::size_t source_count() const noexcept { return source_count_; }

 private:
  void check_node(NodeId node) const;
  ElementId push(Element element);
  std::vector<std::string> node_names_;
  std::vector<Element> elements_;
  std::size_t source_count_ = 0;
  SourcePosition origin_;
};

/// Something to observe in the solution: a node-voltage difference or an element's current.
struct Probe {
  enum class Kind { voltage, current };
  Kind kind = Kind::voltage;
  NodeId plus = 0, minus = 0;  ///< voltage V(plus) − V(minus)
  ElementId element = -1;      ///< current through element, from its nodes[0] to nodes[1] (winding 2: nodes[2] to nodes[3])
  int winding = 0;             ///< 0 or 1 for coupled inductors

  [[nodiscard]] static Probe voltage(NodeId plus, NodeId minus = Network::ground) {
    return Probe{Kind::voltage, plus, minus, -1, 0};
  }
  [[nodiscard]] static Probe current(ElementId element, int winding = 0) {
    return Probe{Kind::current, 0, 0, element, winding};
  }
};

/// Responses of every probe to every source alone at unit amplitude (1 V or 1 A, phase 0), per
/// frequency. Superposition: the response to source phasors s is Σ_j at(f, p, j)·s_j.
struct Transfer {
  std::vector<double> frequency_hz;
  std::size_t probe_count = 0;
  std::size_t source_count = 0;
  std::vector<std::complex<double>> values;  ///< [frequency][probe][source]

  [[nodiscard]] std::complex<double> at(std::size_t frequency, std::size_t probe, std::size_t source) const {
    return values[(frequency * probe_count + probe) * source_count + source];
  }
};

/// An element admittance beyond which a failed solve blames the element [S] (judgement: a real
/// filter part is below 1e6 S; 1e100 S is far beyond any part and still well inside double range).
inline constexpr double singular_admittance_s = 1e100;

/// How NetworkSolver::transfer factorises the system at each frequency.
enum class SolveMethod {
  /// LU on the matrix permuted once into a fill-reducing order (Markowitz, on the structure), with
  /// threshold partial pivoting at each frequency (the diagonal is kept when it is at least 0.1 of
  /// the column's largest entry) and loops that skip the zero entries: the work follows the
  /// non-zeros, as in a sparse LU, without its bookkeeping on matrices this small.
  automatic,
  /// Dense partial-pivoting LU (Eigen PartialPivLU) at every frequency: the slow reference.
  dense,
};

/// The MNA system of a Network, checked and with its stamp pattern prepared.
class NetworkSolver {
 public:
  /// Checks that every node has a DC path to the ground (through resistors, inductors, windings or
  /// voltage sources; capacitors and current sources are not DC paths) and that voltage sources form
  /// no loop, so the system is regular. Throws Error, at the position of an element at the node
  /// (Element::where) when one has it, e.g. "node 'mid' has no DC path to the reference ground".
  explicit NetworkSolver(Network network);

  [[nodiscard]] const Network& network() const noexcept { return network_; }
  /// Size of the MNA system: (nodes − 1) + voltage sources.
  [[nodiscard]] std::size_t system_size() const noexcept { return size_; }

  /// Every probe's response to every source alone, at each frequency (each > 0, finite).
  /// Throws Error if a solve fails (non-finite result), at the position of the element to blame
  /// (Element::where) and naming it: the element with an admittance too large to solve with
  /// (> singular_admittance_s), else the node whose admittances cancel (a lossless resonance), e.g.
  /// "f.toml:10:1: the network is singular at 28.84 MHz: expected element values a solve can take,
  /// found element 'filter1.element1' with an admittance of 1.8e+308 S there (check its value)".
  [[nodiscard]] Transfer transfer(const std::vector<double>& frequency_hz, const std::vector<Probe>& probes,
                                  SolveMethod method = SolveMethod::automatic) const;

  /// The MNA matrix at one frequency (for tests and diagnostics). Rows/columns: nodes 1..N−1, then
  /// one per voltage source in the order of addition.
  [[nodiscard]] Eigen::MatrixXcd system_matrix(double frequency_hz) const;

  /// All node voltages (index = NodeId, ground = 0) for the given source phasors at one frequency.
  [[nodiscard]] std::vector<std::complex<double>> node_voltages(double frequency_hz,
                                                                const std::vector<std::complex<double>>& source_value) const;

 private:
  struct Stamp {
    int row, col;
    int element;  ///< index into elements
    int slot;     ///< which admittance of the element (0 for two-terminal, 0..3 for a coupled pair's Y11,Y12,Y21,Y22)
    double sign;
  };
  void fill(double omega, Eigen::MatrixXcd& matrix, std::vector<std::complex<double>>& admittance) const;
  /// The position of the first element at `node` that has one ({} when none has).
  [[nodiscard]] SourcePosition where_of_node(NodeId node) const;
  [[nodiscard]] Error singular_error(double frequency_hz, const std::vector<std::complex<double>>& admittance) const;
  void element_admittances(double omega, std::vector<std::complex<double>>& admittance) const;
  [[nodiscard]] int unknown_of(NodeId node) const { return node - 1; }
  void prepare_sparse();
  /// Workspace of the sparse path (one per transfer call, so the solver stays const and shareable).
  struct SparseWork {
    std::vector<std::complex<double>> lu;  ///< row-major n×n, pivot-order coordinates
    std::vector<int> pivot_row;            ///< row swapped into place at each step
    std::vector<std::complex<double>> inverse_pivot;  ///< 1/U(k,k), for the back substitution
    std::vector<int> l_begin, l_rows;      ///< per step k: rows i > k with L(i,k) ≠ 0
    std::vector<int> u_begin, u_cols;      ///< per step k: columns j > k with U(k,j) ≠ 0
  };
  /// Factorises work.lu in place; false if a column is entirely zero (singular).
  bool sparse_factorise(SparseWork& work) const;
  void sparse_solve(const SparseWork& work, std::complex<double>* rhs) const;
  Network network_;
  std::size_t size_ = 0;
  std::size_t admittance_slots_ = 0;
  std::vector<int> slot_of_element_;  ///< first admittance slot per element (−1 if none)
  std::vector<Stamp> stamps_;
  std::vector<int> voltage_source_row_;  ///< per source index: row of its branch current (−1 for current sources)

  // Fill-reducing order of the unknowns (see SolveMethod::automatic).
  bool sparse_ready_ = false;
  std::vector<int> position_of_;   ///< unknown → position in the order
  std::vector<int> stamp_target_;  ///< per stamp: flat index position(row)·n + position(col)
};

/// The impedance seen between nodes `plus` and `minus` of `network` (its sources zeroed: voltage
/// sources shorted, current sources opened), at each frequency. Computed by adding a 1 A test source.
[[nodiscard]] std::vector<std::complex<double>> driving_point_impedance(const Network& network, NodeId plus,
                                                                        NodeId minus,
                                                                        const std::vector<double>& frequency_hz);

}  // namespace spurcast
