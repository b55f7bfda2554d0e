#include "core/source/source.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <deque>
#include <limits>
#include <numbers>

#include "core/input/error.hpp"
#include "core/input/units.hpp"

namespace spurcast {

namespace {

using cd = std::complex<double>;
constexpr double two_pi = 2.0 * std::numbers::pi;

std::string number_text(double value) {
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "%.6g", value);
  return buffer;
}

/// A value as typed back to the user: with an SI prefix where one fits, else "1e+308 V".
std::string found_text(double value, Dimension dimension, const char* unit) {
  return std::fabs(value) < 1e15 ? format_quantity(value, dimension, 9) : number_text(value) + " " + unit;
}

/// Fourier transform of one ringing tail exp(−t/decay)·sin(ω_r·t), t ≥ 0:
/// F(ω) = ω_r / ((1/decay + jω)² + ω_r²). Summing the tail over every period is exact for the
/// periodic signal, so c_k gains F(ω_k)·exp(−jω_k·t_edge)/T per edge.
cd ringing_transform(const RingingSpec& ringing, double omega) {
  const double omega_r = two_pi * ringing.frequency_hz;
  const cd s(1.0 / ringing.decay_s, omega);
  return omega_r / (s * s + omega_r * omega_r);
}

double dither_profile(const DitherSpec& dither, double time_s) {
  const double u = time_s * dither.rate_hz - std::floor(time_s * dither.rate_hz);
  if (dither.profile == DitherProfile::sine) return std::sin(two_pi * u);
  if (u < 0.25) return 4.0 * u;
  if (u < 0.75) return 2.0 - 4.0 * u;
  return 4.0 * u - 4.0;
}

/// Edge times (end of each ramp, where ringing starts) within one period starting at 0.
struct EdgeEnds {
  double rising_end_s;
  double falling_end_s;
};
EdgeEnds edge_ends(const SwitchingSpec& spec, double period_s) {
  const double width_s = spec.duty * period_s;
  return {spec.rise_s, spec.rise_s / 2.0 + width_s + spec.fall_s / 2.0};
}

std::vector<Breakpoint> breakpoints_for_period(const SwitchingSpec& spec, double amplitude,
                                               double period_s) {
  const double width_s = spec.duty * period_s;
  const double fall_start_s = spec.rise_s / 2.0 + width_s - spec.fall_s / 2.0;
  return {{0.0, 0.0},
          {spec.rise_s, amplitude},
          {fall_start_s, amplitude},
          {fall_start_s + spec.fall_s, 0.0}};
}

/// Value at time t in [0, period) of the periodic piecewise-linear waveform through `points`.
double piecewise_value(const std::vector<Breakpoint>& points, double period_s, double t) {
  // The waveform holds points[0].value before the first breakpoint when points[0].time_s > 0
  // (the wrap segment joins the last point to the first one a period later).
  const std::size_t n = points.size();
  for (std::size_t i = 0; i + 1 < n; ++i) {
    if (t < points[i + 1].time_s) {
      if (t < points[i].time_s) break;
      const double span = points[i + 1].time_s - points[i].time_s;
      if (span <= 0.0) return points[i + 1].value;
      return points[i].value + (points[i + 1].value - points[i].value) * (t - points[i].time_s) / span;
    }
  }
  // Wrap segment from the last point to the first point + period.
  const Breakpoint& last = points.back();
  const Breakpoint& first = points.front();
  double u = t;
  if (u < first.time_s) u += period_s;
  const double span = first.time_s + period_s - last.time_s;
  if (span <= 0.0) return first.value;
  return last.value + (first.value - last.value) * (u - last.time_s) / span;
}

Waveform synthesize(const SwitchingSpec& spec, double amplitude, bool with_ringing,
                    Quantity quantity, double sample_rate_hz, double duration_s) {
  if (!(sample_rate_hz > 0.0) || !std::isfinite(sample_rate_hz)) {
    throw Error("sample rate must be positive, found " + number_text(sample_rate_hz));
  }
  if (!(duration_s > 0.0) || !std::isfinite(duration_s)) {
    throw Error("record duration must be positive, found " + number_text(duration_s));
  }
  const double count_real = std::ceil(sample_rate_hz * duration_s - 1e-9);
  // Checked before the samples are allocated (issue 14: a dither rate of 5 Hz took 3.5 GB).
  if (count_real > static_cast<double>(max_record_samples) * (1.0 + 1e-9)) {
    if (spec.dither) {
      // The record holds at least one modulation period (docs/design.md: the detectors run to
      // their steady state over whole periods), so the rate sets its length.
      const double min_rate_hz = sample_rate_hz / static_cast<double>(max_record_samples);
      throw Error(spec.dither->rate_where,
                  "expected a dither rate of at least " + format_quantity(min_rate_hz, Dimension::frequency) +
                      ": one modulation period at the receiver's " +
                      format_quantity(sample_rate_hz, Dimension::frequency) + " sampling must fit in " +
                      std::to_string(max_record_samples) + " samples, found " +
                      format_quantity(spec.dither->rate_hz, Dimension::frequency));
    }
    throw Error("record of " + number_text(count_real) + " samples at " +
                format_quantity(sample_rate_hz, Dimension::frequency) + " is longer than the " +
                std::to_string(max_record_samples) + " samples a synthesized record may have");
  }
  const auto count = static_cast<std::size_t>(count_real);
  Waveform waveform;
  waveform.quantity = quantity;
  waveform.sample_rate_hz = sample_rate_hz;
  waveform.samples.assign(count, 0.0);

  const bool ringing = with_ringing && spec.ringing && spec.ringing->relative_amplitude > 0.0;
  const double ring_amplitude = ringing ? spec.ringing->relative_amplitude * amplitude : 0.0;
  const double ring_omega = ringing ? two_pi * spec.ringing->frequency_hz : 0.0;
  const double ring_alpha = ringing ? 1.0 / spec.ringing->decay_s : 0.0;
  // A tail is negligible after 40 decay times (e^-40 ≈ 4e-18).
  const double ring_span_s = ringing ? 40.0 * spec.ringing->decay_s : 0.0;
  struct Edge {
    double time_s;
    double sign;
  };
  std::deque<Edge> edges;

  const double dt = 1.0 / sample_rate_hz;
  std::size_t index = 0;
  double cycle_start_s = 0.0;
  while (index < count) {
    double frequency_hz = spec.frequency_hz;
    // The controller's oscillator sets each period from the modulation at the cycle start.
    if (spec.dither) frequency_hz *= 1.0 + spec.dither->deviation_fraction * dither_profile(*spec.dither, cycle_start_s);
    const double period_s = 1.0 / frequency_hz;
    const auto points = breakpoints_for_period(spec, amplitude, period_s);
    if (ringing) {
      const EdgeEnds ends = edge_ends(spec, period_s);
      edges.push_back({cycle_start_s + ends.rising_end_s, 1.0});
      edges.push_back({cycle_start_s + ends.falling_end_s, -1.0});
    }
    const double cycle_end_s = cycle_start_s + period_s;
    for (; index < count; ++index) {
      const double t = static_cast<double>(index) * dt;
      if (t >= cycle_end_s) break;
      double value = piecewise_value(points, period_s, t - cycle_start_s);
      if (ringing) {
        while (!edges.empty() && t - edges.front().time_s > ring_span_s) edges.pop_front();
        for (const Edge& edge : edges) {
          const double since = t - edge.time_s;
          if (since <= 0.0) continue;
          value += edge.sign * ring_amplitude * std::exp(-ring_alpha * since) * std::sin(ring_omega * since);
        }
      }
      waveform.samples[index] = value;
    }
    cycle_start_s = cycle_end_s;
  }
  return waveform;
}

LineSpectrum trapezoid_spectrum(const SwitchingSpec& spec, double amplitude, bool with_ringing,
                                Quantity quantity, double max_frequency_hz) {
  validate_switching(spec);
  if (!(max_frequency_hz > 0.0)) throw Error("maximum frequency must be positive");
  const double count_real = std::floor(max_frequency_hz / spec.frequency_hz + 1e-9);
  // Checked before the harmonics are allocated (issue 14: "3 Hz" took more than 9 GB).
  if (count_real > static_cast<double>(max_harmonic_count)) {
    throw Error(spec.frequency_where,
                "expected a switching frequency of at least " +
                    format_quantity(max_frequency_hz / static_cast<double>(max_harmonic_count), Dimension::frequency) +
                    " (harmonics are computed up to " + format_quantity(max_frequency_hz, Dimension::frequency) +
                    ", at most " + std::to_string(max_harmonic_count) + " of them), found " +
                    format_quantity(spec.frequency_hz, Dimension::frequency));
  }
  const auto count = static_cast<std::size_t>(count_real);
  const double period_s = spec.period_s();
  LineSpectrum spectrum =
      piecewise_linear_series(breakpoints_for_period(spec, amplitude, period_s), period_s, count, quantity);
  if (with_ringing && spec.ringing && spec.ringing->relative_amplitude > 0.0) {
    const double a = spec.ringing->relative_amplitude * amplitude;
    const EdgeEnds ends = edge_ends(spec, period_s);
    for (std::size_t i = 0; i < count; ++i) {
      const double omega = two_pi * spectrum.frequency_hz(i);
      const cd tail = ringing_transform(*spec.ringing, omega);
      const cd c = a * tail / period_s *
                   (std::polar(1.0, -omega * ends.rising_end_s) - std::polar(1.0, -omega * ends.falling_end_s));
      spectrum.harmonics[i] += std::sqrt(2.0) * c;  // RMS phasor = √2·c_k
    }
    // The two tails' mean values cancel (equal and opposite), so the DC term is unchanged.
  }
  return spectrum;
}

}  // namespace

