#pragma once
/// The converter's conducted-noise model and the source → LISN-port computation.
///
/// Circuit (all in one linear Network, solved by MNA at each harmonic):
///   LISN 1 ─ line 1 ─┐                        ┌─ conv+ ──┬───────────┬──────────────┐
///                    │  [[filter]] stages     │          │ input     │ I_in(t)      │
///                    │  (listed from the      │         === C, ESR,  (↓) current   │
///   LISN 2 ─ line 2 ─┘   LISN side)           └─ conv− ──┴── ESL ────┴──────────────┤
///                                                                     V_sw(t) (+) ──┘ switch node
///                                                         switch node ── C_par ── reference ground
///  - differential mode: the pulsed input current I_in (a LineSpectrum in A), drawn by the switch
///    from conv+ and returned into conv−; the input capacitor (C, ESR, ESL) supplies most of it, the
///    rest divides between the filter and the LISNs;
///  - common mode: the switch-node voltage V_sw (a LineSpectrum in V, referred to conv−) drives the
///    parasitic capacitance to the reference ground; that current returns through the LISNs, which
///    a CM source sees in parallel.
/// A flyback ([converter] topology = "flyback", converter.hpp) adds the paths across its isolation
/// barrier: switch node ── interwinding C ── secondary; secondary ── secondary C ── reference ground;
/// secondary ── Y capacitor ∥ barrier_resistance_ohm ── conv−. The drain swing then drives common-mode
/// current through the transformer into the secondary's earth capacitance, returning through the
/// LISNs, and the Y capacitor shunts part of it back to the primary. Other topologies use the circuit
/// above; they differ in the input current's shape (SwitchingSpec::input_current_shape).
/// Superposition holds (linear network): both sources are solved at once with unit amplitude and the
/// responses are weighted by the source phasors.
///
/// Measurement set-up the numbers refer to (lisn.lines): with two networks (one per line) the DM
/// current loops through both 50 Ω ports in series, so each port reads about 6 dB less than a
/// single-network set-up with the return bonded at the equipment, where the whole DM voltage
/// appears across the one port (docs/references.md §2.3 [D]).
#include <complex>
#include <string>
#include <vector>

#include "core/coupling/converter.hpp"
#include "core/coupling/filter.hpp"
#include "core/coupling/lisn.hpp"
#include "core/coupling/network.hpp"
#include "core/input/toml_reader.hpp"
#include "core/source/waveform.hpp"

namespace spurcast {

/// The [coupling] section: the converter's own coupling paths.
/// Defaults are typical of a small DC-DC converter with a ceramic input capacitor (common
/// practice, not from a source): used when the scenario gives no value.
struct CouplingSpec {
  double input_capacitance_f = 10e-6;      ///< converter input capacitor [F], > 0
  double input_esr_ohm = 5e-3;             ///< its equivalent series resistance [Ω], ≥ 0
  double input_esl_h = 1e-9;               ///< its equivalent series inductance [H], ≥ 0
  double parasitic_capacitance_f = 30e-12; ///< switch node to reference ground [F], ≥ 0 (0: no CM path)
};

/// Reads [coupling]: input_capacitance, input_esr, input_esl, parasitic_capacitance (each optional,
/// defaults above). Rejects unknown keys and out-of-range values at their position.
[[nodiscard]] CouplingSpec read_coupling_section(TableReader& reader);

/// The built network with its probes, ready to evaluate at any frequencies.
class ConductedModel {
 public:
  /// Builds LISN(s) + filter stages (from the LISN side) + converter input capacitor + the DM and CM
  /// sources, and the topology's own paths (`converter`, buck by default). Throws Error if a filter
  /// stage is invalid or the network has a floating node.
  ConductedModel(const CouplingSpec& coupling, const std::vector<FilterStage>& filters, const LisnSpec& lisn,
                 const ConverterSpec& converter = ConverterSpec{});

  [[nodiscard]] const NetworkSolver& solver() const noexcept { return solver_; }
  [[nodiscard]] const LisnSpec& lisn() const noexcept { return lisn_; }
  [[nodiscard]] const CouplingSpec& coupling() const noexcept { return coupling_; }
  [[nodiscard]] const ConverterSpec& converter() const noexcept { return converter_; }
  /// Number of LISN ports (1 or 2).
  [[nodiscard]] int line_count() const noexcept { return lisn_.lines; }
  /// A human-readable description of the measurement set-up for the report, e.g.
  /// "two CISPR 16-1-2 V-networks, 50 Ω ∥ (50 µH + 5 Ω), one per supply line ...".
  [[nodiscard]] std::string setup_description() const;

