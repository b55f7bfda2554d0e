#include "core/coupling/conducted.hpp"

#include <fftw3.h>

#include <cmath>
#include <memory>
#include <mutex>

#include "core/input/error.hpp"
#include "core/source/fftw_lock.hpp"
#include "core/input/units.hpp"

namespace spurcast {

using cd = std::complex<double>;

CouplingSpec read_coupling_section(TableReader& reader) {
  reader.finish({"input_capacitance", "input_esr", "input_esl", "parasitic_capacitance"});
  CouplingSpec spec;
  auto read = [&](std::string_view key, Dimension dimension, double fallback, bool strictly_positive) {
    const double value = reader.quantity_or(key, dimension, fallback);
    if (!(std::isfinite(value) && (strictly_positive ? value > 0.0 : value >= 0.0))) {
      reader.fail(key, "expected " + dimension_name(dimension) + (strictly_positive ? " > 0" : " >= 0") +
                           ", found " + format_quantity(value, dimension));
    }
    return value;
  };
  spec.input_capacitance_f = read("input_capacitance", Dimension::capacitance, spec.input_capacitance_f, true);
  spec.input_esr_ohm = read("input_esr", Dimension::resistance, spec.input_esr_ohm, false);
  spec.input_esl_h = read("input_esl", Dimension::inductance, spec.input_esl_h, false);
  spec.parasitic_capacitance_f =
      read("parasitic_capacitance", Dimension::capacitance, spec.parasitic_capacitance_f, false);
  return spec;
}

namespace {

struct Built {
  Network network;
  std::vector<Probe> probes;
};

Built build_network(const CouplingSpec& coupling, const std::vector<FilterStage>& filters, const LisnSpec& lisn) {
  Built built;
  Network& net = built.network;
  // EUT-side line nodes and the LISN terminals; a 0 V source between them is the ammeter of the
  // line current (LISN → equipment), the usual SPICE device.
  const NodeId line1 = net.node("line1");
  const NodeId line2 = net.node("line2");
  const NodeId terminal1 = net.node("lisn1");
  const LisnNodes lisn1 = add_lisn(net, terminal1, lisn.model, lisn.circuit, "lisn1");
  LisnNodes lisn2;
  if (lisn.lines == 2) lisn2 = add_lisn(net, net.node("lisn2"), lisn.model, lisn.circuit, "lisn2");

  LinePair side{line1, line2};
  for (std::size_t i = 0; i < filters.size(); ++i) {
    side = add_filter_stage(net, filters[i], side, "filter" + std::to_string(i + 1));
  }
  const NodeId converter_positive = side.positive;
  const NodeId converter_negative = side.negative;
  net.add_capacitor(converter_positive, converter_negative, coupling.input_capacitance_f, coupling.input_esr_ohm,
                    coupling.input_esl_h, "input capacitor");
  // Source 0: the pulsed input current, drawn from conv+ by the switch and returned into conv−.
  net.add_current_source(converter_positive, converter_negative, "input current");
  // Source 1: the switch-node voltage referred to conv−, driving the parasitic capacitance to ground.
  const NodeId switch_node = net.node("switch node");
  net.add_voltage_source(switch_node, converter_negative, "switch node");
  if (coupling.parasitic_capacitance_f > 0.0) {
    net.add_capacitor(switch_node, Network::ground, coupling.parasitic_capacitance_f, 0.0, 0.0, "parasitic capacitance");
  }
  // Sources 2, 3: ammeters. With one network, line 2's "ammeter" is the bond of the return to the
  // reference ground at the equipment.
  const ElementId ammeter1 = net.add_voltage_source(terminal1, line1, "line 1 ammeter");
  const ElementId ammeter2 = lisn.lines == 2 ? net.add_voltage_source(lisn2.terminal, line2, "line 2 ammeter")
                                             : net.add_voltage_source(Network::ground, line2, "return bond");
  built.probes = {Probe::voltage(lisn1.port),
                  lisn.lines == 2 ? Probe::voltage(lisn2.port) : Probe::voltage(Network::ground),
                  Probe::current(ammeter1), Probe::current(ammeter2)};
  return built;
}

NetworkSolver make_solver(const CouplingSpec& coupling, const std::vector<FilterStage>& filters,
                          const LisnSpec& lisn, std::vector<Probe>& probes) {
  if (lisn.lines != 1 && lisn.lines != 2) {
    throw Error("expected 1 or 2 LISN lines, found " + std::to_string(lisn.lines));
  }
  Built built = build_network(coupling, filters, lisn);
  probes = built.probes;
  return NetworkSolver(std::move(built.network));
}

}  // namespace

ConductedModel::ConductedModel(const CouplingSpec& coupling, const std::vector<FilterStage>& filters,
                               const LisnSpec& lisn)
    : coupling_(coupling), lisn_(lisn), probes_(), solver_(make_solver(coupling, filters, lisn, probes_)) {}

std::string ConductedModel::setup_description() const {
  const bool cispr25 = lisn_.model == LisnModel::v_network_5uh;
  const std::string network = cispr25 ? "CISPR 25 artificial network" : "CISPR 16-1-2 V-network";
  const std::string impedance = cispr25 ? "50 \xCE\xA9 \xE2\x88\xA5 (5 \xC2\xB5H + 1 \xCE\xA9)"
                                        : "50 \xCE\xA9 \xE2\x88\xA5 (50 \xC2\xB5H + 5 \xCE\xA9)";
  std::string text;
  if (lisn_.lines == 2) {
    text = "two " + network + "s, " + impedance + " (one per supply line, to the reference ground); the differential-mode "
           "current loops through both 50 \xCE\xA9 receiver ports, so each port reads about 6 dB less than "
           "a single network with the return bonded at the equipment";
  } else {
    text = "one " + network + ", " + impedance + ", on the positive line, the return bonded to the reference ground at the "
           "equipment; the whole differential-mode voltage appears across the one port (about 6 dB more "
           "than with one network per line), and common-mode current returning through the bond is not "
           "measured";
  }
  if (lisn_.circuit == LisnCircuit::ideal) {
    text += "; ideal networks: the receiver port is the equipment terminal, as read after the "
            "voltage-division-factor correction";
  } else {
    text += "; practical networks with coupling capacitor and 1 k\xCE\xA9 discharge resistor (part values "
            "from memory): the port reads the terminal voltage less the voltage division factor";
  }
  return text;
}

TransferFunctions transfer_at(const ConductedModel& model, const std::vector<double>& frequency_hz) {
  const Transfer t = model.solver().transfer(frequency_hz, model.probes());
  TransferFunctions out;
  out.frequency_hz = frequency_hz;
  const std::size_t n = frequency_hz.size();
  for (auto* v : {&out.port1_per_input_current_ohm, &out.port1_per_switch_node, &out.port2_per_input_current_ohm,
                  &out.port2_per_switch_node, &out.line1_current_per_input_current,
                  &out.line1_current_per_switch_node_s, &out.line2_current_per_input_current,
                  &out.line2_current_per_switch_node_s}) {
    v->resize(n);
  }
  const auto i = static_cast<std::size_t>(ConductedModel::source_input_current);
  const auto v = static_cast<std::size_t>(ConductedModel::source_switch_node);
  for (std::size_t f = 0; f < n; ++f) {
    out.port1_per_input_current_ohm[f] = t.at(f, 0, i);
    out.port1_per_switch_node[f] = t.at(f, 0, v);
    out.port2_per_input_current_ohm[f] = t.at(f, 1, i);
    out.port2_per_switch_node[f] = t.at(f, 1, v);
    out.line1_current_per_input_current[f] = t.at(f, 2, i);
    out.line1_current_per_switch_node_s[f] = t.at(f, 2, v);
    out.line2_current_per_input_current[f] = t.at(f, 3, i);
    out.line2_current_per_switch_node_s[f] = t.at(f, 3, v);
  }
  return out;
}

LineSpectrum ConductedResult::line_spectrum(int line) const {
  if (line != 1 && line != 2) throw Error("expected line 1 or 2, found " + std::to_string(line));
  LineSpectrum spectrum;
  spectrum.quantity = Quantity::voltage;
  spectrum.fundamental_hz = fundamental_hz;
  spectrum.harmonics = line == 1 ? line1_v : line2_v;
  return spectrum;
}

ConductedResult conduct(const LineSpectrum& switch_node_v, const LineSpectrum& input_current_a,
                        const ConductedModel& model) {
  const bool has_v = !switch_node_v.harmonics.empty();
  const bool has_i = !input_current_a.harmonics.empty();
  if (has_v && switch_node_v.quantity != Quantity::voltage) {
    throw Error("expected a switch-node voltage spectrum, found a current");
  }
  if (has_i && input_current_a.quantity != Quantity::current) {
    throw Error("expected an input-current spectrum, found a voltage");
  }
  double f0 = has_v ? switch_node_v.fundamental_hz : input_current_a.fundamental_hz;
  if (has_v && has_i) {
    const double fi = input_current_a.fundamental_hz;
    if (!(std::abs(fi - f0) <= 1e-9 * std::max(std::abs(f0), std::abs(fi)))) {
      throw Error("the switch-node and input-current spectra have different fundamentals (" +
                  format_quantity(f0, Dimension::frequency) + ", " + format_quantity(fi, Dimension::frequency) + ")");
    }
  }
  ConductedResult result;
  result.setup = model.setup_description();
  if (!has_v && !has_i) {
    result.fundamental_hz = std::max(switch_node_v.fundamental_hz, input_current_a.fundamental_hz);
    return result;
  }
  if (!(std::isfinite(f0) && f0 > 0.0)) {
    throw Error("expected a fundamental frequency > 0 Hz, found " + format_quantity(f0, Dimension::frequency));
  }
  result.fundamental_hz = f0;
  const std::size_t count = std::max(switch_node_v.harmonics.size(), input_current_a.harmonics.size());
  result.frequency_hz.resize(count);
  for (std::size_t k = 0; k < count; ++k) result.frequency_hz[k] = static_cast<double>(k + 1) * f0;
  const TransferFunctions h = transfer_at(model, result.frequency_hz);
  for (auto* vec : {&result.line1_v, &result.line2_v, &result.dm_v, &result.cm_v, &result.line1_current_a,
                    &result.line2_current_a, &result.dm_current_a, &result.cm_current_a}) {
    vec->resize(count);
  }
  for (std::size_t k = 0; k < count; ++k) {
    const cd v = k < switch_node_v.harmonics.size() ? switch_node_v.harmonics[k] : cd(0.0, 0.0);
    const cd i = k < input_current_a.harmonics.size() ? input_current_a.harmonics[k] : cd(0.0, 0.0);
    // Superposition of the two sources in the linear network.
    const cd v1 = h.port1_per_input_current_ohm[k] * i + h.port1_per_switch_node[k] * v;
    const cd v2 = h.port2_per_input_current_ohm[k] * i + h.port2_per_switch_node[k] * v;
    const cd i1 = h.line1_current_per_input_current[k] * i + h.line1_current_per_switch_node_s[k] * v;
    const cd i2 = h.line2_current_per_input_current[k] * i + h.line2_current_per_switch_node_s[k] * v;
    result.line1_v[k] = v1;
    result.line2_v[k] = v2;
    // Mode decomposition, C. R. Paul, Introduction to EMC, 2nd ed., §6 (docs/references.md §2.3).
    result.dm_v[k] = 0.5 * (v1 - v2);
    result.cm_v[k] = 0.5 * (v1 + v2);
    result.line1_current_a[k] = i1;
    result.line2_current_a[k] = i2;
    result.dm_current_a[k] = 0.5 * (i1 - i2);
    result.cm_current_a[k] = 0.5 * (i1 + i2);
  }
  return result;
}

namespace {

// Plans are made and destroyed under the library's one planner lock (core/source/fftw_lock.hpp): FFTW's
// planner is not thread-safe; executing a plan is safe from any thread.

struct FftwFree {
  void operator()(void* p) const { fftw_free(p); }
};

/// The one-sided spectrum (N/2 + 1 bins) of a real record.
std::vector<cd> forward(const std::vector<double>& samples) {
  const int n = static_cast<int>(samples.size());
  const std::size_t bins = samples.size() / 2 + 1;
  std::unique_ptr<double, FftwFree> in(static_cast<double*>(fftw_malloc(sizeof(double) * samples.size())));
  std::unique_ptr<fftw_complex, FftwFree> out(static_cast<fftw_complex*>(fftw_malloc(sizeof(fftw_complex) * bins)));
  fftw_plan plan;
  {
    const std::lock_guard<std::mutex> lock(fftw_planner_mutex());
    plan = fftw_plan_dft_r2c_1d(n, in.get(), out.get(), FFTW_ESTIMATE);
  }
  std::copy(samples.begin(), samples.end(), in.get());
  fftw_execute(plan);
  {
    const std::lock_guard<std::mutex> lock(fftw_planner_mutex());
    fftw_destroy_plan(plan);
  }
  std::vector<cd> spectrum(bins);
  for (std::size_t k = 0; k < bins; ++k) spectrum[k] = cd(out.get()[k][0], out.get()[k][1]);
  return spectrum;
}

std::vector<double> inverse(const std::vector<cd>& spectrum, std::size_t n) {
  std::unique_ptr<fftw_complex, FftwFree> in(static_cast<fftw_complex*>(fftw_malloc(sizeof(fftw_complex) * spectrum.size())));
  std::unique_ptr<double, FftwFree> out(static_cast<double*>(fftw_malloc(sizeof(double) * n)));
  fftw_plan plan;
  {
    const std::lock_guard<std::mutex> lock(fftw_planner_mutex());
    plan = fftw_plan_dft_c2r_1d(static_cast<int>(n), in.get(), out.get(), FFTW_ESTIMATE);
  }
  for (std::size_t k = 0; k < spectrum.size(); ++k) {
    in.get()[k][0] = spectrum[k].real();
    in.get()[k][1] = spectrum[k].imag();
  }
  fftw_execute(plan);  // c2r destroys its input; it is ours
  {
    const std::lock_guard<std::mutex> lock(fftw_planner_mutex());
    fftw_destroy_plan(plan);
  }
  std::vector<double> samples(out.get(), out.get() + n);
  for (double& s : samples) s /= static_cast<double>(n);  // FFTW transforms are unnormalised
  return samples;
}

}  // namespace

Waveform lisn_port_waveform(const Waveform& switch_node_v, const Waveform& input_current_a,
                            const ConductedModel& model, int line) {
  if (line != 1 && line != 2) throw Error("expected line 1 or 2, found " + std::to_string(line));
  const bool has_v = !switch_node_v.samples.empty();
  const bool has_i = !input_current_a.samples.empty();
  if (has_v && switch_node_v.quantity != Quantity::voltage) {
    throw Error("expected a switch-node voltage waveform, found a current");
  }
  if (has_i && input_current_a.quantity != Quantity::current) {
    throw Error("expected an input-current waveform, found a voltage");
  }
  const Waveform& first = has_v ? switch_node_v : input_current_a;
  Waveform out;
  out.quantity = Quantity::voltage;
  out.sample_rate_hz = first.sample_rate_hz;
  out.start_time_s = first.start_time_s;
  if (!has_v && !has_i) return out;
  if (has_v && has_i) {
    if (switch_node_v.samples.size() != input_current_a.samples.size() ||
        std::abs(switch_node_v.sample_rate_hz - input_current_a.sample_rate_hz) >
            1e-9 * switch_node_v.sample_rate_hz) {
      throw Error("the switch-node and input-current records differ in length or sample rate");
    }
  }
  if (!(std::isfinite(first.sample_rate_hz) && first.sample_rate_hz > 0.0)) {
    throw Error("expected a sample rate > 0 Hz, found " + format_quantity(first.sample_rate_hz, Dimension::frequency));
  }
  const std::size_t n = first.samples.size();
  const std::size_t bins = n / 2 + 1;
  // The record is taken as one period of a periodic signal: multiplying DFT bins is a circular
  // convolution with the network's impulse response.
  std::vector<double> frequency_hz;
  for (std::size_t k = 1; k < bins; ++k) {
    frequency_hz.push_back(static_cast<double>(k) * first.sample_rate_hz / static_cast<double>(n));
  }
  std::vector<cd> result(bins, cd(0.0, 0.0));  // bin 0 (DC) stays 0: the receiver does not measure it
  if (!frequency_hz.empty()) {
    const TransferFunctions h = transfer_at(model, frequency_hz);
    const auto& per_v = line == 1 ? h.port1_per_switch_node : h.port2_per_switch_node;
    const auto& per_i = line == 1 ? h.port1_per_input_current_ohm : h.port2_per_input_current_ohm;
    const std::vector<cd> spectrum_v = has_v ? forward(switch_node_v.samples) : std::vector<cd>();
    const std::vector<cd> spectrum_i = has_i ? forward(input_current_a.samples) : std::vector<cd>();
    for (std::size_t k = 1; k < bins; ++k) {
      cd value(0.0, 0.0);
      if (has_v) value += per_v[k - 1] * spectrum_v[k];
      if (has_i) value += per_i[k - 1] * spectrum_i[k];
      result[k] = value;
    }
    // For even n the Nyquist bin of a real signal is real; keep the real part (c2r ignores the rest).
    if (n % 2 == 0) result[bins - 1] = cd(result[bins - 1].real(), 0.0);
  }
  out.samples = inverse(result, n);
  return out;
}

}  // namespace spurcast
