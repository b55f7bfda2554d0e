#include "core/source/spectrum.hpp"

#include <fftw3.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <limits>
#include <numbers>
#include <exception>
#include <thread>

#include "core/input/error.hpp"
#include "core/source/fftw_lock.hpp"
#include "core/source/huge_pages.hpp"
#include "core/input/units.hpp"

namespace spurcast {

namespace {

constexpr double pi = std::numbers::pi;

// Five-term flat-top window, w[n] = Σ (−1)^m a_m cos(2π·m·n/N) (from memory: the coefficients of
// the common five-term flat-top used by spectrum analysers for amplitude accuracy; its scalloping
// loss, below 0.02 dB, is checked numerically in tests/source/spectrum_test.cpp).
constexpr double flat_top_a[5] = {0.21557895, 0.41663158, 0.277263158, 0.083578947, 0.006947368};

/// Windows samples [begin, end) of an n-sample record: store(i, w[i]·x[i]) for each, and returns
/// Σw and Σw² over the range. cos(2πi/N) comes from a rotation re-anchored every 1024 samples
/// (exact cos/sin there), which keeps the window within 1e-13 of the formula at a fraction of the
/// cost of a cos() per sample; `begin` is a multiple of 1024, so a record windowed in parts gets
/// the same values as in one go.
constexpr std::size_t window_block = 1024;

template <typename Store>
void window_range(Window window, const double* x, std::size_t n, std::size_t begin, std::size_t end, Store store,
                  double& sum_w, double& sum_w2) {
  if (window == Window::rectangular) {
    for (std::size_t i = begin; i < end; ++i) store(i, x[i]);
    sum_w = static_cast<double>(end - begin);
    sum_w2 = sum_w;
    return;
  }
  const double theta = 2.0 * pi / static_cast<double>(n);
  const double step_c = std::cos(theta);
  const double step_s = std::sin(theta);
  double s1 = 0.0;
  double s2 = 0.0;
  constexpr std::size_t block = window_block;
  for (std::size_t start = begin; start < end; start += block) {
    double c = std::cos(theta * static_cast<double>(start));
    double s = std::sin(theta * static_cast<double>(start));
    const std::size_t stop = std::min(end, start + block);
    for (std::size_t i = start; i < stop; ++i) {
      double w;
      if (window == Window::hann) {
        w = 0.5 - 0.5 * c;
      } else {
        // Chebyshev: cos(mθ) = T_m(cos θ).
        const double c2 = 2.0 * c * c - 1.0;
        const double c3 = (2.0 * c2 - 1.0) * c;  // 4c³ − 3c
        const double c4 = 2.0 * c2 * c2 - 1.0;
        w = flat_top_a[0] - flat_top_a[1] * c + flat_top_a[2] * c2 - flat_top_a[3] * c3 + flat_top_a[4] * c4;
      }
      store(i, w * x[i]);
      s1 += w;
      s2 += w * w;
      const double next_c = c * step_c - s * step_s;
      s = s * step_c + c * step_s;
      c = next_c;
    }
  }
  sum_w = s1;
  sum_w2 = s2;
}

/// Fills out[i] = w[i]·x[i] for the whole record and returns Σw and Σw².
void apply_window(Window window, const double* x, double* out, std::size_t n, double& sum_w, double& sum_w2) {
  window_range(window, x, n, 0, n, [out](std::size_t i, double v) { out[i] = v; }, sum_w, sum_w2);
}

/// Runs part(0) and part(1), on two threads when `threads` >= 2. The work is the same either way.
template <typename Part>
void two_parts(unsigned threads, Part part) {
  if (threads >= 2) {
    std::exception_ptr error;
    std::thread second([&] {
      try {
        part(1);
      } catch (...) {
        error = std::current_exception();
      }
    });
    part(0);
    second.join();
    if (error) std::rethrow_exception(error);
  } else {
    part(0);
    part(1);
  }
}

/// The radix-2 decimation-in-time step (Cooley & Tukey 1965): X[k] = E[k] + exp(−j2πk/N)·O[k] for
/// k in [begin, end), E and O the N/2-point transforms of the even and odd samples (E[k] =
/// conj(E[N/2 − k]) above N/4, the real-input symmetry); visit(k, X[k]) for each. The twiddle goes
/// by recurrence from an exact start, recomputed exactly at every multiple of window_block
/// (rounding stays < 1e-13), so every bin gets the same value however the range is split.
template <typename Visit>
void radix2_combine(const std::complex<double>* e, const std::complex<double>* o, std::size_t n, std::size_t begin,
                    std::size_t end, Visit&& visit) {
  const std::size_t h = n / 2;
  const double angle_step = -2.0 * pi / static_cast<double>(n);
  const std::complex<double> rotation = std::polar(1.0, angle_step);
  std::complex<double> twiddle = std::polar(1.0, angle_step * static_cast<double>(begin));
  for (std::size_t k = begin; k < end; ++k) {
    if (k % window_block == 0) twiddle = std::polar(1.0, angle_step * static_cast<double>(k));
    const bool mirrored = k > h / 2;
    const std::size_t j = mirrored ? h - k : k;
    const std::complex<double> ek = mirrored ? std::conj(e[j]) : e[j];
    const std::complex<double> ok = mirrored ? std::conj(o[j]) : o[j];
    visit(k, ek + twiddle * ok);
    twiddle *= rotation;
  }
}

std::string format_number(double x) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.4g", x);
  return buffer;
}

}  // namespace