  /// The probes, in this order: port 1 voltage, port 2 voltage, line 1 current, line 2 current
  /// (currents flow from the LISN into the equipment). Port 2 is the ground for lines = 1.
  [[nodiscard]] const std::vector<Probe>& probes() const noexcept { return probes_; }

  // Source indices in the solver's Transfer.
  static constexpr int source_input_current = 0;  ///< the DM current source [A]
  static constexpr int source_switch_node = 1;    ///< the CM switch-node voltage source [V]
  /// The voltage across the converter's input terminals, V(conv+) − V(conv−), where the input
  /// current source is drawn (after every filter stage and the input capacitor).
  [[nodiscard]] const Probe& converter_terminals() const noexcept { return converter_terminals_; }

 private:
  CouplingSpec coupling_;
  ConverterSpec converter_;
  LisnSpec lisn_;
  std::vector<Probe> probes_;
  Probe converter_terminals_;
  NetworkSolver solver_;
};

/// Transfer functions of the model at arbitrary frequencies (each > 0). Index [f].
/// Port voltages per unit source: from the input current in V/A (a transimpedance), from the switch
/// node in V/V. Line currents (flowing from the LISN into the equipment) in A/A and A/V.
/// For lines = 1, the line-2 entries are zero (the return is bonded at the equipment; the bond's
/// current is in line2_current_* all the same).
struct TransferFunctions {
  std::vector<double> frequency_hz;
  std::vector<std::complex<double>> port1_per_input_current_ohm, port1_per_switch_node;
  std::vector<std::complex<double>> port2_per_input_current_ohm, port2_per_switch_node;
  std::vector<std::complex<double>> line1_current_per_input_current, line1_current_per_switch_node_s;
  std::vector<std::complex<double>> line2_current_per_input_current, line2_current_per_switch_node_s;
};
[[nodiscard]] TransferFunctions transfer_at(const ConductedModel& model, const std::vector<double>& frequency_hz);

/// The conducted result at the harmonics k·f0 of the sources (index k−1, aligned with the inputs).
/// All phasors are RMS, like LineSpectrum::harmonics.
struct ConductedResult {
  double fundamental_hz = 0.0;
  std::vector<double> frequency_hz;
  std::vector<std::complex<double>> line1_v, line2_v;  ///< receiver-port voltage of LISN 1 / 2 [V]
  std::vector<std::complex<double>> dm_v;  ///< (V1 − V2)/2 [V]
  std::vector<std::complex<double>> cm_v;  ///< (V1 + V2)/2 [V]
  std::vector<std::complex<double>> line1_current_a, line2_current_a;  ///< into the equipment [A]
  std::vector<std::complex<double>> dm_current_a;  ///< DM loop current (I1 − I2)/2 [A]
  std::vector<std::complex<double>> cm_current_a;  ///< CM current per conductor (I1 + I2)/2 [A]; total 2×
  std::string setup;  ///< ConductedModel::setup_description()

