#include "core/chain/filter_design.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <map>
#include <numbers>
#include <sstream>

#include "core/chain/contributors.hpp"
#include "core/coupling/input_stability.hpp"
#include "core/input/error.hpp"
#include "core/input/units.hpp"

namespace spurcast {

namespace {

using cd = std::complex<double>;

constexpr double relative_tolerance = 1e-9;
/// Each mode must sit this far under the target so that V_CM + V_DM cannot exceed it: 20·log10(2).
constexpr double mode_split_db = 6.0206;
/// DM loop load: the two LISN ports in series (docs/references.md §2.3).
constexpr double dm_load_ohm = 100.0;

// Part ranges and parasitics of the proposed parts (judgement: small through-hole and SMD parts a
// 10–500 W converter's input filter is built from; no source).
constexpr double dm_inductor_min_h = 1e-6, dm_inductor_max_h = 470e-6;  ///< judgement, each line
constexpr double dm_capacitor_min_f = 1e-6,
                 dm_capacitor_max_f = 47e-6;               ///< judgement, film / ceramic bank
constexpr double damping_capacitor_max_f = 2.2e-3;         ///< judgement, an electrolytic
constexpr double choke_min_h = 1e-3, choke_max_h = 47e-3;  ///< judgement, per winding
/// The smallest second (high-frequency) choke considered, per winding (judgement).
constexpr double second_choke_min_h = 10e-6;
/// Winding capacitance model (judgement, filter_design.hpp): 10 pF at 10 mH, as √L, at least 2 pF.
constexpr double choke_reference_capacitance_f = 10e-12, choke_reference_inductance_h = 10e-3;
constexpr double choke_min_winding_capacitance_f = 2e-12;
constexpr double choke_coupling = 0.99;        ///< judgement: leakage 2 % of L
constexpr double y_capacitor_min_f = 470e-12;  ///< judgement
constexpr double capacitor_esr_ohm = default_capacitor_esr_ohm;
constexpr double capacitor_esl_h = default_capacitor_esl_h;
constexpr double y_capacitor_esl_h = 3e-9;  ///< judgement: a leaded Y2 disc or film part
constexpr double inductor_winding_capacitance_f = default_inductor_winding_capacitance_f;
constexpr double choke_interwinding_capacitance_f = default_choke_interwinding_capacitance_f;
constexpr double core_loss_ohm = default_core_loss_resistance_ohm;

/// DC resistance of a power inductor: 5 mΩ at 1 µH growing as √L (judgement: more turns of thinner
/// wire on a similar core).
double dm_inductor_dcr_ohm(double l_h) { return 5e-3 * std::sqrt(l_h / 1e-6); }
/// DC resistance of a CM choke winding: 20 mΩ at 1 mH growing as √L (judgement).
double choke_dcr_ohm(double l_h) { return 20e-3 * std::sqrt(l_h / 1e-3); }

double srf_hz(double l, double c) { return 1.0 / (2.0 * std::numbers::pi * std::sqrt(l * c)); }

std::string q(double value, Dimension d) { return format_quantity(value, d, 6); }

/// The largest E6 choke inductance in [low_h, high_h] that self-resonates at or above `floor_hz`;
/// 0 when none does.
double largest_choke_resonating_above(double floor_hz, double low_h, double high_h) {
  double best = 0.0;
  for (double l = e6_at_or_above(low_h); l <= high_h * (1.0 + relative_tolerance); l = e6_next(l)) {
    if (choke_self_resonance_hz(l) >= floor_hz * (1.0 - relative_tolerance)) best = l;
  }
  return best;
}

struct Plan {
  bool dm = false;
  double dm_l_each_h = 0.0;
  double dm_c_f = 0.0;
  int dm_c_steps = 0, dm_l_steps = 0;
  double damping_r_ohm = 0.0;
  double damping_c_f = 0.0;
  bool cm = false;
  double choke_h = 0.0;
  double choke2_h = 0.0;  ///< the second, high-frequency choke (LISN side); 0: none
  double y_f = 0.0;
};

toml::table dm_stage(const Plan& plan) {
  const double dcr = dm_inductor_dcr_ohm(plan.dm_l_each_h);
  auto inductor = [&](const char* from, const char* to) {
    return toml::table{
        {"type", "L"},
        {"from", from},
        {"to", to},
        {"value", q(plan.dm_l_each_h, Dimension::inductance)},
        {"resistance", q(dcr, Dimension::resistance)},
        {"winding_capacitance", q(inductor_winding_capacitance_f, Dimension::capacitance)},
        {"core_loss_resistance", q(core_loss_ohm, Dimension::resistance)}};
  };
  toml::array elements;
  elements.push_back(inductor("in+", "out+"));
  elements.push_back(inductor("in-", "out-"));
  elements.push_back(toml::table{{"type", "C"},
                                 {"from", "in+"},
                                 {"to", "in-"},
                                 {"value", q(plan.dm_c_f, Dimension::capacitance)},
                                 {"esr", q(capacitor_esr_ohm, Dimension::resistance)},
                                 {"esl", q(capacitor_esl_h, Dimension::inductance)}});
  if (plan.damping_c_f > 0.0) {
    elements.push_back(toml::table{{"type", "R"},
                                   {"from", "out+"},
                                   {"to", "damping"},
                                   {"value", q(plan.damping_r_ohm, Dimension::resistance)}});
    elements.push_back(toml::table{{"type", "C"},
                                   {"from", "damping"},
                                   {"to", "out-"},
                                   {"value", q(plan.damping_c_f, Dimension::capacitance)},
                                   {"esl", q(capacitor_esl_h, Dimension::inductance)}});
  }
  return toml::table{{"kind", "netlist"}, {"elements", elements}};
}

toml::table choke_stage(double inductance_h) {
  return toml::table{
      {"kind", "common-mode-choke"},
      {"inductance", q(inductance_h, Dimension::inductance)},
      {"coupling", choke_coupling},
      {"winding_resistance", q(choke_dcr_ohm(inductance_h), Dimension::resistance)},
      {"winding_capacitance", q(choke_winding_capacitance_f(inductance_h), Dimension::capacitance)},
      {"interwinding_capacitance", q(choke_interwinding_capacitance_f, Dimension::capacitance)},
      {"core_loss_resistance", q(core_loss_ohm, Dimension::resistance)}};
}

toml::table y_stage(const Plan& plan) {
  return toml::table{{"kind", "y-capacitors"},
                     {"capacitance", q(plan.y_f, Dimension::capacitance)},
                     {"capacitor_esr", q(capacitor_esr_ohm, Dimension::resistance)},
                     {"capacitor_esl", q(y_capacitor_esl_h, Dimension::inductance)}};
}

/// The scenario table with the plan's stages: CM stages first (LISN side), the DM section last
/// (converter side).
toml::table with_stages(const toml::table& table, const Plan& plan) {
  toml::table out = table;
  toml::array stages;
  if (plan.cm) {
    if (plan.choke2_h > 0.0) stages.push_back(choke_stage(plan.choke2_h));
    stages.push_back(choke_stage(plan.choke_h));
    if (plan.y_f > 0.0) stages.push_back(y_stage(plan));
  }
  if (const toml::array* existing = table["filter"].as_array()) {
    for (const toml::node& node : *existing) stages.push_back(node);
  }
  if (plan.dm) stages.push_back(dm_stage(plan));
  if (!stages.empty()) out.insert_or_assign("filter", std::move(stages));
  return out;
}

std::size_t stage_count(const toml::table& table) {
  const toml::array* a = table["filter"].as_array();
  return a ? a->size() : 0;
}

/// The conducted rows that need more (margin < guard), with each one's contributor.
struct Shortfall {
  double db = 0.0;
  double frequency_hz = 0.0;
  std::string detector;
};

/// Middlebrook's check for the DM section, with R–C_b damping when the margin asks for it.
void damp(Plan& plan, const Scenario& base, const FilterDesignOptions& options,
          StabilityCheck& check) {
  check = {};
  check.required_margin_db = options.stability_margin_db;
  plan.damping_r_ohm = plan.damping_c_f = 0.0;
  if (!base.converter_power.given) {
    check.note = "not computed: give [converter] min_input_voltage and output_power";
    return;
  }
  if (!plan.dm) return;  // nothing to damp; the whole network is checked after the plan
  check.computed = true;
  check.input_resistance_ohm = negative_input_resistance_ohm(base.converter_power);
  const double target =
      check.input_resistance_ohm * std::pow(10.0, -options.stability_margin_db / 20.0);
  DampedLc lc;
  lc.inductance_h = 2.0 * plan.dm_l_each_h;  // one inductor in each line: the loop sees both
  // The proposed inductors resonate with the converter's own input capacitor (the section's
  // capacitor sits on the LISN side, where Erickson's ideal source shorts it).
  lc.capacitance_f = base.coupling.input_capacitance_f;
  lc.inductor_resistance_ohm = 2.0 * dm_inductor_dcr_ohm(plan.dm_l_each_h);
  double peak = peak_output_impedance_ohm(lc);
  if (peak > target) {
    const double n = damping_ratio_for_peak(lc.inductance_h, lc.capacitance_f, target);
    const double cb = std::min(e6_at_or_above(n * lc.capacitance_f), damping_capacitor_max_f);
    const double r_opt =
        optimal_parallel_damping(lc.inductance_h, lc.capacitance_f, cb / lc.capacitance_f)
            .resistance_ohm;
    double best_peak = peak, best_r = 0.0;
    for (const double r : {e6_at_or_below(r_opt), e6_at_or_above(r_opt)}) {
      DampedLc damped = lc;
      damped.damping_resistance_ohm = r;
      damped.damping_capacitance_f = cb;
      const double z = peak_output_impedance_ohm(damped);
      if (z < best_peak) best_peak = z, best_r = r;
    }
    if (best_r > 0.0) {
      plan.damping_r_ohm = best_r;
      plan.damping_c_f = cb;
      peak = best_peak;
      check.damped = true;
    }
  }
  check.peak_output_impedance_ohm = peak;
  check.margin_db = 20.0 * std::log10(check.input_resistance_ohm / peak);
  check.note =
      "the proposed inductors with the converter's input capacitor, the LISN side shorted, against "
      "|Z_in| = "
      "V_in,min²/P_out";
}

/// Middlebrook on the whole input network of `scenario` as the converter sees it: |Z_o| peak by
/// the network solve (core/coupling/input_stability.hpp) against |Z_in| = V_in,min²/P_out.
void whole_network_check(const Scenario& scenario, StabilityCheck& check) {
  const ConductedModel model(scenario.coupling, scenario.filters, scenario.lisn,
                             scenario.converter);
  const NetworkImpedancePeak peak = peak_converter_side_impedance(model);
  check.computed = true;
  check.input_resistance_ohm = negative_input_resistance_ohm(scenario.converter_power);
  check.peak_output_impedance_ohm = peak.impedance_ohm;
  check.peak_frequency_hz = peak.frequency_hz;
  // Within one grid step (1/200 decade) of the lowest frequency searched.
  check.resistive_floor = peak.frequency_hz <= peak.from_hz * std::pow(10.0, 1.0 / 200.0);
  check.margin_db = 20.0 * std::log10(check.input_resistance_ohm / peak.impedance_ohm);
  check.note = "the whole input network as the converter sees it (the LISN, " +
               std::to_string(scenario.filters.size()) +
               " filter stage(s) and the input capacitor; network solve " +
               format_quantity(peak.from_hz, Dimension::frequency) + " - " +
               format_quantity(peak.to_hz, Dimension::frequency) +
               ") against |Z_in| = V_in,min²/P_out";
}

std::string short_text(const Shortfall& s) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.1f dB", s.db);
  return std::string(buffer) + " short at " +
         format_quantity(s.frequency_hz, Dimension::frequency, 4) + " (" + s.detector + ")";
}

}  // namespace

