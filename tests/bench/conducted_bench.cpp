// Benchmark (not a test): MNA evaluation speed and the whole source → LISN chain.
//   cmake --build build -j2 --target conducted_bench && ./build/conducted_bench
// Goal (issue 3): a 20-node network at 10,000 frequencies in under 20 ms on one core.
#include <chrono>
#include <ctime>
#include <cmath>
#include <complex>
#include <cstdio>
#include <string>
#include <vector>

#include "core/coupling/conducted.hpp"
#include "core/coupling/network.hpp"
#include "timing.hpp"

using namespace spurcast;
using namespace spurcast::bench;

namespace {

double pi() { return 3.14159265358979323846; }

/// Two LISNs, a four-stage two-line filter ladder with a common-mode choke, Y-capacitors and the
/// converter: 20 nodes besides the ground.
Network twenty_node_network() {
  Network net;
  std::vector<NodeId> p, n;
  for (int i = 0; i < 9; ++i) {
    p.push_back(net.node("p" + std::to_string(i)));
    n.push_back(net.node("n" + std::to_string(i)));
  }
  for (const NodeId t : {p[0], n[0]}) {
    const NodeId supply = net.node("supply" + std::to_string(t));
    net.add_inductor(t, supply, 50e-6);
    net.add_resistor(supply, Network::ground, 5.0);
    net.add_resistor(t, Network::ground, 50.0);
  }
  for (int i = 0; i + 1 < 9; ++i) {
    if (i == 3) {
      net.add_coupled_inductors(p[3], p[4], n[3], n[4], 1e-3, 1e-3, 0.995, 0.02, 0.02);
    } else {
      net.add_inductor(p[static_cast<std::size_t>(i)], p[static_cast<std::size_t>(i + 1)], 2.2e-6 * (i + 1), 0.01);
      net.add_inductor(n[static_cast<std::size_t>(i)], n[static_cast<std::size_t>(i + 1)], 2.2e-6 * (i + 1), 0.01);
    }
    net.add_capacitor(p[static_cast<std::size_t>(i + 1)], n[static_cast<std::size_t>(i + 1)], 1e-6 * (i + 1), 0.005, 1e-9);
    if (i % 3 == 1) {
      net.add_capacitor(p[static_cast<std::size_t>(i + 1)], Network::ground, 4.7e-9, 0.1, 3e-9);
      net.add_capacitor(n[static_cast<std::size_t>(i + 1)], Network::ground, 4.7e-9, 0.1, 3e-9);
    }
  }
  net.add_current_source(p[8], n[8]);
  const NodeId sw = net.node("sw");
  net.add_voltage_source(sw, n[8]);
  net.add_capacitor(sw, Network::ground, 30e-12);
  return net;
}

std::vector<double> log_grid(double from_hz, double to_hz, std::size_t count) {
  std::vector<double> f(count);
  for (std::size_t i = 0; i < count; ++i) {
    f[i] = from_hz * std::pow(to_hz / from_hz, static_cast<double>(i) / static_cast<double>(count - 1));
  }
  return f;
}

}  // namespace

int main() {
  const Network net = twenty_node_network();
  const NetworkSolver solver(net);
  const std::vector<double> f = log_grid(9e3, 108e6, 10000);
  const std::vector<Probe> probes = {Probe::voltage(net.find_node("p0")), Probe::voltage(net.find_node("n0"))};
  Transfer sink;
  const double network_ms = best_thread_cpu_ms(5, [&] { sink = solver.transfer(f, probes); });
  std::printf("network: %zu nodes (+ground), MNA size %zu, %zu frequencies: %.2f ms (best of 5, thread CPU time), %.3f us/frequency\n",
              net.node_count() - 1, solver.system_size(), f.size(), network_ms, 1e3 * network_ms / static_cast<double>(f.size()));
  const double dense_ms = best_thread_cpu_ms(3, [&] { sink = solver.transfer(f, probes, SolveMethod::dense); });
  std::printf("network, dense PartialPivLU reference path: %.2f ms (best of 3, thread CPU time)\n", dense_ms);

  // Whole chain: a hand-built trapezoid-like LineSpectrum (amplitudes ∝ 1/k up to 1/(k·k)), 220 kHz,
  // harmonics up to 30 MHz and up to 108 MHz, through two LISNs, an LC stage, a CM choke and Y caps.
  CouplingSpec coupling;
  LisnSpec lisn;
  FilterStage lc;
  lc.kind = FilterKind::lc;
  lc.inductance_h = 4.7e-6;
  lc.converter_side_capacitance_f = 10e-6;
  lc.capacitor_esr_ohm = 0.01;
  FilterStage choke;
  choke.kind = FilterKind::common_mode_choke;
  choke.inductance_h = 1e-3;
  choke.coupling = 0.995;
  FilterStage y;
  y.kind = FilterKind::y_capacitors;
  y.lines = FilterLines::both;
  y.converter_side_capacitance_f = 4.7e-9;
  const auto build_start = std::chrono::steady_clock::now();
  const ConductedModel model(coupling, {y, choke, lc}, lisn);
  const double build_ms =
      std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - build_start).count();
  for (const double top_hz : {30e6, 108e6}) {
    const double f0 = 220e3;
    const auto count = static_cast<std::size_t>(top_hz / f0);
    LineSpectrum v, i;
    v.quantity = Quantity::voltage;
    i.quantity = Quantity::current;
    v.fundamental_hz = i.fundamental_hz = f0;
    for (std::size_t k = 1; k <= count; ++k) {
      const double kk = static_cast<double>(k);
      v.harmonics.emplace_back(48.0 * std::sqrt(2.0) / (pi() * kk) / (1.0 + kk / 50.0), 0.0);
      i.harmonics.emplace_back(6.0 * std::sqrt(2.0) / (pi() * kk) / (1.0 + kk / 50.0), 0.0);
    }
    ConductedResult result;
    const double chain_ms = best_thread_cpu_ms(5, [&] { result = conduct(v, i, model); });
    std::printf("chain: 220 kHz, %zu harmonics to %.0f MHz, LISNs + 3 filter stages (MNA size %zu): %.2f ms (best of 5, thread CPU time); model build %.3f ms\n",
                count, top_hz / 1e6, model.solver().system_size(), chain_ms, build_ms);
  }
  // The time-domain path for dithered or captured sources: one MNA solve per FFT bin.
  {
    Waveform v, i;
    v.quantity = Quantity::voltage;
    i.quantity = Quantity::current;
    v.sample_rate_hz = i.sample_rate_hz = 250e6;
    const std::size_t n = std::size_t{1} << 18;  // 1.05 ms at 250 MS/s
    for (std::size_t s = 0; s < n; ++s) {
      const double phase = std::fmod(static_cast<double>(s) * 220e3 / 250e6, 1.0);
      v.samples.push_back(phase < 0.25 ? 48.0 : 0.0);
      i.samples.push_back(phase < 0.25 ? 6.0 : 0.0);
    }
    Waveform out;
    const double waveform_ms = best_thread_cpu_ms(2, [&] { out = lisn_port_waveform(v, i, model, 1); });
    std::printf("lisn_port_waveform: %zu samples (%zu bins solved): %.1f ms (best of 2, thread CPU time)\n", n,
                n / 2, waveform_ms);
  }
  return sink.values.empty() ? 1 : 0;
}
