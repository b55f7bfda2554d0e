#include "core/source/mains_cycle.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "core/input/error.hpp"

namespace spurcast {

std::string conduction_name(Conduction conduction) {
  return conduction == Conduction::critical ? "critical" : "continuous";
}

double crest_input_voltage_v(const SwitchingSpec& crest) {
  return (1.0 - crest.duty) * crest.amplitude_v;
}

double critical_switching_frequency_hz(const SwitchingSpec& crest, double phase_rad) {
  const double s = std::abs(std::sin(phase_rad));
  const double on_time_s = crest.duty / crest.frequency_hz;  // t_on = D_crest / f_crest
  const double duty = 1.0 - (1.0 - crest.duty) * s;          // 1 − v_in/V_out
  return std::min(duty / on_time_s, max_critical_frequency_ratio * crest.frequency_hz);
}

std::optional<SwitchingSpec> spec_at_mains_phase(const SwitchingSpec& crest,
                                                 const MainsCycleSpec& mains, double phase_rad) {
  const double s = std::abs(std::sin(phase_rad));
  const double crest_v = crest_input_voltage_v(crest);
  const double v_in = crest_v * s;
  if (!(v_in > 0.0) || v_in < mains.switching_threshold_v) return std::nullopt;
  const double m = 1.0 - crest.duty;  // V_pk / V_out
  SwitchingSpec spec = crest;
  if (mains.conduction == Conduction::critical) spec.frequency_hz = critical_switching_frequency_hz(crest, phase_rad);
  // D(θ) = 1 − m·s, held where the edges still fit in the off time (switching_problem's rule).
  const double period_s = spec.period_s();
  const double edge_limit = 1.0 - 0.5 * (crest.rise_s + crest.fall_s) / period_s;
  const double most = std::min(max_mains_cycle_duty, edge_limit * (1.0 - 1e-9));
  spec.duty = std::max(crest.duty, std::min(1.0 - m * s, most));
  spec.current_a = crest.current_a * s;
  if (mains.conduction == Conduction::critical) {
    spec.current_ripple_a = 2.0 * spec.current_a;  // from zero to 2·I in every cycle
    return spec;
  }
  // ΔI ∝ v_in·D: s·(1 − m·s)/(1 − m) of the crest ripple, at most 2·I (continuous conduction).
  spec.current_ripple_a =
      std::min(crest.current_ripple_a * s * (1.0 - m * s) / (1.0 - m), 2.0 * spec.current_a);
  return spec;
}

MainsCycle mains_cycle_lines(const SwitchingSpec& crest, const MainsCycleSpec& mains,
                             double max_frequency_hz, std::size_t phases) {
  validate_switching(crest);
  if (crest.dither) throw Error("the mains cycle of a boost PFC stage is not modelled with dither");
  if (phases == 0) throw Error("expected at least one mains-cycle instant, found 0");
  if (!(mains.mains_frequency_hz > 0.0)) throw Error("expected a mains frequency > 0 Hz");
  MainsCycle cycle;
  cycle.mains_frequency_hz = mains.mains_frequency_hz;
  cycle.crest_input_v = crest_input_voltage_v(crest);
  cycle.phases = phases;
  cycle.conduction = mains.conduction;
  const bool critical = mains.conduction == Conduction::critical;
  const double half_cycle_s = 0.5 / mains.mains_frequency_hz;
  // The crest's lines fix the harmonic count (and check it against max_harmonic_count).
  const std::size_t count = switch_node_spectrum(crest, max_frequency_hz).harmonics.size();
  for (ModulatedLines* lines : {&cycle.switch_node_v, &cycle.input_current_a}) {
    lines->fundamental_hz = crest.frequency_hz;
    lines->modulation_period_s = half_cycle_s;
    lines->phases.assign(phases, std::vector<std::complex<double>>(count));
    if (critical) lines->instant_fundamental_hz.resize(phases);
  }
  cycle.switch_node_v.quantity = Quantity::voltage;
  cycle.input_current_a.quantity = Quantity::current;
  for (std::size_t j = 0; j < phases; ++j) {
    const double theta =
        std::numbers::pi * (static_cast<double>(j) + 0.5) / static_cast<double>(phases);
    if (critical) {
      const double f = critical_switching_frequency_hz(crest, theta);
      cycle.switch_node_v.instant_fundamental_hz[j] = f;
      cycle.input_current_a.instant_fundamental_hz[j] = f;
    }
    const std::optional<SwitchingSpec> spec = spec_at_mains_phase(crest, mains, theta);
    if (!spec) continue;  // idle: no emission at this instant
    ++cycle.switching_phases;
    const double f = spec->frequency_hz;
    cycle.lowest_switching_hz = cycle.switching_phases == 1 ? f : std::min(cycle.lowest_switching_hz, f);
    cycle.highest_switching_hz = std::max(cycle.highest_switching_hz, f);
    if (critical && f >= max_critical_frequency_ratio * crest.frequency_hz * (1.0 - 1e-12)) ++cycle.clamped_phases;
    LineSpectrum v = switch_node_spectrum(*spec, max_frequency_hz);
    LineSpectrum i = input_current_spectrum(*spec, max_frequency_hz);
    v.harmonics.resize(count);
    i.harmonics.resize(count);
    cycle.switch_node_v.phases[j] = std::move(v.harmonics);
    cycle.input_current_a.phases[j] = std::move(i.harmonics);
  }
  return cycle;
}

}  // namespace spurcast
