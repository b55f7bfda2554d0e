// A dithered source as exact lines over its repeat (core/source/source.hpp, DitherRepeat).
// External check: Debian's numpy (numpy.fft.rfft) of the same waveform, laid out and point-sampled
// by an independent Python transcription of the cycle rule (each cycle's period set by the
// modulation at its start, the cycles scaled to fill the repeat), with the ringing tails of
// RingingSpec. A record of exactly one repeat puts every line on an FFT bin.
#include <doctest/doctest.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <numbers>
#include <string>
#include <unistd.h>
#include <vector>

#include "core/input/error.hpp"
#include "core/input/units.hpp"
#include "core/source/source.hpp"

using namespace spurcast;

namespace {

/// The boat-cabin example's source (examples/boat-cabin-led.toml): 400 kHz, 8 % triangle dither
/// at 12 kHz, 140 MHz ringing.
SwitchingSpec dithered_source() {
  SwitchingSpec s;
  s.frequency_hz = 400e3;
  s.duty = 0.45;
  s.amplitude_v = 24.0;
  s.current_a = 1.2;
  s.current_ripple_a = 0.3;
  s.rise_s = 6e-9 / 0.8;
  s.fall_s = 8e-9 / 0.8;
  s.ringing = RingingSpec{140e6, 8e-9, 0.25};
  s.dither = DitherSpec{DitherProfile::triangle, 0.08, 12e3, {}, {}};
  return s;
}

bool have_numpy() { return std::system("/usr/bin/python3 -c \"import numpy\" > /dev/null 2>&1") == 0; }

/// One-sided RMS levels of harmonics 1..count of one repeat, by numpy: the voltage (trapezoid with
/// ringing) when `voltage`, else the pulsed current with its ramp.
std::vector<double> numpy_repeat_levels(const SwitchingSpec& s, const DitherRepeat& r, bool voltage, int count) {
  const std::filesystem::path out =
      std::filesystem::temp_directory_path() / ("spurcast_dithered_lines_" + std::to_string(::getpid()) + ".txt");
  const std::string script = R"PY(
import numpy as np, sys
f0, duty, amp, cur, ripple, rise, fall, dev, rate, m, n, fr, decay, ra, voltage, count = [float(v) for v in sys.argv[1:17]]
n = int(n); count = int(count)
P = m / rate
def tri(t):
    u = t * rate - np.floor(t * rate)
    return 4*u if u < 0.25 else (2 - 4*u if u < 0.75 else 4*u - 4)
starts, periods, t = [], [], 0.0
for i in range(n):
    T = 1.0 / (f0 * (1 + dev * tri(t)))
    starts.append(t); periods.append(T); t += T
scale = P / t
bt, bv, edges = [], [], []
for s0, T in zip(starts, periods):
    s0 *= scale; T *= scale
    on0 = rise / 2; on1 = on0 + duty * T; fs = on1 - fall / 2
    if voltage > 0:
        pts = [(0, 0), (rise, amp), (fs, amp), (fs + fall, 0)]
        edges += [(s0 + rise, 1.0), (s0 + fs + fall, -1.0)]
    else:
        ramp = lambda x: cur - ripple / 2 + ripple * (x - on0) / (on1 - on0)
        pts = [(0, 0), (rise, ramp(rise)), (fs, ramp(fs)), (fs + fall, 0)]
    for a, b in pts:
        bt.append(s0 + a); bv.append(b)
bt.append(P); bv.append(bv[0])
N = 1 << 21
ts = np.arange(N) * (P / N)
x = np.interp(ts, bt, bv)
if voltage > 0 and ra > 0:
    for te, sign in edges:
        age = (ts - te) % P
        live = age < 40 * decay
        x[live] += sign * ra * amp * np.exp(-age[live] / decay) * np.sin(2 * np.pi * fr * age[live])
X = np.fft.rfft(x)
print(' '.join('%.17g' % v for v in np.sqrt(2) * np.abs(X[1:count + 1]) / N))
)PY";
  std::string args;
  for (const double v : {s.frequency_hz, s.duty, s.amplitude_v, s.current_a, s.current_ripple_a, s.rise_s, s.fall_s,
                         s.dither->deviation_fraction, s.dither->rate_hz, static_cast<double>(r.modulation_periods),
                         static_cast<double>(r.cycle_count), s.ringing->frequency_hz, s.ringing->decay_s,
                         s.ringing->relative_amplitude, voltage ? 1.0 : 0.0, static_cast<double>(count)}) {
    char buffer[40];
    std::snprintf(buffer, sizeof buffer, " %.17g", v);
    args += buffer;
  }
  const std::filesystem::path script_file = out.string() + ".py";
  std::ofstream(script_file) << script;
  const std::string command = "/usr/bin/python3 " + script_file.string() + args + " > " + out.string();
  REQUIRE(std::system(command.c_str()) == 0);
  std::ifstream file(out);
  std::vector<double> levels(static_cast<std::size_t>(count));
  for (double& v : levels) file >> v;
  REQUIRE(file);
  std::filesystem::remove(out);
  std::filesystem::remove(script_file);
  return levels;
}

}  // namespace

TEST_CASE("dither_repeat: whole switching cycles in the fewest modulation periods") {
  SwitchingSpec s = dithered_source();
  // 400 kHz / 12 kHz = 33⅓ cycles: three modulation periods hold 100.
  const auto boat = dither_repeat(s);
  REQUIRE(boat);
  CHECK(boat->modulation_periods == 3);
  CHECK(boat->cycle_count == 100);
  CHECK(boat->period_s == doctest::Approx(250e-6).epsilon(1e-12));
  s.dither->rate_hz = 10e3;  // 40 cycles in one period
  const auto whole = dither_repeat(s);
  REQUIRE(whole);
  CHECK(whole->modulation_periods == 1);
  CHECK(whole->cycle_count == 40);
  // An irrational ratio never closes: no repeat, the sampled path applies.
  s.dither->rate_hz = 400e3 / (10.0 * std::numbers::pi);
  CHECK_FALSE(dither_repeat(s).has_value());
}