std::optional<SwitchingProblem> switching_problem(const SwitchingSpec& spec) {
  const auto problem = [](std::string key, std::string message) {
    return std::optional<SwitchingProblem>(SwitchingProblem{std::move(key), std::move(message)});
  };
  if (!(spec.frequency_hz > 0.0) || !std::isfinite(spec.frequency_hz)) {
    return problem("frequency", "switching frequency must be positive, found " + number_text(spec.frequency_hz) + " Hz");
  }
  if (!(spec.duty > 0.0 && spec.duty < 1.0)) {
    return problem("duty", "duty must be in (0, 1), found " + number_text(spec.duty));
  }
  if (spec.amplitude_v < 0.0 || !std::isfinite(spec.amplitude_v)) {
    return problem("amplitude", "amplitude must not be negative, found " + number_text(spec.amplitude_v) + " V");
  }
  if (spec.current_a < 0.0 || !std::isfinite(spec.current_a)) {
    return problem("current", "current must not be negative, found " + number_text(spec.current_a) + " A");
  }
  // Upper bounds: beyond them the derived levels overflow (max_amplitude_v, source.hpp).
  if (spec.amplitude_v > max_amplitude_v) {
    return problem("amplitude", "expected an amplitude of at most " + format_quantity(max_amplitude_v, Dimension::voltage) +
                                    " (beyond any power converter; larger swings overflow the levels), found " +
                                    found_text(spec.amplitude_v, Dimension::voltage, "V"));
  }
  if (spec.current_a > max_current_a) {
    return problem("current", "expected a current of at most " + format_quantity(max_current_a, Dimension::current) +
                                  " (beyond any power converter; larger currents overflow the levels), found " +
                                  found_text(spec.current_a, Dimension::current, "A"));
  }
  if (spec.rise_s < 0.0 || spec.fall_s < 0.0) {
    return problem(spec.rise_s < 0.0 ? "rise" : "fall", "rise and fall times must not be negative");
  }
  const double period_s = spec.period_s();
  const double edges_s = spec.rise_s + spec.fall_s;
  if (edges_s >= period_s) {
    return problem("fall", "rise + fall (" + format_quantity(edges_s, Dimension::time) + ") is longer than the period (" +
                format_quantity(period_s, Dimension::time) + ")");
  }
  // With 50 % points τ apart, each ramp extends half its length either side: the plateau and
  // the off time must stay non-negative.
  const double width_s = spec.duty * period_s;
  if (edges_s / 2.0 > width_s + 1e-18) {
    return problem("duty", "the edges do not fit in the on time: (rise + fall)/2 = " +
                format_quantity(edges_s / 2.0, Dimension::time) + " exceeds duty x period = " +
                format_quantity(width_s, Dimension::time));
  }
  if (edges_s / 2.0 > period_s - width_s + 1e-18) {
    return problem("duty", "the edges do not fit in the off time: (rise + fall)/2 = " +
                format_quantity(edges_s / 2.0, Dimension::time) + " exceeds (1 - duty) x period = " +
                format_quantity(period_s - width_s, Dimension::time));
  }
  if (spec.ringing) {
    const RingingSpec& r = *spec.ringing;
    if (!(r.frequency_hz > 0.0)) return problem("ringing.frequency", "ringing frequency must be positive");
    if (!(r.decay_s > 0.0)) return problem("ringing.decay", "ringing decay must be positive");
    if (r.relative_amplitude < 0.0) return problem("ringing.amplitude", "ringing amplitude must not be negative");
    if (r.relative_amplitude > max_ringing_relative_amplitude) {
      return problem("ringing.amplitude", "expected a ringing amplitude of at most " +
                                              number_text(max_ringing_relative_amplitude) +
                                              " times the edge step (a real overshoot is below 1), found " +
                                              number_text(r.relative_amplitude));
    }
  }
  if (spec.dither) {
    const DitherSpec& d = *spec.dither;
    if (!(d.deviation_fraction > 0.0 && d.deviation_fraction < 0.5)) {
      return problem("dither.deviation", "dither deviation must be in (0, 50 %), found " + format_quantity(d.deviation_fraction, Dimension::fraction));
    }
    if (!(d.rate_hz > 0.0)) return problem("dither.rate", "dither rate must be positive");
    if (d.rate_hz >= spec.frequency_hz / 2.0) {
      return problem("dither.rate", "dither rate must be below half the switching frequency");
    }
  }
  return std::nullopt;
}

