// A library user's program: parses quantities as a scenario would, computes the exact harmonics of
// a trapezoid switch node, and reads a shipped limit file from the data folder given as argv[1].
// Prints "harmonic <k> <frequency Hz> <RMS V>" lines and "limit <name>" for install_test to check.
#include <complex>
#include <cstdio>
#include <initializer_list>
#include <spurcast/spurcast.hpp>

int main(int argc, char** argv) {
  try {
    spurcast::SwitchingSpec spec;
    spec.frequency_hz = spurcast::parse_quantity("220 kHz", spurcast::Dimension::frequency);
    spec.duty = 0.25;
    spec.amplitude_v = spurcast::parse_quantity("48 V", spurcast::Dimension::voltage);
    spec.rise_s = spurcast::parse_quantity("12 ns", spurcast::Dimension::time);
    spec.fall_s = spec.rise_s;
    const spurcast::LineSpectrum lines = spurcast::switch_node_spectrum(spec, 30e6);
    for (const std::size_t k : {1, 2, 3, 7}) {
      std::printf("harmonic %zu %.17g %.17g\n", k, lines.frequency_hz(k - 1),
                  std::abs(lines.harmonics[k - 1]));
    }
    if (argc > 1) {
      const spurcast::ShippedData data{argv[1]};
      const auto path = spurcast::resolve_limit_file("cispr32-class-b-conducted", ".", data);
      if (!path) throw spurcast::Error("no shipped limit file in " + data.limits_directory());
      std::printf("limit %s\n", spurcast::read_limit_file(*path).name.c_str());
    }
  } catch (const spurcast::Error& e) {
    std::fprintf(stderr, "consumer: error: %s\n", e.what());
    return 2;
  }
  return 0;
}
