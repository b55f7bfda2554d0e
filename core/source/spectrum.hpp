#pragma once
/// The harmonic spectrum of a sampled record: FFTW real-to-complex transforms with cached plans,
/// rectangular / Hann / flat-top windows with coherent-gain correction, single-sided RMS amplitudes,
/// and a harmonic table read at k·f_sw with interpolation (not at the nearest bin).
///
/// Example:
///   FftPlanner planner;                                   // one per process, passed to whoever needs it
///   AmplitudeSpectrum s = amplitude_spectrum(capture.waveform, Window::hann, planner);
///   HarmonicTable t = harmonic_table(s, 100e3, 30e6);     // f_sw known; or estimate_fundamental(s)
///   t.lines[2].level_db;                                  // harmonic 3 in dBµV (dBµA for a current)
#include <complex>
#include <cstddef>
#include <map>
#include <mutex>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "core/source/waveform.hpp"

namespace spurcast {

/// Analysis windows (periodic, "DFT-even" forms: w[n] for n = 0..N−1 over a period of N).
enum class Window {
  rectangular,  ///< for coherent records (an integer number of periods): no leakage, exact lines
  hann,         ///< 0.5 − 0.5·cos(2πn/N); coherent gain 0.5, ENBW 1.5 bins
  flat_top,     ///< five-term flat-top; scalloping loss below 0.02 dB, main lobe ±5 bins
};

/// "rectangular", "hann", "flat-top".
[[nodiscard]] std::string window_name(Window window);
/// Accepts "rectangular" (or "rect", "none"), "hann" (or "hanning"), "flat-top" (or "flattop");
/// otherwise Error "expected a window (rectangular, hann, flat-top), found "x"".
[[nodiscard]] Window parse_window(std::string_view text);

struct WindowProperties {
  double coherent_gain;     ///< mean of w[n]
  double enbw_bins;         ///< equivalent noise bandwidth N·Σw²/(Σw)² [bins]
  int main_lobe_half_bins;  ///< first null of the kernel [bins]
};
[[nodiscard]] WindowProperties window_properties(Window window);
/// w[n], n = 0..length−1 (periodic form).
[[nodiscard]] std::vector<double> window_samples(Window window, std::size_t length);

/// Real-to-complex FFTs with plans made once per size and reused. FFTW's planner is not
/// thread-safe: the plan cache is guarded by this object's mutex, and every call into FFTW's
/// (process-wide) planner also holds the library's planner lock of core/source/fftw_lock.hpp; executing a
/// plan (fftw_execute_dft_r2c on the caller's buffers) runs outside both. One FftPlanner per process,
/// passed to whoever needs transforms, shares the plans.
///
/// Plans come from FFTW wisdom kept in `wisdom_file` when it has one for the size (FFTW_MEASURE |
/// FFTW_WISDOM_ONLY, instant), else from FFTW_ESTIMATE. Measuring is opt-in (planning_limit_s > 0:
/// FFTW_MEASURE capped at that many seconds, the wisdom then saved for the next run) because on the
/// development machine (2 cores) a fully measured 2^22-point r2c plan took 82 s to make and ran no
/// faster than the estimated one (35.7 ms against 32.7 ms; capped at 2 s, non-powers of two such as
/// 4·10^6 ran slower). The wisdom file is a cache: unreadable or unwritable is never an error.
class FftPlanner {
 public:
  /// wisdom_file: "" for none; default: $XDG_CACHE_HOME/spurcast/fftw-wisdom, else
  /// ~/.cache/spurcast/fftw-wisdom. planning_limit_s ≤ 0: never measure (see above).
  explicit FftPlanner(std::string wisdom_file = default_wisdom_file(), double planning_limit_s = 0.0);
  ~FftPlanner();
  FftPlanner(const FftPlanner&) = delete;
  FftPlanner& operator=(const FftPlanner&) = delete;