TEST_CASE("dithered lines match numpy's FFT of the same waveform, voltage with ringing and pulsed current") {
  if (!have_numpy()) {
    MESSAGE("skipped: /usr/bin/python3 with numpy not found (install Debian's python3-numpy)");
    return;
  }
  const SwitchingSpec s = dithered_source();
  const DitherRepeat r = *dither_repeat(s);
  // Lines every 4 kHz up to 12 MHz: 3000 of them.
  const int count = 3000;
  const double top_hz = count / r.period_s;
  const LineSpectrum v = dithered_switch_node_lines(s, r, top_hz);
  const LineSpectrum i = dithered_input_current_lines(s, r, top_hz);
  REQUIRE(v.harmonics.size() == static_cast<std::size_t>(count));
  CHECK(v.fundamental_hz == doctest::Approx(4e3).epsilon(1e-12));
  // Point sampling at 8.4 GHz folds the 1/f² skirts from above 4.2 GHz: more than 60 dB under the
  // lines compared, which moves them by under 0.01 dB.
  const double same_db = 0.02;
  const double within_db = 40.0;
  for (const bool voltage : {true, false}) {
    const LineSpectrum& lines = voltage ? v : i;
    const std::vector<double> reference = numpy_repeat_levels(s, r, voltage, count);
    double top = 0.0;
    for (const auto& h : lines.harmonics) top = std::max(top, std::abs(h));
    int compared = 0;
    double worst_db = 0.0;
    for (int k = 1; k <= count; ++k) {
      const double ours = std::abs(lines.harmonics[static_cast<std::size_t>(k - 1)]);
      if (volts_to_dbuv(ours) < volts_to_dbuv(top) - within_db) continue;
      worst_db = std::max(worst_db, std::abs(volts_to_dbuv(ours) - volts_to_dbuv(reference[static_cast<std::size_t>(k - 1)])));
      ++compared;
    }
    INFO("voltage: " << voltage << ", lines compared: " << compared << ", worst " << worst_db << " dB");
    CHECK(compared > 400);
    CHECK(worst_db < same_db);
  }
}

TEST_CASE("dithered lines: the spread keeps the power of the undithered line (Parseval)") {
  // Dither moves the power of harmonic 1 into the lines between 368 and 432 kHz; the cluster's
  // total power equals the undithered fundamental's within the share that spills past ±12 %
  // (small for 8 % deviation; the Carson-rule width of FM, common practice).
  const SwitchingSpec s = dithered_source();
  const DitherRepeat r = *dither_repeat(s);
  const LineSpectrum v = dithered_switch_node_lines(s, r, 1e6);
  SwitchingSpec plain = s;
  plain.dither.reset();
  const double fundamental = std::abs(switch_node_spectrum(plain, 1e6).harmonics[0]);
  double cluster_power = 0.0;
  for (std::size_t k = 0; k < v.harmonics.size(); ++k) {
    const double f = v.frequency_hz(k);
    if (f > 0.88 * 400e3 && f < 1.12 * 400e3) cluster_power += std::norm(v.harmonics[k]);
  }
  CHECK(std::sqrt(cluster_power) == doctest::Approx(fundamental).epsilon(0.01));
}

TEST_CASE("dithered lines: a repeat with more lines than max_harmonic_count is refused") {
  SwitchingSpec s = dithered_source();
  s.dither->rate_hz = 10e3;
  const DitherRepeat r = *dither_repeat(s);
  CHECK_THROWS_WITH_AS(dithered_switch_node_lines(s, r, 20e9),
                       "expected a dither repeat of at most 52.43 µs (its lines are computed up to 20 GHz, at most "
                       "1048576 of them), found 100 µs",
                       Error);
}

TEST_CASE("dithered lines: the gridded non-uniform FFT agrees with the direct phasor sums") {
  // 400 kinks: 2000 lines (0.8 M kink-harmonic products) take the direct sum, 3000 lines (1.2 M)
  // the Gaussian-gridded transform (Greengard & Lee 2004); the shared 2000 lines must agree to a
  // few parts in 10^12 of the largest line, far below anything a reading shows. The numpy check
  // above is the external one for both.
  const SwitchingSpec s = dithered_source();
  const DitherRepeat r = *dither_repeat(s);
  for (const bool voltage : {true, false}) {
    const auto lines = [&](int count) {
      const double top_hz = count / r.period_s;
      return voltage ? dithered_switch_node_lines(s, r, top_hz) : dithered_input_current_lines(s, r, top_hz);
    };
    const LineSpectrum direct = lines(2000);
    const LineSpectrum gridded = lines(3000);
    REQUIRE(direct.harmonics.size() == 2000);
    double top = 0.0;
    for (const auto& h : direct.harmonics) top = std::max(top, std::abs(h));
    double worst = 0.0;
    for (std::size_t k = 0; k < direct.harmonics.size(); ++k) {
      worst = std::max(worst, std::abs(direct.harmonics[k] - gridded.harmonics[k]) / top);
    }
    INFO("voltage: " << voltage << ", worst difference " << worst << " of the largest line");
    CHECK(worst < 1e-12);
    CHECK(worst > 0.0);  // two different computations (a zero would mean one path ran twice)
  }
}
