#pragma once
/// The harmonic spectrum at one point of the chain, as `spurcast spectrum` shows it: the source
/// (switch-node voltage, or a captured voltage), the pulsed input current, or the LISN receiver
/// port (line 1, line 2, DM and CM). Described sources give exact Fourier lines; sampled records
/// (captures) give the harmonic table of a windowed FFT at the fundamental, which is refined on
/// the record when given and estimated when not.
///
/// Example:
///   SpectrumSettings settings;
///   settings.max_frequency_hz = 30e6;
///   const SpectrumResult r = scenario_spectrum(load_scenario("buck.toml", locate_shipped_data()), "lisn", settings);
///   spectrum_csv(r);  // core/output/spectrum_output.hpp
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "core/chain/scenario.hpp"
#include "core/source/capture.hpp"
#include "core/source/spectrum.hpp"
#include "core/source/waveform.hpp"

namespace spurcast {

/// One harmonic and its levels (dBµV for a voltage, dBµA for a current; level_floor_db for a null).
struct SpectrumRow {
  int harmonic = 0;           ///< 1 = the fundamental
  double frequency_hz = 0.0;  ///< [Hz]
  double level_db = 0.0;      ///< at the LISN: the higher of the two lines
  std::optional<double> envelope_db;                       ///< described source and current: trapezoid envelope
  std::optional<double> line1_db, line2_db, dm_db, cm_db;  ///< at the LISN port [dBµV]
};

/// The spectrum at one point, with what it was made from.
struct SpectrumResult {
  std::string what;  ///< "switch-node voltage (described)", "LISN receiver port (described source)", ...
  std::string at;    ///< source | current | lisn
  Quantity quantity = Quantity::voltage;
  double fundamental_hz = 0.0;  ///< [Hz] the harmonics sit at its multiples
  bool fundamental_estimated = false;            ///< estimated from the record (none was given)
  std::optional<std::string> window;             ///< sampled records only
  std::optional<Capture> capture;                ///< sampled records: the capture without its samples
  std::size_t capture_samples = 0;
  double capture_duration_s = 0.0;  ///< [s]
  std::vector<SpectrumRow> rows;    ///< ascending harmonic number
  std::vector<std::string> notes;   ///< set-up descriptions and caveats, one line each
};

/// How the spectrum is made.
struct SpectrumSettings {
  std::optional<double> fundamental_hz;  ///< [Hz] > 0; default: the scenario's, else estimated on the record
  Window window = Window::hann;          ///< sampled records
  double max_frequency_hz = 30e6;        ///< [Hz] > 0, the highest harmonic listed
  unsigned threads = 0;                  ///< capture parser threads; 0 = every core
  bool resample = false;                 ///< resample a non-uniform capture instead of failing
};

/// The point of a capture-only spectrum: "" gives "source"; "source" and "current" are kept. Error
/// for "lisn" (a capture has no coupling network) or anything else.
[[nodiscard]] std::string capture_point(const std::string& at);
/// The point of a scenario spectrum: "" gives "lisn"; "source", "current" and "lisn" are kept.
/// Error for anything else.
[[nodiscard]] std::string scenario_point(const std::string& at);

/// The spectrum of a capture file alone at `at` = "source" or "current" (a capture has no coupling
/// network, so no LISN port). The transform is planned while the file is parsed. Errors: the
/// capture's own, a voltage capture at "current", a record shorter than one period.
[[nodiscard]] SpectrumResult capture_spectrum(const CaptureSpec& spec, const std::string& at,
                                              const SpectrumSettings& settings);

/// The spectrum of a scenario's source at `at` = "source", "current" or "lisn": its [capture] (the
/// capture's switching frequency is the default fundamental) or its described [switching] source.
/// Error naming the scenario file when it has neither.
[[nodiscard]] SpectrumResult scenario_spectrum(const Scenario& scenario, const std::string& at,
                                               const SpectrumSettings& settings);

}  // namespace spurcast