double choke_winding_capacitance_f(double inductance_h) {
  return std::max(
      choke_min_winding_capacitance_f,
      choke_reference_capacitance_f * std::sqrt(inductance_h / choke_reference_inductance_h));
}

double choke_self_resonance_hz(double inductance_h) {
  return srf_hz(inductance_h, choke_winding_capacitance_f(inductance_h));
}

const std::vector<double>& e6_mantissas() {
  static const std::vector<double> values{1.0, 1.5, 2.2, 3.3, 4.7, 6.8};
  return values;
}

double e6_at_or_above(double value) {
  const double decade = std::pow(10.0, std::floor(std::log10(value)));
  for (int d = 0; d < 2; ++d) {
    for (const double m : e6_mantissas()) {
      const double v = m * decade * std::pow(10.0, d);
      if (v >= value * (1.0 - relative_tolerance)) return v;
    }
  }
  return 10.0 * decade;
}

double e6_at_or_below(double value) {
  const double decade = std::pow(10.0, std::floor(std::log10(value)));
  double best = decade / 10.0 * e6_mantissas().back();
  for (const double m : e6_mantissas()) {
    if (m * decade <= value * (1.0 + relative_tolerance)) best = m * decade;
  }
  return best;
}

double e6_next(double value) { return e6_at_or_above(value * (1.0 + 1e-6)); }

