// Benchmark (not a test): band B scan (150 kHz-30 MHz, 9 kHz bandwidth, 4.5 kHz step: 6634 tuned
// frequencies, PK + QP + AV to steady state) of a 100 kHz trapezoid with 50 ns edges and ringing,
// sampled at 100 MS/s, for records of 5, 10, 20 and 40 ms. Prints the time per stage and in total.
// Run: build-<name>/receiver_bench   (wall times need an idle machine; CPU time is summed over threads)
#include <chrono>
#include <ctime>
#include <algorithm>
#include <cstdio>
#include <thread>
#include <vector>

#include "core/receiver/receiver.hpp"
#include "core/source/source.hpp"

using namespace spurcast;

namespace {

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

}  // namespace

int main() {
  SwitchingSpec spec;
  spec.frequency_hz = 100e3;
  spec.duty = 0.4;
  spec.amplitude_v = 48.0;
  spec.current_a = 2.0;
  spec.rise_s = 50e-9;
  spec.fall_s = 50e-9;
  spec.ringing = RingingSpec{60e6, 30e-9, 0.3};
  const double sample_rate_hz = 100e6;

  ScanPlan plan;
  plan.band = CisprBand::B;
  plan.step_hz = 4.5e3;
  std::printf("band B, 9 kHz, step 4.5 kHz, %zu tuned frequencies, PK+QP+AV, %u hardware threads\n",
              tuned_frequencies(CisprBand::B, 4.5e3).size(), std::thread::hardware_concurrency());
  for (double duration_s : {20e-3, 5e-3, 10e-3, 20e-3, 40e-3}) {
    auto start = std::chrono::steady_clock::now();
    const Waveform w = synthesize_switch_node(spec, sample_rate_hz, duration_s);
    const double synth_s = seconds_since(start);
    start = std::chrono::steady_clock::now();
    const std::clock_t fft_cpu_start = std::clock();
    const Envelope one = waveform_envelope(w, 1e6, 9e3);  // one big FFT + one tuned frequency
    const double fft_s = seconds_since(start);
    const double fft_cpu_s = static_cast<double>(std::clock() - fft_cpu_start) / CLOCKS_PER_SEC;
    start = std::chrono::steady_clock::now();
    const std::clock_t cpu_start = std::clock();
    const ScanResult result = scan_waveform(w, plan);
    const double scan_s = seconds_since(start);
    const double scan_cpu_s = static_cast<double>(std::clock() - cpu_start) / CLOCKS_PER_SEC;
    double max_qp = level_floor_db;
    for (const Reading& r : result.readings) max_qp = std::max(max_qp, r.quasi_peak_db);
    std::printf("%5.0f ms record (%8zu samples, envelope %zu points): synthesis %.3f s, record FFT + 1 envelope %.3f s wall, %.3f s CPU, "
                "scan total %.3f s wall, %.3f s CPU (max QP %.1f dBuV)\n",
                duration_s * 1e3, w.samples.size(), one.samples.size(), synth_s, fft_s, fft_cpu_s, scan_s, scan_cpu_s, max_qp);
  }
  return 0;
}
