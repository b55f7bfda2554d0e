#pragma once
/// What makes each of the worst readings (issue 17 item 1): the differential- and common-mode
/// shares at the LISN port, mode conversion by an unbalanced filter, the source term (harmonic k of
/// f_sw, a ringing mode or a filter resonance) and the part or path that controls it.
///
/// Mode split at the LISN ports (docs/references.md §2.3, after C. R. Paul, Introduction to EMC,
/// 2nd ed., ch. 6): V_DM = (V1 − V2)/2, V_CM = (V1 + V2)/2; the shares are power fractions
/// |V_DM|²/(|V_DM|² + |V_CM|²) and |V_CM|²/(|V_DM|² + |V_CM|²) (so V1 = V_CM + V_DM, V2 = V_CM −
/// V_DM and |V1|² + |V2|² = 2(|V_DM|² + |V_CM|²): the split is of the power both ports read).
///
/// Example:
///   const Prediction p = predict(scenario);
///   for (const Contributor& c : p.contributors) c.dm_share, c.cm_share, c.path ...
#include <optional>
#include <string>
#include <vector>

#include "core/chain/scenario.hpp"
#include "core/coupling/conducted.hpp"
#include "core/source/spectrum.hpp"

namespace spurcast {

/// The make-up of the reading at one frequency.
struct Contributor {
  double frequency_hz = 0.0;  ///< [Hz] the reading's frequency
  std::size_t harmonic = 0;   ///< k: the strongest line within the receiver bandwidth (k·f_sw)
  double harmonic_hz = 0.0;   ///< [Hz] k·f_sw
  double dm_dbuv = 0.0;       ///< |V_DM| of that line [dBµV]
  double cm_dbuv = 0.0;       ///< |V_CM| of that line [dBµV]
  double dm_share = 0.0;      ///< power fraction of the differential mode, in [0, 1]
  double cm_share = 0.0;      ///< power fraction of the common mode, 1 − dm_share
  /// The power fraction of V_CM driven by the differential-mode source (the input current) and of
  /// V_DM driven by the common-mode source (the switch node): what an unbalanced filter converts.
  double dm_to_cm_fraction = 0.0;
  double cm_to_dm_fraction = 0.0;
  /// "" or e.g. "mode conversion by an unbalanced filter: filter 3 (pi, inductor in the positive
  /// line only) turns differential-mode current into 30 % of the common-mode level".
  std::string conversion;
  /// "harmonic 3 of 220 kHz", "harmonic 386 of 220 kHz, on the 85 MHz ringing", "harmonic 2 of
  /// 220 kHz, at the filter resonance at 452 kHz (Q ≈ 12)".
  std::string source;
  /// The controlling part or path, e.g. "common mode: switch-node capacitance to earth (35 pF)
  /// through the CM choke (filter 1) and Y capacitors (filter 2)".
  std::string path;
};

/// Whether a stage is unbalanced between the two supply lines (a series part or a Y capacitor on
/// one line only), with a short description, e.g. "filter 3 (pi, inductor in the positive line
/// only)".
[[nodiscard]] std::optional<std::string> unbalanced_stage(const FilterStage& stage,
                                                          std::size_t index);

/// The contributors at `frequencies_hz` (each within `bandwidth_hz[i]` of a harmonic of the
/// conducted result; otherwise the nearest harmonic is used). `resonances` are the conducted
/// model's peaks (core/coupling/conducted.hpp find_resonances). Throws Error when the sizes differ.
[[nodiscard]] std::vector<Contributor> contributors_at(
    const Scenario& scenario, const ConductedResult& conducted, const LineSpectrum& switch_node_v,
    const LineSpectrum& input_current_a, const std::vector<Resonance>& resonances,
    const std::vector<double>& frequencies_hz, const std::vector<double>& bandwidth_hz);

/// One short line for the terminal, e.g. "220 kHz: DM 97 % / CM 3 %, harmonic 1 of 220 kHz;
/// differential mode: input capacitor ESR (8 mΩ) through filter 3 (pi)".
[[nodiscard]] std::string contributor_line(const Contributor& contributor);

}  // namespace spurcast
