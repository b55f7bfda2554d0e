// Benchmark (not a test): band B scan (150 kHz-30 MHz, 9 kHz bandwidth, 4.5 kHz step: 6634 tuned
// frequencies, PK + QP + AV to steady state) of a 100 kHz trapezoid with 50 ns edges and ringing,
// sampled at 100 MS/s, for records of 5, 10, 20 and 40 ms. Prints the time per stage and in total.
// Then the yardstick (issue 18: the scan at least 10× faster than it): the same scan of the 20 ms
// record in numpy/scipy (tests/bench/receiver_yardstick.py, Debian's /usr/bin/python3, timed inside
// Python, best of 2), beside spurcast's best of 3, and the largest difference between the two
// scans' readings on each detector.
// Run: build-<name>/receiver_bench [--skip-scipy]   (wall times need an idle machine; CPU time is
// summed over threads)
#include <algorithm>
#include <bit>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <ctime>
#include <filesystem>
#include <string>
#include <system_error>
#include <thread>
#include <vector>

#include "core/receiver/receiver.hpp"
#include "core/source/source.hpp"
#include "timing.hpp"

using namespace spurcast;
using namespace spurcast::bench;

namespace {

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

bool write_doubles(const std::string& file, const std::vector<double>& values) {
  static_assert(std::endian::native == std::endian::little,
                "the record file is little-endian float64");
  std::FILE* out = std::fopen(file.c_str(), "wb");
  if (out == nullptr) return false;
  const bool written =
      std::fwrite(values.data(), sizeof(double), values.size(), out) == values.size();
  return std::fclose(out) == 0 && written;
}

std::vector<double> read_doubles(const std::string& file) {
  std::vector<double> values;
  if (std::FILE* in = std::fopen(file.c_str(), "rb")) {
    double value = 0.0;
    while (std::fread(&value, sizeof(double), 1, in) == 1) values.push_back(value);
    std::fclose(in);
  }
  return values;
}

// The scipy yardstick on `record`: prints its time, the ratio to spurcast's and how far its
// readings are from `result`'s. Leaves no file behind.
void scipy_yardstick(const Waveform& record, double step_hz, const ScanResult& result,
                     const Timing& spurcast) {
  const std::string stem = "/tmp/spurcast_bench_receiver_" + std::to_string(::getpid());
  const std::string record_file = stem + "_record.f64";
  const std::string readings_file = stem + "_readings.f64";
  std::vector<double> numbers;
  std::fflush(stdout);  // the script's notes on stderr come after what is printed so far
  if (write_doubles(record_file, record.samples)) {
    char arguments[512];
    std::snprintf(arguments, sizeof arguments, "%s %.17g %.17g %s 2", record_file.c_str(),
                  record.sample_rate_hz, step_hz, readings_file.c_str());
    numbers = python_file_numbers(SPURCAST_SOURCE_DIR "/tests/bench/receiver_yardstick.py",
                                  arguments, 2, true);
  } else {
    std::printf("yardstick: cannot write %s\n", record_file.c_str());
  }
  const std::vector<double> rows = read_doubles(readings_file);
  std::error_code ignored;
  std::filesystem::remove(record_file, ignored);
  std::filesystem::remove(readings_file, ignored);
  if (numbers.size() != 2) {
    std::printf(
        "yardstick: not available (Debian's python3-numpy and python3-scipy as "
        "/usr/bin/python3)\n");
    return;
  }
  const double yard_wall_s = numbers[0];
  const double yard_cpu_s = numbers[1];
  std::printf(
      "scipy yardstick, same record: %.3f s wall, %.3f s CPU (best of 2); spurcast %.3f s wall, "
      "%.3f s CPU "
      "(best of 3): %.1fx faster in wall time, %.1fx in CPU time (goal >= 10x)\n",
      yard_wall_s, yard_cpu_s, spurcast.wall_s, spurcast.cpu_s, yard_wall_s / spurcast.wall_s,
      yard_cpu_s / spurcast.cpu_s);

  const std::size_t count = result.readings.size();
  if (rows.size() != 4 * count) {
    std::printf("yardstick: %zu readings, spurcast %zu: not compared\n", rows.size() / 4, count);
    return;
  }
  std::printf("readings of spurcast against the yardstick's:\n");
  double max_frequency_difference_hz = 0.0;
  const Detector detectors[3] = {Detector::peak, Detector::quasi_peak, Detector::average};
  for (std::size_t d = 0; d < 3; ++d) {
    double largest_db = 0.0;
    double at_hz = 0.0;
    double lowest_dbuv = 1e300;
    double highest_dbuv = -1e300;
    for (std::size_t i = 0; i < count; ++i) {
      const Reading& r = result.readings[i];
      max_frequency_difference_hz =
          std::max(max_frequency_difference_hz, std::abs(rows[4 * i] - r.frequency_hz));
      const double ours = r.level_db(detectors[d]);
      const double difference = std::abs(ours - rows[4 * i + 1 + d]);
      if (difference > largest_db) {
        largest_db = difference;
        at_hz = r.frequency_hz;
      }
      lowest_dbuv = std::min(lowest_dbuv, ours);
      highest_dbuv = std::max(highest_dbuv, ours);
    }
    std::printf(
        "  %-10s largest difference %.4f dB (at %.1f kHz) over the %zu readings (%.1f to %.1f "
        "dBuV)\n",
        to_string(detectors[d]).c_str(), largest_db, at_hz * 1e-3, count, lowest_dbuv,
        highest_dbuv);
  }
  std::printf("  tuned frequencies agree within %.3g Hz\n", max_frequency_difference_hz);
}

}  // namespace

int main(int argc, char** argv) {
  cli::keep_freed_memory_for_reuse();  // as the spurcast command does (and its yardstick)
  bool skip_scipy = false;
  for (int i = 1; i < argc; ++i) {
    if (std::strcmp(argv[i], "--skip-scipy") == 0) skip_scipy = true;
  }
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
    std::printf(
        "%5.0f ms record (%8zu samples, envelope %zu points): synthesis %.3f s, record FFT + 1 "
        "envelope %.3f s wall, %.3f s CPU, "
        "scan total %.3f s wall, %.3f s CPU (max QP %.1f dBuV)\n",
        duration_s * 1e3, w.samples.size(), one.samples.size(), synth_s, fft_s, fft_cpu_s, scan_s,
        scan_cpu_s, max_qp);
  }

  // The yardstick's record: 20 ms, the README's figure.
  const Waveform record = synthesize_switch_node(spec, sample_rate_hz, 20e-3);
  ScanResult result;
  const Timing scan = best_of(3, [&] { result = scan_waveform(record, plan); });
  std::printf("20 ms record, scan_waveform best of 3: %.3f s wall, %.3f s CPU\n", scan.wall_s,
              scan.cpu_s);
  if (!skip_scipy) scipy_yardstick(record, *plan.step_hz, result, scan);
  return 0;
}
