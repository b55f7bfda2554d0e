#pragma once
/// A boost PFC stage over the mains cycle ([converter] topology = "boost-pfc", docs/design.md §5).
///
/// The [switching] section describes the stage at the crest of the mains cycle. A boost's duty is
/// D = 1 − v_in/V_out (continuous conduction, the boost's conversion ratio, common practice), so
/// the crest input voltage is V_pk = (1 − D_crest)·V_out with V_out the switch-node swing
/// (`amplitude`). At mains phase θ (0 to π over a half-cycle, s = |sin θ|):
///   v_in(θ)  = V_pk·s                                (rectified mains)
///   D(θ)     = 1 − v_in(θ)/V_out                     (the boost's duty follows the input)
///   I(θ)     = I_crest·s                             (unity power factor: the current follows the
///   voltage) ΔI(θ)    = ΔI_crest·s·(1 − m·s)/(1 − m), m = V_pk/V_out   (ripple ∝ v_in·D/(L·f_sw))
/// The switching frequency is fixed (a continuous-conduction PFC stage, `conduction =
/// "continuous"`, the default). Where v_in is below the
/// switching threshold the stage does not switch (no emission). The switch-node swing V_out, the
/// edges and the ringing stay as at the crest; the input current's ringing follows I(θ). D(θ) is
/// held where the edges still fit in the off time (at most 1 − (rise + fall)/(2·T), and below
/// max_mains_cycle_duty); ΔI(θ) is held at 2·I(θ) (the edge of continuous conduction) near the zero
/// crossing.
///
/// Critical conduction (`conduction = "critical"`, also called transition or boundary mode; common
/// practice for PFC stages up to a few hundred watts): the controller holds the on time constant over
/// the half-cycle and turns the switch on again when the inductor current has fallen to zero, so
/// the current's triangle runs from 0 to 2·I(θ) in every switching cycle and its mean follows the
/// rectified mains (common practice: peak current v_in·t_on/L ∝ v_in). With t_on = D_crest/f_crest
/// fixed by the crest spec, the volt-second balance of the boost (on: v_in/L; off: (V_out − v_in)/L)
/// gives, at phase θ (common practice, any text on transition-mode PFC, from memory):
///   D(θ)     = 1 − v_in(θ)/V_out
///   f_sw(θ)  = D(θ)/t_on = (1 − v_in(θ)/V_out)/t_on     (lowest at the crest, highest near zero)
///   ΔI(θ)    = 2·I(θ)                                    (the current returns to zero each cycle)
/// f_sw(θ) tends to 1/t_on at the zero crossing; it is clamped at max_critical_frequency_ratio ×
/// f_crest (judgement: a controller's frequency clamp or minimum off time); where the clamp holds,
/// the stage is taken as still in critical conduction at the clamped frequency with D(θ) (on time
/// D/f_max, shorter than t_on), its triangle still 0 to 2·I(θ) (judgement: a real controller enters
/// discontinuous conduction or skips valleys there, at the lowest currents of the half-cycle). The
/// lines at instant j then sit at k·f_sw(θ_j) (ModulatedLines::instant_fundamental_hz).
///
/// Example:
///   const MainsCycle cycle = mains_cycle_lines(crest, MainsCycleSpec{50.0, 40.0}, 30e6);
///   cycle.switch_node_v.phases[j] ... the switch-node lines at the j-th instant of the half-cycle
#include <cstddef>
#include <optional>
#include <string>

#include "core/source/source.hpp"
#include "core/source/waveform.hpp"

