// MNA engine. External checks: closed-form circuit responses of any circuits text (RC and RLC
// dividers, the second-order LC low-pass and its −40 dB/decade asymptote, the input impedance of a
// loaded coupled-inductor pair, Z_in = Z1 + ω²M²/(Z2 + Z_L), e.g. Nilsson & Riedel, Electric
// Circuits, ch. "Mutual inductance", linear transformer "reflected impedance"), and reciprocity of
// passive networks (Z_ij = Z_ji, common practice). Fast path (admittance stamps + PartialPivLU)
// against a slow twin written here: a different formulation (one branch-current unknown per element,
// impedance form) solved with FullPivLU.
#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <random>

#include "core/input/error.hpp"
#include "core/coupling/network.hpp"

using namespace spurcast;
using cd = std::complex<double>;

namespace {

const double rel_tol = 1e-9;   // two double-precision solves of the same linear system
const double tol_db = 0.2;     // asymptote reading
const double pi = 3.14159265358979323846;

double omega(double f) { return 2.0 * pi * f; }

bool close(cd a, cd b, double rel) { return std::abs(a - b) <= rel * std::max(std::abs(b), 1e-300); }

/// The slow twin: nodal voltages plus one branch current per element (two for a coupled pair),
/// branch equations in impedance form, FullPivLU. Returns node voltages for the given source values.
std::vector<cd> twin_node_voltages(const Network& net, double f, const std::vector<cd>& source_value) {
  const auto& elements = net.elements();
  const int nodes = static_cast<int>(net.node_count()) - 1;
  std::vector<int> branch_of(elements.size());
  int branches = 0;
  for (std::size_t i = 0; i < elements.size(); ++i) {
    branch_of[i] = branches;
    branches += elements[i].kind == ElementKind::coupled_inductors ? 2 : 1;
  }
  const int n = nodes + branches;
  Eigen::MatrixXcd a = Eigen::MatrixXcd::Zero(n, n);
  Eigen::VectorXcd b = Eigen::VectorXcd::Zero(n);
  const cd j(0, 1);
  const double w = omega(f);
  auto kcl = [&](NodeId node, int branch, double sign) {  // branch current leaves `node` with `sign`
    if (node != 0) a(node - 1, nodes + branch) += sign;
  };
  auto volt = [&](int row, NodeId node, double sign) {
    if (node != 0) a(row, node - 1) += sign;
  };
  for (std::size_t i = 0; i < elements.size(); ++i) {
    const Element& e = elements[i];
    const int br = branch_of[i];
    const int row = nodes + br;
    kcl(e.nodes[0], br, 1.0);
    kcl(e.nodes[1], br, -1.0);
    switch (e.kind) {
      case ElementKind::resistor:
      case ElementKind::inductor:
      case ElementKind::capacitor: {
        cd z = e.kind == ElementKind::resistor ? cd(e.value_a)
               : e.kind == ElementKind::inductor ? cd(e.value_b, w * e.value_a)
                                                 : cd(e.value_b, w * e.value_c - 1.0 / (w * e.value_a));
        volt(row, e.nodes[0], 1.0);
        volt(row, e.nodes[1], -1.0);
        a(row, row) -= z;
        break;
      }
      case ElementKind::coupled_inductors: {
        kcl(e.nodes[2], br + 1, 1.0);
        kcl(e.nodes[3], br + 1, -1.0);
        const cd m = j * w * e.value_c * std::sqrt(e.value_a * e.value_b);
        volt(row, e.nodes[0], 1.0);
        volt(row, e.nodes[1], -1.0);
        a(row, row) -= cd(e.value_d, w * e.value_a);
        a(row, row + 1) -= m;
        volt(row + 1, e.nodes[2], 1.0);
        volt(row + 1, e.nodes[3], -1.0);
        a(row + 1, row) -= m;
        a(row + 1, row + 1) -= cd(e.value_e, w * e.value_b);
        break;
      }
      case ElementKind::voltage_source:
        volt(row, e.nodes[0], 1.0);
        volt(row, e.nodes[1], -1.0);
        b(row) = source_value[static_cast<std::size_t>(e.source_index)];
        break;
      case ElementKind::current_source:
        a(row, row) = 1.0;
        b(row) = source_value[static_cast<std::size_t>(e.source_index)];
        break;
      case ElementKind::tabulated: FAIL("the reference solver has no measured parts"); break;
    }
  }
  const Eigen::VectorXcd x = a.fullPivLu().solve(b);
  std::vector<cd> v(net.node_count(), cd(0, 0));
  for (int k = 0; k < nodes; ++k) v[static_cast<std::size_t>(k + 1)] = x(k);
  return v;
}

}  // namespace