void validate_switching(const SwitchingSpec& spec) {
  if (const auto problem = switching_problem(spec)) throw Error(problem->message);
}

SwitchingSpec read_switching_section(TableReader& reader) {
  SwitchingSpec spec;
  spec.frequency_hz = reader.required_quantity("frequency", Dimension::frequency);
  spec.frequency_where = reader.position("frequency");
  spec.duty = reader.required_quantity("duty", Dimension::fraction);
  spec.amplitude_v = reader.required_quantity("amplitude", Dimension::voltage);
  spec.current_a = reader.required_quantity("current", Dimension::current);
  auto edge = [&](const char* key, const char* key_10_90) {
    const bool plain = reader.has(key);
    const bool ten_ninety = reader.has(key_10_90);
    if (plain && ten_ninety) {
      reader.fail(key_10_90, std::string("give either '") + key + "' (0-100 %) or '" + key_10_90 + "', not both");
    }
    if (ten_ninety) return reader.required_quantity(key_10_90, Dimension::time) / 0.8;  // Paul §3.2
    return reader.required_quantity(key, Dimension::time);
  };
  spec.rise_s = edge("rise", "rise_10_90");
  spec.fall_s = edge("fall", "fall_10_90");
  if (const toml::table* ringing = reader.optional_table("ringing")) {
    TableReader r(*ringing, reader.file(), reader.where() + ".ringing");
    RingingSpec spec_r;
    spec_r.frequency_hz = r.required_quantity("frequency", Dimension::frequency);
    spec_r.decay_s = r.required_quantity("decay", Dimension::time);
    spec_r.relative_amplitude = r.required_quantity("amplitude", Dimension::fraction);
    r.finish({"frequency", "decay", "amplitude"});
    spec.ringing = spec_r;
  }
  if (const toml::table* dither = reader.optional_table("dither")) {
    TableReader d(*dither, reader.file(), reader.where() + ".dither");
    DitherSpec spec_d;
    spec_d.profile = d.required_choice("profile", {"triangle", "sine"}) == "sine" ? DitherProfile::sine
                                                                                : DitherProfile::triangle;
    spec_d.deviation_fraction = d.required_quantity("deviation", Dimension::fraction);
    spec_d.rate_hz = d.required_quantity("rate", Dimension::frequency);
    spec_d.rate_where = d.position("rate");
    spec_d.where = reader.position("dither");
    d.finish({"profile", "deviation", "rate"});
    spec.dither = spec_d;
  }
  reader.finish({"frequency", "duty", "amplitude", "current", "rise", "fall", "rise_10_90", "fall_10_90",
                 "ringing", "dither"});
  if (const auto problem = switching_problem(spec)) {
    // At the key's value: "rise" stands for "rise_10_90" too, "ringing.decay" is in a sub-table.
    std::string key = problem->key;
    if ((key == "rise" || key == "fall") && reader.has(key + "_10_90")) key += "_10_90";
    const std::size_t dot = key.find('.');
    if (dot == std::string::npos) reader.fail(key, problem->message);
    const toml::node* table = reader.node(key.substr(0, dot));
    const toml::node* value =
        table != nullptr && table->as_table() != nullptr ? table->as_table()->get(key.substr(dot + 1)) : nullptr;
    throw Error(value != nullptr ? position_of(*value, reader.file()) : reader.table_position(), problem->message);
  }
  return spec;
}

