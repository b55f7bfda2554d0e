#include "core/coupling/network.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <utility>

#include <fmt/format.h>

#include "core/input/error.hpp"
#include "core/input/units.hpp"

namespace spurcast {

namespace {

using cd = std::complex<double>;

/// Complex product without the C99 Annex G infinity recovery that std::complex's operator* calls
/// out for (__muldc3): the operands here are finite.
inline cd mul(cd a, cd b) {
  return cd(a.real() * b.real() - a.imag() * b.imag(), a.real() * b.imag() + a.imag() * b.real());
}

/// 1/z. The library's complex division (C99 Annex G, __divdc3) guards against overflow and NaN
/// cases at every call and dominated the solve; here |z|² is formed directly when it is well inside
/// the double range (always, for component values a circuit has), and the guarded form is kept for
/// the rest, so results at the extremes are unchanged.
inline cd reciprocal(cd z) {
  const double norm = z.real() * z.real() + z.imag() * z.imag();
  if (norm > 1e-290 && norm < 1e290) return cd(z.real() / norm, -z.imag() / norm);
  return 1.0 / z;
}

std::string kind_word(ElementKind kind) {
  switch (kind) {
    case ElementKind::resistor: return "resistor";
    case ElementKind::inductor: return "inductor";
    case ElementKind::capacitor: return "capacitor";
    case ElementKind::coupled_inductors: return "coupled inductors";
    case ElementKind::voltage_source: return "voltage source";
    case ElementKind::current_source: return "current source";
    case ElementKind::tabulated: return "measured part";
  }
  return "element";
}

std::string label(const Element& element, std::size_t index) {
  if (!element.name.empty()) return kind_word(element.kind) + " '" + element.name + "'";
  return kind_word(element.kind) + " " + std::to_string(index + 1);
}

/// Union-find over node ids, for the connectivity checks.
class DisjointSets {
 public:
  explicit DisjointSets(std::size_t n) : parent_(n) { std::iota(parent_.begin(), parent_.end(), 0); }
  int find(int x) {
    while (parent_[static_cast<std::size_t>(x)] != x) {
      parent_[static_cast<std::size_t>(x)] = parent_[static_cast<std::size_t>(parent_[static_cast<std::size_t>(x)])];
      x = parent_[static_cast<std::size_t>(x)];
    }
    return x;
  }
  /// false if a and b were already joined.
  bool join(int a, int b) {
    a = find(a);
    b = find(b);
    if (a == b) return false;
    parent_[static_cast<std::size_t>(a)] = b;
    return true;
  }