TEST_CASE("RC divider: H = 1/(1 + jωRC) (first-order low-pass, closed form)") {
  Network net;
  const NodeId in = net.node("in"), out = net.node("out");
  net.add_voltage_source(in, Network::ground);
  const double r = 1e3, c = 1e-9;
  net.add_resistor(in, out, r);
  net.add_capacitor(out, Network::ground, c);
  const NetworkSolver solver(net);
  const std::vector<double> f = {1e3, 159.154943e3, 1e6, 30e6};
  const Transfer t = solver.transfer(f, {Probe::voltage(out)});
  for (std::size_t i = 0; i < f.size(); ++i) {
    CAPTURE(f[i]);
    const cd expected = 1.0 / cd(1.0, omega(f[i]) * r * c);
    CHECK(close(t.at(i, 0, 0), expected, rel_tol));
  }
}

TEST_CASE("series RLC divider, and a capacitor's ESR/ESL equal explicit series parts") {
  const double r = 2.0, l = 1e-6, c = 100e-9;
  const std::vector<double> f = {10e3, 503.29e3, 2e6, 50e6};
  // Output across the capacitor: H = (1/jωC) / (R + jωL + 1/jωC).
  Network explicit_parts;
  {
    const NodeId in = explicit_parts.node("in"), a = explicit_parts.node("a"), b = explicit_parts.node("b"),
                 out = explicit_parts.node("out");
    explicit_parts.add_voltage_source(in, Network::ground);
    explicit_parts.add_resistor(in, a, r);
    explicit_parts.add_inductor(a, b, l);
    explicit_parts.add_capacitor(b, out, c);
    explicit_parts.add_resistor(out, Network::ground, 1e-3);  // a 1 mΩ sense resistor to read the current
  }
  const NetworkSolver solver(explicit_parts);
  const Transfer t = solver.transfer(f, {Probe::voltage(explicit_parts.find_node("b"), explicit_parts.find_node("out"))});
  // One capacitor element with ESR = R and ESL = L: the current through it must equal the current
  // through the explicit chain.
  Network lumped;
  {
    const NodeId in = lumped.node("in"), out = lumped.node("out");
    lumped.add_voltage_source(in, Network::ground);
    lumped.add_capacitor(in, out, c, r, l);
    lumped.add_resistor(out, Network::ground, 1e-3);
  }
  const NetworkSolver lumped_solver(lumped);
  const Transfer tl = lumped_solver.transfer(f, {Probe::current(1)});
  const Transfer te = solver.transfer(f, {Probe::current(1)});
  for (std::size_t i = 0; i < f.size(); ++i) {
    CAPTURE(f[i]);
    const cd zc = 1.0 / (cd(0, 1) * omega(f[i]) * c);
    const cd z_total = cd(r + 1e-3, omega(f[i]) * l) + zc;
    CHECK(close(t.at(i, 0, 0), zc / z_total, 1e-8));
    CHECK(close(tl.at(i, 0, 0), te.at(i, 0, 0), 1e-8));
    CHECK(close(tl.at(i, 0, 0), 1.0 / z_total, 1e-8));
  }
}

TEST_CASE("LC low-pass: closed form and −40 dB/decade above resonance") {
  // H = 1 / (1 − ω²LC + jωL/R) for series L, shunt C, load R.
  const double l = 10e-6, c = 10e-6, r = 5.0;
  const double f0 = 1.0 / (2.0 * pi * std::sqrt(l * c));  // 15.9 kHz
  Network net;
  const NodeId in = net.node("in"), out = net.node("out");
  net.add_voltage_source(in, Network::ground);
  net.add_inductor(in, out, l);
  net.add_capacitor(out, Network::ground, c);
  net.add_resistor(out, Network::ground, r);
  const NetworkSolver solver(net);
  const std::vector<double> f = {0.1 * f0, f0, 10.0 * f0, 100.0 * f0, 1000.0 * f0};
  const Transfer t = solver.transfer(f, {Probe::voltage(out)});
  for (std::size_t i = 0; i < f.size(); ++i) {
    const double w = omega(f[i]);
    CHECK(close(t.at(i, 0, 0), 1.0 / cd(1.0 - w * w * l * c, w * l / r), rel_tol));
  }
  const auto db = [&](std::size_t i) { return 20.0 * std::log10(std::abs(t.at(i, 0, 0))); };
  CHECK(std::abs(db(3) - db(4) - 40.0) < tol_db);
  CHECK(std::abs(db(2) - db(3) - 40.0) < tol_db);
}