std::string window_name(Window window) {
  switch (window) {
    case Window::rectangular: return "rectangular";
    case Window::hann: return "hann";
    case Window::flat_top: return "flat-top";
  }
  return "";
}

Window parse_window(std::string_view text) {
  if (text == "rectangular" || text == "rect" || text == "none") return Window::rectangular;
  if (text == "hann" || text == "hanning") return Window::hann;
  if (text == "flat-top" || text == "flattop" || text == "flat_top") return Window::flat_top;
  throw Error("expected a window (rectangular, hann, flat-top), found \"" + std::string(text) + "\"");
}

WindowProperties window_properties(Window window) {
  switch (window) {
    case Window::rectangular: return {1.0, 1.0, 1};
    case Window::hann: return {0.5, 1.5, 2};
    case Window::flat_top: {
      double sum_sq = flat_top_a[0] * flat_top_a[0];
      for (int m = 1; m < 5; ++m) sum_sq += 0.5 * flat_top_a[m] * flat_top_a[m];
      return {flat_top_a[0], sum_sq / (flat_top_a[0] * flat_top_a[0]), 5};
    }
  }
  return {1.0, 1.0, 1};
}

std::vector<double> window_samples(Window window, std::size_t length) {
  std::vector<double> ones(length, 1.0);
  std::vector<double> w(length);
  double s1 = 0.0;
  double s2 = 0.0;
  if (length > 0) apply_window(window, ones.data(), w.data(), length, s1, s2);
  return w;
}

// ---------------------------------------------------------------------------------------------
// FftPlanner

FftPlanner::Buffers::Buffers(std::size_t length)
    : length_(length),
      // In place (FFTW 3.3 manual §2.3: the real array is padded to 2·(N/2+1) doubles): one array
      // instead of two, which is the difference between a 10^8-sample record fitting or not.
      output_(reinterpret_cast<std::complex<double>*>(fftw_alloc_complex(length / 2 + 1))) {
  if (output_ == nullptr) throw Error("out of memory for a transform of " + std::to_string(length) + " samples");
  input_ = reinterpret_cast<double*>(output_);
  advise_huge_pages(output_, (length / 2 + 1) * sizeof(std::complex<double>));
}

FftPlanner::Buffers::~Buffers() { fftw_free(output_); }

FftPlanner::FftPlanner(std::string wisdom_file, double planning_limit_s)
    : wisdom_file_(std::move(wisdom_file)), planning_limit_s_(planning_limit_s) {}

