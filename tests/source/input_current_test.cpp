// The input current's shape per converter topology ([converter], docs/design.md §5). External
// checks:
//  - Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed., Eq. (10.1): the buck's
//  pulsed
//    input current (ideal edges, flat top) has the one-sided peak harmonics (2I/(kπ))·sin(kπD);
//  - the triangular inductor ripple of a boost, ΔI peak to peak rising over D·T: one-sided peak
//    harmonics ΔI·|sin(πnD)|/(π²n²D(1−D)) (the same book's series of a triangle wave; the two-sided
//    coefficient is half of it);
//  - numpy's FFT (via /usr/bin/python3) of the same piecewise-linear waveform sampled by numpy
//  itself
//    (np.interp through the breakpoints), for the boost triangle and for a buck with a ramped top.
#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "core/input/error.hpp"
#include "core/source/source.hpp"

using namespace spurcast;

namespace {

const double pi = 3.14159265358979323846;
// Both sides evaluate the same closed forms in double precision: 1e-9 A of a 1–10 A signal.
const double closed_form_tol_a = 1e-9;
// numpy samples 2^16 points per period: the images of harmonic n ≤ 40 from the sampling lie about
// (40/65000)² ≈ 4e-7 of the signal below it; 1e-5 A of a 1–10 A signal leaves room for that.
const double numpy_tol_a = 1e-5;
const double dc_tol_a = 1e-9;

SwitchingSpec base_spec() {
  SwitchingSpec s;
  s.frequency_hz = 100e3;
  s.duty = 0.3;
  s.amplitude_v = 48.0;
  s.current_a = 4.0;
  s.rise_s = 0.0;
  s.fall_s = 0.0;
  return s;
}

/// One-sided peak amplitude of harmonic k (1-based) of a line spectrum.
double peak(const LineSpectrum& s, std::size_t k) {
  return std::sqrt(2.0) * std::abs(s.harmonics[k - 1]);
}

/// numpy's one-sided peak amplitudes |X[k]|·2/N, k = 1..count, of the periodic waveform through the
/// breakpoints, sampled by np.interp at 2^16 points per period; empty when numpy is missing.
std::vector<double> numpy_harmonics(const std::vector<Breakpoint>& points, double period_s,
                                    int count, const std::string& name) {
  const char* python = std::filesystem::exists("/usr/bin/python3") ? "/usr/bin/python3" : "python3";
  if (std::system((std::string(python) + " -c \"import numpy\" > /dev/null 2>&1").c_str()) != 0)
    return {};
  const auto dir = std::filesystem::temp_directory_path() / ("spurcast_input_current_" + name);
  std::filesystem::create_directories(dir);
  std::ostringstream xs, ys;
  xs.precision(17);
  ys.precision(17);
  for (const Breakpoint& p : points) {
    xs << p.time_s << ",";
    ys << p.value << ",";
  }
  const std::string out = (dir / "harmonics.txt").string();
  std::ostringstream script;
  script.precision(17);
  script << "import numpy as np\n"
         << "T = " << period_s << "\n"
         << "x = np.array([" << xs.str() << "]); y = np.array([" << ys.str() << "])\n"
         << "x = np.concatenate([x - T, x, x + T]); y = np.concatenate([y, y, y])\n"
         << "N = 2**16\n"
         << "t = np.arange(N) * T / N\n"
         << "X = np.fft.rfft(np.interp(t, x, y))\n"
         << "np.savetxt('" << out << "', 2*np.abs(X[1:" << count + 1 << "])/N)\n";
  const std::string script_path = (dir / "fft.py").string();
  std::ofstream(script_path) << script.str();
  REQUIRE(std::system((std::string(python) + " " + script_path).c_str()) == 0);
  std::ifstream in(out);
  std::vector<double> values;
  double v = 0.0;
  while (in >> v) values.push_back(v);
  REQUIRE(values.size() == static_cast<std::size_t>(count));
  return values;
}

}  // namespace

TEST_CASE(
    "buck input current without ripple: Erickson & Maksimovic Eq. (10.1), (2I/(k pi)) sin(k pi "
    "D)") {
  const SwitchingSpec s = base_spec();
  const LineSpectrum i = input_current_spectrum(s, 50 * s.frequency_hz);
  REQUIRE(i.harmonics.size() == 50);
  CHECK(std::abs(i.dc - s.current_a * s.duty) <= dc_tol_a);
  for (std::size_t k = 1; k <= 50; ++k) {
    const double expected =
        2.0 * s.current_a / (static_cast<double>(k) * pi) * std::abs(std::sin(k * pi * s.duty));
    CHECK(std::abs(peak(i, k) - expected) <= closed_form_tol_a);
  }
  // Without ripple the pulse is exactly the switch node's trapezoid (what every scenario without
  // [converter] computes).
  SwitchingSpec edged = s;
  edged.rise_s = 30e-9;
  edged.fall_s = 20e-9;
  const auto points = input_current_breakpoints(edged);
  const auto trapezoid = trapezoid_breakpoints(edged, edged.current_a);
  REQUIRE(points.size() == trapezoid.size());
  for (std::size_t n = 0; n < points.size(); ++n) {
    CHECK(points[n].time_s == doctest::Approx(trapezoid[n].time_s).epsilon(1e-15));
    CHECK(points[n].value == doctest::Approx(trapezoid[n].value).epsilon(1e-15));
  }
}