TEST_CASE("coupled-inductor pair: Z_in = R1 + jωL1 + ω²M²/(R2 + jωL2 + Z_L) (reflected impedance)") {
  const double l1 = 100e-6, l2 = 25e-6, k = 0.9, r1 = 0.1, r2 = 0.05, rl = 10.0;
  const double m = k * std::sqrt(l1 * l2);
  Network net;
  const NodeId p = net.node("p"), s = net.node("s");
  net.add_coupled_inductors(p, Network::ground, s, Network::ground, l1, l2, k, r1, r2);
  net.add_resistor(s, Network::ground, rl);
  const std::vector<double> f = {1e3, 100e3, 10e6};
  const auto z = driving_point_impedance(net, p, Network::ground, f);
  for (std::size_t i = 0; i < f.size(); ++i) {
    CAPTURE(f[i]);
    const double w = omega(f[i]);
    const cd expected = cd(r1, w * l1) + w * w * m * m / (cd(r2 + rl, w * l2));
    CHECK(close(z[i], expected, rel_tol));
  }
  // The winding current probes: I2 / I1 = −jωM / (R2 + jωL2 + Z_L) for the dot convention used.
  Network driven = net;
  const ElementId source = driven.add_current_source(Network::ground, p);
  (void)source;
  const NetworkSolver solver(driven);
  const Transfer t = solver.transfer(f, {Probe::current(0, 0), Probe::current(0, 1)});
  for (std::size_t i = 0; i < f.size(); ++i) {
    const double w = omega(f[i]);
    CHECK(close(t.at(i, 0, 0), cd(1.0, 0.0), rel_tol));
    CHECK(close(t.at(i, 1, 0), -cd(0, w * m) / cd(r2 + rl, w * l2), rel_tol));
  }
}

namespace {

/// A passive ladder-and-bridge network with every element kind (no sources).
Network passive_mesh() {
  Network net;
  const NodeId a = net.node("a"), b = net.node("b"), c = net.node("c"), d = net.node("d"), e = net.node("e");
  net.add_resistor(a, Network::ground, 50.0);
  net.add_inductor(a, b, 10e-6, 0.2);
  net.add_capacitor(b, Network::ground, 1e-6, 0.01, 2e-9);
  net.add_coupled_inductors(b, c, Network::ground, d, 1e-3, 1e-3, 0.995, 0.05, 0.05);
  net.add_capacitor(c, d, 100e-9, 0.02, 1e-9);
  net.add_resistor(d, Network::ground, 100.0);
  net.add_resistor(c, e, 10.0);
  net.add_capacitor(e, a, 4.7e-9);
  net.add_inductor(e, Network::ground, 1e-3);
  return net;
}

}  // namespace

TEST_CASE("reciprocity of a passive network: Z_ij = Z_ji (common practice)") {
  const Network base = passive_mesh();
  const std::vector<double> f = {150e3, 2.2e6, 27e6};
  const std::vector<std::string> names = {"a", "b", "c", "d", "e"};
  for (const auto& from : names) {
    for (const auto& to : names) {
      if (from >= to) continue;
      CAPTURE(from);
      CAPTURE(to);
      Network ij = base;
      ij.add_current_source(Network::ground, ij.find_node(from));
      const Transfer t_ij = NetworkSolver(ij).transfer(f, {Probe::voltage(ij.find_node(to))});
      Network ji = base;
      ji.add_current_source(Network::ground, ji.find_node(to));
      const Transfer t_ji = NetworkSolver(ji).transfer(f, {Probe::voltage(ji.find_node(from))});
      for (std::size_t i = 0; i < f.size(); ++i) CHECK(close(t_ij.at(i, 0, 0), t_ji.at(i, 0, 0), 1e-8));
    }
  }
  // Without sources the nodal matrix itself is complex-symmetric.
  const NetworkSolver solver(base);
  const Eigen::MatrixXcd m = solver.system_matrix(1e6);
  CHECK((m - m.transpose()).norm() <= 1e-12 * m.norm());
}