namespace spurcast {

/// How the boost PFC stage conducts: continuous (fixed frequency, the default) or critical
/// (constant on time, frequency varying over the half-cycle).
enum class Conduction { continuous, critical };

/// "continuous" or "critical".
[[nodiscard]] std::string conduction_name(Conduction conduction);

/// The mains keys of [converter] for topology boost-pfc.
struct MainsCycleSpec {
  double mains_frequency_hz = 50.0;  ///< [Hz] in [min_mains_frequency_hz, max_mains_frequency_hz]
  double switching_threshold_v =
      0.0;  ///< [V] the rectified input voltage below which the stage idles, ≥ 0
  Conduction conduction = Conduction::continuous;  ///< `conduction`
};

/// The highest switching frequency of a critical-conduction stage, as a multiple of its crest
/// frequency: 4 (judgement: a 100 kHz crest then reaches at most 400 kHz near the zero crossing,
/// where controllers clamp their frequency or hold a minimum off time; without the clamp f_sw
/// tends to 1/t_on there).
inline constexpr double max_critical_frequency_ratio = 4.0;

/// [Hz] The switching frequency of a critical-conduction stage at mains phase θ [rad]:
/// min((1 − V_pk·|sin θ|/V_out)/t_on, max_critical_frequency_ratio·f_crest), t_on = D_crest/f_crest
/// (rules above), whether or not the stage switches there (the threshold is not applied).
[[nodiscard]] double critical_switching_frequency_hz(const SwitchingSpec& crest, double phase_rad);

/// 50 Hz, the default mains frequency (common practice: 50 Hz in most of the world, 60 Hz in the
/// Americas and parts of Asia).
inline constexpr double default_mains_frequency_hz = 50.0;
/// The mains frequencies taken: 10 Hz to 1 kHz (judgement: railway supplies run at 16.7 Hz and
/// aircraft at 400 Hz; beyond them the stage is no longer a mains PFC).
inline constexpr double min_mains_frequency_hz = 10.0;
inline constexpr double max_mains_frequency_hz = 1000.0;
/// The switching frequency must be at least 100 times the mains frequency (judgement): the
/// quasi-static model takes each switching cycle as periodic with the input of its instant, which
/// needs many cycles per half-cycle (a 65 kHz stage on 50 Hz mains has 650).
inline constexpr double min_switching_to_mains_ratio = 100.0;
/// The instants sampled over a half-cycle: 256 (judgement: the gated fraction is resolved to
/// 1/256 of the half-cycle, 0.03 dB of a linear average, and the detectors see the |sin| envelope
/// at 39 µs steps on 50 Hz mains, finer than the band-B IF response).
inline constexpr std::size_t mains_cycle_phases = 256;
/// The largest duty taken near the zero crossing: 0.99 (judgement; a controller's maximum duty).
inline constexpr double max_mains_cycle_duty = 0.99;

/// The stage over one mains half-cycle.
struct MainsCycle {
  ModulatedLines switch_node_v;    ///< switch-node voltage lines at each instant [V]
  ModulatedLines input_current_a;  ///< input (switching-cell) current lines at each instant [A]
  double mains_frequency_hz = 0.0;
  double crest_input_v = 0.0;        ///< [V] V_pk = (1 − D_crest)·V_out
  std::size_t switching_phases = 0;  ///< instants at which the stage switches
  std::size_t phases = 0;            ///< instants sampled
  Conduction conduction = Conduction::continuous;
  /// [Hz] the lowest and highest switching frequency over the switching instants (equal for
  /// continuous conduction), and the instants held at the critical-conduction clamp.
  double lowest_switching_hz = 0.0;
  double highest_switching_hz = 0.0;
  std::size_t clamped_phases = 0;

  /// The fraction of each half-cycle during which the stage switches (switching_phases / phases).
  [[nodiscard]] double switching_fraction() const {
    return phases == 0 ? 0.0 : static_cast<double>(switching_phases) / static_cast<double>(phases);
  }
};

/// V_pk = (1 − duty)·amplitude [V] of a crest spec.
[[nodiscard]] double crest_input_voltage_v(const SwitchingSpec& crest);

/// The switching spec at mains phase θ [rad] (0 to π), from the crest spec (rules above, for
/// mains.conduction); nullopt where the stage idles (v_in below the threshold). The crest spec must
/// be valid, without dither.
[[nodiscard]] std::optional<SwitchingSpec> spec_at_mains_phase(const SwitchingSpec& crest,
                                                               const MainsCycleSpec& mains,
                                                               double phase_rad);

/// The exact lines (source.hpp's piecewise-linear series) up to max_frequency_hz at `phases`
/// instants θ_j = π·(j + 1/2)/phases of the half-cycle, modulation period 1/(2·f_mains); for
/// critical conduction with the instants' switching frequencies (instant_fundamental_hz, every
/// instant's, idle or not) and at each instant the lines up to max_frequency_hz (zeros above).
/// Error when the crest spec is dithered or invalid.
[[nodiscard]] MainsCycle mains_cycle_lines(const SwitchingSpec& crest, const MainsCycleSpec& mains,
                                           double max_frequency_hz,
                                           std::size_t phases = mains_cycle_phases);

}  // namespace spurcast
