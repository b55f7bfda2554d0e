#pragma once
/// The input-filter planner (issue 17 item 3, `spurcast design-filter`): from a prediction that
/// exceeds its limits, the attenuation each frequency needs, split into differential and common
/// mode, and new filter stages built from parts with stated parasitics that meet it with the guard
/// band, checked by predicting again with the stages in place (the values grow along the E6 series
/// until every conducted reading is at least the guard below its line, or a constraint binds).
///
/// Method:
///  - required attenuation at each conducted reading: reading − (limit − guard). Split into modes
///    with the mode levels of the strongest line there (core/chain/contributors.hpp): each mode
///    must come 6.02 dB under the target, so that their sum, V1 = V_CM + V_DM in any phase, cannot
///    exceed it: DM required = V_DM − (limit − guard − 6.02 dB), likewise CM;
///  - differential mode: a C–L section, a capacitor across the lines on the LISN side and an
///    inductor in each line toward the converter (balanced: no mode conversion), the arrangement of
///    the Würth Elektronik example (docs/references.md §9.3), sized first with the closed-form
///    insertion loss between the converter's input capacitor and the two LISN ports in series
///    (100 Ω, docs/references.md §2.3), then grown while predict() shows a DM shortfall; the
///    inductors resonate with the converter's input capacitor, so when Middlebrook's criterion asks
///    for it R in series with C_b goes across the converter side
///    (core/coupling/input_stability.hpp, Erickson and Maksimović ch. 10 optimal damping), sized
///    on the section alone, then checked (and C_b grown along E6 where needed) on the whole input
///    network the converter sees: LISN, every stage and the input capacitor, solved over frequency;
///  - common mode: a choke with Y capacitors on its converter side, on the LISN side of the
///  existing
///    stages; the Y capacitance per line (with the scenario's own Y capacitors) is kept within the
///    [safety] touch-current limit (core/compliance/touch_current.hpp), the choke grows up to 47
///    mH, but only while its self-resonance 1/(2π√(L·C_w)) (with the winding capacitance C_w of
///    choke_winding_capacitance_f, which grows with L) stays at or above the frequency of the
///    largest common-mode shortfall: above its self-resonance a choke is a capacitor, and more L
///    (more turns, more C_w) lowers its impedance there. When growth would cross that line the
///    planner adds Y capacitance if the touch-current limit leaves room, else a second choke in
///    series on the LISN side, no larger than the first and chosen by the same rule (a choke pair,
///    the smaller one still inductive where the larger one has turned capacitive: common
///    practice), else it names the binding constraint.
#include <optional>
#include <string>
#include <vector>

#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/input/toml.hpp"

