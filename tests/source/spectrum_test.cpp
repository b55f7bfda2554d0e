// Spectrum of sampled records. External checks:
// - C. R. Paul, Introduction to Electromagnetic Compatibility, 2nd ed. (Wiley 2006), §3.2: the
//   one-sided amplitude of a trapezoidal pulse train, |c_n+| = 2·A·D·|sinc(nD)|·|sinc(n·tr·f0)|
//   (docs/references.md §6.3), computed here in the test;
// - Parseval's theorem (the DFT preserves energy: Σ|x|² = (1/N)·Σ|X|²);
// - Debian's python3-numpy, numpy.fft.rfft on the same samples;
// - a naive O(N²) DFT twin of the FFT;
// - window facts of the trade (common practice): Hann coherent gain 0.5 and ENBW 1.5 bins.
#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <numbers>
#include <string>
#include <thread>
#include <sys/wait.h>
#include <unistd.h>
#include <vector>

#include "core/input/error.hpp"
#include "core/source/spectrum.hpp"
#include "core/input/units.hpp"

using namespace spurcast;

namespace {

constexpr double pi = std::numbers::pi;

double sinc(double x) { return x == 0.0 ? 1.0 : std::sin(pi * x) / (pi * x); }

/// Point samples of Paul's trapezoid (rise from t = 0, 50 % width tau, rise = fall = tr).
Waveform trapezoid_record(double amplitude, double f0, double duty, double tr, double fs, std::size_t n) {
  Waveform w;
  w.sample_rate_hz = fs;
  w.samples.resize(n);
  const double period = 1.0 / f0;
  const double tau = duty * period;
  for (std::size_t i = 0; i < n; ++i) {
    const double t = std::fmod(static_cast<double>(i) / fs, period);
    double v = 0.0;
    if (t < tr) {
      v = amplitude * t / tr;
    } else if (t < tau) {
      v = amplitude;
    } else if (t < tau + tr) {
      v = amplitude * (1.0 - (t - tau) / tr);
    }
    w.samples[i] = v;
  }
  return w;
}

/// Paul eq. (3.x) as transcribed in docs/references.md §6.3: one-sided peak amplitude, then RMS.
double paul_trapezoid_rms(double amplitude, double duty, double tr, double f0, int n) {
  return 2.0 * amplitude * duty * std::abs(sinc(n * duty)) * std::abs(sinc(n * tr * f0)) / std::numbers::sqrt2;
}

/// Deterministic pseudo-random samples (64-bit LCG, Knuth's MMIX constants).
std::vector<double> noise(std::size_t n, std::uint64_t seed) {
  std::vector<double> x(n);
  for (auto& v : x) {
    seed = seed * 6364136223846793005ULL + 1442695040888963407ULL;
    v = static_cast<double>(seed >> 11) / 9007199254740992.0 - 0.5;
  }
  return x;
}

std::vector<std::complex<double>> naive_dft(const std::vector<double>& x) {
  const std::size_t n = x.size();
  std::vector<std::complex<double>> out(n / 2 + 1);
  for (std::size_t k = 0; k <= n / 2; ++k) {
    std::complex<double> sum = 0.0;
    for (std::size_t i = 0; i < n; ++i) {
      sum += x[i] * std::polar(1.0, -2.0 * pi * static_cast<double>((k * i) % n) / static_cast<double>(n));
    }
    out[k] = sum;
  }
  return out;
}

Waveform sine_record(double rms, double frequency_hz, double fs, std::size_t n, double phase = 0.3) {
  Waveform w;
  w.sample_rate_hz = fs;
  w.samples.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    w.samples[i] = rms * std::numbers::sqrt2 * std::cos(2.0 * pi * frequency_hz * static_cast<double>(i) / fs + phase);
  }
  return w;
}

/// The first python3 that imports numpy, or "".
std::string python_with_numpy() {
  for (const char* candidate : {"/usr/bin/python3", "python3"}) {
    const std::string command = std::string(candidate) + " -c \"import numpy\" > /dev/null 2>&1";
    if (std::system(command.c_str()) == 0) return candidate;
  }
  return "";
}

}  // namespace

