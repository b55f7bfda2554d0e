// Benchmark of the reception estimate (run by hand, never by ctest): a dithered 17 kHz source
// spread into 50 lines per harmonic up to 110 MHz (about 320 000 field lines) mapped onto the
// ITU Region 1 plan. Prints the time per estimate and per band-plan load.
#include <chrono>
#include <cmath>
#include <cstdio>

#include "core/radio/reception.hpp"

int main() {
  using clock = std::chrono::steady_clock;
  using namespace spurcast;
  std::vector<SpectralLine> lines;
  const double f0_hz = 17e3;
  for (int n = 1; n * f0_hz <= 110e6; ++n) {
    for (int k = -25; k < 25; ++k) {
      const double f = n * f0_hz * (1.0 + 0.06 * k / 25.0);
      lines.push_back({f, 40.0 - 20.0 * std::log10(static_cast<double>(n))});
    }
  }
  BroadcastSpec spec;
  const ShippedData data = locate_shipped_data();
  const int loads = 50;
  const auto t0 = clock::now();
  std::vector<Band> bands;
  for (int i = 0; i < loads; ++i) bands = bands_for(spec, data);
  const auto t1 = clock::now();
  const int runs = 10;
  std::size_t channels = 0;
  for (int i = 0; i < runs; ++i) {
    const auto results = estimate_reception(bands, lines, spec);
    for (const auto& r : results) channels += r.channels.size();
  }
  const auto t2 = clock::now();
  const double load_ms = std::chrono::duration<double, std::milli>(t1 - t0).count() / loads;
  const double estimate_ms = std::chrono::duration<double, std::milli>(t2 - t1).count() / runs;
  std::printf("lines %zu, bands %zu, channels heard %zu\n", lines.size(), bands.size(), channels / runs);
  std::printf("band plan load: %.3f ms; estimate_reception: %.2f ms\n", load_ms, estimate_ms);
  return 0;
}