FftPlanner::~FftPlanner() {
  const std::lock_guard<std::mutex> lock(mutex_);
  const std::lock_guard<std::mutex> planner_lock(fftw_planner_mutex());
  for (auto& [length, plan] : plans_) fftw_destroy_plan(static_cast<fftw_plan>(plan));
}

std::string FftPlanner::default_wisdom_file() {
  if (const char* cache = std::getenv("XDG_CACHE_HOME"); cache != nullptr && *cache != '\0') {
    return (std::filesystem::path(cache) / "spurcast" / "fftw-wisdom").string();
  }
  if (const char* home = std::getenv("HOME"); home != nullptr && *home != '\0') {
    return (std::filesystem::path(home) / ".cache" / "spurcast" / "fftw-wisdom").string();
  }
  return "";
}

void* FftPlanner::plan_for(std::size_t length) {
  const std::lock_guard<std::mutex> lock(mutex_);
  if (const auto found = plans_.find(length); found != plans_.end()) return found->second;
  if (length > static_cast<std::size_t>(std::numeric_limits<int>::max())) {
    throw Error("record of " + std::to_string(length) + " samples is too long for one transform");
  }
  // This object's lock guards its plan cache; FFTW's planner state is process-wide, so the calls
  // into it also take the library's one planner lock (core/source/fftw_lock.hpp), always in this order.
  const std::lock_guard<std::mutex> planner_lock(fftw_planner_mutex());
  if (!wisdom_loaded_) {
    wisdom_loaded_ = true;
    // A missing or corrupt wisdom file only means planning again.
    if (!wisdom_file_.empty()) (void)fftw_import_wisdom_from_filename(wisdom_file_.c_str());
  }
  const int n = static_cast<int>(length);
  // Planning with FFTW_MEASURE overwrites the arrays it is given, so plan on scratch arrays of the
  // same (fftw_malloc) alignment and execute later on the caller's with fftw_execute_dft_r2c.
  Buffers scratch(length);
  auto* out = reinterpret_cast<fftw_complex*>(scratch.output());
  fftw_plan plan = nullptr;
  fftw_plan plan_from_wisdom = wisdom_file_.empty()
                                   ? nullptr
                                   : fftw_plan_dft_r2c_1d(n, scratch.input(), out, FFTW_MEASURE | FFTW_WISDOM_ONLY);
  if (plan_from_wisdom != nullptr) {
    plan = plan_from_wisdom;
  } else if (planning_limit_s_ > 0.0) {
    // FFTW 3.3 manual §4.2 "Planner Flags" / fftw_set_timelimit: caps the measuring; the best plan
    // found so far is used. The cap is process-wide state of FFTW, set here under the lock.
    fftw_set_timelimit(planning_limit_s_);
    plan = fftw_plan_dft_r2c_1d(n, scratch.input(), out, FFTW_MEASURE);
    fftw_set_timelimit(FFTW_NO_TIMELIMIT);
    if (plan != nullptr && !wisdom_file_.empty()) {
      // Written to a temporary file and renamed, so a reader never sees half a file; any failure
      // (read-only home, no space) is ignored: wisdom is a cache.
      std::error_code ignored;
      const std::filesystem::path target(wisdom_file_);
      std::filesystem::create_directories(target.parent_path(), ignored);
      const std::string temporary = wisdom_file_ + ".tmp" + std::to_string(::getpid());
      if (fftw_export_wisdom_to_filename(temporary.c_str()) != 0) {
        std::filesystem::rename(temporary, target, ignored);
        if (ignored) std::filesystem::remove(temporary, ignored);
      }
    }
  } else {
    plan = fftw_plan_dft_r2c_1d(n, scratch.input(), out, FFTW_ESTIMATE);
  }
  if (plan == nullptr) throw Error("cannot plan a transform of " + std::to_string(length) + " samples");
  plans_.emplace(length, plan);
  return plan;
}

void FftPlanner::prepare(std::size_t length) { (void)plan_for(length); }