LineSpectrum piecewise_linear_series(const std::vector<Breakpoint>& points, double period_s,
                                     std::size_t harmonic_count, Quantity quantity) {
  if (points.size() < 2) throw Error("a piecewise-linear waveform needs at least two points");
  if (!(period_s > 0.0)) throw Error("period must be positive");
  for (std::size_t i = 0; i < points.size(); ++i) {
    if (points[i].time_s < 0.0 || points[i].time_s >= period_s ||
        (i > 0 && points[i].time_s < points[i - 1].time_s)) {
      throw Error("breakpoints must be sorted within one period");
    }
  }
  // Group coincident times into one node with an entry and an exit value (a jump).
  struct Node {
    double time_s;
    double in;
    double out;
  };
  std::vector<Node> nodes;
  for (const Breakpoint& p : points) {
    if (!nodes.empty() && p.time_s - nodes.back().time_s <= 1e-15 * period_s) {
      nodes.back().out = p.value;
    } else {
      nodes.push_back({p.time_s, p.value, p.value});
    }
  }
  const std::size_t n = nodes.size();
  // Segment g runs from node g (its exit value) to node g+1 (its entry value), wrapping.
  std::vector<double> slope(n);
  double area = 0.0;
  for (std::size_t g = 0; g < n; ++g) {
    const Node& a = nodes[g];
    const Node& b = nodes[(g + 1) % n];
    const double span = (g + 1 < n ? b.time_s : b.time_s + period_s) - a.time_s;
    if (span <= 0.0) {
      throw Error("breakpoints span less than a period");
    }
    slope[g] = (b.in - a.out) / span;
    area += 0.5 * (a.out + b.in) * span;
  }
  LineSpectrum spectrum;
  spectrum.quantity = quantity;
  spectrum.fundamental_hz = 1.0 / period_s;
  spectrum.dc = area / period_s;
  spectrum.harmonics.resize(harmonic_count);
  // c_k = (1/T)∫x·e^{−jωt}: twice by parts, with jumps J_g and slope changes Δs_g at t_g:
  //   c_k = Σ J_g·e^{−jωt_g}/(jωT) + Σ Δs_g·e^{−jωt_g}/((jω)²T).
  std::vector<double> jump(n), slope_change(n);
  for (std::size_t g = 0; g < n; ++g) {
    jump[g] = nodes[g].out - nodes[g].in;
    slope_change[g] = slope[g] - slope[(g + n - 1) % n];
  }
  for (std::size_t k = 1; k <= harmonic_count; ++k) {
    const double omega = two_pi * static_cast<double>(k) / period_s;
    cd sum_jump = 0.0;
    cd sum_slope = 0.0;
    for (std::size_t g = 0; g < n; ++g) {
      const cd phase = std::polar(1.0, -omega * nodes[g].time_s);
      sum_jump += jump[g] * phase;
      sum_slope += slope_change[g] * phase;
    }
    const cd c = sum_jump / (cd(0.0, omega) * period_s) - sum_slope / (omega * omega * period_s);
    spectrum.harmonics[k - 1] = std::sqrt(2.0) * c;  // one-sided RMS phasor
  }
  return spectrum;
}