double cl_insertion_loss_db(const ClSection& s, const NoiseSource& source, double load_ohm,
                            double f) {
  const double w = 2.0 * std::numbers::pi * f;
  const cd zs = cd(source.esr_ohm, w * source.esl_h) +
                (source.capacitance_f > 0.0 ? 1.0 / cd(0.0, w * source.capacitance_f) : cd{});
  const cd zc = cd(s.capacitor_esr_ohm, w * s.capacitor_esl_h) + 1.0 / cd(0.0, w * s.capacitance_f);
  cd yl = 1.0 / cd(s.inductor_resistance_ohm, w * s.inductance_h) +
          cd(0.0, w * s.winding_capacitance_f);
  if (s.core_loss_resistance_ohm > 0.0) yl += 1.0 / s.core_loss_resistance_ohm;
  const cd zl = 1.0 / yl;
  // Without the section the load sees the source directly; with it, the inductor in series and the
  // capacitor across the load.
  const cd without = load_ohm / (zs + load_ohm);
  const cd zp = zc * load_ohm / (zc + load_ohm);
  const cd with = zp / (zs + zl + zp);
  return 20.0 * std::log10(std::abs(without) / std::abs(with));
}

std::optional<ClSection> size_cl_section(const std::vector<AttenuationPoint>& required,
                                         const NoiseSource& source, double load_ohm,
                                         double max_inductance_h, double max_capacitance_f,
                                         bool with_parasitics) {
  ClSection s;
  s.inductance_h = 100e-9;
  s.capacitance_f = 1e-6;
  int c_steps = 0, l_steps = 0;
  for (;;) {
    if (with_parasitics) {
      s.inductor_resistance_ohm = dm_inductor_dcr_ohm(s.inductance_h);
      s.winding_capacitance_f = inductor_winding_capacitance_f;
      s.core_loss_resistance_ohm = core_loss_ohm;
      s.capacitor_esr_ohm = capacitor_esr_ohm;
      s.capacitor_esl_h = capacitor_esl_h;
    }
    const bool met = std::all_of(required.begin(), required.end(), [&](const AttenuationPoint& p) {
      return cl_insertion_loss_db(s, source, load_ohm, p.frequency_hz) >= p.required_db;
    });
    if (met) return s;
    const bool c_room = e6_next(s.capacitance_f) <= max_capacitance_f * (1.0 + relative_tolerance);
    const bool l_room = e6_next(s.inductance_h) <= max_inductance_h * (1.0 + relative_tolerance);
    if (c_room && (c_steps <= l_steps || !l_room)) {
      s.capacitance_f = e6_next(s.capacitance_f), ++c_steps;
    } else if (l_room) {
      s.inductance_h = e6_next(s.inductance_h), ++l_steps;
    } else {
      return std::nullopt;
    }
  }
}