TEST_CASE("coherent trapezoid record matches Paul's two-sinc series within 0.1 dB (Paul §3.2)") {
  // 16 periods of a 1 MHz trapezoid, D = 0.3, tr = 20 ns, 16384 samples a period (fs = 16.4 GHz):
  // the aliases of the point-sampled corners stay below ~0.003 dB for every line compared.
  const double amplitude_v = 5.0;
  const double f0 = 1e6;
  const double duty = 0.3;
  const double tr = 20e-9;
  const std::size_t periods = 16;
  const std::size_t n = periods * 16384;
  const double fs = f0 * 16384.0;
  const Waveform record = trapezoid_record(amplitude_v, f0, duty, tr, fs, n);
  FftPlanner planner("");
  const double tol_db = 0.1;
  const double range_db = 60.0;
  for (const Window window : {Window::rectangular, Window::hann, Window::flat_top}) {
    CAPTURE(window_name(window));
    const AmplitudeSpectrum spectrum = amplitude_spectrum(record, window, planner);
    const HarmonicTable table = harmonic_table(spectrum, f0, 400e6);
    REQUIRE(table.lines.size() == 400);
    const double fundamental_db = volts_to_dbuv(paul_trapezoid_rms(amplitude_v, duty, tr, f0, 1));
    int compared = 0;
    for (const HarmonicLevel& line : table.lines) {
      const double exact_db = volts_to_dbuv(paul_trapezoid_rms(amplitude_v, duty, tr, f0, line.harmonic));
      if (exact_db < fundamental_db - range_db) continue;
      CAPTURE(line.harmonic);
      CHECK(std::abs(line.level_db - exact_db) < tol_db);
      CHECK(line.frequency_hz == doctest::Approx(line.harmonic * f0));
      ++compared;
    }
    CHECK(compared > 50);
    // DC term c0 = A·D (Paul §3.2).
    CHECK(table.dc == doctest::Approx(amplitude_v * duty).epsilon(1e-3));
  }
}

TEST_CASE("Parseval: total power from the spectrum equals the mean square of the samples") {
  FftPlanner planner("");
  for (const std::size_t n : {std::size_t{4096}, std::size_t{4095}}) {
    CAPTURE(n);
    Waveform w;
    w.sample_rate_hz = 1e6;
    w.samples = noise(n, 7);
    for (double& v : w.samples) v += 0.25;  // a DC part too
    double mean_square = 0.0;
    for (const double v : w.samples) mean_square += v * v;
    mean_square /= static_cast<double>(n);
    const double rel_tol = 1e-10;
    CHECK(total_power(amplitude_spectrum(w, Window::rectangular, planner)) == doctest::Approx(mean_square).epsilon(rel_tol));
    // With a window the DFT preserves the energy of w·x: Σ rms²/ENBW = mean((w·x)²)/mean(w²).
    for (const Window window : {Window::hann, Window::flat_top}) {
      const std::vector<double> win = window_samples(window, n);
      double wx2 = 0.0;
      double w2 = 0.0;
      for (std::size_t i = 0; i < n; ++i) {
        wx2 += win[i] * win[i] * w.samples[i] * w.samples[i];
        w2 += win[i] * win[i];
      }
      CHECK(total_power(amplitude_spectrum(w, window, planner)) == doctest::Approx(wx2 / w2).epsilon(rel_tol));
    }
  }
}

TEST_CASE("FFT equals a naive DFT (slow twin), even and odd sizes") {
  FftPlanner planner("");
  for (const std::size_t n : {std::size_t{64}, std::size_t{257}, std::size_t{1000}}) {
    CAPTURE(n);
    const std::vector<double> x = noise(n, n);
    const std::vector<std::complex<double>> fast = planner.forward(x);
    const std::vector<std::complex<double>> slow = naive_dft(x);
    REQUIRE(fast.size() == slow.size());
    const double tol = 1e-11 * static_cast<double>(n);
    double worst = 0.0;
    for (std::size_t k = 0; k < fast.size(); ++k) worst = std::max(worst, std::abs(fast[k] - slow[k]));
    CHECK(worst < tol);
  }
}