  /// One aligned array for an in-place transform of `length` real samples: input()[0..length)
  /// and output()[0..length/2] complex are the same memory. Each thread uses its own.
  class Buffers {
   public:
    explicit Buffers(std::size_t length);
    ~Buffers();
    Buffers(const Buffers&) = delete;
    Buffers& operator=(const Buffers&) = delete;
    [[nodiscard]] double* input() { return input_; }
    [[nodiscard]] std::complex<double>* output() { return output_; }
    [[nodiscard]] std::size_t length() const { return length_; }

   private:
    std::size_t length_;
    std::complex<double>* output_;
    double* input_ = nullptr;
  };

  /// X[k] = Σ_n x[n]·exp(−j·2π·k·n/N), k = 0..N/2, from buffers.input() into buffers.output().
  /// Thread-safe. The output overwrites the input.
  void forward(Buffers& buffers);
  /// Same on a copy of `samples` (convenience for small transforms and tests).
  [[nodiscard]] std::vector<std::complex<double>> forward(std::span<const double> samples);

  /// Makes (and keeps) the plan for `length` now, e.g. on a thread of its own while the record is
  /// still being assembled; forward() then finds it ready.
  void prepare(std::size_t length);

  /// The default wisdom path described above, or "" when neither variable is set.
  [[nodiscard]] static std::string default_wisdom_file();

 private:
  void* plan_for(std::size_t length);  // fftw_plan, created on first use (mutex held inside)
  std::mutex mutex_;
  std::map<std::size_t, void*> plans_;
  std::string wisdom_file_;
  double planning_limit_s_;
  bool wisdom_loaded_ = false;
};

/// Single-sided RMS amplitude spectrum of a record: bin k at k·bin_width_hz holds the RMS value of
/// a sine centred on that bin (coherent gain corrected), so a coherent line reads its RMS value.
struct AmplitudeSpectrum {
  Quantity quantity = Quantity::voltage;
  Window window = Window::hann;
  double sample_rate_hz = 0.0;    ///< [Hz]
  std::size_t record_length = 0;  ///< N samples
  double bin_width_hz = 0.0;      ///< sample_rate_hz / N [Hz]
  double dc = 0.0;                ///< windowed mean [V] or [A]
  double enbw_bins = 1.0;         ///< equivalent noise bandwidth of the window used [bins]
  std::vector<double> rms;        ///< bins 0..N/2 [V] or [A]; rms[0] = |dc|