void FftPlanner::forward(Buffers& buffers) {
  auto plan = static_cast<fftw_plan>(plan_for(buffers.length()));
  // fftw_execute_dft_r2c is thread-safe (FFTW 3.3 manual §5.4). The new-array execute needs the
  // arrays in place exactly as the plan's were (§4.6): plan_for() plans on in-place scratch too.
  fftw_execute_dft_r2c(plan, buffers.input(), reinterpret_cast<fftw_complex*>(buffers.output()));
}

std::vector<std::complex<double>> FftPlanner::forward(std::span<const double> samples) {
  Buffers buffers(samples.size());
  std::copy(samples.begin(), samples.end(), buffers.input());
  forward(buffers);
  return {buffers.output(), buffers.output() + samples.size() / 2 + 1};
}

// ---------------------------------------------------------------------------------------------
// Spectrum

namespace {

void check_record(const Waveform& waveform) {
  const std::size_t n = waveform.samples.size();
  if (n < 2) throw Error("expected a record of at least 2 samples, found " + std::to_string(n));
  if (!(waveform.sample_rate_hz > 0.0) || !std::isfinite(waveform.sample_rate_hz)) {
    throw Error("expected a positive sample rate, found " + format_number(waveform.sample_rate_hz) + " Hz");
  }
}

/// Transforms the windowed record in `buffers` and scales it to single-sided RMS.
AmplitudeSpectrum finish_spectrum(Quantity quantity, double sample_rate_hz, Window window, FftPlanner::Buffers& buffers,
                                  double sum_w, double sum_w2, FftPlanner& planner) {
  const std::size_t n = buffers.length();
  planner.forward(buffers);

  AmplitudeSpectrum spectrum;
  spectrum.quantity = quantity;
  spectrum.window = window;
  spectrum.sample_rate_hz = sample_rate_hz;
  spectrum.record_length = n;
  spectrum.bin_width_hz = sample_rate_hz / static_cast<double>(n);
  spectrum.enbw_bins = static_cast<double>(n) * sum_w2 / (sum_w * sum_w);
  const std::size_t bins = n / 2 + 1;
  reserve_with_huge_pages(spectrum.rms, bins);
  spectrum.rms.resize(bins);
  // Coherent gain correction: a sine of RMS value a centred on bin k gives |X[k]| = a/√2 · Σw.
  const double line_scale = std::numbers::sqrt2 / sum_w;
  const std::complex<double>* x = buffers.output();
  for (std::size_t k = 0; k < bins; ++k) {
    const double re = x[k].real();
    const double im = x[k].imag();
    spectrum.rms[k] = line_scale * std::sqrt(re * re + im * im);
  }
  spectrum.dc = x[0].real() / sum_w;
  spectrum.rms[0] = std::abs(spectrum.dc);
  if (n % 2 == 0) spectrum.rms[bins - 1] /= std::numbers::sqrt2;  // the Nyquist bin is real, not a pair
  return spectrum;
}

/// Records at least this long (and of even length) are transformed as two halves.
constexpr std::size_t split_min_length = std::size_t{1} << 16;

AmplitudeSpectrum spectrum_of(const Waveform& waveform, std::vector<double>* consumed, Window window,
                              FftPlanner& planner, unsigned threads) {
  check_record(waveform);
  const std::size_t n = waveform.samples.size();
  threads = threads != 0 ? threads : std::max(1u, std::thread::hardware_concurrency());
  if (n % 2 != 0 || n < split_min_length) {
    FftPlanner::Buffers buffers(n);
    double sum_w = 0.0;
    double sum_w2 = 0.0;
    apply_window(window, waveform.samples.data(), buffers.input(), n, sum_w, sum_w2);
    if (consumed != nullptr) std::vector<double>().swap(*consumed);
    return finish_spectrum(waveform.quantity, waveform.sample_rate_hz, window, buffers, sum_w, sum_w2, planner);
  }
  // One radix-2 decimation-in-time step (Cooley & Tukey, Math. Comp. 19, 1965): the N/2-point
  // transforms E and O of the even and odd samples give X[k] = E[k] + exp(−j2πk/N)·O[k] for
  // 0 <= k <= N/2, with E[k] = conj(E[N/2 − k]) above N/4 (real input). Two half-length plans
  // cost half the planning of one full one (FFTW computes every twiddle with sincos), the halves
  // transform on two cores, and the magnitudes are read straight from E and O. Every step is split
  // in the same two parts whatever the thread count, so the result does not depend on it.
  const std::size_t h = n / 2;
  FftPlanner::Buffers even(h);
  FftPlanner::Buffers odd(h);
  double* even_in = even.input();
  double* odd_in = odd.input();
  const std::size_t middle = std::max<std::size_t>(window_block, h / window_block * window_block);  // even, block-aligned
  double sum_w_part[2] = {0.0, 0.0};
  double sum_w2_part[2] = {0.0, 0.0};
  const double* x = waveform.samples.data();
  two_parts(threads, [&](int part) {
    const std::size_t begin = part == 0 ? 0 : middle;
    const std::size_t end = part == 0 ? middle : n;
    window_range(window, x, n, begin, end,
                 [even_in, odd_in](std::size_t i, double v) {
                   // The half chosen first, then indexed: g++ 12 with -fsanitize=undefined
                   // miscompiles `(c ? p : q)[j] = v` in this nested lambda (writes lost at -O2,
                   // a wild read at -O0; reduced and checked by hand).
                   double* half = (i & 1) != 0 ? odd_in : even_in;
                   half[i >> 1] = v;
                 },
                 sum_w_part[part], sum_w2_part[part]);
  });
  if (consumed != nullptr) std::vector<double>().swap(*consumed);
  const double sum_w = sum_w_part[0] + sum_w_part[1];
  const double sum_w2 = sum_w2_part[0] + sum_w2_part[1];
  two_parts(threads, [&](int part) { planner.forward(part == 0 ? even : odd); });

  AmplitudeSpectrum spectrum;
  spectrum.quantity = waveform.quantity;
  spectrum.window = window;
  spectrum.sample_rate_hz = waveform.sample_rate_hz;
  spectrum.record_length = n;
  spectrum.bin_width_hz = waveform.sample_rate_hz / static_cast<double>(n);
  spectrum.enbw_bins = static_cast<double>(n) * sum_w2 / (sum_w * sum_w);
  const std::size_t bins = h + 1;
  reserve_with_huge_pages(spectrum.rms, bins);
  spectrum.rms.resize(bins);
  const double line_scale = std::numbers::sqrt2 / sum_w;  // as in finish_spectrum
  const std::complex<double>* e = even.output();
  const std::complex<double>* o = odd.output();
  const std::size_t bins_middle = std::max<std::size_t>(window_block, h / 2 / window_block * window_block);
  two_parts(threads, [&](int part) {
    const std::size_t begin = part == 0 ? 0 : std::min(bins_middle, bins);
    const std::size_t end = part == 0 ? std::min(bins_middle, bins) : bins;
    radix2_combine(e, o, n, begin, end, [&](std::size_t k, std::complex<double> xk) {
      spectrum.rms[k] = line_scale * std::sqrt(xk.real() * xk.real() + xk.imag() * xk.imag());
    });
  });
  spectrum.dc = (e[0].real() + o[0].real()) / sum_w;
  spectrum.rms[0] = std::abs(spectrum.dc);
  spectrum.rms[bins - 1] /= std::numbers::sqrt2;  // the Nyquist bin is real, not a pair
  return spectrum;
}

}  // namespace