TEST_CASE("single-sided RMS spectrum equals numpy.fft.rfft scaled by sqrt(2)/N (Debian python3-numpy)") {
  const std::string python = python_with_numpy();
  if (python.empty()) {
    MESSAGE("skipped: no python3 with numpy found (install Debian's python3-numpy)");
    return;
  }
  // 6000 samples: one transform; 2^17: the two-half (radix-2 step) path of long records.
  for (const std::size_t n : {std::size_t{6000}, std::size_t{1} << 17}) {
  CAPTURE(n);
  Waveform w;
  w.sample_rate_hz = 2e6;
  w.samples = noise(n, 42);
  const std::filesystem::path dir = std::filesystem::temp_directory_path() / ("spurcast_spectrum_test_" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  const std::filesystem::path in = dir / "samples.txt";
  const std::filesystem::path out = dir / "rfft.txt";
  {
    std::ofstream file(in);
    char buffer[40];
    for (const double v : w.samples) {
      std::snprintf(buffer, sizeof buffer, "%.17g\n", v);
      file << buffer;
    }
  }
  const std::string script =
      "import numpy as np, sys; x = np.loadtxt(sys.argv[1]); X = np.fft.rfft(x); "
      "np.savetxt(sys.argv[2], np.column_stack([X.real, X.imag]), fmt='%.17g')";
  const std::string command = python + " -c \"" + script + "\" " + in.string() + " " + out.string();
  REQUIRE(std::system(command.c_str()) == 0);
  std::ifstream file(out);
  std::vector<std::complex<double>> reference;
  double re = 0.0;
  double im = 0.0;
  while (file >> re >> im) reference.emplace_back(re, im);
  FftPlanner planner("");
  const std::vector<std::complex<double>> ours = planner.forward(w.samples);
  REQUIRE(reference.size() == ours.size());
  const AmplitudeSpectrum spectrum = amplitude_spectrum(w, Window::rectangular, planner);
  const double tol = 1e-9;
  double worst_bin = 0.0;
  double worst_rms = 0.0;
  for (std::size_t k = 0; k < ours.size(); ++k) {
    worst_bin = std::max(worst_bin, std::abs(ours[k] - reference[k]));
    const double numpy_rms = std::abs(reference[k]) * ((k == 0 || k == n / 2) ? 1.0 : std::numbers::sqrt2) / static_cast<double>(n);
    worst_rms = std::max(worst_rms, std::abs(spectrum.rms[k] - numpy_rms));
  }
  CHECK(worst_bin < tol);
  CHECK(worst_rms < tol);
  // sampled_spectrum: the bins from floor(low/Δf) to ceil(high/Δf) of the same transform, on one
  // thread and on two alike.
  const double bin_hz = w.sample_rate_hz / static_cast<double>(n);
  for (const unsigned threads : {1u, 2u}) {
    const SampledSpectrum part = sampled_spectrum(w, 123.4e3, 456.7e3, planner, threads);
    CHECK(part.first_bin == static_cast<std::size_t>(std::floor(123.4e3 / bin_hz)));
    CHECK(part.end_bin() == static_cast<std::size_t>(std::ceil(456.7e3 / bin_hz)) + 1);
    CHECK(part.record_samples == n);
    double worst_part = 0.0;
    for (std::size_t i = 0; i < part.bins.size(); ++i) {
      worst_part = std::max(worst_part, std::abs(part.bins[i] - reference[part.first_bin + i]));
    }
    CHECK(worst_part < tol);
  }
  const SampledSpectrum whole = sampled_spectrum(w, 0.0, w.sample_rate_hz, planner);  // clipped to N/2
  CHECK(whole.first_bin == 0);
  CHECK(whole.bins.size() == n / 2 + 1);
  std::filesystem::remove_all(dir);
  }
}

TEST_CASE("a long record's spectrum is the same bit for bit on 1 and 2 threads, for every window") {
  Waveform w;
  w.sample_rate_hz = 1e8;
  w.samples = noise(std::size_t{1} << 17, 7);
  FftPlanner planner("");
  for (const Window window : {Window::rectangular, Window::hann, Window::flat_top}) {
    const AmplitudeSpectrum one = amplitude_spectrum(w, window, planner, 1);
    const AmplitudeSpectrum two = amplitude_spectrum(w, window, planner, 2);
    CHECK(one.rms == two.rms);
    CHECK(one.enbw_bins == two.enbw_bins);
    Waveform moved = w;
    const AmplitudeSpectrum consumed = amplitude_spectrum(std::move(moved), window, planner, 2);
    CHECK(consumed.rms == one.rms);
    CHECK(moved.samples.empty());
  }
}

TEST_CASE("a sine between bins reads its RMS value after interpolation") {
  // Isolated line at fractional bin offsets 0..0.5; rectangular and Hann use the two-bin
  // interpolation (exact for a lone line), flat-top its flat peak.
  FftPlanner planner("");
  const std::size_t n = 8192;
  const double fs = 1e6;
  const double bin = fs / static_cast<double>(n);
  const double rms_v = 0.7;
  for (const double offset : {0.0, 0.1, 0.25, 0.37, 0.5}) {
    CAPTURE(offset);
    const double f = (300.0 + offset) * bin;
    const Waveform w = sine_record(rms_v, f, fs, n);
    const double tol_hann_db = 0.01;   // residual from the other side's leakage at N = 8192
    const double tol_flat_db = 0.03;   // flat-top scalloping, below 0.02 dB (from memory)
    const double tol_rect_db = 0.3;    // rectangular leaks slowly (1/f); meant for coherent records
    const LineReading hann = read_line(amplitude_spectrum(w, Window::hann, planner), f, 5 * bin);
    const LineReading flat = read_line(amplitude_spectrum(w, Window::flat_top, planner), f, 5 * bin);
    const LineReading rect = read_line(amplitude_spectrum(w, Window::rectangular, planner), f, 5 * bin);
    CHECK(std::abs(volts_to_dbuv(hann.rms) - volts_to_dbuv(rms_v)) < tol_hann_db);
    CHECK(std::abs(volts_to_dbuv(flat.rms) - volts_to_dbuv(rms_v)) < tol_flat_db);
    CHECK(std::abs(volts_to_dbuv(rect.rms) - volts_to_dbuv(rms_v)) < tol_rect_db);
    const double tol_bins = 0.01;
    CHECK(std::abs(hann.frequency_hz - f) < tol_bins * bin);
  }
}

TEST_CASE("window coherent gain and noise bandwidth (common practice: Hann CG 0.5, ENBW 1.5 bins)") {
  const std::vector<double> w = window_samples(Window::hann, 1024);
  double sum = 0.0;
  double sum2 = 0.0;
  for (const double v : w) {
    sum += v;
    sum2 += v * v;
  }
  CHECK(sum / 1024.0 == doctest::Approx(0.5).epsilon(1e-12));
  CHECK(1024.0 * sum2 / (sum * sum) == doctest::Approx(1.5).epsilon(1e-12));
  CHECK(window_properties(Window::hann).enbw_bins == doctest::Approx(1.5));
  const std::vector<double> flat = window_samples(Window::flat_top, 1000);
  double flat_sum = 0.0;
  for (const double v : flat) flat_sum += v;
  CHECK(flat_sum / 1000.0 == doctest::Approx(window_properties(Window::flat_top).coherent_gain).epsilon(1e-12));
}

TEST_CASE("non-coherent trapezoid: Hann harmonics within 0.1 dB of Paul's series") {
  // 40.37 periods of 123.4 kHz: no harmonic on a bin; harmonics within 40 dB of the fundamental.
  const double f0 = 123.4e3;
  const double fs = 500e6;
  const std::size_t n = static_cast<std::size_t>(40.37 * fs / f0);
  const Waveform record = trapezoid_record(12.0, f0, 0.42, 60e-9, fs, n);
  FftPlanner planner("");
  const AmplitudeSpectrum spectrum = amplitude_spectrum(record, Window::hann, planner);
  const HarmonicTable table = harmonic_table(spectrum, f0, 30e6);
  const double fundamental_db = volts_to_dbuv(paul_trapezoid_rms(12.0, 0.42, 60e-9, f0, 1));
  const double tol_db = 0.1;
  for (const HarmonicLevel& line : table.lines) {
    const double exact_db = volts_to_dbuv(paul_trapezoid_rms(12.0, 0.42, 60e-9, f0, line.harmonic));
    if (exact_db < fundamental_db - 40.0) continue;
    CAPTURE(line.harmonic);
    CHECK(std::abs(line.level_db - exact_db) < tol_db);
  }
  SUBCASE("the switching frequency is estimated from the record") {
    const FundamentalEstimate estimate = estimate_fundamental(spectrum);
    const double tol_hz = 0.02 * spectrum.bin_width_hz;
    CHECK(std::abs(estimate.frequency_hz - f0) < tol_hz);
    CHECK(estimate.harmonics_used > 3);
    const FundamentalEstimate near = estimate_fundamental(spectrum, 120e3);
    CHECK(std::abs(near.frequency_hz - f0) < tol_hz);
  }
}

TEST_CASE("currents are reported in dBuA, nulls at the level floor") {
  CHECK(level_db(1e-6, Quantity::current) == doctest::Approx(0.0));
  CHECK(level_db(1.0, Quantity::voltage) == doctest::Approx(120.0));
  CHECK(level_db(0.0, Quantity::voltage) == doctest::Approx(level_floor_db));
}

TEST_CASE("errors: too few samples, too short a record for the window, unknown window") {
  FftPlanner planner("");
  Waveform one;
  one.sample_rate_hz = 1e6;
  one.samples = {1.0};
  CHECK_THROWS_WITH_AS((void)amplitude_spectrum(one, Window::hann, planner),
                       "expected a record of at least 2 samples, found 1", Error);
  const Waveform short_record = sine_record(1.0, 100e3, 1e6, 25);  // 2.5 periods
  const AmplitudeSpectrum spectrum = amplitude_spectrum(short_record, Window::hann, planner);
  CHECK_THROWS_WITH_AS((void)harmonic_table(spectrum, 100e3, 1e6),
                       "record too short for the hann window: harmonics 2.5 bins apart, need at least 4", Error);
  CHECK_THROWS_WITH_AS((void)harmonic_table(spectrum, 10e3, 1e6),
                       "record too short: it covers 0.25 periods of the fundamental, expected at least one", Error);
  // A fundamental above what the record can read (half the sample rate less the main lobe, Nyquist:
  // common practice) is refused, never moved or answered with an empty table.
  const Waveform long_record = sine_record(1.0, 100e3, 1e6, 1000);
  const AmplitudeSpectrum long_spectrum = amplitude_spectrum(long_record, Window::hann, planner);
  CHECK_THROWS_WITH_AS((void)harmonic_table(long_spectrum, 600e3, 1e6),
                       "expected a fundamental of at most 497 kHz (half the record's 1 MHz sample rate, less the hann "
                       "window's main lobe), found 600 kHz: no harmonic of it can be read",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse_window("kaiser"), "expected a window (rectangular, hann, flat-top), found \"kaiser\"", Error);
  CHECK(parse_window("flat-top") == Window::flat_top);
}

TEST_CASE("plans are shared between threads; an unwritable wisdom file is not an error") {
  FftPlanner planner("/proc/spurcast-no-such-dir/fftw-wisdom", 0.01);
  const std::vector<double> x = noise(4096, 3);
  const std::vector<std::complex<double>> reference = planner.forward(x);
  std::vector<std::vector<std::complex<double>>> results(4);
  std::vector<std::thread> threads;
  for (std::size_t t = 0; t < results.size(); ++t) {
    threads.emplace_back([&, t] {
      const std::vector<double> y = noise(1000 + t, 5);  // new sizes: planned concurrently
      (void)planner.forward(y);
      results[t] = planner.forward(x);
    });
  }
  for (auto& thread : threads) thread.join();
  for (const auto& result : results) {
    REQUIRE(result.size() == reference.size());
    double worst = 0.0;
    for (std::size_t k = 0; k < result.size(); ++k) worst = std::max(worst, std::abs(result[k] - reference[k]));
    CHECK(worst < 1e-12);
  }
}

TEST_CASE("measured wisdom is written to the cache file and reused") {
  const std::filesystem::path dir = std::filesystem::temp_directory_path() / ("spurcast_wisdom_" + std::to_string(::getpid()));
  const std::string file = (dir / "sub" / "fftw-wisdom").string();
  {
    FftPlanner planner(file, 0.05);
    (void)planner.forward(noise(512, 1));
  }
  CHECK(std::filesystem::exists(file));
  FftPlanner again(file, 0.0);
  const std::vector<double> x = noise(512, 1);
  const auto fast = again.forward(x);
  const auto slow = naive_dft(x);
  double worst = 0.0;
  for (std::size_t k = 0; k < fast.size(); ++k) worst = std::max(worst, std::abs(fast[k] - slow[k]));
  CHECK(worst < 1e-9);
  std::filesystem::remove_all(dir);
}

TEST_CASE("spurcast spectrum --capture: CSV columns are the interface (docs/design.md §4), bad input exits 2") {
  const std::filesystem::path dir = std::filesystem::temp_directory_path() / ("spurcast_spectrum_cli_" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  // 20 periods of a 100 kHz square wave at 10 MS/s, amplitude 1 V: its fundamental is
  // 4/π·1 V peak (common practice: square-wave Fourier series), 2·√2/π V RMS = 119.03 dBµV.
  const std::filesystem::path capture = dir / "square.csv";
  {
    std::ofstream out(capture);
    out << "Time (us),CH1 (V)\n";
    for (int i = 0; i < 2000; ++i) out << i * 0.1 << "," << ((i % 100) < 50 ? 1.0 : -1.0) << "\n";
  }
  const std::filesystem::path csv = dir / "out.csv";
  const std::string command = std::string(SPURCAST_EXECUTABLE) + " spectrum --capture " + capture.string() +
                              " --fundamental 100kHz --window rectangular --csv " + csv.string() + " > " +
                              (dir / "stdout.txt").string();
  REQUIRE(std::system(command.c_str()) == 0);
  std::ifstream in(csv);
  std::string header;
  std::getline(in, header);
  CHECK(header == "harmonic,frequency_hz,level_dbuv");
  std::string first;
  std::getline(in, first);
  int k = 0;
  double f = 0.0;
  double level = 0.0;
  REQUIRE(std::sscanf(first.c_str(), "%d,%lf,%lf", &k, &f, &level) == 3);
  CHECK(k == 1);
  CHECK(f == doctest::Approx(100e3));
  const double tol_db = 0.05;
  CHECK(std::abs(level - volts_to_dbuv(2.0 * std::numbers::sqrt2 / pi)) < tol_db);

  // The user's --fundamental is used as given: 50 kHz on this 100 kHz record lists 50 kHz,
  // 100 kHz, ... (the odd multiples of 50 kHz read nothing), not a value moved onto the record.
  const std::string half = std::string(SPURCAST_EXECUTABLE) + " spectrum --capture " + capture.string() +
                           " --fundamental 50kHz --window rectangular --csv " + csv.string() + " > " +
                           (dir / "stdout.txt").string();
  REQUIRE(std::system(half.c_str()) == 0);
  {
    std::ifstream again(csv);
    std::string line;
    std::getline(again, line);
    std::getline(again, line);
    REQUIRE(std::sscanf(line.c_str(), "%d,%lf,%lf", &k, &f, &level) == 3);
    CHECK(f == doctest::Approx(50e3));
    std::getline(again, line);
    REQUIRE(std::sscanf(line.c_str(), "%d,%lf,%lf", &k, &f, &level) == 3);
    CHECK(k == 2);
    CHECK(std::abs(level - volts_to_dbuv(2.0 * std::numbers::sqrt2 / pi)) < tol_db);
  }
  // Above what the record reads (10 MS/s: 5 MHz less 3 bins of 5 kHz, the Hann lobe): refused, exit 2.
  const std::string above = std::string(SPURCAST_EXECUTABLE) + " spectrum --capture " + capture.string() +
                            " --fundamental 6MHz 2> " + (dir / "stderr.txt").string();
  const int above_status = std::system(above.c_str());
  CHECK(WEXITSTATUS(above_status) == 2);
  {
    std::ifstream err(dir / "stderr.txt");
    std::string message;
    std::getline(err, message);
    CHECK(message == "spurcast: error: expected a fundamental of at most 4.985 MHz (half the record's 10 MHz sample "
                     "rate, less the hann window's main lobe), found 6 MHz: no harmonic of it can be read");
  }

  const std::string bad = std::string(SPURCAST_EXECUTABLE) + " spectrum --capture " +
                          (std::string(SPURCAST_SOURCE_DIR) + "/tests/data/capture/nan.csv") + " 2> " + (dir / "stderr.txt").string();
  const int status = std::system(bad.c_str());
  CHECK(WEXITSTATUS(status) == 2);
  std::ifstream err(dir / "stderr.txt");
  std::string message;
  std::getline(err, message);
  CHECK(message == "spurcast: error: " + std::string(SPURCAST_SOURCE_DIR) + "/tests/data/capture/nan.csv:3:3: expected a finite number, found \"NaN\"");
  std::filesystem::remove_all(dir);
}