TEST_CASE("fast path against the slow twin (branch-current formulation, FullPivLU)") {
  std::mt19937 rng(20261201);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  for (int trial = 0; trial < 20; ++trial) {
    CAPTURE(trial);
    Network net = passive_mesh();
    // Random extra parts and sources between random nodes, values spread over decades.
    auto any = [&]() { return static_cast<NodeId>(unit(rng) * static_cast<double>(net.node_count())) % static_cast<NodeId>(net.node_count()); };
    for (int extra = 0; extra < 4; ++extra) {
      NodeId p = any(), q = any();
      if (p == q) continue;
      switch (extra % 3) {
        case 0: net.add_resistor(p, q, std::pow(10.0, 4.0 * unit(rng) - 1.0)); break;
        case 1: net.add_inductor(p, q, std::pow(10.0, -7.0 + 4.0 * unit(rng)), unit(rng)); break;
        default: net.add_capacitor(p, q, std::pow(10.0, -11.0 + 6.0 * unit(rng)), unit(rng) * 0.1, unit(rng) * 5e-9); break;
      }
    }
    net.add_voltage_source(net.node("s"), net.find_node("a"));
    net.add_resistor(net.node("s"), net.find_node("c"), 33.0);
    net.add_current_source(net.find_node("d"), net.find_node("e"));
    const std::vector<cd> value = {cd(1.5, -0.3), cd(0.2, 0.7)};
    const NetworkSolver solver(net);
    for (const double f : {9e3, 150e3, 1.7e6, 30e6, 108e6}) {
      CAPTURE(f);
      const auto fast = solver.node_voltages(f, value);
      const auto slow = twin_node_voltages(net, f, value);
      double scale = 0.0;
      for (const cd v : slow) scale = std::max(scale, std::abs(v));
      for (std::size_t node = 0; node < fast.size(); ++node) CHECK(std::abs(fast[node] - slow[node]) <= 1e-8 * scale);
    }
  }
}

TEST_CASE("floating and singular networks are reported, not solved into NaN") {
  {
    Network net;
    const NodeId in = net.node("in"), mid = net.node("mid");
    net.add_voltage_source(in, Network::ground);
    net.add_capacitor(in, mid, 1e-9);
    net.add_capacitor(mid, Network::ground, 1e-9);
    CHECK_THROWS_WITH_AS((void)NetworkSolver(net), "node 'mid' has no DC path to the reference ground", Error);
  }
  {
    Network net;
    const NodeId in = net.node("in");
    (void)net.node("spare");
    net.add_voltage_source(in, Network::ground);
    net.add_resistor(in, Network::ground, 1.0);
    CHECK_THROWS_WITH_AS((void)NetworkSolver(net), "node 'spare' is not connected to any element", Error);
  }
  {
    Network net;
    const NodeId in = net.node("in");
    net.add_voltage_source(in, Network::ground, "V1");
    net.add_voltage_source(in, Network::ground, "V2");
    CHECK_THROWS_WITH_AS((void)NetworkSolver(net), "voltage source 'V2' closes a loop of voltage sources at node 'in'",
                         Error);
  }
  {
    Network net;
    const NodeId in = net.node("in");
    CHECK_THROWS_WITH_AS((void)net.add_resistor(in, Network::ground, 0.0, "R1"),
                         "resistor 'R1': expected a resistance > 0, found 0 \xCE\xA9", Error);
    CHECK_THROWS_WITH_AS((void)net.add_coupled_inductors(in, 0, in, 0, 1e-6, 1e-6, 1.0, 0, 0, "T1"),
                         "coupled inductors 'T1': expected a coupling factor in [0, 1), found 1", Error);
  }
  {
    Network net;
    const NodeId in = net.node("in");
    net.add_current_source(Network::ground, in);
    net.add_resistor(in, Network::ground, 1.0);
    const NetworkSolver solver(net);
    CHECK_THROWS_WITH_AS((void)solver.transfer({0.0}, {Probe::voltage(in)}), "expected a frequency > 0 Hz, found 0 Hz",
                         Error);
  }
}

TEST_CASE("a capacitor at exact series resonance with no ESR is a short, not a NaN") {
  const double c = 1e-6, esl = 1e-9;
  const double f_res = 1.0 / (2.0 * pi * std::sqrt(esl * c));
  Network net;
  const NodeId in = net.node("in"), out = net.node("out");
  net.add_current_source(Network::ground, in);
  net.add_resistor(in, Network::ground, 1e3);
  net.add_resistor(in, out, 1.0);
  net.add_capacitor(out, Network::ground, c, 0.0, esl);
  const Transfer t = NetworkSolver(net).transfer({f_res}, {Probe::voltage(out)});
  CHECK(std::isfinite(std::abs(t.at(0, 0, 0))));
  CHECK(std::abs(t.at(0, 0, 0)) < 1e-6);
}