std::size_t spectrum_transform_length(std::size_t record_length) {
  return record_length % 2 == 0 && record_length >= split_min_length ? record_length / 2 : record_length;
}

AmplitudeSpectrum amplitude_spectrum(const Waveform& waveform, Window window, FftPlanner& planner, unsigned threads) {
  return spectrum_of(waveform, nullptr, window, planner, threads);
}

AmplitudeSpectrum amplitude_spectrum(Waveform&& waveform, Window window, FftPlanner& planner, unsigned threads) {
  // The samples are freed as soon as they are windowed into the transform buffers.
  return spectrum_of(waveform, &waveform.samples, window, planner, threads);
}

SampledSpectrum sampled_spectrum(const Waveform& waveform, double low_hz, double high_hz, FftPlanner& planner,
                                 unsigned threads) {
  check_record(waveform);
  if (!(low_hz >= 0.0 && low_hz <= high_hz)) throw Error("expected 0 <= low <= high frequency for a record's spectrum");
  const std::size_t n = waveform.samples.size();
  threads = threads != 0 ? threads : std::max(1u, std::thread::hardware_concurrency());
  SampledSpectrum spectrum;
  spectrum.quantity = waveform.quantity;
  spectrum.sample_rate_hz = waveform.sample_rate_hz;
  spectrum.record_samples = n;
  const double bin_hz = spectrum.bin_hz();
  const std::size_t last_bin = n / 2;
  const auto bin_at = [&](double f, bool up) {
    const double k = up ? std::ceil(f / bin_hz) : std::floor(f / bin_hz);
    return k >= static_cast<double>(last_bin) ? last_bin : static_cast<std::size_t>(k);
  };
  spectrum.first_bin = bin_at(low_hz, false);
  const std::size_t end_bin = bin_at(high_hz, true) + 1;
  spectrum.bins.resize(end_bin - spectrum.first_bin);
  if (n % 2 != 0 || n < split_min_length) {
    FftPlanner::Buffers buffers(n);
    std::copy(waveform.samples.begin(), waveform.samples.end(), buffers.input());
    planner.forward(buffers);
    std::copy(buffers.output() + spectrum.first_bin, buffers.output() + end_bin, spectrum.bins.begin());
    return spectrum;
  }
  // The radix-2 step of spectrum_of() above, unwindowed: X[k] = E[k] + exp(−j2πk/N)·O[k].
  const std::size_t h = n / 2;
  FftPlanner::Buffers even(h);
  FftPlanner::Buffers odd(h);
  const double* x = waveform.samples.data();
  two_parts(threads, [&](int part) {
    double* half = part == 0 ? even.input() : odd.input();
    for (std::size_t i = 0; i < h; ++i) half[i] = x[2 * i + static_cast<std::size_t>(part)];
    planner.forward(part == 0 ? even : odd);
  });
  const std::complex<double>* e = even.output();
  const std::complex<double>* o = odd.output();
  const std::size_t count = spectrum.bins.size();
  const std::size_t middle = spectrum.first_bin + count / 2;
  two_parts(threads, [&](int part) {
    const std::size_t begin = part == 0 ? spectrum.first_bin : middle;
    const std::size_t end = part == 0 ? middle : end_bin;
    radix2_combine(e, o, n, begin, end,
                   [&](std::size_t k, std::complex<double> xk) { spectrum.bins[k - spectrum.first_bin] = xk; });
  });
  return spectrum;
}

