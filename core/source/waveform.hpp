#pragma once
/// The signal value types that flow between stages: a uniformly sampled record (Waveform), part of
/// its discrete Fourier transform (SampledSpectrum), and the exact harmonic content of a periodic
/// signal (LineSpectrum).
#include <complex>
#include <cstddef>
#include <string>
#include <vector>

namespace spurcast {

/// What a signal measures. Voltages are reported in dBµV, currents in dBµA.
enum class Quantity { voltage, current };

/// "dBµV" or "dBµA".
[[nodiscard]] inline std::string level_unit(Quantity q) {
  return q == Quantity::voltage ? "dB\xC2\xB5V" : "dB\xC2\xB5" "A";
}
/// CSV column suffix: "dbuv" or "dbua" (docs/design.md §4 column names).
[[nodiscard]] inline std::string level_suffix(Quantity q) {
  return q == Quantity::voltage ? "dbuv" : "dbua";
}

/// A uniformly sampled record. samples[i] is the value at start_time_s + i / sample_rate_hz, in
/// volts or amperes.
struct Waveform {
  Quantity quantity = Quantity::voltage;
  double sample_rate_hz = 0.0;  ///< [Hz], > 0
  double start_time_s = 0.0;    ///< [s]
  std::vector<double> samples;  ///< [V] or [A]

  [[nodiscard]] double duration_s() const {
    return sample_rate_hz > 0.0 ? static_cast<double>(samples.size()) / sample_rate_hz : 0.0;
  }
};

/// A run of bins of the one-sided DFT of a uniformly sampled real record of N = record_samples
/// samples: bins[i] = X[first_bin + i] with X[k] = Σ_n x[n]·exp(−j·2π·k·n/N) (unnormalised, as
/// FFTW computes it), at k·sample_rate_hz/N. A record taken as one period of a periodic signal is
/// described by X[0..N/2] exactly; a run of them is what a stage reading only some frequencies
/// needs (the receiver reads a band's tuned frequencies ± its IF span), at a fraction of the
/// record's memory.
struct SampledSpectrum {
  Quantity quantity = Quantity::voltage;
  double sample_rate_hz = 0.0;                 ///< [Hz] of the record, > 0
  std::size_t record_samples = 0;              ///< N
  std::size_t first_bin = 0;                   ///< k of bins[0]
  std::vector<std::complex<double>> bins;      ///< X[first_bin ..] [V] or [A] × samples

  [[nodiscard]] double bin_hz() const { return record_samples > 0 ? sample_rate_hz / static_cast<double>(record_samples) : 0.0; }
  /// One past the last bin held.
  [[nodiscard]] std::size_t end_bin() const { return first_bin + bins.size(); }
  /// [s] N / sample_rate_hz, the period the record stands for.
  [[nodiscard]] double duration_s() const {
    return sample_rate_hz > 0.0 ? static_cast<double>(record_samples) / sample_rate_hz : 0.0;
  }
};

/// The harmonics of a periodic signal with fundamental f0:
///   x(t) = dc + Σ_k √2 · Re( harmonics[k-1] · exp(j·2π·k·f0·t) ),  k = 1..harmonics.size()
/// so |harmonics[k-1]| is the RMS value of harmonic k (one-sided peak amplitude / √2), which is
/// what a receiver calibrated in RMS reads for an isolated line.
struct LineSpectrum {
  Quantity quantity = Quantity::voltage;
  double fundamental_hz = 0.0;                     ///< [Hz], > 0
  double dc = 0.0;                                 ///< mean value [V] or [A]
  std::vector<std::complex<double>> harmonics;     ///< RMS phasors [V] or [A]

  [[nodiscard]] double frequency_hz(std::size_t index) const {
    return static_cast<double>(index + 1) * fundamental_hz;
  }
};

/// Lines whose phasors follow a slow periodic modulation (a boost PFC stage over the mains
/// half-cycle): at the instants t_j = (j + 1/2)·T/N, j = 0..N−1, of the modulation period
/// T = modulation_period_s, harmonic k of fundamental_hz has the RMS phasor phases[j][k−1]
/// (quasi-static: each switching cycle near t_j is the periodic waveform of those lines). Every
/// phases[j] has the same size; an instant at which nothing switches holds zeros.
/// A switching frequency that varies over the modulation (a critical-conduction PFC stage) is
/// given per instant: harmonic k of instant j then sits at k·instant_fundamental_hz[j], and
/// fundamental_hz is the lowest of them.
struct ModulatedLines {
  Quantity quantity = Quantity::voltage;
  double fundamental_hz = 0.0;       ///< [Hz] the switching frequency, > 0 (varying: the lowest)
  double modulation_period_s = 0.0;  ///< [s] T, > 0 (half a mains period)
  std::vector<std::vector<std::complex<double>>> phases;  ///< [j][k−1] RMS phasors [V] or [A]
  /// [Hz] per instant j, each ≥ fundamental_hz; empty: every instant at fundamental_hz.
  std::vector<double> instant_fundamental_hz;

  /// [Hz] the fundamental at instant j.
  [[nodiscard]] double fundamental_at(std::size_t j) const {
    return instant_fundamental_hz.empty() ? fundamental_hz : instant_fundamental_hz[j];
  }
};

}  // namespace spurcast
