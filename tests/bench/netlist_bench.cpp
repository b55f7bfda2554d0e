// Benchmark (not a test): a flyback given as the user's own SPICE subcircuit ([converter] topology =
// "netlist") with 30 elements, solved at 10,000 frequencies.
//   cmake -S . -B build -DSPURCAST_BUILD_BENCH=ON && cmake --build build --target netlist_bench && ./build/netlist_bench
// Goal (issue 16): under 30 ms on one core. Figures are the best of 5 runs in thread CPU time (the
// machine is shared: wall time is not meaningful under load, CPU time of the one thread is).
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "core/coupling/conducted.hpp"
#include "core/coupling/converter.hpp"
#include "core/input/toml_reader.hpp"
#include "timing.hpp"

using namespace spurcast;
using namespace spurcast::bench;

namespace {

/// An offline flyback's input side as 30 SPICE elements (invented values): a common-mode choke
/// with its winding capacitances, X and Y capacitors, a damped differential-mode inductor, two
/// bulk capacitors with ESR and ESL, the hot-loop inductance, the drain's heatsink capacitance and
/// its bond, the transformer's interwinding capacitance, the secondary's capacitance to earth, a
/// Y capacitor and the insulation across the barrier, the output inductor, capacitor and cable,
/// and an RC snubber.
const char* const flyback_netlist =
    "30-element flyback for the benchmark\n"
    ".subckt flyback inp inn cellp celln 0\n"
    "Lc1 inp xp 10m\nLc2 inn xn 10m\nKc Lc1 Lc2 0.99\nCw1 inp xp 15p\nCw2 inn xn 15p\n"
    "Cx xp xn 100n\nCy1 xp 0 2.2n\nCy2 xn 0 2.2n\nLd xp bp 1u\nRd xp bp 10\n"
    "Cb bp c1 47u\nRb c1 c2 0.3\nLb c2 xn 20n\nCb2 bp d1 1u\nRb2 d1 d2 10m\nLb2 d2 xn 5n\n"
    "Lloop bp cellp 10n\nRloop celln xn 5m\n"
    "Chs sw hs 30p\nRhs hs 0 1\nLhs hs 0 50n\n"
    "Ciw sw sec 30p\nCsec sec 0 150p\nCyb sec xn 1n\nRbar sec xn 100meg\n"
    "Lsec sec out 1u\nCout out sec 100u\nCcable out 0 50p\n"
    "Csn sw snub 100p\nRsn snub celln 22\n"
    ".ends flyback\n";

}  // namespace

int main() {
  const auto dir = std::filesystem::temp_directory_path() / "spurcast_netlist_bench";
  std::filesystem::create_directories(dir);
  std::ofstream(dir / "flyback.cir") << flyback_netlist;
  const std::string scenario = (dir / "s.toml").string();
  const auto table = parse_toml_text("topology = \"netlist\"\nfile = \"flyback.cir\"\nsubckt = \"flyback\"\n", scenario);
  TableReader reader(table, scenario, "converter");
  const ConverterSpec converter = read_converter_section(reader);
  const ConductedModel model(CouplingSpec{}, {}, LisnSpec{}, converter);
  std::vector<double> f(10000);
  for (std::size_t i = 0; i < f.size(); ++i) {
    f[i] = 9e3 * std::pow(108e6 / 9e3, static_cast<double>(i) / static_cast<double>(f.size() - 1));
  }
  TransferFunctions sink;
  const double ms = best_thread_cpu_ms(5, [&] { sink = transfer_at(model, f); });
  std::printf("flyback netlist: 30 SPICE elements (%zu once each K joins its two inductors), %zu nodes (+ground) with the LISNs, MNA size %zu, "
              "%zu frequencies: %.2f ms (best of 5, thread CPU time), %.3f us/frequency\n",
              converter.netlist->elements.size(), model.solver().network().node_count() - 1, model.solver().system_size(),
              f.size(), ms, 1e3 * ms / static_cast<double>(f.size()));
  return sink.frequency_hz.empty() ? 1 : 0;
}