double total_power(const AmplitudeSpectrum& spectrum) {
  double sum = 0.0;
  for (const double a : spectrum.rms) sum += a * a;
  return sum / spectrum.enbw_bins;
}

double level_db(double rms, Quantity quantity) {
  if (!(rms > 0.0)) return level_floor_db;
  const double level = quantity == Quantity::voltage ? volts_to_dbuv(rms) : amps_to_dbua(rms);
  return std::max(level, level_floor_db);
}

LineReading read_line(const AmplitudeSpectrum& spectrum, double frequency_hz, double search_hz) {
  const std::vector<double>& a = spectrum.rms;
  const std::size_t last = a.size() - 1;
  const double centre = frequency_hz / spectrum.bin_width_hz;
  const double reach = std::max(search_hz / spectrum.bin_width_hz, 1.0);
  const auto low = static_cast<std::size_t>(std::clamp(std::ceil(centre - reach), 1.0, static_cast<double>(last)));
  const auto high = static_cast<std::size_t>(std::clamp(std::floor(centre + reach), 1.0, static_cast<double>(last)));
  std::size_t peak = std::clamp(static_cast<std::size_t>(std::llround(std::max(centre, 1.0))), low, high);
  for (std::size_t k = low; k <= high; ++k) {
    if (a[k] > a[peak]) peak = k;
  }
  LineReading reading{spectrum.frequency_hz(peak), a[peak]};
  if (!(a[peak] > 0.0)) return reading;
  // The larger neighbour tells on which side of the bin the line lies.
  const double left = peak > 1 ? a[peak - 1] : 0.0;
  const double right = peak < last ? a[peak + 1] : 0.0;
  const double side = right >= left ? 1.0 : -1.0;
  const double alpha = std::max(left, right) / a[peak];
  // Two-bin interpolation for an isolated sinusoid (Grandke, "Interpolation algorithms for
  // discrete Fourier transforms of weighted signals", IEEE Trans. Instrum. Meas. 32(2), 1983;
  // derived again here from the window kernels, large-N form):
  //   rectangular |W(δ)| ∝ sin(πδ)/(πδ):          α = δ/(1−δ)      → δ = α/(1+α)
  //   Hann        |W(δ)| ∝ sin(πδ)/(πδ(1−δ²)):    α = (1+δ)/(2−δ)  → δ = (2α−1)/(α+1)
  // with the amplitude a_peak/|W(δ)|. It is exact for a lone line, where parabolic interpolation
  // of the log magnitude leaves up to ~0.1 dB (Hann) and needs no DTFT sum over the record (an
  // exact DTFT at k·f_sw costs O(N) per harmonic). The flat-top kernel is flat to 0.02 dB over
  // ±0.5 bin, so its peak bin is read as it is, its frequency from a parabola on the magnitudes.
  double delta = 0.0;
  double gain = 1.0;
  switch (spectrum.window) {
    case Window::rectangular:
      delta = alpha / (1.0 + alpha);
      gain = delta > 1e-9 ? std::sin(pi * delta) / (pi * delta) : 1.0;
      break;
    case Window::hann:
      delta = std::clamp((2.0 * alpha - 1.0) / (alpha + 1.0), 0.0, 0.5);
      gain = delta > 1e-9 ? std::sin(pi * delta) / (pi * delta * (1.0 - delta * delta)) : 1.0;
      break;
    case Window::flat_top: {
      const double denominator = left - 2.0 * a[peak] + right;
      // Parabola vertex offset 0.5·(left − right)/(left − 2a + right) [bins], towards the larger side.
      delta = denominator < 0.0 ? std::clamp(0.5 * (left - right) / denominator, -0.5, 0.5) : 0.0;
      reading.frequency_hz = spectrum.frequency_hz(peak) + delta * spectrum.bin_width_hz;
      return reading;
    }
  }
  reading.frequency_hz = (static_cast<double>(peak) + side * delta) * spectrum.bin_width_hz;
  reading.rms = a[peak] / gain;
  return reading;
}