std::vector<Breakpoint> trapezoid_breakpoints(const SwitchingSpec& spec, double amplitude) {
  validate_switching(spec);
  return breakpoints_for_period(spec, amplitude, spec.period_s());
}

LineSpectrum switch_node_spectrum(const SwitchingSpec& spec, double max_frequency_hz) {
  return trapezoid_spectrum(spec, spec.amplitude_v, true, Quantity::voltage, max_frequency_hz);
}

LineSpectrum input_current_spectrum(const SwitchingSpec& spec, double max_frequency_hz) {
  return trapezoid_spectrum(spec, spec.current_a, false, Quantity::current, max_frequency_hz);
}

TrapezoidCorners trapezoid_corners(const SwitchingSpec& spec) {
  const double width_s = spec.duty * spec.period_s();
  const double edge_s = std::min(spec.rise_s, spec.fall_s);
  return {1.0 / (std::numbers::pi * width_s),
          edge_s > 0.0 ? 1.0 / (std::numbers::pi * edge_s) : std::numeric_limits<double>::infinity()};
}

double trapezoid_envelope_rms(const SwitchingSpec& spec, double amplitude, double frequency_hz) {
  const TrapezoidCorners corners = trapezoid_corners(spec);
  double bound = 2.0 * amplitude * spec.duty;  // one-sided peak, flat part (Paul §3.2)
  if (frequency_hz > corners.first_hz) bound *= corners.first_hz / frequency_hz;
  if (frequency_hz > corners.second_hz) bound *= corners.second_hz / frequency_hz;
  return bound / std::sqrt(2.0);
}

Waveform synthesize_switch_node(const SwitchingSpec& spec, double sample_rate_hz, double duration_s) {
  validate_switching(spec);
  return synthesize(spec, spec.amplitude_v, true, Quantity::voltage, sample_rate_hz, duration_s);
}

Waveform synthesize_input_current(const SwitchingSpec& spec, double sample_rate_hz, double duration_s) {
  validate_switching(spec);
  return synthesize(spec, spec.current_a, false, Quantity::current, sample_rate_hz, duration_s);
}

}  // namespace spurcast
