#include "core/chain/contributors.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <cstdio>
#include <numbers>

#include "core/input/error.hpp"
#include "core/input/units.hpp"

namespace spurcast {

namespace {

/// Below this fraction of the common-mode (or differential-mode) power, the other mode's source is
/// not named as converted (judgement: a tenth of the power is 10 dB down, under a lab's
/// repeatability).
constexpr double conversion_named_fraction = 0.1;

std::string percent_text(double fraction) {
  char buffer[16];
  std::snprintf(buffer, sizeof buffer, "%.0f %%", 100.0 * fraction);
  return buffer;
}

std::string stage_name(const FilterStage& stage, std::size_t index) {
  return "filter " + std::to_string(index + 1) + " (" + filter_kind_name(stage.kind) + ")";
}

double power(std::complex<double> v) { return std::norm(v); }

/// The stages a common-mode current passes through, by name.
std::string common_mode_stages(const Scenario& scenario) {
  std::vector<std::string> parts;
  for (std::size_t i = 0; i < scenario.filters.size(); ++i) {
    const FilterStage& s = scenario.filters[i];
    if (s.kind == FilterKind::common_mode_choke) {
      parts.push_back("the CM choke (filter " + std::to_string(i + 1) + ", " +
                      format_quantity(s.inductance_h, Dimension::inductance, 3) + ")");
    } else if (s.kind == FilterKind::y_capacitors) {
      parts.push_back("the Y capacitors (filter " + std::to_string(i + 1) + ", " +
                      format_quantity(s.converter_side_capacitance_f, Dimension::capacitance, 3) +
                      ")");
    } else if (s.kind == FilterKind::netlist || s.kind == FilterKind::spice) {
      parts.push_back(stage_name(s, i));
    }
  }
  if (parts.empty()) return "straight into the LISNs (no common-mode filter stage)";
  std::string text = "through ";
  for (std::size_t i = 0; i < parts.size(); ++i) text += (i ? " and " : "") + parts[i];
  return text;
}

/// The stages a differential-mode current passes through, by name.
std::string differential_mode_stages(const Scenario& scenario) {
  std::vector<std::string> parts;
  for (std::size_t i = 0; i < scenario.filters.size(); ++i) {
    const FilterStage& s = scenario.filters[i];
    switch (s.kind) {
      case FilterKind::lc:
        parts.push_back("the LC section (filter " + std::to_string(i + 1) + ")");
        break;
      case FilterKind::pi:
        parts.push_back("the pi section (filter " + std::to_string(i + 1) + ")");
        break;
      case FilterKind::common_mode_choke:
        parts.push_back("the CM choke's leakage inductance (filter " + std::to_string(i + 1) + ")");
        break;
      case FilterKind::y_capacitors:
        break;
      default:
        parts.push_back(stage_name(s, i));
        break;
    }
  }
  if (parts.empty()) return "straight into the LISNs (no differential-mode filter stage)";
  std::string text = "through ";
  for (std::size_t i = 0; i < parts.size(); ++i) text += (i ? " and " : "") + parts[i];
  return text;
}

/// Which term of the input capacitor's impedance C + ESR + ESL dominates at f (the part that sets
/// how much of the pulsed current it keeps from the lines).
std::string input_capacitor_term(const CouplingSpec& c, double f) {
  const double w = 2.0 * std::numbers::pi * f;
  const double zc = 1.0 / (w * c.input_capacitance_f);
  const double zl = w * c.input_esl_h;
  const double zr = c.input_esr_ohm;
  if (zl >= zc && zl >= zr)
    return "input capacitor ESL (" + format_quantity(c.input_esl_h, Dimension::inductance, 3) + ")";
  if (zr >= zc)
    return "input capacitor ESR (" + format_quantity(c.input_esr_ohm, Dimension::resistance, 3) +
           ")";
  return "input capacitance (" + format_quantity(c.input_capacitance_f, Dimension::capacitance, 3) +
         ")";
}

}  // namespace

std::optional<std::string> unbalanced_stage(const FilterStage& stage, std::size_t index) {
  const bool one_line = stage.lines != FilterLines::both;
  const std::string line = stage.lines == FilterLines::positive ? "positive" : "negative";
  if ((stage.kind == FilterKind::lc || stage.kind == FilterKind::pi) && one_line &&
      stage.inductance_h > 0.0) {
    return stage_name(stage, index) + ", inductor in the " + line + " line only";
  }
  if (stage.kind == FilterKind::y_capacitors && one_line) {
    return stage_name(stage, index) + ", on the " + line + " line only";
  }
  return std::nullopt;
}

std::vector<Contributor> contributors_at(const Scenario& scenario, const ConductedResult& conducted,
                                         const LineSpectrum& switch_node_v,
                                         const LineSpectrum& input_current_a,
                                         const std::vector<Resonance>& resonances,
                                         const std::vector<double>& frequencies_hz,
                                         const std::vector<double>& bandwidth_hz) {
  if (frequencies_hz.size() != bandwidth_hz.size()) {
    throw Error("contributors: expected one bandwidth per frequency, found " +
                std::to_string(bandwidth_hz.size()) + " for " +
                std::to_string(frequencies_hz.size()));
  }
  std::vector<Contributor> out;
  if (conducted.frequency_hz.empty()) return out;
  const ConductedModel model(scenario.coupling, scenario.filters, scenario.lisn);
  std::vector<std::string> unbalanced;
  for (std::size_t i = 0; i < scenario.filters.size(); ++i) {
    if (auto text = unbalanced_stage(scenario.filters[i], i)) unbalanced.push_back(*text);
  }
  const double f0 = conducted.fundamental_hz;
  for (std::size_t n = 0; n < frequencies_hz.size(); ++n) {
    const double f = frequencies_hz[n];
    // The strongest line within half the receiver bandwidth either side, else the nearest line.
    std::size_t best = std::min(conducted.frequency_hz.size() - 1,
                                static_cast<std::size_t>(std::max(0.0, std::round(f / f0) - 1.0)));
    double best_power = -1.0;
    for (std::size_t i = 0; i < conducted.frequency_hz.size(); ++i) {
      if (std::abs(conducted.frequency_hz[i] - f) > bandwidth_hz[n] / 2.0) continue;
      const double p = power(conducted.line1_v[i]) + power(conducted.line2_v[i]);
      if (p > best_power) best_power = p, best = i;
    }
    Contributor c;
    c.frequency_hz = f;
    c.harmonic = best + 1;
    c.harmonic_hz = conducted.frequency_hz[best];
    const double pdm = power(conducted.dm_v[best]);
    const double pcm = power(conducted.cm_v[best]);
    c.dm_dbuv = volts_to_dbuv(std::abs(conducted.dm_v[best]));
    c.cm_dbuv = volts_to_dbuv(std::abs(conducted.cm_v[best]));
    c.dm_share = pdm + pcm > 0.0 ? pdm / (pdm + pcm) : 0.0;
    c.cm_share = pdm + pcm > 0.0 ? 1.0 - c.dm_share : 0.0;

    // Each source's part of each mode (superposition: the network is linear).
    const TransferFunctions t = transfer_at(model, {c.harmonic_hz});
    const std::complex<double> i_k = best < input_current_a.harmonics.size()
                                         ? input_current_a.harmonics[best]
                                         : std::complex<double>{};
    const std::complex<double> v_k = best < switch_node_v.harmonics.size()
                                         ? switch_node_v.harmonics[best]
                                         : std::complex<double>{};
    const std::complex<double> cm_from_i =
        (t.port1_per_input_current_ohm[0] + t.port2_per_input_current_ohm[0]) / 2.0 * i_k;
    const std::complex<double> cm_from_v =
        (t.port1_per_switch_node[0] + t.port2_per_switch_node[0]) / 2.0 * v_k;
    const std::complex<double> dm_from_i =
        (t.port1_per_input_current_ohm[0] - t.port2_per_input_current_ohm[0]) / 2.0 * i_k;
    const std::complex<double> dm_from_v =
        (t.port1_per_switch_node[0] - t.port2_per_switch_node[0]) / 2.0 * v_k;
    const double cm_total = power(cm_from_i) + power(cm_from_v);
    const double dm_total = power(dm_from_i) + power(dm_from_v);
    c.dm_to_cm_fraction = cm_total > 0.0 ? power(cm_from_i) / cm_total : 0.0;
    c.cm_to_dm_fraction = dm_total > 0.0 ? power(dm_from_v) / dm_total : 0.0;
    if (!unbalanced.empty() && model.line_count() == 2) {
      std::string stages;
      for (std::size_t i = 0; i < unbalanced.size(); ++i) stages += (i ? "; " : "") + unbalanced[i];
      if (c.dm_to_cm_fraction >= conversion_named_fraction &&
          c.cm_share >= conversion_named_fraction) {
        c.conversion = "mode conversion by an unbalanced filter: " + stages +
                       " turns the differential-mode source into " +
                       percent_text(c.dm_to_cm_fraction) + " of the common-mode power";
      } else if (c.cm_to_dm_fraction >= conversion_named_fraction &&
                 c.dm_share >= conversion_named_fraction) {
        c.conversion = "mode conversion by an unbalanced filter: " + stages +
                       " turns the common-mode source into " + percent_text(c.cm_to_dm_fraction) +
                       " of the differential-mode power";
      }
    }

    // The source term: the harmonic, and what lifts it (a ringing mode, a resonance of the filter).
    c.source = "harmonic " + std::to_string(c.harmonic) + " of " +
               format_quantity(f0, Dimension::frequency, 4);
    if (scenario.switching && scenario.switching->ringing) {
      const RingingSpec& r = *scenario.switching->ringing;
      // A ringing exp(−t/τ)·sin(2πf_r t) has a Lorentzian spectrum of half-power full width
      // 1/(π·τ).
      const double half_width =
          std::max(1.0 / (2.0 * std::numbers::pi * r.decay_s), bandwidth_hz[n]);
      if (std::abs(c.harmonic_hz - r.frequency_hz) <= half_width) {
        c.source +=
            ", on the " + format_quantity(r.frequency_hz, Dimension::frequency, 3) + " ringing";
      }
    }
    for (const Resonance& r : resonances) {
      // Inside the resonance's half-power band f0 ± f0/(2Q), or within the receiver bandwidth of
      // it.
      const double half_width =
          std::max(r.frequency_hz / (2.0 * std::max(r.q, 1.0)), bandwidth_hz[n]);
      if (std::abs(c.harmonic_hz - r.frequency_hz) > half_width) continue;
      char q[32];
      std::snprintf(q, sizeof q, "%.3g", r.q);
      c.source +=
          ", at the " +
          std::string(r.source == ConductedModel::source_switch_node ? "common" : "differential") +
          "-mode resonance at " + format_quantity(r.frequency_hz, Dimension::frequency, 3) +
          " (Q ≈ " + q + ")";
      break;
    }

    // The controlling path of the dominant mode.
    if (c.cm_share > c.dm_share) {
      if (!c.conversion.empty() && c.dm_to_cm_fraction > 0.5) {
        c.path = "common mode converted from the differential mode: the pulsed input current, " +
                 unbalanced.front();
      } else {
        c.path =
            "common mode: switch-node capacitance to earth (" +
            format_quantity(scenario.coupling.parasitic_capacitance_f, Dimension::capacitance, 3) +
            ") " + common_mode_stages(scenario);
      }
    } else {
      c.path = "differential mode: " + input_capacitor_term(scenario.coupling, c.harmonic_hz) +
               " " + differential_mode_stages(scenario);
    }
    out.push_back(std::move(c));
  }
  return out;
}

std::string contributor_line(const Contributor& c) {
  std::string line = format_quantity(c.frequency_hz, Dimension::frequency, 4) + ": DM " +
                     percent_text(c.dm_share) + " / CM " + percent_text(c.cm_share) + ", " +
                     c.source + "; " + c.path;
  if (!c.conversion.empty()) line += " (" + c.conversion + ")";
  return line;
}

}  // namespace spurcast