FundamentalEstimate estimate_fundamental(const AmplitudeSpectrum& spectrum, std::optional<double> near_hz) {
  const std::vector<double>& a = spectrum.rms;
  const int lobe = window_properties(spectrum.window).main_lobe_half_bins;
  const std::size_t first = static_cast<std::size_t>(lobe) + 1;
  if (a.size() <= first + 1) {
    throw Error("record too short to estimate the switching frequency (" + std::to_string(spectrum.record_length) +
                " samples)");
  }
  LineReading fundamental;
  if (near_hz) {
    fundamental = read_line(spectrum, *near_hz, 0.2 * *near_hz);
  } else {
    std::size_t peak = first;
    for (std::size_t k = first; k < a.size(); ++k) {
      if (a[k] > a[peak]) peak = k;
    }
    if (!(a[peak] > 0.0)) throw Error("cannot estimate the switching frequency: the record has no AC content");
    fundamental = read_line(spectrum, spectrum.frequency_hz(peak), spectrum.bin_width_hz);
  }
  // Least-squares refinement over the harmonics k·f0 that stand out: f0 = Σ w·k·f_k / Σ w·k².
  double f0 = fundamental.frequency_hz;
  double numerator = fundamental.rms * fundamental.rms * fundamental.frequency_hz;
  double denominator = fundamental.rms * fundamental.rms;
  int used = 1;
  const double threshold = fundamental.rms * 1e-2;  // 40 dB below the fundamental
  const double nyquist_hz = spectrum.sample_rate_hz / 2.0 - (lobe + 1) * spectrum.bin_width_hz;
  if (f0 / spectrum.bin_width_hz >= 2.0 * lobe) {
    for (int k = 2; k <= 10 && k * f0 < nyquist_hz; ++k) {
      const LineReading line = read_line(spectrum, k * f0, 0.2 * f0);
      if (line.rms < threshold) continue;
      const double weight = line.rms * line.rms;
      numerator += weight * k * line.frequency_hz;
      denominator += weight * k * k;
      ++used;
    }
  }
  FundamentalEstimate estimate;
  estimate.frequency_hz = numerator / denominator;
  estimate.resolution_hz = spectrum.bin_width_hz;
  estimate.harmonics_used = used;
  return estimate;
}

