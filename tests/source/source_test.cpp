// The described source: exact Fourier series of the trapezoid, ringing, dither, sampled synthesis.
// External checks: C. R. Paul, Introduction to Electromagnetic Compatibility, 2nd ed. (Wiley 2006),
// §3.2 (trapezoidal pulse train, two-sinc formula and its −20/−40 dB/decade bound), Example 3.5
// and the review exercise on a 5 V, 100 MHz clock (values recomputed in docs/references.md §6.3).
// The band-limited synthesis against Debian's numpy (numpy.fft.rfft of the same record) and the
// Kaiser design formulas (docs/references.md, other methods).
#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <numbers>
#include <optional>
#include <string>
#include <unistd.h>
#include <vector>

#include "core/input/error.hpp"
#include "core/source/source.hpp"
#include "core/input/units.hpp"

using namespace spurcast;

namespace {

const double tol_db = 0.05;
const double tol_v = 0.001;

SwitchingSpec trapezoid(double amplitude_v, double frequency_hz, double duty, double edge_s) {
  SwitchingSpec s;
  s.frequency_hz = frequency_hz;
  s.duty = duty;
  s.amplitude_v = amplitude_v;
  s.current_a = 1.0;
  s.rise_s = edge_s;
  s.fall_s = edge_s;
  return s;
}

double sinc(double x) { return x == 0.0 ? 1.0 : std::sin(std::numbers::pi * x) / (std::numbers::pi * x); }

// Paul §3.2: one-sided amplitude |c_n+| = 2·A·D·|sinc(nD)|·|sinc(n·t_r·f0)| (peak, volts).
double paul_one_sided_peak(double a, double d, double tr_s, double f0_hz, int n) {
  return 2.0 * a * d * std::fabs(sinc(n * d)) * std::fabs(sinc(n * tr_s * f0_hz));
}

double one_sided_peak(const LineSpectrum& s, int n) { return std::abs(s.harmonics[n - 1]) * std::sqrt(2.0); }

/// One-sided RMS levels of a record by numpy.fft.rfft (Debian python3-numpy), √2·|X_k|/N, for the
/// bins `bins`; and the highest one among bins 1..last_bin that are not multiples of `line_step`
/// (what is not a harmonic: the folds), as its level and bin. Empty when numpy is missing.
struct NumpyLevels {
  std::vector<double> at_bins;  ///< [V] RMS
  double highest_other = 0.0;   ///< [V] RMS
  long highest_other_bin = 0;
};
std::optional<NumpyLevels> numpy_levels(const Waveform& w, const std::vector<long>& bins, long last_bin, long line_step) {
  if (std::system("/usr/bin/python3 -c \"import numpy\" > /dev/null 2>&1") != 0) return std::nullopt;
  const std::filesystem::path dir =
      std::filesystem::temp_directory_path() / ("spurcast_source_test_" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  const std::filesystem::path in = dir / "samples.txt";
  const std::filesystem::path out = dir / "levels.txt";
  {
    std::ofstream file(in);
    char buffer[40];
    for (const double v : w.samples) {
      std::snprintf(buffer, sizeof buffer, "%.17g\n", v);
      file << buffer;
    }
  }
  std::string bin_list;
  for (const long b : bins) bin_list += (bin_list.empty() ? "" : ",") + std::to_string(b);
  const std::string script =
      "import numpy as np, sys; x = np.loadtxt(sys.argv[1]); n = len(x); "
      "r = np.sqrt(2) * np.abs(np.fft.rfft(x)) / n; "
      "k = np.arange(1, " + std::to_string(last_bin + 1) + "); k = k[k % " + std::to_string(line_step) + " != 0]; "
      "i = k[np.argmax(r[k])]; "
      "print(' '.join('%.17g' % r[b] for b in [" + bin_list + "]), '%.17g' % r[i], i)";
  const std::string command = "/usr/bin/python3 -c \"" + script + "\" " + in.string() + " > " + out.string();
  REQUIRE(std::system(command.c_str()) == 0);
  std::ifstream file(out);
  NumpyLevels levels;
  for (std::size_t i = 0; i < bins.size(); ++i) {
    double v = 0.0;
    file >> v;
    levels.at_bins.push_back(v);
  }
  file >> levels.highest_other >> levels.highest_other_bin;
  REQUIRE(file);
  std::filesystem::remove_all(dir);
  return levels;
}

}  // namespace

TEST_CASE("Paul Example 3.5: 1 V, 10 MHz, 50 %, 20 ns edges, harmonic 11") {
  const SwitchingSpec s = trapezoid(1.0, 10e6, 0.5, 20e-9);
  const LineSpectrum v = switch_node_spectrum(s, 200e6);
  REQUIRE(v.harmonics.size() == 20);
  // docs/references.md §6.3 / §10 item 22: exact 73.84 dBµV (one-sided peak), bound 78.46 dBµV.
  CHECK(volts_to_dbuv(one_sided_peak(v, 11)) == doctest::Approx(73.84).epsilon(tol_db / 73.84));
  const double bound_peak = trapezoid_envelope_rms(s, 1.0, 110e6) * std::sqrt(2.0);
  CHECK(volts_to_dbuv(bound_peak) == doctest::Approx(78.46).epsilon(tol_db / 78.46));
  // Corner frequencies f1 = 1/(πτ) = 6.366 MHz, f2 = 1/(π·t_r) = 15.915 MHz.
  const TrapezoidCorners corners = trapezoid_corners(s);
  CHECK(corners.first_hz == doctest::Approx(6.366e6).epsilon(1e-3));
  CHECK(corners.second_hz == doctest::Approx(15.915e6).epsilon(1e-3));
}

TEST_CASE("Paul review exercise: 5 V, 100 MHz, 50 %, 1 ns edges") {
  const SwitchingSpec s = trapezoid(5.0, 100e6, 0.5, 1e-9);
  const LineSpectrum v = switch_node_spectrum(s, 1e9);
  // docs/references.md §10 item 23: c1+ = 3.131 V, c3+ = 0.9108 V, c5+ = 0.4053, c7+ = 0.1673, c9+ = 0.0387.
  CHECK(one_sided_peak(v, 1) == doctest::Approx(3.131).epsilon(tol_v / 3.131));
  CHECK(one_sided_peak(v, 3) == doctest::Approx(0.9108).epsilon(tol_v / 0.9108));
  CHECK(std::fabs(one_sided_peak(v, 5) - 0.4053) < tol_v);
  CHECK(std::fabs(one_sided_peak(v, 7) - 0.1673) < tol_v);
  CHECK(std::fabs(one_sided_peak(v, 9) - 0.0387) < tol_v);
  CHECK(v.dc == doctest::Approx(2.5));  // c0 = A·D
}

TEST_CASE("exact series matches Paul's two-sinc formula for every harmonic") {
  for (const double duty : {0.1, 0.25, 0.5, 0.73}) {
    CAPTURE(duty);
    const SwitchingSpec s = trapezoid(48.0, 220e3, duty, 12e-9);
    const LineSpectrum v = switch_node_spectrum(s, 100e6);
    for (int n = 1; n <= static_cast<int>(v.harmonics.size()); n += 7) {
      CAPTURE(n);
      const double expected = paul_one_sided_peak(48.0, duty, 12e-9, 220e3, n);
      CHECK(one_sided_peak(v, n) == doctest::Approx(expected).epsilon(1e-9).scale(48.0));
    }
  }
}

TEST_CASE("spectral null: D = 5/12 puts harmonic 12 at zero (Paul §3.2, sinc(nD) = 0)") {
  SwitchingSpec s = trapezoid(1.0, 1e6, 5.0 / 12.0, 10e-9);
  const LineSpectrum v = switch_node_spectrum(s, 20e6);
  CHECK(volts_to_dbuv(std::abs(v.harmonics[11])) < -200.0);
}

TEST_CASE("unequal edges and the bound: every harmonic sits under the envelope") {
  SwitchingSpec s = trapezoid(48.0, 220e3, 0.25, 12e-9);
  s.fall_s = 15e-9;
  const LineSpectrum v = switch_node_spectrum(s, 300e6);
  for (std::size_t i = 0; i < v.harmonics.size(); ++i) {
    CAPTURE(i);
    CHECK(std::abs(v.harmonics[i]) <= trapezoid_envelope_rms(s, 48.0, v.frequency_hz(i)) * (1 + 1e-9));
  }
}

TEST_CASE("Parseval on the exact series: Σ|H_k|² + dc² equals the mean square (derived)") {
  // Mean square of a 0..A trapezoid: A²·(plateau + (rise + fall)/3)/T.
  SwitchingSpec s = trapezoid(2.0, 1e6, 0.3, 40e-9);
  s.fall_s = 60e-9;
  const double plateau = s.duty * s.period_s() - (s.rise_s + s.fall_s) / 2.0;
  const double mean_square = 4.0 * (plateau + (s.rise_s + s.fall_s) / 3.0) / s.period_s();
  const LineSpectrum v = switch_node_spectrum(s, 20e9);  // 20000 harmonics: the tail is 1/k⁴
  double power = v.dc * v.dc;
  for (const auto& h : v.harmonics) power += std::norm(h);
  CHECK(power == doctest::Approx(mean_square).epsilon(1e-6));
}

TEST_CASE("ringing: the closed-form tail matches a direct numerical Fourier integral (slow twin)") {
  SwitchingSpec s = trapezoid(48.0, 500e3, 0.4, 10e-9);
  s.ringing = RingingSpec{60e6, 25e-9, 0.3};
  const LineSpectrum exact = switch_node_spectrum(s, 200e6);
  // One period sampled densely; the tails decay within the period, so one period is the whole signal.
  const double fs = 20e9;
  const Waveform w = synthesize_switch_node(s, fs, s.period_s());
  for (const int k : {1, 3, 51, 119, 121, 199}) {
    CAPTURE(k);
    std::complex<double> c = 0.0;
    const double omega = 2.0 * std::numbers::pi * k * s.frequency_hz;
    for (std::size_t i = 0; i < w.samples.size(); ++i) {
      c += w.samples[i] * std::polar(1.0, -omega * static_cast<double>(i) / fs);
    }
    c /= static_cast<double>(w.samples.size());
    const double numeric_db = volts_to_dbuv(std::sqrt(2.0) * std::abs(c));
    CHECK(numeric_db == doctest::Approx(volts_to_dbuv(std::abs(exact.harmonics[k - 1]))).epsilon(0.02 / 100));
  }
  // Parseval on the ringing alone (the series is linear, so ringing = with − without): two tails of
  // a·A·e^(−αt)·sin(ωt) per period carry 2·(aA)²·ω²/(4α(α² + ω²))/T of mean power (derived; the
  // tails are 800 ns apart and have died out long before the next edge).
  SwitchingSpec plain = s;
  plain.ringing.reset();
  const SwitchingSpec& r = s;
  const LineSpectrum with_long = switch_node_spectrum(r, 20e9);
  const LineSpectrum without = switch_node_spectrum(plain, 20e9);
  double ringing_power = 0.0;
  for (std::size_t i = 0; i < with_long.harmonics.size(); ++i) {
    ringing_power += std::norm(with_long.harmonics[i] - without.harmonics[i]);
  }
  const double alpha = 1.0 / r.ringing->decay_s;
  const double omega_r = 2.0 * std::numbers::pi * r.ringing->frequency_hz;
  const double a = r.ringing->relative_amplitude * r.amplitude_v;
  const double expected_power =
      2.0 * a * a * omega_r * omega_r / (4.0 * alpha * (alpha * alpha + omega_r * omega_r)) / r.period_s();
  CHECK(ringing_power == doctest::Approx(expected_power).epsilon(0.01));
}

TEST_CASE("input current uses the same timing with the current amplitude and no ringing") {
  SwitchingSpec s = trapezoid(48.0, 220e3, 0.25, 12e-9);
  s.current_a = 6.0;
  s.ringing = RingingSpec{85e6, 20e-9, 0.35};
  const LineSpectrum i = input_current_spectrum(s, 10e6);
  CHECK(i.quantity == Quantity::current);
  CHECK(one_sided_peak(i, 1) == doctest::Approx(paul_one_sided_peak(6.0, 0.25, 12e-9, 220e3, 1)));
  CHECK(i.dc == doctest::Approx(6.0 * 0.25));
}

TEST_CASE("dither: periods follow f0·(1 ± deviation) and the mean frequency stays f0") {
  SwitchingSpec s = trapezoid(10.0, 200e3, 0.5, 20e-9);
  s.dither = DitherSpec{DitherProfile::triangle, 0.06, 5e3, {}, {}};
  const double fs = 100e6;
  const Waveform w = synthesize_switch_node(s, fs, 4e-3);  // 20 modulation periods
  std::vector<double> rising_crossings;
  for (std::size_t i = 1; i < w.samples.size(); ++i) {
    if (w.samples[i - 1] < 5.0 && w.samples[i] >= 5.0) {
      const double frac = (5.0 - w.samples[i - 1]) / (w.samples[i] - w.samples[i - 1]);
      rising_crossings.push_back((static_cast<double>(i - 1) + frac) / fs);
    }
  }
  REQUIRE(rising_crossings.size() > 700);
  double min_period = 1.0, max_period = 0.0;
  for (std::size_t i = 1; i < rising_crossings.size(); ++i) {
    const double p = rising_crossings[i] - rising_crossings[i - 1];
    min_period = std::min(min_period, p);
    max_period = std::max(max_period, p);
  }
  // The oscillator takes the modulation at each cycle start, so the extremes are met within one
  // cycle's share of the modulation period (40 cycles per period here: within 0.3 %).
  CHECK(1.0 / max_period == doctest::Approx(200e3 * 0.94).epsilon(0.004));
  CHECK(1.0 / min_period == doctest::Approx(200e3 * 1.06).epsilon(0.004));
  const double mean_frequency =
      static_cast<double>(rising_crossings.size() - 1) / (rising_crossings.back() - rising_crossings.front());
  CHECK(mean_frequency == doctest::Approx(200e3).epsilon(0.002));
}

TEST_CASE("physical sanity checks give clear errors") {
  SwitchingSpec s = trapezoid(48.0, 220e3, 1.2, 12e-9);
  CHECK_THROWS_WITH_AS(validate_switching(s), "duty must be in (0, 1), found 1.2", Error);
  s = trapezoid(48.0, 10e6, 0.5, 60e-9);
  CHECK_THROWS_WITH_AS(validate_switching(s), "rise + fall (120 ns) is longer than the period (100 ns)", Error);
  s = trapezoid(48.0, 1e6, 0.02, 30e-9);
  CHECK_THROWS_WITH_AS(validate_switching(s),
                       "the edges do not fit in the on time: (rise + fall)/2 = 30 ns exceeds duty x period = 20 ns",
                       Error);
  s = trapezoid(-1.0, 1e6, 0.5, 30e-9);
  CHECK_THROWS_WITH_AS(validate_switching(s), "amplitude must not be negative, found -1 V", Error);
}

TEST_CASE("reading [switching] converts 10-90 % edges and rejects unknown keys") {
  const auto table = parse_toml_text(
      "frequency = \"220 kHz\"\nduty = 0.25\namplitude = \"48 V\"\ncurrent = \"6 A\"\n"
      "rise_10_90 = \"8 ns\"\nfall = \"15 ns\"\n"
      "ringing = { frequency = \"85 MHz\", decay = \"20 ns\", amplitude = 0.35 }\n"
      "dither = { profile = \"triangle\", deviation = \"6 %\", rate = \"9 kHz\" }\n",
      "s.toml");
  TableReader reader(table, "s.toml", "switching");
  const SwitchingSpec s = read_switching_section(reader);
  CHECK(s.rise_s == doctest::Approx(10e-9));  // 8 ns / 0.8, Paul §3.2 convention
  CHECK(s.fall_s == doctest::Approx(15e-9));
  REQUIRE(s.ringing);
  CHECK(s.ringing->frequency_hz == doctest::Approx(85e6));
  REQUIRE(s.dither);
  CHECK(s.dither->deviation_fraction == doctest::Approx(0.06));

  const auto typo = parse_toml_text(
      "frequncy = \"220 kHz\"\nduty = 0.25\namplitude = \"48 V\"\ncurrent = \"6 A\"\nrise = \"8 ns\"\nfall = \"15 ns\"\n",
      "t.toml");
  TableReader typo_reader(typo, "t.toml", "switching");
  // The misspelling is named where it is (issue 14), not reported as the missing key.
  CHECK_THROWS_WITH_AS((void)read_switching_section(typo_reader),
                       "t.toml:1:1: unknown key 'frequncy' in [switching]; did you mean 'frequency'?", Error);

  const auto extra = parse_toml_text(
      "frequency = \"220 kHz\"\nduty = 0.25\namplitude = \"48 V\"\ncurrent = \"6 A\"\nrise = \"8 ns\"\nfall = \"15 ns\"\nrse = 1\n",
      "u.toml");
  TableReader extra_reader(extra, "u.toml", "switching");
  CHECK_THROWS_WITH_AS((void)read_switching_section(extra_reader),
                       "u.toml:7:1: unknown key 'rse' in [switching]; did you mean 'rise'?", Error);

  const auto wrong_unit = parse_toml_text("frequency = \"3 V\"\n", "w.toml");
  TableReader wrong_reader(wrong_unit, "w.toml", "switching");
  CHECK_THROWS_WITH_AS((void)read_switching_section(wrong_reader),
                       "w.toml:1:13: expected a frequency (e.g. \"220 kHz\"), found \"3 V\"", Error);
}

TEST_CASE("the synthesized record is band-limited: nothing folds from 45-50 MHz into band B (numpy.fft.rfft)") {
  // Issue 14: point-sampled at band B's 75.045 MHz (2.5 × (30 MHz + 2·9 kHz)), the harmonics at
  // 45-50 MHz folded to 25-30 MHz. A 4.7 MHz source has its 10th harmonic at 47 MHz (fold:
  // 28.045 MHz; duty 0.37 keeps it off the trapezoid's sinc nulls) and, with a 140 MHz ringing,
  // strong lines all the way up; 1 ms holds 4700 whole periods, so the lines sit on the 1 kHz bins
  // 4700·k and every fold lands between them (75045 = 15·4700 + 4545).
  SwitchingSpec ringing = trapezoid(48.0, 4.7e6, 0.37, 6e-9);
  ringing.fall_s = 8e-9;
  ringing.ringing = RingingSpec{140e6, 8e-9, 0.25};
  // Ideal edges (jumps, the band-limited steps) fall only 20 dB per decade: every fold is strong.
  const SwitchingSpec jumps = trapezoid(48.0, 4.7e6, 0.37, 0.0);
  for (const SwitchingSpec& s : {ringing, jumps}) {
  CAPTURE(s.rise_s);
  const double fs = 2.5 * (30e6 + 2.0 * 9e3);
  const Waveform w = synthesize_switch_node(s, fs, 1e-3);
  REQUIRE(w.samples.size() == 75045);
  const LineSpectrum exact = switch_node_spectrum(s, 1e9);
  const std::vector<long> line_bins{4700, 9400, 14100, 18800, 23500, 28200, 28045};  // 4.7-28.2 MHz, the fold
  const auto levels = numpy_levels(w, line_bins, 30018, 4700);
  if (!levels) {
    MESSAGE("skipped: /usr/bin/python3 with numpy not found (install Debian's python3-numpy)");
    return;
  }
  // (a) The folds stay band_limit_stopband_db (100 dB, the kernel's design stopband from
  // 0.6·fs = 45.03 MHz) below what folds: the 47 MHz line at 28.045 MHz, and every bin of
  // 0-30.018 MHz off the lines below the strongest line at or above 0.6·fs. Point-sampled, the
  // fold at 28.045 MHz was the 47 MHz line itself.
  const double line_47mhz_dbuv = volts_to_dbuv(std::abs(exact.harmonics[9]));
  double strongest_folding_dbuv = level_floor_db;
  for (std::size_t i = 0; i < exact.harmonics.size(); ++i) {
    if (exact.frequency_hz(i) >= band_limit_stopband_fraction * fs) {
      strongest_folding_dbuv = std::max(strongest_folding_dbuv, volts_to_dbuv(std::abs(exact.harmonics[i])));
    }
  }
  CAPTURE(line_47mhz_dbuv);
  CAPTURE(strongest_folding_dbuv);
  CAPTURE(levels->highest_other_bin);
  CHECK(volts_to_dbuv(levels->at_bins[6]) < line_47mhz_dbuv - band_limit_stopband_db);
  CHECK(volts_to_dbuv(levels->highest_other) < strongest_folding_dbuv - band_limit_stopband_db);
  // (b) The lines in the passband keep their exact levels (Fourier series, Paul §3.2 plus the
  // ringing's closed form) within the kernel's passband ripple, 1e-5 (0.0001 dB), plus 0.0004 dB
  // for the interpolation of its tables.
  const double passband_tol_db = 0.0005;
  for (std::size_t i = 0; i < 6; ++i) {
    CAPTURE(i);
    const double exact_dbuv = volts_to_dbuv(std::abs(exact.harmonics[i]));
    CHECK(std::abs(volts_to_dbuv(levels->at_bins[i]) - exact_dbuv) < passband_tol_db);
  }
  }
}

TEST_CASE("ringing on the current: the exact series against numpy's FFT of the same sampled waveform") {
  if (std::system("/usr/bin/python3 -c \"import numpy\" > /dev/null 2>&1") != 0) {
    MESSAGE("skipped: /usr/bin/python3 with numpy not found (install Debian's python3-numpy)");
    return;
  }
  // A pulsed current with its inductor ripple (a non-trapezoid shape) and a 60 MHz ringing after
  // each edge, 500 kHz. numpy samples the waveform from its description (the breakpoints, and
  // a·I·e^(−t/decay)·sin(2π·f·t) from the end of each edge, + after the rising and − after the
  // falling edge) at 20 GHz over one period and takes numpy.fft.rfft: point sampling folds the
  // spectrum above 10 GHz, where the lines are some (150 MHz / 10 GHz)² ≈ 2e-4 of those checked, so
  // each line agrees, as a phasor, to 1e-3 of itself (0.009 dB).
  const double tol_relative = 1e-3;
  SwitchingSpec s = trapezoid(48.0, 500e3, 0.4, 10e-9);
  s.fall_s = 14e-9;
  s.current_a = 6.0;
  s.current_ripple_a = 2.0;
  s.current_ringing = RingingSpec{60e6, 25e-9, 0.3};
  s.ringing = RingingSpec{85e6, 10e-9, 0.5};  // the voltage's own: must not reach the current
  const LineSpectrum exact = input_current_spectrum(s, 150e6);
  const std::vector<Breakpoint> points = input_current_breakpoints(s);
  std::string tp, vp;
  for (const Breakpoint& p : points) {
    char buffer[64];
    std::snprintf(buffer, sizeof buffer, "%.17g,", p.time_s);
    tp += buffer;
    std::snprintf(buffer, sizeof buffer, "%.17g,", p.value);
    vp += buffer;
  }
  const double rising_end_s = s.rise_s;
  const double falling_end_s = s.rise_s / 2.0 + s.duty * s.period_s() + s.fall_s / 2.0;
  const std::vector<int> ks{1, 2, 3, 11, 57, 119, 120, 121, 200, 300};
  std::string k_list;
  for (const int k : ks) k_list += std::to_string(k) + ",";
  char header[512];
  std::snprintf(header, sizeof header,
                "T = %.17g; fs = 20e9; a = %.17g; decay = %.17g; fr = %.17g; rise_end = %.17g; fall_end = %.17g\n",
                s.period_s(), s.current_ringing->relative_amplitude * s.current_a, s.current_ringing->decay_s,
                s.current_ringing->frequency_hz, rising_end_s, falling_end_s);
  const std::string script = std::string("import numpy as np\n") + header +
                             "tp = np.array([" + tp + "]); vp = np.array([" + vp + "])\n"
                             "n = int(round(T*fs)); t = np.arange(n)/fs\n"
                             "x = np.interp(t, np.append(tp, T), np.append(vp, vp[0]))\n"
                             "for te, sign in ((rise_end, 1.0), (fall_end, -1.0)):\n"
                             "    u = (t - te) % T\n"
                             "    x += sign*a*np.exp(-u/decay)*np.sin(2*np.pi*fr*u)\n"
                             "c = np.sqrt(2)*np.fft.rfft(x)/n\n"
                             "for k in [" + k_list + "]:\n"
                             "    print('%.17g %.17g' % (c[k].real, c[k].imag))\n";
  const std::filesystem::path dir =
      std::filesystem::temp_directory_path() / ("spurcast_current_ringing_" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  std::ofstream(dir / "ring.py") << script;
  REQUIRE(std::system(("/usr/bin/python3 " + (dir / "ring.py").string() + " > " + (dir / "out.txt").string()).c_str()) == 0);
  std::ifstream in(dir / "out.txt");
  std::vector<std::complex<double>> numpy_lines;
  for (std::size_t i = 0; i < ks.size(); ++i) {
    double re = 0.0, im = 0.0;
    in >> re >> im;
    numpy_lines.emplace_back(re, im);
  }
  REQUIRE(in);
  std::filesystem::remove_all(dir);
  for (std::size_t i = 0; i < ks.size(); ++i) {
    CAPTURE(ks[i]);
    CHECK(std::abs(exact.harmonics[static_cast<std::size_t>(ks[i] - 1)] - numpy_lines[i]) <
          tol_relative * std::abs(numpy_lines[i]));
  }
  // The ringing alone (with − without) carries the two tails' mean power, 2·(aI)²·ω²/(4α(α² + ω²))/T
  // (Parseval, derived as for the voltage's ringing above), to 1 %.
  SwitchingSpec plain = s;
  plain.current_ringing.reset();
  const LineSpectrum with_long = input_current_spectrum(s, 20e9);
  const LineSpectrum without = input_current_spectrum(plain, 20e9);
  double ringing_power = 0.0;
  for (std::size_t i = 0; i < with_long.harmonics.size(); ++i) {
    ringing_power += std::norm(with_long.harmonics[i] - without.harmonics[i]);
  }
  const double alpha = 1.0 / s.current_ringing->decay_s;
  const double omega_r = 2.0 * std::numbers::pi * s.current_ringing->frequency_hz;
  const double a = s.current_ringing->relative_amplitude * s.current_a;
  CHECK(ringing_power ==
        doctest::Approx(2.0 * a * a * omega_r * omega_r / (4.0 * alpha * (alpha * alpha + omega_r * omega_r)) / s.period_s())
            .epsilon(0.01));
}

TEST_CASE("the synthesized input current carries its ringing: lines of the exact series (numpy.fft.rfft)") {
  // As the band-limited switch-node record above: 4.7 MHz over 1 ms at 75.045 MHz, lines on the
  // 1 kHz bins 4700·k, passband tolerance 0.0005 dB (the kernel's ripple and table interpolation).
  SwitchingSpec s = trapezoid(48.0, 4.7e6, 0.37, 6e-9);
  s.fall_s = 8e-9;
  s.current_a = 3.0;
  s.current_ripple_a = 1.0;
  s.current_ringing = RingingSpec{26e6, 30e-9, 0.4};
  const double fs = 2.5 * (30e6 + 2.0 * 9e3);
  const Waveform w = synthesize_input_current(s, fs, 1e-3);
  REQUIRE(w.samples.size() == 75045);
  const LineSpectrum exact = input_current_spectrum(s, 1e9);
  const std::vector<long> line_bins{4700, 9400, 14100, 18800, 23500, 28200};
  const auto levels = numpy_levels(w, line_bins, 30018, 4700);
  if (!levels) {
    MESSAGE("skipped: /usr/bin/python3 with numpy not found (install Debian's python3-numpy)");
    return;
  }
  const double passband_tol_db = 0.0005;
  SwitchingSpec plain = s;
  plain.current_ringing.reset();
  const LineSpectrum without = input_current_spectrum(plain, 1e9);
  for (std::size_t i = 0; i < line_bins.size(); ++i) {
    CAPTURE(i);
    const double exact_dbua = volts_to_dbuv(std::abs(exact.harmonics[i]));
    CHECK(std::abs(volts_to_dbuv(levels->at_bins[i]) - exact_dbua) < passband_tol_db);
  }
  // Near 26 MHz (the 6th line, 28.2 MHz) the ringing changes the line by more than the tolerance.
  CHECK(std::abs(volts_to_dbuv(std::abs(exact.harmonics[5])) - volts_to_dbuv(std::abs(without.harmonics[5]))) > 1.0);
}