TEST_CASE("the sparse threshold-pivoting path agrees with the dense PartialPivLU path") {
  // A tight common-mode choke (k = 0.9999) and resonant tanks make the static order's diagonal
  // pivots fail at some frequencies: the row swaps must still give the dense answer.
  Network net = passive_mesh();
  const NodeId a = net.find_node("a"), c = net.find_node("c"), e = net.find_node("e");
  const NodeId x = net.node("x"), y = net.node("y");
  net.add_coupled_inductors(a, x, c, y, 1e-3, 1e-3, 0.9999, 0.0, 0.0);
  net.add_capacitor(x, y, 1e-9);
  net.add_inductor(x, Network::ground, 1e-6);
  net.add_inductor(y, e, 1e-6);
  net.add_voltage_source(net.node("drive"), a);
  net.add_resistor(net.find_node("drive"), Network::ground, 1.0);
  net.add_current_source(Network::ground, y);
  const NetworkSolver solver(net);
  std::vector<double> f;
  for (double v = 1e3; v < 300e6; v *= 1.013) f.push_back(v);
  std::vector<Probe> probes;
  for (std::size_t node = 1; node < net.node_count(); ++node) probes.push_back(Probe::voltage(static_cast<NodeId>(node)));
  const Transfer fast = solver.transfer(f, probes, SolveMethod::automatic);
  const Transfer slow = solver.transfer(f, probes, SolveMethod::dense);
  for (std::size_t fi = 0; fi < f.size(); ++fi) {
    for (std::size_t s = 0; s < fast.source_count; ++s) {
      double scale = 0.0;
      for (std::size_t p = 0; p < probes.size(); ++p) scale = std::max(scale, std::abs(slow.at(fi, p, s)));
      for (std::size_t p = 0; p < probes.size(); ++p) {
        CHECK(std::abs(fast.at(fi, p, s) - slow.at(fi, p, s)) <= 1e-7 * scale);
      }
    }
  }
}

TEST_CASE("a failed solve names the element or node to blame, at its input-file position") {
  // An admittance beyond double range (2*pi * 30 MHz * 1e300 F > 1.8e308, IEEE 754 binary64's
  // largest value) makes the solution non-finite: the capacitor is named.
  {
    Network net;
    const NodeId in = net.node("in");
    net.add_current_source(Network::ground, in);
    net.add_resistor(in, Network::ground, 50.0, "R1");
    net.set_origin({"f.toml", 3, 5});
    net.add_capacitor(in, Network::ground, 1e300, 0.0, 0.0, "C1");
    const NetworkSolver solver(net);
    CHECK_THROWS_WITH_AS((void)solver.transfer({30e6}, {Probe::voltage(in)}),
                         "f.toml:3:5: the network is singular at 30 MHz: expected element values a solve can take, "
                         "found capacitor 'C1' whose admittance overflows there (check its value)",
                         Error);
  }
  // A lossless parallel LC whose admittances cancel exactly at the solve frequency (1/(wL) == wC
  // in binary64 for these values, checked with Python's floats) leaves its node an empty row.
  {
    const double l = 1e-6, c = 2.533029591058445e-08, f = 1e6;
    REQUIRE(omega(f) * c == (omega(f) * l) / ((omega(f) * l) * (omega(f) * l)));
    Network net;
    const NodeId in = net.node("in"), tank = net.node("tank");
    net.add_current_source(Network::ground, in);
    net.add_resistor(in, Network::ground, 50.0);
    net.set_origin({"f.toml", 7, 1});
    net.add_inductor(tank, Network::ground, l, 0.0, "L1");
    net.add_capacitor(tank, Network::ground, c, 0.0, 0.0, "C1");
    net.set_origin({});
    const NetworkSolver solver(net);
    CHECK_THROWS_WITH_AS((void)solver.transfer({f}, {Probe::voltage(in)}, SolveMethod::dense),
                         "f.toml:7:1: the network is singular at 1 MHz: expected every node to have a path to ground "
                         "at that frequency, found node 'tank' whose admittances cancel (a lossless resonance: give "
                         "its parts a resistance)",
                         Error);
    // Off resonance the same network solves.
    CHECK(std::isfinite(std::abs(solver.transfer({1.1e6}, {Probe::voltage(in)}).at(0, 0, 0))));
  }
}