  /// The port voltage of `line` (1 or 2) as a LineSpectrum (dc = 0: the LISN blocks nothing at DC
  /// but the receiver does not measure it).
  [[nodiscard]] LineSpectrum line_spectrum(int line) const;
};

/// Evaluates the model at the harmonics of the two sources. Both must have the same fundamental
/// (relative tolerance 1e-9) unless one has no harmonics (then it is absent); the shorter one is
/// padded with zeros. Throws Error on a fundamental mismatch or a wrong quantity.
/// How conduct() solves the network at the lines: at every line, or (for the dense lines of a
/// dithered source's repeat, thousands of them) on the adaptive grid of transfer_grid.hpp and
/// interpolated, within transfer_grid_tolerance.
enum class LineSolve { every_line, adaptive_grid };
[[nodiscard]] ConductedResult conduct(const LineSpectrum& switch_node_v, const LineSpectrum& input_current_a,
                                      const ConductedModel& model, LineSolve solve = LineSolve::every_line);

/// The LISN port voltages of a modulated source (a boost PFC stage over the mains half-cycle,
/// core/source/mains_cycle.hpp), one ModulatedLines per port (index 0: line 1, 1: line 2; one
/// entry for lines = 1). The network is linear and time-invariant, so at each instant the port
/// lines are the source lines through the transfer functions at k·f0, solved once for all
/// instants. The sidebands the modulation spreads around k·f0 (within a receiver span, ±2·B6) take
/// the transfer at k·f0 (narrowband: the network's transfer is taken flat across ±2·B6 of each
/// harmonic). The two sources must have the same fundamental, modulation period and instants.
/// Lines whose fundamental varies over the instants (ModulatedLines::instant_fundamental_hz, a
/// critical-conduction stage) are weighted at their own frequencies k·f_j, the transfer functions
/// interpolated from the adaptive grid (transfer_grid.hpp, within transfer_grid_tolerance) at the
/// frequencies of the lines that are not zero; the ports keep the instants' fundamentals.
[[nodiscard]] std::vector<ModulatedLines> conduct_modulated(const ModulatedLines& switch_node_v,
                                                            const ModulatedLines& input_current_a,
                                                            const ConductedModel& model);

/// A resonance of the conducted model: a peak of the transfer from one source to a LISN port.
struct Resonance {
  double frequency_hz = 0.0;
  double q = 0.0;    ///< f0 / half-power bandwidth of the peak of |H(f)|
  int source = 0;    ///< ConductedModel::source_input_current or source_switch_node
  std::vector<std::string> parts;  ///< elements holding most of the stored energy at the peak
};

/// The resonances with quality factor ≥ `min_q` whose peak lies in [low_hz, high_hz].
/// Method: |H(f)| from each source to each LISN port is scanned on a logarithmic grid (200 points
/// per decade, extended a factor 2 beyond the range); each local maximum is refined by a
/// golden-section search and its half-power frequencies f1 < f0 < f2 by bisection, Q = f0/(f2 − f1)
/// (the half-power definition of Q of a resonance, common practice). The parts that make it are the
/// inductive and capacitive elements that, at f0 with that source driving, together hold at least
/// 80 % of the stored magnetic and of the stored electric energy (at most three of each): at a
/// resonance the two energies are exchanged between exactly those parts. Peaks closer than 1 % in
/// frequency are one resonance (the highest Q is kept).
[[nodiscard]] std::vector<Resonance> find_resonances(const ConductedModel& model, double low_hz, double high_hz,
                                                     double min_q);

/// One line for the report, e.g. "resonance at 252 kHz, Q ≈ 630, in the common-mode path (switch-node
/// drive): filter 1 choke, parasitic capacitance ...".
[[nodiscard]] std::string resonance_note(const Resonance& resonance);

/// The Q above which a resonance inside a computed band gets a note (judgement: a peak of more than
/// 20 dB over a damped response; an undamped input filter is typically far above it).
inline constexpr double resonance_note_min_q = 10.0;

/// The receiver-port voltage waveform of `line` (1 or 2) for sampled sources (dithered or captured):
/// both records are transformed (FFTW r2c), multiplied by the transfer functions at each bin and
/// transformed back (c2r). The record is treated as ONE PERIOD of a periodic signal (circular
/// convolution): a record that is not a whole number of periods leaks at its ends. The two records
/// must have the same sample rate and length; either may be empty (absent). DC is removed.
[[nodiscard]] Waveform lisn_port_waveform(const Waveform& switch_node_v, const Waveform& input_current_a,
                                          const ConductedModel& model, int line);

/// The same in the frequency domain, on the bins held: Y[k] = H_v(f_k)·V[k] + H_i(f_k)·I[k] over
/// the bins of the records' spectra (SampledSpectrum, both over the same bins of the same record
/// length and sample rate, either may hold no bins: absent), DC set to 0, the Nyquist bin of an
/// even record kept real, as lisn_port_waveform() makes them before its inverse transform. The
/// transfer functions come from the adaptive grid over the bins held (transfer_grid.hpp), so a
/// band's bins cost only that band's solves and memory. The result is a voltage spectrum.
[[nodiscard]] SampledSpectrum lisn_port_spectrum(const SampledSpectrum& switch_node_v, const SampledSpectrum& input_current_a,
                                                 const ConductedModel& model, int line);

}  // namespace spurcast
