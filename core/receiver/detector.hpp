#pragma once
/// The detectors of a CISPR 16-1-1 measuring receiver, named as the scenario file and the limit
/// files name them. The detector algorithms (run on an IF envelope) grow below the enum.
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace spurcast {

/// CISPR 16-1-1 detectors. Every one is calibrated so that an unmodulated sine reads its RMS value.
/// (The RMS-average detector of CISPR 16-1-1 is not implemented.)
enum class Detector {
  peak,        ///< "peak": maximum of the envelope
  quasi_peak,  ///< "quasi-peak": charge/discharge detector read through the critically damped meter
  average,     ///< "average": CISPR average, linear average of the envelope through the meter
};

/// All detectors in the order peak, quasi-peak, average.
[[nodiscard]] std::vector<Detector> all_detectors();
/// "peak", "quasi-peak" or "average".
[[nodiscard]] std::string to_string(Detector detector);
/// The names accepted by detector_from_string, in the order of all_detectors().
[[nodiscard]] std::vector<std::string> detector_names();
/// The detector named `name` ("peak", "quasi-peak", "average"), or nullopt.
[[nodiscard]] std::optional<Detector> find_detector(std::string_view name);
/// Like find_detector, but throws Error (no position) on an unknown name:
/// `expected one of peak, quasi-peak or average, found "qp"`.
[[nodiscard]] Detector detector_from_string(std::string_view name);

/// The time constants of CISPR 16-1-1 for one band (docs/references.md §1.1, from memory).
struct DetectorTimeConstants {
  double charge_s = 1e-3;       ///< [s] QP electrical charge time constant (63 % definition)
  double discharge_s = 0.160;   ///< [s] QP electrical discharge time constant (37 % definition)
  double meter_s = 0.160;       ///< [s] mechanical time constant of the critically damped meter
};

// ---------------------------------------------------------------------------------------------
// Quasi-peak detector: a half-wave diode peak detector driven by the IF carrier (docs/references.md §1.4a).
// The diode conducts while e·cos(ωt) > V; averaged over one IF cycle the charging current is
// (e/(π·Rc))·(sin φ − φ·cos φ), cos φ = V/e (textbook half-wave peak-rectifier analysis), so
//   dV/dt = e·g(V/e)/(Rc·C) − V/(Rd·C),   g(r) = (sin φ − φ·cos φ)/π,  cos φ = r  (g = 0 for r >= 1).
// Rd·C is the discharge time constant (37 % definition). Rc·C is not the nominal charge constant:
// it is solved so that a suddenly applied sine makes V reach 63 % of its final value at the
// nominal charge time (the standard's definition of the electrical charge time constant). An
// envelope-domain RC with the nominal constant reads 0.5-2.3 dB low at low PRF in bands B and C/D
// (docs/references.md §1.4); the diode model follows the definitions and needs no fitted factor.

/// g(r) = (sin φ − φ·cos φ)/π with cos φ = r, for 0 <= r < 1; 0 for r >= 1; 1/π for r <= 0.
[[nodiscard]] double diode_charge_function(double ratio);
/// cos φ_f, the CW steady state V/e of the diode model: tan φ_f − φ_f = π·Rc/Rd.
[[nodiscard]] double diode_final_ratio(double charge_rc_s, double discharge_rc_s);
/// The time [s] a suddenly applied constant envelope needs to charge V from 0 to 63 % (1 − 1/e) of
/// its final value, by quadrature of dt = dV / (dV/dt).
[[nodiscard]] double diode_charge_time_s(double charge_rc_s, double discharge_rc_s);

/// The QP diode model of one band.
struct QuasiPeakModel {
  double charge_rc_s = 0.0;     ///< [s] Rc·C solved from the 63 % definition
  double discharge_rc_s = 0.0;  ///< [s] Rd·C = the discharge time constant
  double final_ratio = 1.0;     ///< V_final / envelope for a CW (cos φ_f)
};
/// Solves Rc·C from the nominal charge time constant (bisection on diode_charge_time_s).
[[nodiscard]] QuasiPeakModel quasi_peak_model(const DetectorTimeConstants& constants);

/// Everything the detectors need for one band, computed once.
struct DetectorModel {
  DetectorTimeConstants constants;
  QuasiPeakModel quasi_peak;
  /// diode_charge_function at r = i/(size − 2), i = 0..size − 2, plus a guard entry: linear
  /// interpolation in it is accurate to ~1e-8 absolute, far below what moves a reading.
  std::vector<double> charge_table;
};
[[nodiscard]] DetectorModel make_detector_model(const DetectorTimeConstants& constants);

/// The QP capacitor voltage after each envelope sample (same unit as the envelope), starting from
/// `initial_v`, integrated with Heun's method on the linearly interpolated envelope (exact
/// exponential decay where the diode is off). `envelope` holds peak values of the IF output.
[[nodiscard]] std::vector<double> quasi_peak_voltage(std::span<const double> envelope, double sample_interval_s,
                                                     const QuasiPeakModel& model, double initial_v);

/// Readings calibrated in RMS of a sine (same unit as the envelope, linear).
struct DetectorReadings {
  double peak = 0.0;
  double quasi_peak = 0.0;
  double average = 0.0;
};

/// The detector readings for an envelope (peak values of the IF output) that repeats with the
/// period samples.size()·sample_interval_s, in periodic steady state (the record is repeated until
/// the QP and meter states settle; the QP state is found as the fixed point of the one-period map).
///   peak       = max envelope / √2 (log-parabolic interpolation between samples: exact for the
///                Gaussian envelope of an impulse)
///   quasi-peak = max of the meter output driven by the diode-detector voltage / (cos φ_f·√2)
///   average    = max of the meter output driven by the envelope / √2 (CISPR average, docs/references.md §1.6)
/// The meter is 1/(1 + s·T_L)² (critically damped, docs/references.md §1.1).
[[nodiscard]] DetectorReadings read_periodic_envelope(std::span<const double> envelope, double sample_interval_s,
                                                      const DetectorModel& model);

/// The peak reading of a periodic envelope alone (read_periodic_envelope's peak): its maximum with
/// log-parabolic interpolation, / √2.
[[nodiscard]] double periodic_envelope_peak(std::span<const double> envelope);

}  // namespace spurcast