  [[nodiscard]] double frequency_hz(std::size_t bin) const { return static_cast<double>(bin) * bin_width_hz; }
};

/// Windows the samples, transforms them and scales to single-sided RMS:
///   rms[k] = √2·|X[k]| / (N·CG) for 0 < k < N/2, |X[k]| / (N·CG) at k = 0 and k = N/2 (N even).
/// Needs at least 2 samples.
/// Records of even length from 2^16 samples are transformed as two half-length transforms (one
/// radix-2 step) on up to two threads (`threads`, 0 = all cores); the result does not depend on
/// the thread count.
/// The transform length amplitude_spectrum() plans for a record of `record_length` samples (for
/// FftPlanner::prepare).
[[nodiscard]] std::size_t spectrum_transform_length(std::size_t record_length);
[[nodiscard]] AmplitudeSpectrum amplitude_spectrum(const Waveform& waveform, Window window, FftPlanner& planner,
                                                   unsigned threads = 0);
/// The same, consuming the record: its samples are freed as soon as they are windowed into the
/// transform buffer, so a long capture is resident once, not twice, while it is transformed (a
/// 10^8-sample record: 0.8 GB less at the peak).
[[nodiscard]] AmplitudeSpectrum amplitude_spectrum(Waveform&& waveform, Window window, FftPlanner& planner,
                                                   unsigned threads = 0);

/// The unwindowed one-sided DFT of a record (rectangular window, no scaling: SampledSpectrum),
/// keeping only the bins from k = floor(low_hz/Δf) to k = ceil(high_hz/Δf), Δf = sample_rate_hz/N,
/// clipped to 0..N/2: a receiver that reads a band needs no more, and a 10^8-sample record's
/// 5·10^7 complex bins (0.8 GB) shrink to those of the band (band B of a 1 GS/s record: 3·10^6).
/// Records of even length from 2^16 samples are transformed as two halves (one radix-2 step, as
/// amplitude_spectrum) on up to two threads (`threads`, 0 = all cores); the bins do not depend on
/// the thread count. Needs at least 2 samples and 0 <= low_hz <= high_hz.
[[nodiscard]] SampledSpectrum sampled_spectrum(const Waveform& waveform, double low_hz, double high_hz, FftPlanner& planner,
                                               unsigned threads = 0);

/// Mean-square value from the spectrum, Σ rms[k]² / ENBW: equals mean(x²) exactly for the
/// rectangular window (Parseval) and mean((w·x)²)/mean(w²) for the others [V²] or [A²].
[[nodiscard]] double total_power(const AmplitudeSpectrum& spectrum);

/// A line read from the spectrum with interpolation between bins.
struct LineReading {
  double frequency_hz = 0.0;  ///< interpolated peak frequency [Hz]
  double rms = 0.0;           ///< interpolated RMS amplitude [V] or [A]
};

/// Reads the strongest line within ±search_hz of `frequency_hz`: the peak bin, then the
/// window's two-bin interpolation (see spectrum.cpp for the method and its source).
[[nodiscard]] LineReading read_line(const AmplitudeSpectrum& spectrum, double frequency_hz, double search_hz);

struct FundamentalEstimate {
  double frequency_hz = 0.0;  ///< [Hz]
  double resolution_hz = 0.0; ///< bin width of the record; the estimate is much finer (interpolated, fitted)
  int harmonics_used = 0;     ///< harmonics in the least-squares refinement
};

/// Estimates the switching frequency: the strongest line above the DC lobe (or, with `near_hz`,
/// the strongest within ±20 % of it), interpolated, then refined by a least-squares fit
/// f0 = Σ a_k²·k·f_k / Σ a_k²·k² over the first 10 harmonics that stand within 40 dB of it.
[[nodiscard]] FundamentalEstimate estimate_fundamental(const AmplitudeSpectrum& spectrum,
                                                       std::optional<double> near_hz = std::nullopt);

struct HarmonicLevel {
  int harmonic = 0;           ///< k ≥ 1
  double frequency_hz = 0.0;  ///< k·f0 [Hz]
  double rms = 0.0;           ///< RMS amplitude [V] or [A]
  double level_db = 0.0;      ///< dBµV or dBµA; level_floor_db for a null
};

struct HarmonicTable {
  Quantity quantity = Quantity::voltage;
  Window window = Window::hann;
  double fundamental_hz = 0.0;  ///< [Hz]
  double dc = 0.0;              ///< [V] or [A]
  double bin_width_hz = 0.0;    ///< [Hz]
  std::vector<HarmonicLevel> lines;  ///< k = 1..K, k·f0 ≤ max frequency and below Nyquist
};

/// The harmonics k·f0 up to max_frequency_hz (and below the Nyquist frequency less the window's
/// main lobe), each read with read_line within ±20 % of f0 around k·f0. Throws when the record
/// resolves the harmonics too coarsely for the window (rectangular needs f0 ≥ 2 bins, Hann 4,
/// flat-top 10: "record too short for the hann window: harmonics 2.5 bins apart, need at least 4").
[[nodiscard]] HarmonicTable harmonic_table(const AmplitudeSpectrum& spectrum, double fundamental_hz,
                                           double max_frequency_hz);

/// dBµV or dBµA of an RMS amplitude, level_floor_db for zero.
[[nodiscard]] double level_db(double rms, Quantity quantity);

}  // namespace spurcast