FilterDesign design_filter(const toml::table& table, const std::string& file,
                           const std::string& directory, const ShippedData& data,
                           const FilterDesignOptions& options) {
  const Scenario base = scenario_from_table(table, file, directory, data);
  if (base.supply.kind == SupplyKind::battery) {
    throw Error(file + ": design-filter needs a conducted set-up: a battery supply has no LISN");
  }
  if (base.limits.sets.empty()) {
    throw Error(file + ": design-filter needs limit lines to design against: give [limits] files");
  }
  FilterDesign design;
  design.safety = base.safety;
  design.max_y_capacitance_f = max_y_capacitance_f(base.safety);
  if (!base.safety.given) {
    design.notes.push_back(
        "no [safety] section: touch current 0.5 mA at 230 V, 50 Hz assumed (from memory)");
  }
  const Prediction before = predict(base);
  design.predictions = 1;
  design.guard_db = before.margins.guard_db;
  design.verdict_before = before.verdict;
  design.before = before.margins.worst_per_detector;
  const double guard = design.guard_db;

  // Required attenuation per frequency (the largest over its detectors), split into the modes.
  std::map<double, const MarginRow*> worst_at;
  for (const MarginRow& row : before.margins.rows) {
    if (row.quantity != LimitQuantity::conducted_voltage) continue;
    auto [it, inserted] = worst_at.emplace(row.frequency_hz, &row);
    if (!inserted && row.margin_db < it->second->margin_db) it->second = &row;
  }
  if (worst_at.empty()) {
    throw Error(file +
                ": design-filter found no conducted reading on a limit line (check the bands and "
                "the limit files)");
  }
  std::vector<double> frequencies, bandwidths;
  std::vector<const MarginRow*> needing;
  for (const auto& [f, row] : worst_at) {
    if (guard - row->margin_db <= 0.0) continue;
    needing.push_back(row);
    frequencies.push_back(f);
    bandwidths.push_back(receiver_bandwidth_at(before, f));
  }
  const std::vector<Contributor> modes =
      contributors_at(base, *before.conducted, before.switch_node_v, before.input_current_a,
                      before.resonances, frequencies, bandwidths);
  std::vector<AttenuationPoint> dm_points;
  bool cm_needed = false;
  for (std::size_t i = 0; i < needing.size(); ++i) {
    RequiredAttenuation r;
    r.frequency_hz = needing[i]->frequency_hz;
    r.detector = to_string(needing[i]->reading_detector);
    r.reading_dbuv = needing[i]->reading;
    r.limit_dbuv = needing[i]->limit;
    r.required_db = guard - needing[i]->margin_db;
    const double target = r.limit_dbuv - guard - mode_split_db;
    r.dm_required_db = modes[i].dm_dbuv - target;
    r.cm_required_db = modes[i].cm_dbuv - target;
    if (r.dm_required_db > 0.0) dm_points.push_back({modes[i].harmonic_hz, r.dm_required_db});
    if (r.cm_required_db > 0.0) cm_needed = true;
    design.required.push_back(r);
  }

  // Y capacitance already on each line.
  double y_positive = 0.0, y_negative = 0.0;
  for (const FilterStage& stage : base.filters) {
    if (stage.kind != FilterKind::y_capacitors) continue;
    if (stage.lines != FilterLines::negative) y_positive += stage.converter_side_capacitance_f;
    if (stage.lines != FilterLines::positive) y_negative += stage.converter_side_capacitance_f;
  }
  design.existing_y_capacitance_per_line_f = std::max(y_positive, y_negative);
  const double y_room = design.max_y_capacitance_f - design.existing_y_capacitance_per_line_f;

  Plan plan;
  auto start_cm = [&] {
    plan.cm = true;
    plan.choke_h = choke_min_h;
    plan.y_f = y_room >= y_capacitor_min_f ? e6_at_or_below(y_room) : 0.0;
  };
  auto start_dm = [&] {
    plan.dm = true;
    plan.dm_l_each_h = dm_inductor_min_h;
    plan.dm_c_f = dm_capacitor_min_f;
    if (!dm_points.empty()) {
      const NoiseSource source{base.coupling.input_capacitance_f, base.coupling.input_esr_ohm,
                               base.coupling.input_esl_h};
      if (const auto s = size_cl_section(dm_points, source, dm_load_ohm, 2.0 * dm_inductor_max_h,
                                         dm_capacitor_max_f, true)) {
        plan.dm_l_each_h =
            std::clamp(e6_at_or_above(s->inductance_h / 2.0), dm_inductor_min_h, dm_inductor_max_h);
        plan.dm_c_f = std::clamp(s->capacitance_f, dm_capacitor_min_f, dm_capacitor_max_f);
      } else {
        plan.dm_l_each_h = dm_inductor_max_h;
        plan.dm_c_f = dm_capacitor_max_f;
      }
    }
  };
  if (cm_needed) start_cm();
  if (!dm_points.empty()) start_dm();
  if (y_room < 0.0) {
    design.notes.push_back(
        "the scenario's own Y capacitors (" +
        format_quantity(design.existing_y_capacitance_per_line_f, Dimension::capacitance) +
        " per line) already exceed the touch-current limit");
  }

  toml::table proposed = table;
  Prediction after = before;
  bool met = false;
  for (std::size_t iteration = 0; iteration < options.max_iterations; ++iteration) {
    damp(plan, base, options, design.stability);
    proposed = with_stages(table, plan);
    after = predict(scenario_from_table(proposed, file, directory, data));
    ++design.predictions;
    Shortfall dm_short, cm_short;
    double cm_worst_hz = 0.0;  // the line frequency of the largest common-mode shortfall now
    std::vector<double> f_fail, b_fail;
    std::vector<const MarginRow*> failing;
    for (const MarginRow& row : after.margins.rows) {
      if (row.quantity != LimitQuantity::conducted_voltage || row.margin_db >= guard) continue;
      failing.push_back(&row);
      f_fail.push_back(row.frequency_hz);
      b_fail.push_back(receiver_bandwidth_at(after, row.frequency_hz));
    }
    if (failing.empty()) {
      met = true;
      break;
    }
    const Scenario now = scenario_from_table(proposed, file, directory, data);
    const auto c = contributors_at(now, *after.conducted, after.switch_node_v,
                                   after.input_current_a, after.resonances, f_fail, b_fail);
    for (std::size_t i = 0; i < failing.size(); ++i) {
      const bool cm = c[i].cm_share >= c[i].dm_share;
      Shortfall& s = cm ? cm_short : dm_short;
      const double db = guard - failing[i]->margin_db;
      if (db > s.db) {
        s = {db, failing[i]->frequency_hz, to_string(failing[i]->reading_detector)};
        if (cm) cm_worst_hz = c[i].harmonic_hz;
      }
    }
    // More L helps only below the choke's self-resonance: the worst common-mode shortfall must
    // stay under it.
    const double floor_hz = cm_worst_hz;
    if (plan.cm && cm_short.db > 0.0) {
      design.cm_shortfall_top_hz = std::max(design.cm_shortfall_top_hz, cm_worst_hz);
    }
    bool grew = false;
    std::vector<std::string> bound;
    if (cm_short.db > 0.0) {
      const double y_largest =
          y_room >= y_capacitor_min_f ? e6_at_or_below(y_room) : 0.0;  // within touch current
      const double next = e6_next(plan.choke_h);
      const bool choke_room = next <= choke_max_h * (1.0 + relative_tolerance);
      const bool above = !options.choke_by_self_resonance ||
                         choke_self_resonance_hz(next) >= floor_hz * (1.0 - relative_tolerance);
      if (!plan.cm) {
        start_cm(), grew = true;
      } else if (choke_room && above) {
        plan.choke_h = next, grew = true;
      } else if (options.choke_by_self_resonance && plan.y_f < y_largest) {
        plan.y_f = plan.y_f > 0.0 ? std::min(e6_next(plan.y_f), y_largest) : y_largest;
        grew = true;
      } else if (options.choke_by_self_resonance && plan.choke2_h <= 0.0 &&
                 largest_choke_resonating_above(floor_hz, second_choke_min_h, plan.choke_h) > 0.0) {
        // A second choke, small enough to resonate above the shortfall, in series (LISN side).
        plan.choke2_h = largest_choke_resonating_above(floor_hz, second_choke_min_h, plan.choke_h);
        grew = true;
      } else if (options.choke_by_self_resonance && plan.choke2_h > 0.0 &&
                 e6_next(plan.choke2_h) <= plan.choke_h * (1.0 + relative_tolerance) &&
                 choke_self_resonance_hz(e6_next(plan.choke2_h)) >=
                     floor_hz * (1.0 - relative_tolerance)) {
        plan.choke2_h = e6_next(plan.choke2_h), grew = true;
      } else {
        const std::string y_text =
            "the Y capacitance at " +
            format_quantity(design.existing_y_capacitance_per_line_f + plan.y_f,
                            Dimension::capacitance) +
            " per line against the touch-current limit of " +
            format_quantity(design.max_y_capacitance_f, Dimension::capacitance) + " (" +
            format_quantity(base.safety.touch_current_a, Dimension::current) + " at " +
            format_quantity(base.safety.mains_voltage_v, Dimension::voltage) + ", " +
            format_quantity(base.safety.mains_frequency_hz, Dimension::frequency) + ")";
        if (!choke_room) {
          bound.push_back("common mode: the CM choke is at the largest part considered (" +
                          format_quantity(choke_max_h, Dimension::inductance) +
                          " per winding) and " + y_text + ": " + short_text(cm_short));
        } else {
          bound.push_back(
              "common mode: a larger choke would self-resonate below " +
              format_quantity(floor_hz, Dimension::frequency, 4) +
              ", where the common-mode shortfall is largest (" +
              format_quantity(next, Dimension::inductance) + " with " +
              format_quantity(choke_winding_capacitance_f(next), Dimension::capacitance, 3) + ": " +
              format_quantity(choke_self_resonance_hz(next), Dimension::frequency, 3) +
              "), the second choke likewise (" +
              (plan.choke2_h > 0.0 ? format_quantity(plan.choke2_h, Dimension::inductance)
                                   : std::string("none fits")) +
              "), and " + y_text + ": " + short_text(cm_short));
        }
      }
    }
    if (dm_short.db > 0.0) {
      const bool c_room = e6_next(plan.dm_c_f) <= dm_capacitor_max_f * (1.0 + relative_tolerance);
      const bool l_room =
          e6_next(plan.dm_l_each_h) <= dm_inductor_max_h * (1.0 + relative_tolerance);
      if (!plan.dm) {
        start_dm(), grew = true;
      } else if (c_room && (plan.dm_c_steps <= plan.dm_l_steps || !l_room)) {
        plan.dm_c_f = e6_next(plan.dm_c_f), ++plan.dm_c_steps, grew = true;
      } else if (l_room) {
        plan.dm_l_each_h = e6_next(plan.dm_l_each_h), ++plan.dm_l_steps, grew = true;
      } else {
        bound.push_back("differential mode: the DM section is at the largest parts considered (" +
                        format_quantity(dm_inductor_max_h, Dimension::inductance) + " per line, " +
                        format_quantity(dm_capacitor_max_f, Dimension::capacitance) +
                        "): " + short_text(dm_short));
      }
    }
    if (!grew) {
      for (std::size_t i = 0; i < bound.size(); ++i) design.binding += (i ? "; " : "") + bound[i];
      break;
    }
  }
  if (!met && design.binding.empty()) {
    design.binding =
        "the planner stopped after " + std::to_string(options.max_iterations) + " predictions";
  }
  // Middlebrook on the whole input network the converter sees (LISN, every stage, the input
  // capacitor): C_b grows along E6 (with Erickson's optimal R for it) while the margin is short.
  if (base.converter_power.given) {
    whole_network_check(scenario_from_table(proposed, file, directory, data), design.stability);
    bool damping_changed = false;
    while (plan.dm && !design.stability.resistive_floor &&
           design.stability.margin_db < design.stability.required_margin_db) {
      const double c_in = base.coupling.input_capacitance_f;
      const double cb = plan.damping_c_f > 0.0 ? e6_next(plan.damping_c_f) : e6_at_or_above(c_in);
      if (cb > damping_capacitor_max_f * (1.0 + relative_tolerance)) break;
      plan.damping_c_f = cb;
      plan.damping_r_ohm = e6_at_or_above(
          optimal_parallel_damping(2.0 * plan.dm_l_each_h, c_in, cb / c_in).resistance_ohm);
      design.stability.damped = damping_changed = true;
      proposed = with_stages(table, plan);
      whole_network_check(scenario_from_table(proposed, file, directory, data), design.stability);
    }
    if (damping_changed) {
      // The damping changes the filter: predict again, so "after" is what NEW.toml gives.
      after = predict(scenario_from_table(proposed, file, directory, data));
      ++design.predictions;
      const bool still_met = std::none_of(
          after.margins.rows.begin(), after.margins.rows.end(), [&](const MarginRow& row) {
            return row.quantity == LimitQuantity::conducted_voltage && row.margin_db < guard;
          });
      if (met && !still_met) {
        met = false;
        design.binding =
            "the damping the whole network needs for stability costs attenuation: a "
            "conducted reading is under the guard again";
      }
    }
  }
  if (design.stability.computed &&
      design.stability.margin_db < design.stability.required_margin_db) {
    char buffer[96];
    std::snprintf(buffer, sizeof buffer, "%.1f dB under the %.1f dB asked",
                  design.stability.required_margin_db - design.stability.margin_db,
                  design.stability.required_margin_db);
    const std::string where =
        " (the whole input network peaks at " +
        format_quantity(design.stability.peak_output_impedance_ohm, Dimension::resistance) +
        " at " + format_quantity(design.stability.peak_frequency_hz, Dimension::frequency) +
        " against |Z_in| = " +
        format_quantity(design.stability.input_resistance_ohm, Dimension::resistance) + ")";
    design.binding +=
        std::string(design.binding.empty() ? "" : "; ") +
        (design.stability.resistive_floor
             ? std::string("stability: the input network's resistance at low frequency (the "
                           "LISNs' and the series parts'), which no damping lowers, is too high "
                           "for this converter's power: Middlebrook margin ") +
                   buffer + where
         : plan.dm ? "stability: the damping capacitor is at the largest considered (" +
                         format_quantity(damping_capacitor_max_f, Dimension::capacitance) +
                         "): Middlebrook margin " + buffer + where
                   : std::string("stability: no differential-mode section to damp was proposed: "
                                 "Middlebrook margin ") +
                         buffer + where);
    met = false;
  }
  design.met = met;
  design.before_prediction = before;
  design.after_prediction = after;
  design.verdict_after = after.verdict;
  design.after = after.margins.worst_per_detector;

  // The parts, numbered as in NEW.toml.
  const double current = base.converter_power.given ? base.converter_power.output_power_w /
                                                          base.converter_power.min_input_voltage_v
                         : base.switching ? base.switching->duty * base.switching->current_a
                                          : 0.0;
  design.notes.push_back(
      base.converter_power.given
          ? "DC current of the series parts: P_out / V_in,min (losses of the converter left out)"
      : base.switching ? "DC current of the series parts: duty × pulsed input current (a buck's "
                         "mean input current)"
                       : "DC current of the series parts not known (a captured source)");
  std::size_t index = 1;
  auto stage_name = [&](std::size_t i) { return "filter " + std::to_string(i); };
  if (plan.cm) {
    auto choke_part = [&](double l_h, const std::string& role) {
      const double dcr = choke_dcr_ohm(l_h);
      const double cw = choke_winding_capacitance_f(l_h);
      ProposedPart part{stage_name(index),
                        role,
                        l_h,
                        q(l_h, Dimension::inductance),
                        "coupling 0.99 (leakage " +
                            format_quantity(l_h * (1.0 - choke_coupling * choke_coupling),
                                            Dimension::inductance, 3) +
                            "), winding capacitance " +
                            format_quantity(cw, Dimension::capacitance, 3) + " (self-resonance " +
                            format_quantity(choke_self_resonance_hz(l_h), Dimension::frequency, 3) +
                            "), interwinding " +
                            q(choke_interwinding_capacitance_f, Dimension::capacitance) +
                            ", core loss " + q(core_loss_ohm, Dimension::resistance),
                        dcr,
                        current,
                        2.0 * current * current * dcr};
      part.winding_capacitance_f = cw;
      part.self_resonance_hz = choke_self_resonance_hz(l_h);
      design.parts.push_back(part);
      ++index;
    };
    if (plan.choke2_h > 0.0) {
      choke_part(plan.choke2_h, "second CM choke (each winding, LISN side)");
    }
    choke_part(plan.choke_h, "CM choke (each winding)");
    if (plan.y_f > 0.0) {
      design.parts.push_back(
          {stage_name(index), "Y capacitor (each line)", plan.y_f,
           q(plan.y_f, Dimension::capacitance),
           "ESR " + q(capacitor_esr_ohm, Dimension::resistance) + ", ESL " +
               q(y_capacitor_esl_h, Dimension::inductance) + " (self-resonance " +
               format_quantity(srf_hz(y_capacitor_esl_h, plan.y_f), Dimension::frequency, 3) + ")",
           0.0, 0.0, 0.0});
      design.parts.back().self_resonance_hz = srf_hz(y_capacitor_esl_h, plan.y_f);
      ++index;
    }
  }
  index += base.filters.size();
  if (plan.dm) {
    const double dcr = dm_inductor_dcr_ohm(plan.dm_l_each_h);
    design.parts.push_back(
        {stage_name(index), "DM inductor (each line)", plan.dm_l_each_h,
         q(plan.dm_l_each_h, Dimension::inductance),
         "winding capacitance " + q(inductor_winding_capacitance_f, Dimension::capacitance) +
             " (self-resonance " +
             format_quantity(srf_hz(plan.dm_l_each_h, inductor_winding_capacitance_f),
                             Dimension::frequency, 3) +
             "), core loss " + q(core_loss_ohm, Dimension::resistance),
         dcr, current, 2.0 * current * current * dcr});
    design.parts.back().winding_capacitance_f = inductor_winding_capacitance_f;
    design.parts.back().self_resonance_hz =
        srf_hz(plan.dm_l_each_h, inductor_winding_capacitance_f);
    design.parts.push_back(
        {stage_name(index), "DM capacitor (across the lines, LISN side)", plan.dm_c_f,
         q(plan.dm_c_f, Dimension::capacitance),
         "ESR " + q(capacitor_esr_ohm, Dimension::resistance) + ", ESL " +
             q(capacitor_esl_h, Dimension::inductance) + " (self-resonance " +
             format_quantity(srf_hz(capacitor_esl_h, plan.dm_c_f), Dimension::frequency, 3) + ")",
         0.0, 0.0, 0.0});
    design.parts.back().self_resonance_hz = srf_hz(capacitor_esl_h, plan.dm_c_f);
    if (plan.damping_c_f > 0.0) {
      design.parts.push_back({stage_name(index),
                              "damping resistor (in series with the damping capacitor)",
                              plan.damping_r_ohm, q(plan.damping_r_ohm, Dimension::resistance),
                              "ideal", plan.damping_r_ohm, 0.0, 0.0});
      design.parts.push_back(
          {stage_name(index),
           "damping capacitor (across the converter's input, through the resistor)",
           plan.damping_c_f, q(plan.damping_c_f, Dimension::capacitance),
           "ESL " + q(capacitor_esl_h, Dimension::inductance), 0.0, 0.0, 0.0});
      design.parts.back().self_resonance_hz = srf_hz(capacitor_esl_h, plan.damping_c_f);
    }
  }
  design.y_capacitance_per_line_f =
      design.existing_y_capacitance_per_line_f + (plan.cm ? plan.y_f : 0.0);
  if (stage_count(proposed) != stage_count(table)) {
    design.notes.push_back(
        "relative file paths in the scenario are kept as written: keep NEW.toml in the scenario's "
        "folder "
        "when it names files");
  }
  std::ostringstream text;
  text << filter_design_header << " from " << file
       << (met ? "" : " (the limits are NOT met: see its report)") << "\n"
       << "# new stages: "
       << (plan.cm ? (plan.choke2_h > 0.0 ? "two common-mode chokes" : "a common-mode choke") : "")
       << (plan.cm && plan.y_f > 0.0 ? " and Y capacitors (LISN side)" : "")
       << (plan.cm && plan.dm ? "; " : "")
       << (plan.dm ? "a differential-mode C-L section (converter side)" : "")
       << (!plan.cm && !plan.dm ? "none (the scenario already meets its limits with the guard)"
                                : "")
       << "\n"
       << toml::toml_formatter{proposed} << "\n";
  design.scenario_toml = text.str();
  return design;
}

}  // namespace spurcast