HarmonicTable harmonic_table(const AmplitudeSpectrum& spectrum, double fundamental_hz, double max_frequency_hz) {
  if (!(fundamental_hz > 0.0) || !std::isfinite(fundamental_hz)) {
    throw Error("expected a positive fundamental frequency, found " + format_number(fundamental_hz) + " Hz");
  }
  const WindowProperties properties = window_properties(spectrum.window);
  const double needed_bins = spectrum.window == Window::rectangular ? 2.0 : 2.0 * properties.main_lobe_half_bins;
  const double spacing_bins = fundamental_hz / spectrum.bin_width_hz;
  if (spacing_bins < 1.0 - 1e-9) {
    throw Error("record too short: it covers " + format_number(spacing_bins) +
                " periods of the fundamental, expected at least one");
  }
  if (spacing_bins < needed_bins - 1e-9) {
    throw Error("record too short for the " + window_name(spectrum.window) + " window: harmonics " +
                format_number(spacing_bins) + " bins apart, need at least " + format_number(needed_bins));
  }
  HarmonicTable table;
  table.quantity = spectrum.quantity;
  table.window = spectrum.window;
  table.fundamental_hz = fundamental_hz;
  table.dc = spectrum.dc;
  table.bin_width_hz = spectrum.bin_width_hz;
  const double readable_hz =
      spectrum.sample_rate_hz / 2.0 - (properties.main_lobe_half_bins + 1) * spectrum.bin_width_hz;
  // A fundamental the record cannot read gives no line at all: refuse it rather than return an
  // empty table (the user's value is never moved to something the record can read).
  if (fundamental_hz > readable_hz * (1.0 + 1e-12)) {
    throw Error("expected a fundamental of at most " + format_quantity(readable_hz, Dimension::frequency, 6) +
                " (half the record's " + format_quantity(spectrum.sample_rate_hz, Dimension::frequency, 6) +
                " sample rate, less the " + window_name(spectrum.window) + " window's main lobe), found " +
                format_quantity(fundamental_hz, Dimension::frequency, 6) + ": no harmonic of it can be read");
  }
  const double top_hz = std::min(max_frequency_hz, readable_hz);
  // Search ±20 % of f0 around k·f0 on a windowed (possibly drifting) record; on a coherent
  // rectangular record the line sits on its bin and the search must not wander to leakage.
  const double search_hz = spectrum.window == Window::rectangular ? 0.5 * spectrum.bin_width_hz : 0.2 * fundamental_hz;
  for (int k = 1; k * fundamental_hz <= top_hz * (1.0 + 1e-12); ++k) {
    const LineReading line = read_line(spectrum, k * fundamental_hz, search_hz);
    table.lines.push_back({k, k * fundamental_hz, line.rms, level_db(line.rms, spectrum.quantity)});
  }
  return table;
}

}  // namespace spurcast
