// Benchmark of the dithered source's paths (issue 18; not a test, never run by ctest).
//   build-xx/dither_bench [--skip-numpy]
// In one run, against a yardstick timed in the same run: numpy.fft.rfft of 2^22 doubles (Debian's
// python3-numpy, best of 5). Goals: predict() of examples/boat-cabin-led.toml within 1.5× the
// yardstick; a 10-point sweep of it within 4×; lisn_port_waveform of 2^18 samples under 20 ms.
// Also prints the sampled path on the same source (predict --sampled-dither) for comparison, and
// the dithered lines alone. Each figure is the best of 3 runs (wall, and CPU summed over threads).
#include <chrono>
#include <cstdio>
#include <cstring>
#include <ctime>
#include <functional>
#include <string>
#include <unistd.h>

#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/chain/sweep.hpp"
#include "core/coupling/conducted.hpp"
#include "core/coupling/transfer_grid.hpp"
#include "core/input/toml_reader.hpp"
#include "core/source/source.hpp"

using namespace spurcast;

namespace {

double process_cpu_s() {
  timespec t{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
  return static_cast<double>(t.tv_sec) + 1e-9 * static_cast<double>(t.tv_nsec);
}

struct Timing {
  double wall_s = 1e30;
  double cpu_s = 1e30;
};

Timing best_of_3(const std::function<void()>& run) {
  Timing best;
  for (int i = 0; i < 3; ++i) {
    const double cpu0 = process_cpu_s();
    const auto start = std::chrono::steady_clock::now();
    run();
    const std::chrono::duration<double> elapsed = std::chrono::steady_clock::now() - start;
    best.wall_s = std::min(best.wall_s, elapsed.count());
    best.cpu_s = std::min(best.cpu_s, process_cpu_s() - cpu0);
  }
  return best;
}

/// numpy.fft.rfft of 2^22 random doubles, best of 5, in seconds; 0 when numpy is missing.
double numpy_rfft_s() {
  const std::string script = "/tmp/spurcast_dither_bench_" + std::to_string(::getpid()) + ".py";
  if (std::FILE* f = std::fopen(script.c_str(), "w")) {
    std::fputs("import time, numpy as np\n"
               "x = np.random.default_rng(1).standard_normal(1 << 22)\n"
               "best = 1e9\n"
               "for _ in range(5):\n"
               "    t = time.perf_counter(); np.fft.rfft(x); best = min(best, time.perf_counter() - t)\n"
               "print(best)\n",
               f);
    std::fclose(f);
  }
  double seconds = 0.0;
  if (std::FILE* pipe = ::popen(("/usr/bin/python3 " + script + " 2>/dev/null").c_str(), "r")) {
    if (std::fscanf(pipe, "%lf", &seconds) != 1) seconds = 0.0;
    ::pclose(pipe);
  }
  std::remove(script.c_str());
  return seconds;
}

void row(const char* what, const Timing& t, double yard_s, const char* goal) {
  std::printf("%-58s %8.3f s wall %8.3f s CPU", what, t.wall_s, t.cpu_s);
  if (yard_s > 0.0) std::printf("  %6.2f yardsticks", t.wall_s / yard_s);
  std::printf("  %s\n", goal);
}

}  // namespace

int main(int argc, char** argv) {
  const bool skip_numpy = argc > 1 && std::strcmp(argv[1], "--skip-numpy") == 0;
  const ShippedData data = locate_shipped_data();
  const std::string path = data.examples_directory() + "/boat-cabin-led.toml";
  const toml::table table = parse_toml_file(path, "scenario file");
  const std::string directory = path.substr(0, path.find_last_of('/'));
  const Scenario scenario = scenario_from_table(table, path, directory, data);

  const double yard_s = skip_numpy ? 0.0 : numpy_rfft_s();
  std::printf("yardstick: numpy.fft.rfft of 2^22 doubles %.4f s (best of 5)\n", yard_s);

  const Timing lines = best_of_3([&] { (void)predict(scenario); });
  row("predict boat-cabin-led (exact dithered lines)", lines, yard_s, "goal <= 1.5 yardsticks");

  PredictionOptions sampled_options;
  sampled_options.sampled_dither = true;
  const Timing sampled = best_of_3([&] { (void)predict(scenario, sampled_options); });
  row("predict boat-cabin-led --sampled-dither (FFT receiver)", sampled, yard_s, "(the old path)");

  const SwitchingSpec& spec = *scenario.switching;
  const DitherRepeat repeat = *dither_repeat(spec);
  const Timing only_lines = best_of_3([&] {
    (void)dithered_switch_node_lines(spec, repeat, 30.018e6);
    (void)dithered_input_current_lines(spec, repeat, 30.018e6);
  });
  row("dithered lines alone (V and I up to 30 MHz, 7504 lines)", only_lines, yard_s, "");

  for (const char* vary : {"switching.dither.deviation=2%:12%:10", "switching.frequency=396kHz:408kHz:10"}) {
    SweepOptions options;
    options.axes.push_back(make_axis(table, parse_vary(vary)));
    options.criteria.push_back(WindowCriterion{WindowCriterion::Kind::limits_met, ""});
    const Timing sweep = best_of_3([&] { (void)run_sweep(table, path, directory, data, options); });
    row((std::string("sweep ") + vary).c_str(), sweep, yard_s, "goal <= 4 yardsticks");
  }

  // The conducted solve of a sampled record, 2^18 samples at band B's receiver rate.
  const ConductedModel model(scenario.coupling, scenario.filters, scenario.lisn, scenario.converter);
  const double fs = 75.045e6;
  const double duration_s = static_cast<double>(1 << 18) / fs;
  SwitchingSpec plain = spec;
  plain.dither.reset();
  const Waveform v = synthesize_switch_node(plain, fs, duration_s);
  const Waveform i = synthesize_input_current(plain, fs, duration_s);
  const Timing port = best_of_3([&] { (void)lisn_port_waveform(v, i, model, 1); });
  row("lisn_port_waveform, 2^18 samples", port, 0.0, "goal < 20 ms");
  std::vector<double> bin_frequencies_hz;
  for (std::size_t k = 1; k <= (1u << 17); ++k) bin_frequencies_hz.push_back(static_cast<double>(k) * fs / (1 << 18));
  const Timing grid = best_of_3([&] { (void)transfer_on_grid(model, bin_frequencies_hz); });
  row("  of which the network on the adaptive grid", grid, 0.0, "");
  return 0;
}
