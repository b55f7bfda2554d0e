#pragma once
/// The detectors of a CISPR 16-1-1 measuring receiver, named as the scenario file and the limit
/// files name them. The detector algorithms (run on an IF envelope) grow below the enum.
#include <optional>
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

/// The time constants of CISPR 16-1-1 for one band (REFERENCES.md §1.1, from memory).
struct DetectorTimeConstants {
  double charge_s = 1e-3;       ///< [s] QP electrical charge time constant (63 % definition)
  double discharge_s = 0.160;   ///< [s] QP electrical discharge time constant (37 % definition)
  double meter_s = 0.160;       ///< [s] mechanical time constant of the critically damped meter
};

}  // namespace spurcast