TEST_CASE(
    "boost input current: the triangular ripple's series dI |sin(pi n D)| / (pi^2 n^2 D (1 - D))") {
  SwitchingSpec s = base_spec();
  s.input_current_shape = InputCurrentShape::triangular;
  s.current_ripple_a = 1.5;
  s.rise_s = 25e-9;  // shifts the triangle in time: magnitudes unchanged
  s.fall_s = 20e-9;
  const LineSpectrum i = input_current_spectrum(s, 60 * s.frequency_hz);
  CHECK(std::abs(i.dc - s.current_a) <= dc_tol_a);  // the DC is the inductor current, not I·D
  for (std::size_t n = 1; n <= 60; ++n) {
    const double nd = static_cast<double>(n);
    const double expected = s.current_ripple_a * std::abs(std::sin(pi * nd * s.duty)) /
                            (pi * pi * nd * nd * s.duty * (1.0 - s.duty));
    CHECK(std::abs(peak(i, n) - expected) <= closed_form_tol_a);
  }
  // The figures: against the trapezoid of the same current the ripple is far below it at
  // the 11th and 31st harmonics.
  SwitchingSpec pulsed = base_spec();
  pulsed.rise_s = s.rise_s;
  pulsed.fall_s = s.fall_s;
  const LineSpectrum trapezoid = input_current_spectrum(pulsed, 60 * s.frequency_hz);
  CHECK(peak(trapezoid, 11) > 10.0 * peak(i, 11));

  const auto numpy = numpy_harmonics(input_current_breakpoints(s), s.period_s(), 40, "boost");
  if (numpy.empty()) {
    MESSAGE("SKIPPED: python3 with numpy is not available");
    return;
  }
  for (std::size_t n = 1; n <= 40; ++n) CHECK(std::abs(peak(i, n) - numpy[n - 1]) <= numpy_tol_a);
}

TEST_CASE("buck or flyback primary current with a ramped top: the series against numpy's FFT") {
  SwitchingSpec s = base_spec();
  s.current_ripple_a = 2.0;  // from 3 A to 5 A over the on time
  s.rise_s = 40e-9;
  s.fall_s = 30e-9;
  const auto points = input_current_breakpoints(s);
  REQUIRE(points.size() == 4);
  // The ramp passes through I − ΔI/2 and I + ΔI/2 at the edges' 50 % points (rise/2, rise/2 + D·T).
  const double slope = s.current_ripple_a / (s.duty * s.period_s());
  CHECK(points[1].value == doctest::Approx(3.0 + slope * s.rise_s / 2.0).epsilon(1e-12));
  CHECK(points[2].value == doctest::Approx(5.0 - slope * s.fall_s / 2.0).epsilon(1e-12));
  const LineSpectrum i = input_current_spectrum(s, 40 * s.frequency_hz);
  // Ideal edges would give exactly I·D; the edges clip triangles of order ΔI·t_edge/(D·T).
  CHECK(std::abs(i.dc - s.current_a * s.duty) <= 1e-3 * s.current_a * s.duty);
  const auto numpy = numpy_harmonics(points, s.period_s(), 40, "ramp");
  if (numpy.empty()) {
    MESSAGE("SKIPPED: python3 with numpy is not available");
    return;
  }
  for (std::size_t n = 1; n <= 40; ++n) CHECK(std::abs(peak(i, n) - numpy[n - 1]) <= numpy_tol_a);
}

TEST_CASE(
    "the sampled input current has the topology's shape (its mean: I for a boost, about I·D for a "
    "buck)") {
  SwitchingSpec s = base_spec();
  s.rise_s = 20e-9;
  s.fall_s = 20e-9;
  s.input_current_shape = InputCurrentShape::triangular;
  s.current_ripple_a = 1.0;
  // Ten whole periods at 100 MHz: the mean of the samples is the waveform's mean.
  const Waveform boost = synthesize_input_current(s, 100e6, 10 * s.period_s());
  double sum = 0.0;
  for (const double v : boost.samples) sum += v;
  CHECK(sum / static_cast<double>(boost.samples.size()) ==
        doctest::Approx(s.current_a).epsilon(1e-3));
}

TEST_CASE("an inductor ripple beyond twice the current is refused (continuous conduction)") {
  SwitchingSpec s = base_spec();
  s.current_ripple_a = 9.0;
  CHECK_THROWS_WITH_AS(
      validate_switching(s),
      "expected an inductor ripple from 0 to twice the current (8 A, continuous conduction), "
      "found 9 A",
      Error);
}

TEST_CASE("the band-limited sampled record of a boost current has the series' harmonics") {
  // Ten whole periods of 256 samples, no dither: bin 10·n of the record's DFT is harmonic n. The
  // record is band-limited (source.cpp), so below 0.3 of the sample rate its lines are the series'.
  SwitchingSpec s = base_spec();
  s.rise_s = 20e-9;
  s.fall_s = 20e-9;
  s.input_current_shape = InputCurrentShape::triangular;
  s.current_ripple_a = 1.5;
  const double fs = 256.0 * s.frequency_hz;
  const Waveform record = synthesize_input_current(s, fs, 10.0 * s.period_s());
  REQUIRE(record.samples.size() == 2560);
  const LineSpectrum series = input_current_spectrum(s, 0.3 * fs);
  // The kernel's pass band and the 100 dB stop band (source.cpp): 1e-5 A of a 1.5 A ripple.
  const double sampled_tol_a = 1e-5;
  const double n_samples = static_cast<double>(record.samples.size());
  for (std::size_t n = 1; n <= series.harmonics.size(); ++n) {
    std::complex<double> x = 0.0;
    for (std::size_t i = 0; i < record.samples.size(); ++i) {
      x += record.samples[i] *
           std::polar(1.0, -2.0 * pi * static_cast<double>(10 * n * i) / n_samples);
    }
    CHECK(std::abs(2.0 * std::abs(x) / n_samples - peak(series, n)) <= sampled_tol_a);
  }
}
