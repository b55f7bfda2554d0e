// Benchmark of the reception estimate (issue 15; run by hand, never by ctest).
//   build/reception_bench [SCENARIO.toml]   (default: the shipped examples/greenhouse-buck.toml)
// Goal: one reception estimate of the demo scenario (radiator fields of every harmonic to 110 MHz,
// E and η0·H lines, Gaussian channels of every band of the region's plan) under 5 ms.
// Also: a dithered 17 kHz source spread into 50 lines per harmonic (about 320,000 lines), the
// worst case of line count. Each figure is the best of 5 runs (the machine is shared), and is given
// as a ratio to a yardstick timed in the same run: one FFTW-free 2^20-point loop of exp() and
// multiply-adds, so that figures from a loaded or a faster machine can be compared.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <functional>
#include <string>

#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/radio/reception.hpp"
#include "timing.hpp"

using namespace spurcast;
using namespace spurcast::bench;

namespace {

volatile double sink = 0.0;

/// The yardstick: 2^20 exp() and multiply-adds, a fixed amount of scalar floating-point work.
void yardstick() {
  double sum = 0.0;
  for (int i = 0; i < (1 << 20); ++i) sum += std::exp(-1e-6 * i) * 1.000001;
  sink = sum;
}

}  // namespace

int main(int argc, char** argv) {
  const ShippedData data = locate_shipped_data();
  const std::string path = argc > 1 ? argv[1] : data.examples_directory() + "/greenhouse-buck.toml";
  const Scenario scenario = load_scenario(path, data);
  const Prediction p = predict(scenario);
  const std::vector<Band> bands = bands_for(scenario.broadcast, data);
  const ReceiverLines lines = receiver_lines(p.field);

  const double yard_ms = best_wall_ms(5, yardstick);
  std::size_t channels = 0;
  const double demo_ms = best_wall_ms(5, [&] {
    const auto results = estimate_reception(bands, lines, scenario.broadcast);
    channels = 0;
    for (const BandReception& r : results) channels += r.channels.size();
  });
  std::printf("yardstick (2^20 exp + multiply-add): %.3f ms\n", yard_ms);
  std::printf("demo estimate: %zu field lines, %zu bands, %zu channels heard: %.3f ms (%.2f yardsticks; goal 5 ms)\n",
              p.field.size(), bands.size(), channels, demo_ms, demo_ms / yard_ms);

  // The fields behind the estimate: every radiator at every harmonic (the sweep's cost per point).
  RadiatorCurrents currents;
  for (const FieldLine& line : p.field) currents.frequency_hz.push_back(line.frequency_hz);
  currents.cable_cm_per_conductor_a.assign(currents.frequency_hz.size(), 1e-6);
  currents.cable_dm_a.assign(currents.frequency_hz.size(), 1e-3);
  currents.hot_loop_a.assign(currents.frequency_hz.size(), 0.1);
  RadiationSetup setup = radiation_setup(scenario.broadcast, scenario.supply, scenario.board);
  setup.hot_loop_area_m2 = 2e-4;
  const double field_ms = best_wall_ms(5, [&] { (void)radiated_field(setup, currents); });
  std::printf("radiated_field: %zu frequencies, three radiators: %.3f ms (%.2f yardsticks)\n",
              currents.frequency_hz.size(), field_ms, field_ms / yard_ms);

  std::vector<SpectralLine> spread;
  const double f0_hz = 17e3;
  for (int n = 1; n * f0_hz <= 110e6; ++n) {
    for (int k = -25; k < 25; ++k) {
      const double f = n * f0_hz * (1.0 + 0.06 * k / 25.0);
      spread.push_back({f, 40.0 - 20.0 * std::log10(static_cast<double>(n))});
    }
  }
  const double spread_ms = best_wall_ms(5, [&] { (void)estimate_reception(bands, spread, scenario.broadcast); });
  const double load_ms = best_wall_ms(5, [&] { (void)bands_for(scenario.broadcast, data); });
  std::printf("spread source: %zu lines: %.2f ms (%.2f yardsticks)\n", spread.size(), spread_ms, spread_ms / yard_ms);
  std::printf("band plan load: %.3f ms\n", load_ms);
  return 0;
}
