// Benchmark of the dithered source's paths (issue 18; not a test, never run by ctest).
//   build-xx/dither_bench [--skip-numpy]
// In one run, against a yardstick timed in the same run: numpy.fft.rfft of 2^22 doubles (Debian's
// python3-numpy, best of 5). Goals: predict() of examples/boat-cabin-led.toml within 1.5× the
// yardstick; a 10-point sweep of it within 4×; lisn_port_waveform of 2^18 samples under 20 ms.
// Also prints the sampled path on the same source (predict --sampled-dither) for comparison, and
// the dithered lines alone. Each figure is the best of 3 runs (wall, and CPU summed over threads).
#include <cstdio>
#include <cstring>
#include <string>
#include <vector>

#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/chain/sweep.hpp"
#include "core/coupling/conducted.hpp"
#include "core/coupling/transfer_grid.hpp"
#include "core/input/toml_reader.hpp"
#include "core/source/source.hpp"
#include "cli/process_memory.hpp"
#include "timing.hpp"

using namespace spurcast;
using namespace spurcast::bench;

namespace {

void row(const char* what, const Timing& t, double yard_s, const char* goal) {
  std::printf("%-58s %8.3f s wall %8.3f s CPU", what, t.wall_s, t.cpu_s);
  if (yard_s > 0.0) std::printf("  %6.2f yardsticks", t.wall_s / yard_s);
  std::printf("  %s\n", goal);
}

}  // namespace

int main(int argc, char** argv) {
  cli::keep_freed_memory_for_reuse();  // as the spurcast command does
  const bool skip_numpy = argc > 1 && std::strcmp(argv[1], "--skip-numpy") == 0;
  const ShippedData data = locate_shipped_data();
  const std::string path = data.examples_directory() + "/boat-cabin-led.toml";
  const toml::table table = parse_toml_file(path, "scenario file");
  const std::string directory = path.substr(0, path.find_last_of('/'));
  const Scenario scenario = scenario_from_table(table, path, directory, data);

  const double yard_s = skip_numpy ? 0.0 : numpy_rfft_yardstick_s();
  std::printf("yardstick: numpy.fft.rfft of 2^22 doubles %.4f s (best of 5)\n", yard_s);

  const Timing lines = best_of(3, [&] { (void)predict(scenario); });
  row("predict boat-cabin-led (exact dithered lines)", lines, yard_s, "goal <= 1.5 yardsticks");

  PredictionOptions sampled_options;
  sampled_options.sampled_dither = true;
  const Timing sampled = best_of(3, [&] { (void)predict(scenario, sampled_options); });
  row("predict boat-cabin-led --sampled-dither (FFT receiver)", sampled, yard_s, "(the old path)");

  const SwitchingSpec& spec = *scenario.switching;
  const DitherRepeat repeat = *dither_repeat(spec);
  const Timing only_lines = best_of(3, [&] {
    (void)dithered_switch_node_lines(spec, repeat, 30.018e6);
    (void)dithered_input_current_lines(spec, repeat, 30.018e6);
  });
  row("dithered lines alone (V and I up to 30 MHz, 7504 lines)", only_lines, yard_s, "");

  for (const char* vary : {"switching.dither.deviation=2%:12%:10", "switching.frequency=396kHz:408kHz:10"}) {
    SweepOptions options;
    options.axes.push_back(make_axis(table, parse_vary(vary)));
    options.criteria.push_back(WindowCriterion{WindowCriterion::Kind::limits_met, ""});
    const Timing sweep = best_of(3, [&] { (void)run_sweep(table, path, directory, data, options); });
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
  const Timing port = best_of(3, [&] { (void)lisn_port_waveform(v, i, model, 1); });
  row("lisn_port_waveform, 2^18 samples", port, 0.0, "goal < 20 ms");
  std::vector<double> bin_frequencies_hz;
  for (std::size_t k = 1; k <= (1u << 17); ++k) bin_frequencies_hz.push_back(static_cast<double>(k) * fs / (1 << 18));
  const Timing grid = best_of(3, [&] { (void)transfer_on_grid(model, bin_frequencies_hz); });
  row("  of which the network on the adaptive grid", grid, 0.0, "");
  return 0;
}