namespace spurcast {

/// The E6 preferred numbers (IEC 60063): 1.0, 1.5, 2.2, 3.3, 4.7, 6.8 per decade.
[[nodiscard]] const std::vector<double>& e6_mantissas();
/// The smallest E6 value ≥ `value` (relative tolerance 1e-9).
[[nodiscard]] double e6_at_or_above(double value);
/// The largest E6 value ≤ `value`.
[[nodiscard]] double e6_at_or_below(double value);
/// The next E6 value above `value`.
[[nodiscard]] double e6_next(double value);

/// Winding self-capacitance the planner assumes for a CM choke of `inductance_h` per winding
/// (judgement, no source: 10 pF at 10 mH, a typical figure for a sectioned toroidal choke, growing
/// as √L because the turn count grows as √L on one core size and a longer, more layered winding
/// has more capacitance across it; never below 2 pF, the pins and pads).
[[nodiscard]] double choke_winding_capacitance_f(double inductance_h);
/// The self-resonance 1/(2π√(L·C_w)) of such a choke [Hz].
[[nodiscard]] double choke_self_resonance_hz(double inductance_h);

/// A required insertion loss at one frequency.
struct AttenuationPoint {
  double frequency_hz = 0.0;
  double required_db = 0.0;
};

/// A C–L section between a noise source of impedance C_s + ESR_s + ESL_s and a resistive load: the
/// inductor (DC resistance, winding capacitance, core-loss resistance in parallel) in series from
/// the source, the capacitor (with ESR, ESL) across the load.
struct ClSection {
  double inductance_h = 0.0;
  double inductor_resistance_ohm = 0.0;
  double winding_capacitance_f = 0.0;
  double core_loss_resistance_ohm = 0.0;  ///< 0: none
  double capacitance_f = 0.0;
  double capacitor_esr_ohm = 0.0;
  double capacitor_esl_h = 0.0;
};
struct NoiseSource {
  double capacitance_f = 0.0;
  double esr_ohm = 0.0;
  double esl_h = 0.0;
};
/// Insertion loss [dB]: the load voltage without the section over the load voltage with it.
[[nodiscard]] double cl_insertion_loss_db(const ClSection& section, const NoiseSource& source,
                                          double load_ohm, double frequency_hz);

/// Sizes a C–L section: starting at 100 nH and 1 µF, the capacitor and the inductor grow in turn
/// along E6 (up to `max_inductance_h`, `max_capacitance_f`) until the insertion loss meets every
/// point (the planner passes every frequency that needs attenuation across the band, so a part's
/// self-resonance inside it is seen). With `with_parasitics` the parts carry the planner's assumed
/// parasitics (filter_design.cpp); otherwise they are ideal. nullopt when the largest values do not
/// meet it.
[[nodiscard]] std::optional<ClSection> size_cl_section(
    const std::vector<AttenuationPoint>& required, const NoiseSource& source, double load_ohm,
    double max_inductance_h, double max_capacitance_f, bool with_parasitics);

/// Attenuation needed at one conducted reading.
struct RequiredAttenuation {
  double frequency_hz = 0.0;
  std::string detector;
  double reading_dbuv = 0.0;
  double limit_dbuv = 0.0;
  double required_db = 0.0;     ///< reading − (limit − guard); > 0 needs filtering
  double dm_required_db = 0.0;  ///< V_DM − (limit − guard − 6.02 dB)
  double cm_required_db = 0.0;  ///< V_CM − (limit − guard − 6.02 dB)
};

/// One proposed part.
struct ProposedPart {
  std::string stage;   ///< "filter 1", ... (its index in NEW.toml)
  std::string role;    ///< "CM choke (each winding)", "Y capacitor (each line)", "DM inductor (each
                       ///< line)", ...
  double value = 0.0;  ///< [H], [F] or [Ω]
  std::string value_text;
  std::string parasitics;  ///< what is assumed, with the self-resonance where there is one
  double dc_resistance_ohm = 0.0;
  double current_a = 0.0;  ///< the DC (mean input) current it carries [A]; 0 for shunt parts
  double loss_w = 0.0;     ///< I²·R_dc of the part (both windings / lines where two) [W]
  double winding_capacitance_f = 0.0;  ///< inductors: the assumed winding capacitance [F]
  double self_resonance_hz = 0.0;      ///< 1/(2π√(L·C)) with C_w or ESL; 0 for a resistor [Hz]
};

/// Middlebrook's criterion for the whole input network as the converter sees it (LISN, every
/// filter stage, existing and proposed, and the input capacitor; network solve,
/// core/coupling/input_stability.hpp peak_converter_side_impedance).
struct StabilityCheck {
  bool computed = false;
  std::string note;                   ///< why not computed, or what was checked
  double input_resistance_ohm = 0.0;  ///< |Z_in| = V_in,min²/P_out
  double peak_output_impedance_ohm = 0.0;
  double peak_frequency_hz = 0.0;  ///< where |Z_o| peaks (the worst frequency)
  /// The peak lies at the lowest frequency searched: it is the network's resistance there (the
  /// LISNs' and the series parts'), which no damping lowers.
  bool resistive_floor = false;
  double margin_db = 0.0;  ///< 20·log10(|Z_in| / peak)
  double required_margin_db = 0.0;
  bool damped = false;  ///< an R–C_b branch was added
};

struct FilterDesignOptions {
  /// Middlebrook margin asked for [dB] (judgement: a factor 2 in impedance keeps the loop gain's
  /// phase close to the unfiltered converter's).
  double stability_margin_db = 6.0;
  std::size_t max_iterations = 60;
  /// Keep each choke's self-resonance at or above the common-mode shortfalls (see above). false:
  /// grow the choke on inductance alone, one stage (kept to show what that gives: tests).
  bool choke_by_self_resonance = true;
};

struct FilterDesign {
  double guard_db = 0.0;
  std::vector<RequiredAttenuation> required;
  std::vector<ProposedPart> parts;
  double y_capacitance_per_line_f = 0.0;  ///< in NEW.toml, all Y stages together [F]
  double existing_y_capacitance_per_line_f = 0.0;
  double max_y_capacitance_f = 0.0;  ///< the touch-current limit [F]
  SafetySpec safety;
  StabilityCheck stability;
  Verdict verdict_before = Verdict::no_limits;
  Verdict verdict_after = Verdict::no_limits;
  std::vector<DetectorMargin> before;  ///< worst margin per detector, scenario as given
  std::vector<DetectorMargin> after;   ///< the same with the proposed stages (full predict)
  bool met = false;                    ///< every conducted reading ≥ guard below its line after
  std::string binding;                 ///< when not met: the constraint that binds and by how much
  std::size_t predictions = 0;         ///< predict() runs made
  /// [Hz] the highest line frequency at which the largest common-mode shortfall lay while the
  /// chokes were chosen (0: none); with choke_by_self_resonance a choke grows or is added only
  /// when its self-resonance stays at or above that iteration's largest shortfall.
  double cm_shortfall_top_hz = 0.0;
  std::vector<std::string> notes;
  std::string scenario_toml;  ///< NEW.toml: the scenario with the proposed stages
  /// The full predictions of the scenario as given and of NEW.toml (for the before/after report,
  /// core/output/report.hpp report_files(after, &before)).
  std::optional<Prediction> before_prediction;
  std::optional<Prediction> after_prediction;
};

/// Plans the filter for the scenario `table` (read as scenario_from_table would). Throws Error
/// when the scenario has no limit lines, is a battery supply, or has no conducted reading.
[[nodiscard]] FilterDesign design_filter(const toml::table& table, const std::string& file,
                                         const std::string& directory, const ShippedData& data,
                                         const FilterDesignOptions& options = {});

/// The first line of every NEW.toml the planner writes (the CLI replaces only files that start so).
inline constexpr const char* filter_design_header = "# written by spurcast design-filter";

}  // namespace spurcast