 private:
  std::vector<int> parent_;
};

void check_positive(double value, Dimension dimension, const std::string& what, const std::string& who) {
  if (!(std::isfinite(value) && value > 0.0)) {
    throw Error(who + ": expected " + what + " > 0, found " + format_quantity(value, dimension));
  }
}
void check_non_negative(double value, Dimension dimension, const std::string& what, const std::string& who) {
  if (!(std::isfinite(value) && value >= 0.0)) {
    throw Error(who + ": expected " + what + " >= 0, found " + format_quantity(value, dimension));
  }
}

}  // namespace

// ---------------------------------------------------------------------------------------------
// Network

Network::Network() : node_names_{"0"} {}

NodeId Network::node(const std::string& name) {
  const NodeId found = find_node(name);
  if (found >= 0) return found;
  if (name.empty()) throw Error("a node name must not be empty");
  node_names_.push_back(name);
  return static_cast<NodeId>(node_names_.size() - 1);
}

NodeId Network::find_node(const std::string& name) const {
  if (name == "0" || name == "gnd" || name == "ground") return ground;
  for (std::size_t i = 1; i < node_names_.size(); ++i) {
    if (node_names_[i] == name) return static_cast<NodeId>(i);
  }
  return -1;
}

const std::string& Network::node_name(NodeId node) const {
  check_node(node);
  return node_names_[static_cast<std::size_t>(node)];
}

void Network::check_node(NodeId node) const {
  if (node < 0 || static_cast<std::size_t>(node) >= node_names_.size()) {
    throw Error("no node " + std::to_string(node) + " in the network");
  }
}

ElementId Network::push(Element element) {
  for (const NodeId n : element.nodes) check_node(n);
  if (element.kind == ElementKind::voltage_source || element.kind == ElementKind::current_source) {
    element.source_index = static_cast<int>(source_count_++);
  }
  element.where = origin_;
  elements_.push_back(std::move(element));
  return static_cast<ElementId>(elements_.size() - 1);
}

ElementId Network::add_resistor(NodeId a, NodeId b, double resistance_ohm, std::string name) {
  Element e{ElementKind::resistor, {a, b, 0, 0}, resistance_ohm, 0, 0, 0, 0, std::move(name), -1, nullptr, {}};
  const std::string who = label(e, elements_.size());
  check_positive(resistance_ohm, Dimension::resistance, "a resistance", who);
  return push(std::move(e));
}

ElementId Network::add_inductor(NodeId a, NodeId b, double inductance_h, double series_resistance_ohm,
                                std::string name) {
  Element e{ElementKind::inductor, {a, b, 0, 0}, inductance_h, series_resistance_ohm, 0, 0, 0, std::move(name), -1, nullptr, {}};
  const std::string who = label(e, elements_.size());
  check_positive(inductance_h, Dimension::inductance, "an inductance", who);
  check_non_negative(series_resistance_ohm, Dimension::resistance, "a series resistance", who);
  return push(std::move(e));
}

ElementId Network::add_capacitor(NodeId a, NodeId b, double capacitance_f, double esr_ohm, double esl_h,
                                 std::string name) {
  Element e{ElementKind::capacitor, {a, b, 0, 0}, capacitance_f, esr_ohm, esl_h, 0, 0, std::move(name), -1, nullptr, {}};
  const std::string who = label(e, elements_.size());
  check_positive(capacitance_f, Dimension::capacitance, "a capacitance", who);
  check_non_negative(esr_ohm, Dimension::resistance, "an ESR", who);
  check_non_negative(esl_h, Dimension::inductance, "an ESL", who);
  return push(std::move(e));
}

ElementId Network::add_coupled_inductors(NodeId a1, NodeId b1, NodeId a2, NodeId b2, double l1_h, double l2_h,
                                         double coupling_factor, double r1_ohm, double r2_ohm, std::string name) {
  Element e{ElementKind::coupled_inductors, {a1, b1, a2, b2}, l1_h, l2_h, coupling_factor, r1_ohm, r2_ohm,
            std::move(name), -1, nullptr, {}};
  const std::string who = label(e, elements_.size());
  check_positive(l1_h, Dimension::inductance, "an inductance", who);
  check_positive(l2_h, Dimension::inductance, "an inductance", who);
  check_non_negative(r1_ohm, Dimension::resistance, "a winding resistance", who);
  check_non_negative(r2_ohm, Dimension::resistance, "a winding resistance", who);
  // k = 1 makes the inductance matrix singular: no admittance form (and no real part has it).
  if (!(std::isfinite(coupling_factor) && coupling_factor >= 0.0 && coupling_factor < 1.0)) {
    throw Error(who + ": expected a coupling factor in [0, 1), found " + format_quantity(coupling_factor, Dimension::number));
  }
  return push(std::move(e));
}

ElementId Network::add_tabulated(NodeId a, NodeId b, std::shared_ptr<const TabulatedAdmittance> table,
                                 std::string name) {
  if (!table || table->port_count() != 1) throw Error("expected a one-port measured part");
  Element e{ElementKind::tabulated, {a, b, 0, 0}, 0, 0, 0, 0, 0, std::move(name), -1, std::move(table), {}};
  return push(std::move(e));
}

ElementId Network::add_tabulated_two_port(NodeId a1, NodeId b1, NodeId a2, NodeId b2,
                                          std::shared_ptr<const TabulatedAdmittance> table, std::string name) {
  if (!table || table->port_count() != 2) throw Error("expected a two-port measured part");
  Element e{ElementKind::tabulated, {a1, b1, a2, b2}, 0, 0, 0, 0, 0, std::move(name), -1, std::move(table), {}};
  return push(std::move(e));
}

std::array<double, 2> Network::tabulated_range() const {
  std::array<double, 2> range{0.0, std::numeric_limits<double>::infinity()};
  for (const Element& e : elements_) {
    if (e.kind != ElementKind::tabulated) continue;
    range[0] = std::max(range[0], e.table->lowest_hz());
    range[1] = std::min(range[1], e.table->highest_hz());
  }
  return range;
}

void Network::check_tabulated_range(double frequency_hz) const {
  for (const Element& e : elements_) {
    if (e.kind != ElementKind::tabulated) continue;
    const double lo = e.table->lowest_hz(), hi = e.table->highest_hz();
    // A relative 1e-12 of slack: a frequency printed from the file and read back is still inside.
    if (frequency_hz < lo * (1.0 - 1e-12) || frequency_hz > hi * (1.0 + 1e-12)) {
      throw Error(e.table->describe() + ": frequency " + format_quantity(frequency_hz, Dimension::frequency) +
                  " is outside the file's range, " + format_quantity(lo, Dimension::frequency) + " to " +
                  format_quantity(hi, Dimension::frequency) + " (no extrapolation)");
    }
  }
}

ElementId Network::add_voltage_source(NodeId plus, NodeId minus, std::string name) {
  return push(Element{ElementKind::voltage_source, {plus, minus, 0, 0}, 0, 0, 0, 0, 0, std::move(name), -1, nullptr, {}});
}

ElementId Network::add_current_source(NodeId from, NodeId to, std::string name) {
  return push(Element{ElementKind::current_source, {from, to, 0, 0}, 0, 0, 0, 0, 0, std::move(name), -1, nullptr, {}});
}

// ---------------------------------------------------------------------------------------------
// NetworkSolver

NetworkSolver::NetworkSolver(Network network) : network_(std::move(network)) {
  const auto& elements = network_.elements();
  const std::size_t node_count = network_.node_count();

  // 1. Connectivity (SPICE's rule): every node needs a DC path to the ground, else the nodal matrix
  //    is singular at DC and ill-conditioned at low frequency; and ideal voltage sources must not
  //    form a loop (their branch equations would be dependent at every frequency).
  std::vector<bool> touched(node_count, false);
  touched[0] = true;
  DisjointSets dc(node_count);
  DisjointSets sources(node_count);
  for (std::size_t i = 0; i < elements.size(); ++i) {
    const Element& e = elements[i];
    const bool four = e.kind == ElementKind::coupled_inductors || (e.kind == ElementKind::tabulated && e.table->port_count() == 2);
    const int terminals = four ? 4 : 2;
    for (int t = 0; t < terminals; ++t) touched[static_cast<std::size_t>(e.nodes[static_cast<std::size_t>(t)])] = true;
    switch (e.kind) {
      case ElementKind::resistor:
      case ElementKind::inductor: dc.join(e.nodes[0], e.nodes[1]); break;
      case ElementKind::coupled_inductors:
        dc.join(e.nodes[0], e.nodes[1]);
        dc.join(e.nodes[2], e.nodes[3]);
        break;
      case ElementKind::tabulated:
        dc.join(e.nodes[0], e.nodes[1]);
        if (e.table->port_count() == 2) {
          dc.join(e.nodes[2], e.nodes[3]);
          dc.join(e.nodes[0], e.nodes[2]);  // a two-port's ports share a reference through the part
        }
        break;
      case ElementKind::voltage_source:
        dc.join(e.nodes[0], e.nodes[1]);
        if (!sources.join(e.nodes[0], e.nodes[1])) {
          throw Error(e.where, label(e, i) + " closes a loop of voltage sources at node '" +
                                   network_.node_name(e.nodes[0]) + "'");
        }
        break;
      case ElementKind::capacitor:
      case ElementKind::current_source: break;
    }
  }
  for (std::size_t n = 1; n < node_count; ++n) {
    const std::string& name = network_.node_name(static_cast<NodeId>(n));
    if (!touched[n]) throw Error("node '" + name + "' is not connected to any element");
    if (dc.find(static_cast<int>(n)) != dc.find(0)) {
      throw Error(where_of_node(static_cast<NodeId>(n)), "node '" + name + "' has no DC path to the reference ground");
    }
  }

  // 2. The stamp pattern: which admittance slot goes where, with which sign.
  const int voltage_rows_start = static_cast<int>(node_count) - 1;
  int voltage_sources = 0;
  voltage_source_row_.assign(network_.source_count(), -1);
  slot_of_element_.assign(elements.size(), -1);
  auto add = [&](NodeId r, NodeId c, int element, int slot, double sign) {
    if (r == Network::ground || c == Network::ground) return;
    stamps_.push_back(Stamp{unknown_of(r), unknown_of(c), element, slot, sign});
  };
  // A two-port's 2×2 admittance: i_w = Σ_v Y_wv·v_v with v_1 = V(a1) − V(b1), v_2 = V(a2) − V(b2);
  // i_w leaves a_w and enters b_w.
  const auto stamp_two_port = [&](std::size_t i) {
    const Element& e = elements[i];
    const int id = static_cast<int>(i);
    const int first = static_cast<int>(admittance_slots_);
    admittance_slots_ += 4;
    slot_of_element_[i] = first;
    for (int w = 0; w < 2; ++w) {
      for (int v = 0; v < 2; ++v) {
        const int slot = first + 2 * w + v;
        const NodeId aw = e.nodes[static_cast<std::size_t>(2 * w)], bw = e.nodes[static_cast<std::size_t>(2 * w + 1)];
        const NodeId av = e.nodes[static_cast<std::size_t>(2 * v)], bv = e.nodes[static_cast<std::size_t>(2 * v + 1)];
        add(aw, av, id, slot, +1.0);
        add(aw, bv, id, slot, -1.0);
        add(bw, av, id, slot, -1.0);
        add(bw, bv, id, slot, +1.0);
      }
    }
  };
  for (std::size_t i = 0; i < elements.size(); ++i) {
    const Element& e = elements[i];
    const int id = static_cast<int>(i);
    switch (e.kind) {
      case ElementKind::tabulated:
        if (e.table->port_count() == 2) {
          stamp_two_port(i);  // the same 2×2 admittance stamp as a coupled pair (below)
          break;
        }
        [[fallthrough]];
      case ElementKind::resistor:
      case ElementKind::inductor:
      case ElementKind::capacitor: {
        const int slot = static_cast<int>(admittance_slots_++);
        slot_of_element_[i] = slot;
        add(e.nodes[0], e.nodes[0], id, slot, +1.0);
        add(e.nodes[1], e.nodes[1], id, slot, +1.0);
        add(e.nodes[0], e.nodes[1], id, slot, -1.0);
        add(e.nodes[1], e.nodes[0], id, slot, -1.0);
        break;
      }
      case ElementKind::coupled_inductors:
        stamp_two_port(i);
        break;
      case ElementKind::voltage_source: {
        const int row = voltage_rows_start + voltage_sources++;
        voltage_source_row_[static_cast<std::size_t>(e.source_index)] = row;
        // Branch current i leaves `plus` into the source; constraint V(plus) − V(minus) = value.
        for (int t = 0; t < 2; ++t) {
          const NodeId n = e.nodes[static_cast<std::size_t>(t)];
          if (n == Network::ground) continue;
          const double sign = t == 0 ? 1.0 : -1.0;
          stamps_.push_back(Stamp{unknown_of(n), row, id, -1, sign});
          stamps_.push_back(Stamp{row, unknown_of(n), id, -1, sign});
        }
        break;
      }
      case ElementKind::current_source: break;
    }
  }
  size_ = static_cast<std::size_t>(voltage_rows_start + voltage_sources);
  prepare_sparse();
}

void NetworkSolver::prepare_sparse() {
  // Pivot order by the Markowitz criterion on the structure (fewest (r−1)(c−1) products, i.e. least
  // fill), among unknowns whose diagonal is structurally non-zero. A voltage source's branch row has
  // a zero diagonal until one of its nodes is eliminated, which fills it (−1/Y): the order respects
  // that. Markowitz, "The elimination form of the inverse and its application to linear
  // programming", Management Science 3 (1957). Row swaps at solve time (threshold pivoting) may add
  // fill that this order did not plan; the factorisation follows the actual non-zeros, so that
  // costs time, not correctness.
  const int n = static_cast<int>(size_);
  sparse_ready_ = false;
  if (n == 0) return;
  std::vector<char> pattern(static_cast<std::size_t>(n * n), 0);
  auto at = [&](int r, int c) -> char& { return pattern[static_cast<std::size_t>(r * n + c)]; };
  for (const Stamp& stamp : stamps_) at(stamp.row, stamp.col) = 1;
  std::vector<char> done(static_cast<std::size_t>(n), 0);
  std::vector<int> order;
  order.reserve(static_cast<std::size_t>(n));
  for (int step = 0; step < n; ++step) {
    int best = -1;
    long best_cost = 0;
    for (int u = 0; u < n; ++u) {
      if (done[static_cast<std::size_t>(u)] || !at(u, u)) continue;
      long rows = 0, cols = 0;
      for (int i = 0; i < n; ++i) {
        if (done[static_cast<std::size_t>(i)] || i == u) continue;
        rows += at(i, u);
        cols += at(u, i);
      }
      const long cost = rows * cols;
      if (best < 0 || cost < best_cost) {
        best = u;
        best_cost = cost;
      }
    }
    if (best < 0) return;  // no structurally usable pivot: the dense path is used
    done[static_cast<std::size_t>(best)] = 1;
    order.push_back(best);
    for (int i = 0; i < n; ++i) {
      if (done[static_cast<std::size_t>(i)] || !at(i, best)) continue;
      for (int j = 0; j < n; ++j) {
        if (!done[static_cast<std::size_t>(j)] && at(best, j)) at(i, j) = 1;
      }
    }
  }
  position_of_.assign(static_cast<std::size_t>(n), 0);
  for (int k = 0; k < n; ++k) position_of_[static_cast<std::size_t>(order[static_cast<std::size_t>(k)])] = k;
  stamp_target_.resize(stamps_.size());
  for (std::size_t s = 0; s < stamps_.size(); ++s) {
    stamp_target_[s] = position_of_[static_cast<std::size_t>(stamps_[s].row)] * n +
                       position_of_[static_cast<std::size_t>(stamps_[s].col)];
  }
  sparse_ready_ = true;
}

bool NetworkSolver::sparse_factorise(SparseWork& work) const {
  // Threshold partial pivoting (Duff, Erisman & Reid, Direct Methods for Sparse Matrices, 1986,
  // §5.4): keep the diagonal pivot, which preserves the fill-reducing order, unless it is below
  // 0.1 of the column's largest candidate; then swap in that row. Magnitudes in the 1-norm of the
  // complex entry (cheap; within √2 of the modulus).
  constexpr double pivot_threshold = 0.1;
  const int n = static_cast<int>(size_);
  cd* a = work.lu.data();
  auto size_of = [](cd z) { return std::abs(z.real()) + std::abs(z.imag()); };
  work.pivot_row.resize(static_cast<std::size_t>(n));
  work.inverse_pivot.resize(static_cast<std::size_t>(n));
  work.l_begin.assign(static_cast<std::size_t>(n + 1), 0);
  work.u_begin.assign(static_cast<std::size_t>(n + 1), 0);
  work.l_rows.clear();
  work.u_cols.clear();
  for (int k = 0; k < n; ++k) {
    int best = -1;
    double best_size = 0.0;
    for (int i = k; i < n; ++i) {
      const double v = size_of(a[i * n + k]);
      if (v > best_size) {
        best_size = v;
        best = i;
      }
    }
    if (best < 0 || !std::isfinite(best_size)) return false;
    const int pivot = size_of(a[k * n + k]) >= pivot_threshold * best_size ? k : best;
    work.pivot_row[static_cast<std::size_t>(k)] = pivot;
    // Swap only columns k.. of the two rows: the multipliers already stored in columns < k stay
    // with the step that made them, which is the order sparse_solve applies swaps and L in.
    if (pivot != k) std::swap_ranges(a + k * n + k, a + (k + 1) * n, a + pivot * n + k);
    work.l_begin[static_cast<std::size_t>(k)] = static_cast<int>(work.l_rows.size());
    work.u_begin[static_cast<std::size_t>(k)] = static_cast<int>(work.u_cols.size());
    const cd* row_k = a + k * n;
    for (int j = k + 1; j < n; ++j) {
      if (row_k[j] != cd(0.0, 0.0)) work.u_cols.push_back(j);
    }
    const cd inverse = reciprocal(row_k[k]);
    work.inverse_pivot[static_cast<std::size_t>(k)] = inverse;
    const int c0 = work.u_begin[static_cast<std::size_t>(k)];
    const int c1 = static_cast<int>(work.u_cols.size());
    for (int i = k + 1; i < n; ++i) {
      cd* row_i = a + i * n;
      if (row_i[k] == cd(0.0, 0.0)) continue;
      const cd l = row_i[k] * inverse;
      row_i[k] = l;
      work.l_rows.push_back(i);
      for (int c = c0; c < c1; ++c) {
        const int j = work.u_cols[static_cast<std::size_t>(c)];
        row_i[j] -= mul(l, row_k[j]);
      }
    }
  }
  work.l_begin[static_cast<std::size_t>(n)] = static_cast<int>(work.l_rows.size());
  work.u_begin[static_cast<std::size_t>(n)] = static_cast<int>(work.u_cols.size());
  return true;
}

void NetworkSolver::sparse_solve(const SparseWork& work, cd* x) const {
  const int n = static_cast<int>(size_);
  const cd* a = work.lu.data();
  for (int k = 0; k < n; ++k) {  // P, then L y = b (unit diagonal); the swaps interleave with L
    const int p = work.pivot_row[static_cast<std::size_t>(k)];
    if (p != k) std::swap(x[k], x[p]);
    const cd xk = x[k];
    for (int r = work.l_begin[static_cast<std::size_t>(k)]; r < work.l_begin[static_cast<std::size_t>(k + 1)]; ++r) {
      const int i = work.l_rows[static_cast<std::size_t>(r)];
      x[i] -= mul(a[i * n + k], xk);
    }
  }
  for (int k = n - 1; k >= 0; --k) {  // U x = y
    cd sum = x[k];
    for (int c = work.u_begin[static_cast<std::size_t>(k)]; c < work.u_begin[static_cast<std::size_t>(k + 1)]; ++c) {
      const int j = work.u_cols[static_cast<std::size_t>(c)];
      sum -= mul(a[k * n + j], x[j]);
    }
    x[k] = mul(sum, work.inverse_pivot[static_cast<std::size_t>(k)]);
  }
}

void NetworkSolver::element_admittances(double omega, std::vector<cd>& admittance) const {
  const auto& elements = network_.elements();
  admittance.resize(admittance_slots_);
  const cd j(0.0, 1.0);
  for (std::size_t i = 0; i < elements.size(); ++i) {
    const Element& e = elements[i];
    const int slot = slot_of_element_[i];
    if (slot < 0) continue;
    const auto s = static_cast<std::size_t>(slot);
    switch (e.kind) {
      case ElementKind::resistor: admittance[s] = 1.0 / e.value_a; break;
      case ElementKind::inductor: admittance[s] = reciprocal(cd(e.value_b, omega * e.value_a)); break;
      case ElementKind::capacitor: {
        // Y = 1/(ESR + jωESL + 1/(jωC)) = jωC / (1 − ω²·ESL·C + jωC·ESR): finite at every ω > 0
        // except exact series resonance with ESR = 0, where a tiny floor keeps it a near short.
        cd denominator(1.0 - omega * omega * e.value_c * e.value_a, omega * e.value_a * e.value_b);
        if (std::abs(denominator.real()) + std::abs(denominator.imag()) < 1e-300) denominator = 1e-300;
        admittance[s] = mul(j * omega * e.value_a, reciprocal(denominator));
        break;
      }
      case ElementKind::coupled_inductors: {
        // Z = [[R1 + jωL1, jωM], [jωM, R2 + jωL2]], M = k·√(L1·L2); Y = Z⁻¹.
        const double m = e.value_c * std::sqrt(e.value_a * e.value_b);
        const cd z11(e.value_d, omega * e.value_a), z22(e.value_e, omega * e.value_b), z12(0.0, omega * m);
        const cd det = z11 * z22 - z12 * z12;
        const cd inverse_det = reciprocal(det);
        admittance[s] = mul(z22, inverse_det);
        admittance[s + 1] = -mul(z12, inverse_det);
        admittance[s + 2] = admittance[s + 1];
        admittance[s + 3] = mul(z11, inverse_det);
        break;
      }
      case ElementKind::tabulated: {
        const auto y = e.table->admittance(omega / (2.0 * M_PI));
        const int ports = e.table->port_count();
        for (int k = 0; k < ports * ports; ++k) admittance[s + static_cast<std::size_t>(k)] = y[static_cast<std::size_t>(k)];
        break;
      }
      default: break;
    }
  }
}

SourcePosition NetworkSolver::where_of_node(NodeId node) const {
  for (const Element& e : network_.elements()) {
    if (!e.where.file.empty() && std::find(e.nodes.begin(), e.nodes.end(), node) != e.nodes.end()) return e.where;
  }
  return {};
}

Error NetworkSolver::singular_error(double frequency_hz, const std::vector<cd>& admittance) const {
  const auto& elements = network_.elements();
  const std::string head = "the network is singular at " + format_quantity(frequency_hz, Dimension::frequency) + ": ";
  // 1. An element whose admittance is too large (or not finite) swamps the system.
  int worst = -1;
  double worst_s = 0.0;
  for (const Stamp& stamp : stamps_) {
    if (stamp.slot < 0) continue;
    const double y = std::abs(admittance[static_cast<std::size_t>(stamp.slot)]);
    const double magnitude = std::isfinite(y) ? y : std::numeric_limits<double>::infinity();
    if (worst < 0 || magnitude > worst_s) {
      worst = stamp.element;
      worst_s = magnitude;
    }
  }
  if (worst >= 0 && worst_s > singular_admittance_s) {
    const Element& e = elements[static_cast<std::size_t>(worst)];
    const std::string size = std::isfinite(worst_s) ? "with an admittance of " + fmt::format("{:.3g} S", worst_s)
                                                    : std::string("whose admittance overflows");
    return Error(e.where, head + "expected element values a solve can take, found " + kind_word(e.kind) + " '" +
                              e.name + "' " + size + " there (check its value)");
  }
  // 2. A node whose admittances cancel (a lossless parallel resonance) has an empty row: the
  //    smallest |sum of Y| relative to the sum of |Y| among the node rows of the diagonal.
  const int node_rows = static_cast<int>(network_.node_count()) - 1;
  std::vector<cd> sum(static_cast<std::size_t>(std::max(node_rows, 0)), cd(0.0, 0.0));
  std::vector<double> total(sum.size(), 0.0);
  for (const Stamp& stamp : stamps_) {
    if (stamp.slot < 0 || stamp.row != stamp.col || stamp.row >= node_rows) continue;
    const cd y = admittance[static_cast<std::size_t>(stamp.slot)];
    sum[static_cast<std::size_t>(stamp.row)] += stamp.sign * y;
    total[static_cast<std::size_t>(stamp.row)] += std::abs(y);
  }
  int node_row = -1;
  double smallest = 1e-9;  // relative size of the sum below which the admittances cancel (judgement)
  for (int r = 0; r < node_rows; ++r) {
    const auto i = static_cast<std::size_t>(r);
    if (total[i] > 0.0 && std::abs(sum[i]) <= smallest * total[i]) {
      smallest = std::abs(sum[i]) / total[i];
      node_row = r;
    }
  }
  if (node_row >= 0) {
    const NodeId node = node_row + 1;
    return Error(where_of_node(node), head + "expected every node to have a path to ground at that frequency, found node '" +
                            network_.node_name(node) +
                            "' whose admittances cancel (a lossless resonance: give its parts a resistance)");
  }
  return Error(head + "expected every node to have a path to ground at that frequency (check the element values)");
}

void NetworkSolver::fill(double omega, Eigen::MatrixXcd& matrix, std::vector<cd>& admittance) const {
  element_admittances(omega, admittance);
  matrix.setZero();
  for (const Stamp& stamp : stamps_) {
    const cd value = stamp.slot < 0 ? cd(stamp.sign, 0.0) : stamp.sign * admittance[static_cast<std::size_t>(stamp.slot)];
    matrix(stamp.row, stamp.col) += value;
  }
}

namespace {
void check_frequency(double frequency_hz) {
  if (!(std::isfinite(frequency_hz) && frequency_hz > 0.0)) {
    throw Error("expected a frequency > 0 Hz, found " + format_quantity(frequency_hz, Dimension::frequency));
  }
}
}  // namespace

Eigen::MatrixXcd NetworkSolver::system_matrix(double frequency_hz) const {
  check_frequency(frequency_hz);
  network_.check_tabulated_range(frequency_hz);
  Eigen::MatrixXcd matrix(static_cast<Eigen::Index>(size_), static_cast<Eigen::Index>(size_));
  std::vector<cd> admittance;
  fill(2.0 * M_PI * frequency_hz, matrix, admittance);
  return matrix;
}

Transfer NetworkSolver::transfer(const std::vector<double>& frequency_hz, const std::vector<Probe>& probes,
                                 SolveMethod method) const {
  const auto& elements = network_.elements();
  for (const Probe& p : probes) {
    if (p.kind == Probe::Kind::voltage) {
      (void)network_.node_name(p.plus);
      (void)network_.node_name(p.minus);
    } else if (p.element < 0 || static_cast<std::size_t>(p.element) >= elements.size() || p.winding < 0 ||
               p.winding > (elements[static_cast<std::size_t>(p.element)].kind == ElementKind::coupled_inductors ||
                                    (elements[static_cast<std::size_t>(p.element)].kind == ElementKind::tabulated &&
                                     elements[static_cast<std::size_t>(p.element)].table->port_count() == 2)
                                ? 1
                                : 0)) {
      throw Error("no element " + std::to_string(p.element) + " (winding " + std::to_string(p.winding) +
                  ") to probe in the network");
    }
  }
  for (const double f : frequency_hz) {
    check_frequency(f);
    network_.check_tabulated_range(f);
  }

  const std::size_t sources = network_.source_count();
  Transfer out;
  out.frequency_hz = frequency_hz;
  out.probe_count = probes.size();
  out.source_count = sources;
  out.values.assign(frequency_hz.size() * probes.size() * sources, cd(0.0, 0.0));
  if (sources == 0 || probes.empty()) return out;

  const auto n = static_cast<Eigen::Index>(size_);
  const auto s_count = static_cast<Eigen::Index>(sources);
  Eigen::MatrixXcd matrix(n, n);
  // Right-hand sides: one column per source at unit amplitude; they do not depend on frequency.
  Eigen::MatrixXcd rhs = Eigen::MatrixXcd::Zero(n, s_count);
  for (const Element& e : elements) {
    if (e.kind == ElementKind::voltage_source) {
      rhs(voltage_source_row_[static_cast<std::size_t>(e.source_index)], e.source_index) = 1.0;
    } else if (e.kind == ElementKind::current_source) {
      if (e.nodes[0] != Network::ground) rhs(unknown_of(e.nodes[0]), e.source_index) -= 1.0;
      if (e.nodes[1] != Network::ground) rhs(unknown_of(e.nodes[1]), e.source_index) += 1.0;
    }
  }
  Eigen::PartialPivLU<Eigen::MatrixXcd> lu(n);
  Eigen::MatrixXcd solution(n, s_count);
  std::vector<cd> admittance;
  auto voltage = [&](NodeId node, Eigen::Index source) -> cd {
    return node == Network::ground ? cd(0.0, 0.0) : solution(unknown_of(node), source);
  };

  // The static-pivot sparse path works in pivot-order coordinates.
  const bool use_sparse = method == SolveMethod::automatic && sparse_ready_;
  SparseWork work;
  std::vector<cd> sparse_rhs, sparse_x;
  if (use_sparse) {
    work.lu.resize(static_cast<std::size_t>(n * n));
    sparse_rhs.assign(static_cast<std::size_t>(n * s_count), cd(0.0, 0.0));
    for (Eigen::Index s = 0; s < s_count; ++s) {
      for (Eigen::Index u = 0; u < n; ++u) {
        sparse_rhs[static_cast<std::size_t>(s * n + position_of_[static_cast<std::size_t>(u)])] = rhs(u, s);
      }
    }
  }

  for (std::size_t fi = 0; fi < frequency_hz.size(); ++fi) {
    const double omega = 2.0 * M_PI * frequency_hz[fi];
    bool solved = false;
    if (n > 0 && use_sparse) {
      element_admittances(omega, admittance);
      std::fill(work.lu.begin(), work.lu.end(), cd(0.0, 0.0));
      for (std::size_t st = 0; st < stamps_.size(); ++st) {
        const Stamp& stamp = stamps_[st];
        work.lu[static_cast<std::size_t>(stamp_target_[st])] +=
            stamp.slot < 0 ? cd(stamp.sign, 0.0) : stamp.sign * admittance[static_cast<std::size_t>(stamp.slot)];
      }
      if (sparse_factorise(work)) {
        sparse_x = sparse_rhs;
        for (Eigen::Index s = 0; s < s_count; ++s) {
          cd* x = sparse_x.data() + s * n;
          sparse_solve(work, x);
          for (Eigen::Index u = 0; u < n; ++u) solution(u, s) = x[position_of_[static_cast<std::size_t>(u)]];
        }
        solved = solution.allFinite();
      }
    }
    if (n > 0 && !solved) {
      fill(omega, matrix, admittance);
      lu.compute(matrix);
      solution.noalias() = lu.solve(rhs);
      if (!solution.allFinite()) throw singular_error(frequency_hz[fi], admittance);
    } else if (n == 0) {
      element_admittances(omega, admittance);
    }
    for (std::size_t pi = 0; pi < probes.size(); ++pi) {
      const Probe& p = probes[pi];
      cd* row = &out.values[(fi * probes.size() + pi) * sources];
      for (Eigen::Index s = 0; s < s_count; ++s) {
        cd value(0.0, 0.0);
        if (p.kind == Probe::Kind::voltage) {
          value = voltage(p.plus, s) - voltage(p.minus, s);
        } else {
          const Element& e = elements[static_cast<std::size_t>(p.element)];
          const int slot = slot_of_element_[static_cast<std::size_t>(p.element)];
          switch (e.kind) {
            case ElementKind::resistor:
            case ElementKind::inductor:
            case ElementKind::capacitor:
              value = admittance[static_cast<std::size_t>(slot)] * (voltage(e.nodes[0], s) - voltage(e.nodes[1], s));
              break;
            case ElementKind::tabulated:
              if (e.table->port_count() == 1) {
                value = admittance[static_cast<std::size_t>(slot)] * (voltage(e.nodes[0], s) - voltage(e.nodes[1], s));
                break;
              }
              [[fallthrough]];
            case ElementKind::coupled_inductors: {
              const cd v1 = voltage(e.nodes[0], s) - voltage(e.nodes[1], s);
              const cd v2 = voltage(e.nodes[2], s) - voltage(e.nodes[3], s);
              const auto base = static_cast<std::size_t>(slot + 2 * p.winding);
              value = admittance[base] * v1 + admittance[base + 1] * v2;
              break;
            }
            case ElementKind::voltage_source:
              value = solution(voltage_source_row_[static_cast<std::size_t>(e.source_index)], s);
              break;
            case ElementKind::current_source: value = e.source_index == s ? cd(1.0, 0.0) : cd(0.0, 0.0); break;
          }
        }
        row[s] = value;
      }
    }
  }
  return out;
}

std::vector<cd> NetworkSolver::node_voltages(double frequency_hz, const std::vector<cd>& source_value) const {
  if (source_value.size() != network_.source_count()) {
    throw Error("expected " + std::to_string(network_.source_count()) + " source values, found " +
                std::to_string(source_value.size()));
  }
  std::vector<Probe> probes;
  for (std::size_t node = 0; node < network_.node_count(); ++node) probes.push_back(Probe::voltage(static_cast<NodeId>(node)));
  const Transfer t = transfer({frequency_hz}, probes);
  std::vector<cd> out(network_.node_count(), cd(0.0, 0.0));
  for (std::size_t p = 0; p < probes.size(); ++p) {
    for (std::size_t s = 0; s < t.source_count; ++s) out[p] += t.at(0, p, s) * source_value[s];
  }
  return out;
}

std::vector<cd> driving_point_impedance(const Network& network, NodeId plus, NodeId minus,
                                        const std::vector<double>& frequency_hz) {
  Network probe_network = network;
  // 1 A into `plus`, out of `minus`: Z = V(plus) − V(minus).
  const ElementId test = probe_network.add_current_source(minus, plus, "test");
  const auto source = static_cast<std::size_t>(probe_network.elements()[static_cast<std::size_t>(test)].source_index);
  const NetworkSolver solver(std::move(probe_network));
  const Transfer t = solver.transfer(frequency_hz, {Probe::voltage(plus, minus)});
  std::vector<cd> z(frequency_hz.size());
  for (std::size_t f = 0; f < frequency_hz.size(); ++f) z[f] = t.at(f, 0, source);
  return z;
}

}  // namespace spurcast
