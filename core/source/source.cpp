#include "core/source/source.hpp"

#include <fftw3.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <bit>
#include <deque>
#include <mutex>
#include <limits>
#include <numbers>

#include "core/input/error.hpp"
#include "core/input/units.hpp"
#include "core/source/fftw_lock.hpp"

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

/// One period of the input current (input_current_breakpoints, source.hpp).
std::vector<Breakpoint> current_breakpoints_for_period(const SwitchingSpec& spec, double period_s) {
  const double ripple = spec.current_ripple_a;
  const double on_start_s = spec.rise_s / 2.0;
  const double on_end_s = on_start_s + spec.duty * period_s;
  if (spec.input_current_shape == InputCurrentShape::triangular) {
    // Boost inductor current in continuous conduction: rises by the ripple while the switch is on,
    // falls back while it is off (Erickson & Maksimović, Fundamentals of Power Electronics, 2nd
    // ed., §2.2); the mean is current_a.
    // Its minimum sits at the cycle start (where the switch begins to turn on), so that cycles of
    // different lengths (dither) meet at the same value.
    return {{0.0, spec.current_a - ripple / 2.0}, {spec.duty * period_s, spec.current_a + ripple / 2.0}};
  }
  if (ripple == 0.0) return breakpoints_for_period(spec, spec.current_a, period_s);
  // The pulse follows the inductor (or magnetising) current's ramp i(t) through (on_start,
  // I − ΔI/2) and (on_end, I + ΔI/2) between the edges (Erickson & Maksimović §2.2, Fig. 2.10);
  // the edges ramp from and to zero with the switch node's timing.
  const auto ramp = [&](double t) { return spec.current_a - ripple / 2.0 + ripple * (t - on_start_s) / (on_end_s - on_start_s); };
  const double fall_start_s = on_end_s - spec.fall_s / 2.0;
  return {{0.0, 0.0}, {spec.rise_s, ramp(spec.rise_s)}, {fall_start_s, ramp(fall_start_s)}, {fall_start_s + spec.fall_s, 0.0}};
}

/// A period of the voltage (trapezoid of `amplitude`) or of the input current.
std::vector<Breakpoint> period_breakpoints(const SwitchingSpec& spec, Quantity quantity, double amplitude,
                                           double period_s) {
  if (quantity == Quantity::current) return current_breakpoints_for_period(spec, period_s);
  return breakpoints_for_period(spec, amplitude, period_s);
}

/// A jump and a change of slope of a periodic piecewise-linear waveform at time_s in [0, period).
struct PeriodicKink {
  double time_s;
  double jump;
  double slope_change_per_s;
};
/// The kinks of the waveform through `points` (sorted, within one period; coincident times make a
/// jump), the last segment joining the last point to the first one a period later: as in
/// piecewise_linear_series.
/// Breakpoints grouped by time: coincident times make one node with an entry and an exit value (a
/// jump). Segment g runs from node g (its exit value) to node g+1 (its entry value), wrapping.
struct PeriodicNode {
  double time_s;
  double in;
  double out;
};
std::vector<PeriodicNode> periodic_nodes(const std::vector<Breakpoint>& points, double period_s) {
  std::vector<PeriodicNode> nodes;
  for (const Breakpoint& p : points) {
    if (!nodes.empty() && p.time_s - nodes.back().time_s <= 1e-15 * period_s) {
      nodes.back().out = p.value;
    } else {
      nodes.push_back({p.time_s, p.value, p.value});
    }
  }
  return nodes;
}

std::vector<PeriodicKink> periodic_kinks(const std::vector<Breakpoint>& points, double period_s) {
  const std::vector<PeriodicNode> nodes = periodic_nodes(points, period_s);
  const std::size_t n = nodes.size();
  std::vector<double> slope(n);
  for (std::size_t g = 0; g < n; ++g) {
    const PeriodicNode& a = nodes[g];
    const PeriodicNode& b = nodes[(g + 1) % n];
    const double span = (g + 1 < n ? b.time_s : b.time_s + period_s) - a.time_s;
    slope[g] = span > 0.0 ? (b.in - a.out) / span : 0.0;
  }
  std::vector<PeriodicKink> kinks;
  for (std::size_t g = 0; g < n; ++g) {
    kinks.push_back({nodes[g].time_s, nodes[g].out - nodes[g].in, slope[g] - slope[(g + n - 1) % n]});
  }
  return kinks;
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

/// Slope at time t in [0, period) of the same waveform (of the segment that holds t).
double piecewise_slope(const std::vector<Breakpoint>& points, double period_s, double t) {
  const std::size_t n = points.size();
  for (std::size_t i = 0; i + 1 < n; ++i) {
    if (t < points[i + 1].time_s) {
      if (t < points[i].time_s) break;
      const double span = points[i + 1].time_s - points[i].time_s;
      return span > 0.0 ? (points[i + 1].value - points[i].value) / span : 0.0;
    }
  }
  const Breakpoint& last = points.back();
  const Breakpoint& first = points.front();
  const double span = first.time_s + period_s - last.time_s;
  return span > 0.0 ? (first.value - last.value) / span : 0.0;
}

/// The band-limiting kernel of synthesized records, in units of the sample interval: a windowed
/// sinc k(u) = sinc(u)·w(u/L), cutoff at half the sample rate, Kaiser window of half-length L
/// samples, scaled to unit area (unit gain at DC). Kaiser's design formulas (Oppenheim & Schafer,
/// Discrete-Time Signal Processing, Kaiser-window design, §7.5 of the 3rd ed., from memory):
/// β = 0.1102·(A − 8.7) for A > 50 dB and length M = (A − 8)/(2.285·Δω); with A = 100 dB and the
/// transition 0.4–0.6 of the sample rate (Δω = 0.4π) M = 32.0, so L = 17 samples.
/// docs/references.md, other methods.
constexpr double kernel_half_length = 17.0;
constexpr double kernel_beta = 0.1102 * (band_limit_stopband_db - 8.7);
/// Table points per sample interval: linear and Hermite interpolation between them is accurate to
/// about 1e-7 of the step (R'' = k ≤ 1: Δ²/8 with Δ = 1/1024), far below the 1e-5 stopband.
constexpr int kernel_grid = 1024;

/// I0, the modified Bessel function of order 0, by its power series Σ ((x/2)^k / k!)² (terms
/// fall fast for the x ≤ 11 of the window).
double bessel_i0(double x) {
  double term = 1.0;
  double sum = 1.0;
  const double q = 0.25 * x * x;
  for (int k = 1; k < 200 && term > 1e-17 * sum; ++k) {
    term *= q / (static_cast<double>(k) * static_cast<double>(k));
    sum += term;
  }
  return sum;
}

/// (e^z − 1)/z and (e^z − 1 − z)/z², by their series near 0 where the direct forms cancel.
cd phi1(cd z) {
  if (std::abs(z) < 0.1) return 1.0 + z * (0.5 + z * (1.0 / 6.0 + z * (1.0 / 24.0 + z * (1.0 / 120.0 + z / 720.0))));
  return (std::exp(z) - 1.0) / z;
}
cd phi2(cd z) {
  if (std::abs(z) < 0.1) {
    return 0.5 + z * (1.0 / 6.0 + z * (1.0 / 24.0 + z * (1.0 / 120.0 + z * (1.0 / 720.0 + z / 5040.0))));
  }
  return (std::exp(z) - 1.0 - z) / (z * z);
}

/// The band-limited record is the ideal waveform convolved with the kernel, then sampled: an
/// ideal step becomes ∫k (a band-limited step), a ramp ∫k(s)(u − s)ds and a ringing tail
/// Im ∫k(s)·e^{q(u−s)}ds. Each differs from the ideal only within ±L samples of its start (the
/// ringing: after it, by a constant complex factor), so the record is the point-sampled waveform
/// plus these residuals near each breakpoint (the technique of band-limited steps and ramps).
class BandLimit {
 public:
  /// `ring_pole` = (−1/decay + j·2π·f_ring) × sample interval, or none without ringing.
  explicit BandLimit(std::optional<cd> ring_pole) : ring_pole_(ring_pole) {
    const auto n = static_cast<std::size_t>(2.0 * kernel_half_length * kernel_grid);
    const double du = 1.0 / kernel_grid;
    const auto kernel = [](double u) {
      const double r = u / kernel_half_length;
      const double window = bessel_i0(kernel_beta * std::sqrt(std::max(0.0, 1.0 - r * r))) / bessel_i0(kernel_beta);
      const double x = std::numbers::pi * u;
      return (std::fabs(x) < 1e-12 ? 1.0 : std::sin(x) / x) * window;
    };
    k_.resize(n + 1);
    step_.assign(n + 1, 0.0);
    first_moment_.assign(n + 1, 0.0);
    for (std::size_t i = 0; i <= n; ++i) k_[i] = kernel(u_at(i));
    // Cumulative integrals by Simpson's rule on each table interval (with its midpoint).
    for (std::size_t i = 0; i < n; ++i) {
      const double u = u_at(i);
      const double mid = u + 0.5 * du;
      const double k_mid = kernel(mid);
      step_[i + 1] = step_[i] + du / 6.0 * (k_[i] + 4.0 * k_mid + k_[i + 1]);
      first_moment_[i + 1] = first_moment_[i] + du / 6.0 * (u * k_[i] + 4.0 * mid * k_mid + (u + du) * k_[i + 1]);
    }
    // Unit area, so the band-limited step settles at 1 and the ramp's residual ends at 0.
    const double area = step_[n];
    for (std::size_t i = 0; i <= n; ++i) {
      k_[i] /= area;
      step_[i] /= area;
      first_moment_[i] /= area;
    }
    if (ring_pole_) {
      // D(u) = ∫_{−L}^{u} k(s)·e^{q(u−s)} ds obeys D' = k + q·D; stepped exactly for k linear
      // on each interval (|e^{qΔ}| ≤ 1, so no growth for any decay).
      const cd q = *ring_pole_;
      const cd decay = std::exp(q * du);
      const cd g1 = du * phi1(q * du);
      const cd g2 = du * du * phi2(q * du);
      ring_.assign(n + 1, 0.0);
      for (std::size_t i = 0; i < n; ++i) {
        const double slope = (k_[i + 1] - k_[i]) / du;
        // ∫_0^Δ (k_i + slope·v)·e^{q(Δ−v)} dv with ∫_0^Δ e^{q(Δ−v)} dv = Δ·φ1(qΔ) and
        // ∫_0^Δ v·e^{q(Δ−v)} dv = Δ²·φ2(qΔ).
        ring_[i + 1] = decay * ring_[i] + k_[i] * g1 + slope * g2;
      }
    }
  }

  /// Band-limited unit step minus the ideal one (1 from u = 0 on), u in samples.
  [[nodiscard]] double step_residual(double u) const {
    if (u <= -kernel_half_length || u >= kernel_half_length) return 0.0;
    return hermite(step_, k_, u) - (u >= 0.0 ? 1.0 : 0.0);
  }
  /// Band-limited unit ramp minus the ideal one (u from u = 0 on), in samples.
  [[nodiscard]] double ramp_residual(double u) const {
    if (u <= -kernel_half_length || u >= kernel_half_length) return 0.0;
    // u·∫k − ∫s·k: derivative ∫k, both tabulated.
    const std::size_t i = index_at(u);
    const double d = u - u_at(i);
    const double du = 1.0 / kernel_grid;
    const auto value = [&](std::size_t j) { return u_at(j) * step_[j] - first_moment_[j]; };
    return hermite_segment(value(i), value(i + 1), step_[i], step_[i + 1], d, du) - std::max(u, 0.0);
  }
  /// The band-limited ringing tail e^{q·u} (from u = 0 on; its imaginary part is the tail of
  /// RingingSpec), u in samples; 0 before −L.
  [[nodiscard]] cd tail(double u) const {
    if (u <= -kernel_half_length) return 0.0;
    const cd q = *ring_pole_;
    if (u >= kernel_half_length) return std::exp(q * (u - kernel_half_length)) * ring_.back();
    const std::size_t i = index_at(u);
    const double d = u - u_at(i);
    const double slope = (k_[i + 1] - k_[i]) * kernel_grid;
    return std::exp(q * d) * ring_[i] + k_[i] * d * phi1(q * d) + slope * d * d * phi2(q * d);
  }

 private:
  [[nodiscard]] static double u_at(std::size_t i) {
    return -kernel_half_length + static_cast<double>(i) / kernel_grid;
  }
  [[nodiscard]] std::size_t index_at(double u) const {
    const auto i = static_cast<std::size_t>((u + kernel_half_length) * kernel_grid);
    return std::min(i, k_.size() - 2);
  }
  /// Cubic Hermite interpolation on one interval of length h from values and derivatives.
  [[nodiscard]] static double hermite_segment(double y0, double y1, double d0, double d1, double t, double h) {
    const double s = t / h;
    const double s2 = s * s;
    const double s3 = s2 * s;
    return (2.0 * s3 - 3.0 * s2 + 1.0) * y0 + (s3 - 2.0 * s2 + s) * h * d0 + (-2.0 * s3 + 3.0 * s2) * y1 +
           (s3 - s2) * h * d1;
  }
  [[nodiscard]] double hermite(const std::vector<double>& y, const std::vector<double>& dy, double u) const {
    const std::size_t i = index_at(u);
    return hermite_segment(y[i], y[i + 1], dy[i], dy[i + 1], u - u_at(i), 1.0 / kernel_grid);
  }

  std::optional<cd> ring_pole_;
  std::vector<double> k_;             ///< kernel on the grid
  std::vector<double> step_;          ///< ∫_{−L}^{u} k
  std::vector<double> first_moment_;  ///< ∫_{−L}^{u} s·k(s) ds
  std::vector<cd> ring_;              ///< D(u)
};

struct DitherCycle {
  double start_s;
  double period_s;
};
std::vector<DitherCycle> dither_cycles(const SwitchingSpec& spec, const DitherRepeat& repeat);

Waveform synthesize(const SwitchingSpec& spec, double amplitude, const std::optional<RingingSpec>& ringing_spec,
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

  const double dt = 1.0 / sample_rate_hz;
  const double record_s = static_cast<double>(count) * dt;
  // The switch-node trapezoid, or an input current whose shape [converter] changed (source.hpp).
  const bool is_trapezoid = quantity == Quantity::voltage || (spec.input_current_shape == InputCurrentShape::pulsed &&
                                                              spec.current_ripple_a == 0.0);
  const bool ringing = ringing_spec && ringing_spec->relative_amplitude > 0.0;
  const double ring_amplitude = ringing ? ringing_spec->relative_amplitude * amplitude : 0.0;
  const cd ring_pole_per_s = ringing ? cd(-1.0 / ringing_spec->decay_s, two_pi * ringing_spec->frequency_hz) : cd(0.0);
  const BandLimit band_limit(ringing ? std::optional<cd>(ring_pole_per_s * dt) : std::nullopt);
  // A tail is negligible 40 decay times after its start (e^-40 ≈ 4e-18), and the kernel reaches
  // L samples either side of a breakpoint.
  const double tail_s = ringing ? 40.0 * ringing_spec->decay_s : 0.0;
  const double kernel_span_s = kernel_half_length * dt;

  // The receiver takes the record as one period of a periodic signal (receiver.hpp), so the
  // record is made the band-limited samples of that periodic signal: before t = 0 it continues
  // with the record's end, and after its last sample with its start. Where the two meet (a
  // dithered record holds whole modulation periods but rarely whole switching cycles) the
  // periodic signal steps from the end's value and slope to the start's, and the end's ringing
  // is cut off: those are breakpoints like any other, band-limited the same way, so nothing of
  // the join folds either.
  //
  // Breakpoints are kept as (cycle start, offset in the cycle), and every comparison with a
  // sample time is made on t − cycle start, so the point-sampled value and the residuals agree
  // on which side of a jump a sample falls.
  struct Kink {  // a jump and a change of slope at start_s + offset_s
    double start_s;
    double offset_s;
    double jump;
    double slope_change_per_s;
  };
  struct Tail {  // a ringing tail Im(coefficient·e^{p·τ}) from start_s + offset_s on
    double start_s;
    double offset_s;
    cd coefficient;
  };
  struct Cycle {
    double start_s;
    double period_s;
    std::vector<Breakpoint> points;
  };
  // A dither that repeats (dither_repeat) takes the cycles of its repeat, laid end to end, so a
  // record of whole repeats is exactly periodic and joins seamlessly, and its samples are those of
  // the waveform whose exact lines dithered_*_lines() gives.
  const std::optional<DitherRepeat> repeat = spec.dither ? dither_repeat(spec) : std::nullopt;
  std::vector<double> repeat_starts_s, repeat_periods_s;
  if (repeat) {
    for (const DitherCycle& c : dither_cycles(spec, *repeat)) {
      repeat_starts_s.push_back(c.start_s);
      repeat_periods_s.push_back(c.period_s);
    }
  }
  const auto period_at = [&](double start_s) {
    if (repeat) {
      // The cycle of the repeat nearest to start_s (start_s is a sum of earlier periods, so it
      // sits on a cycle start up to rounding).
      const double t = start_s - std::floor(start_s / repeat->period_s) * repeat->period_s;
      auto it = std::upper_bound(repeat_starts_s.begin(), repeat_starts_s.end(), t);
      std::size_t i = it == repeat_starts_s.begin() ? 0 : static_cast<std::size_t>(it - repeat_starts_s.begin()) - 1;
      const double to_next = (i + 1 < repeat_starts_s.size() ? repeat_starts_s[i + 1] : repeat->period_s) - t;
      if (to_next < 0.5 * repeat_periods_s[i]) i = (i + 1) % repeat_starts_s.size();
      return repeat_periods_s[i];
    }
    double frequency_hz = spec.frequency_hz;
    // The controller's oscillator sets each period from the modulation at the cycle start.
    if (spec.dither) frequency_hz *= 1.0 + spec.dither->deviation_fraction * dither_profile(*spec.dither, start_s);
    return 1.0 / frequency_hz;
  };
  std::deque<Kink> kinks;
  std::deque<Tail> tails;
  /// The breakpoints and ringing starts of the cycle at `start_s` (its own time base) that fall
  /// within [from_s, to_s), placed `shift_s` later.
  const auto add_breakpoints = [&](double start_s, double period_s, double from_s, double to_s, double shift_s) {
    const std::vector<Breakpoint> p = period_breakpoints(spec, quantity, amplitude, period_s);
    const auto kink = [&](double offset_s, double jump, double slope_change_per_s) {
      const double t = start_s + offset_s;
      if (t >= from_s && t < to_s) kinks.push_back({start_s + shift_s, offset_s, jump, slope_change_per_s});
    };
    if (ringing) {
      // Each tail in its own deque, in time order like the kinks.
      const EdgeEnds ends = edge_ends(spec, period_s);
      for (const auto& [offset_s, sign] : {std::pair{ends.rising_end_s, 1.0}, std::pair{ends.falling_end_s, -1.0}}) {
        const double t = start_s + offset_s;
        if (t >= from_s && t < to_s) tails.push_back({start_s + shift_s, offset_s, cd(sign * ring_amplitude)});
      }
    }
    if (!is_trapezoid) {
      // Another input-current shape ([converter]): every node's jump and change of slope.
      for (const PeriodicKink& k : periodic_kinks(p, period_s)) kink(k.time_s, k.jump, k.slope_change_per_s);
      return;
    }
    // The trapezoid 0 → A → A → 0: ramps (slope changes at both ends) or, for a zero edge, a jump.
    if (spec.rise_s > 0.0) {
      kink(p[0].time_s, 0.0, amplitude / spec.rise_s);
      kink(p[1].time_s, 0.0, -amplitude / spec.rise_s);
    } else {
      kink(p[0].time_s, amplitude, 0.0);
    }
    if (spec.fall_s > 0.0) {
      kink(p[2].time_s, 0.0, -amplitude / spec.fall_s);
      kink(p[3].time_s, 0.0, amplitude / spec.fall_s);
    } else {
      kink(p[2].time_s, -amplitude, 0.0);
    }
  };

  // One pass over the cycle starts (no samples): the cycles that reach into the record's last
  // kernel span and tail, and the value and slope of the trapezoid at its end.
  const double first_period_s = period_at(0.0);
  const double end_window_s = std::max(0.0, record_s - kernel_span_s - tail_s);
  std::vector<std::pair<double, double>> end_cycles;  // (start, period)
  {
    double start_s = 0.0;
    while (start_s < record_s) {
      const double period_s = period_at(start_s);
      if (start_s + period_s > end_window_s - period_s) end_cycles.emplace_back(start_s, period_s);
      start_s += period_s;
    }
  }
  const auto& [last_start_s, last_period_s] = end_cycles.back();
  const std::vector<Breakpoint> last_points = period_breakpoints(spec, quantity, amplitude, last_period_s);
  const double end_value = piecewise_value(last_points, last_period_s, record_s - last_start_s);
  const double end_slope_per_s = piecewise_slope(last_points, last_period_s, record_s - last_start_s);
  // The state just before the first cycle's first breakpoint: the trapezoid's off state (0, flat);
  // another input-current shape's wrap segment at t = 0 (a boost's falling ripple).
  const std::vector<Breakpoint> first_points = period_breakpoints(spec, quantity, amplitude, first_period_s);
  const double start_value = is_trapezoid ? 0.0 : first_points.front().value;
  const double start_slope_per_s = is_trapezoid ? 0.0 : piecewise_slope(first_points, first_period_s, first_period_s);
  // Ringing tails alive at the record's end, and those of the cycle before t = 0 (with the first
  // cycle's period, so a record of whole undithered periods joins seamlessly), as complex
  // amplitudes at the join.
  std::vector<cd> end_tails;
  std::vector<cd> previous_tails;
  if (ringing) {
    for (const auto& [start_s, period_s] : end_cycles) {
      const EdgeEnds ends = edge_ends(spec, period_s);
      for (const auto& [offset_s, sign] : {std::pair{ends.rising_end_s, 1.0}, std::pair{ends.falling_end_s, -1.0}}) {
        const double age_s = record_s - (start_s + offset_s);
        if (age_s > 0.0 && age_s < tail_s) end_tails.push_back(sign * ring_amplitude * std::exp(ring_pole_per_s * age_s));
      }
    }
    const EdgeEnds ends = edge_ends(spec, first_period_s);
    for (const auto& [offset_s, sign] : {std::pair{ends.rising_end_s, 1.0}, std::pair{ends.falling_end_s, -1.0}}) {
      const double age_s = first_period_s - offset_s;
      if (age_s > 0.0 && age_s < tail_s) previous_tails.push_back(sign * ring_amplitude * std::exp(ring_pole_per_s * age_s));
    }
  }
  /// The join at `at_s` (0 or the record's end): the trapezoid steps from the end's value and
  /// slope to the start's off state (0, flat), the end's tails stop and the previous cycle's go on.
  const auto add_join = [&](double at_s) {
    kinks.push_back({at_s, 0.0, start_value - end_value, start_slope_per_s - end_slope_per_s});
    for (const cd c : end_tails) tails.push_back({at_s, 0.0, -c});
    for (const cd c : previous_tails) tails.push_back({at_s, 0.0, c});
  };
  /// The record's first cycles (those within the kernel span of its start) placed `shift_s` later.
  const auto add_start_cycles = [&](double shift_s) {
    double start_s = 0.0;
    while (start_s < kernel_span_s && start_s < record_s) {
      const double period_s = period_at(start_s);
      add_breakpoints(start_s, period_s, 0.0, record_s, shift_s);
      start_s += period_s;
    }
  };

  // Before t = 0: the record's end, placed one record earlier, then the join.
  for (const auto& [start_s, period_s] : end_cycles) {
    add_breakpoints(start_s, period_s, end_window_s - kernel_span_s, record_s, -record_s);
  }
  add_join(0.0);

  std::deque<Cycle> cycles;
  double next_start_s = 0.0;
  bool wrapped = false;
  for (std::size_t index = 0; index < count; ++index) {
    const double t = static_cast<double>(index) * dt;
    // Cycles up to t + L samples (their breakpoints reach back through the kernel); past the
    // record's end, the join and the record's start.
    while (!wrapped) {
      if (next_start_s >= record_s) {
        if (record_s <= t + kernel_span_s) {
          add_join(record_s);
          add_start_cycles(record_s);
          wrapped = true;
        }
        break;
      }
      if (next_start_s > t + kernel_span_s) break;
      const double period_s = period_at(next_start_s);
      cycles.push_back({next_start_s, period_s, period_breakpoints(spec, quantity, amplitude, period_s)});
      add_breakpoints(next_start_s, period_s, 0.0, record_s, 0.0);
      next_start_s += period_s;
    }
    while (cycles.size() > 1 && t - cycles.front().start_s >= cycles.front().period_s) cycles.pop_front();
    while (!kinks.empty() && (t - kinks.front().start_s) - kinks.front().offset_s >= kernel_span_s) kinks.pop_front();
    while (!tails.empty() && (t - tails.front().start_s) - tails.front().offset_s > kernel_span_s + tail_s) {
      tails.pop_front();
    }
    const Cycle& cycle = cycles.front();
    double value = piecewise_value(cycle.points, cycle.period_s, t - cycle.start_s);
    for (const Kink& kink : kinks) {
      const double u = ((t - kink.start_s) - kink.offset_s) / dt;
      if (u <= -kernel_half_length) break;  // later breakpoints are later still
      if (kink.jump != 0.0) value += kink.jump * band_limit.step_residual(u);
      if (kink.slope_change_per_s != 0.0) value += kink.slope_change_per_s * dt * band_limit.ramp_residual(u);
    }
    for (const Tail& tail : tails) {
      const double u = ((t - tail.start_s) - tail.offset_s) / dt;
      if (u <= -kernel_half_length) break;
      value += (tail.coefficient * band_limit.tail(u)).imag();
    }
    waveform.samples[index] = value;
  }
  return waveform;
}

LineSpectrum trapezoid_spectrum(const SwitchingSpec& spec, double amplitude,
                                const std::optional<RingingSpec>& ringing, Quantity quantity,
                                double max_frequency_hz) {
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
      piecewise_linear_series(period_breakpoints(spec, quantity, amplitude, period_s), period_s, count, quantity);
  if (ringing && ringing->relative_amplitude > 0.0) {
    const double a = ringing->relative_amplitude * amplitude;
    const EdgeEnds ends = edge_ends(spec, period_s);
    for (std::size_t i = 0; i < count; ++i) {
      const double omega = two_pi * spectrum.frequency_hz(i);
      const cd tail = ringing_transform(*ringing, omega);
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
  // A pulse's ramp and a continuous triangle both stay at or above zero (continuous conduction).
  if (!(spec.current_ripple_a >= 0.0 && spec.current_ripple_a <= 2.0 * spec.current_a * (1.0 + 1e-12))) {
    return problem("inductor_ripple", "expected an inductor ripple from 0 to twice the current (" +
                                          format_quantity(2.0 * spec.current_a, Dimension::current) +
                                          ", continuous conduction), found " +
                                          found_text(spec.current_ripple_a, Dimension::current, "A"));
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
  for (const auto& [ringing, key] : {std::pair{&spec.ringing, std::string("ringing")},
                                      std::pair{&spec.current_ringing, std::string("current_ringing")}}) {
    if (!*ringing) continue;
    const RingingSpec& r = **ringing;
    if (!(r.frequency_hz > 0.0)) return problem(key + ".frequency", "ringing frequency must be positive");
    if (!(r.decay_s > 0.0)) return problem(key + ".decay", "ringing decay must be positive");
    if (r.relative_amplitude < 0.0) return problem(key + ".amplitude", "ringing amplitude must not be negative");
    if (r.relative_amplitude > max_ringing_relative_amplitude) {
      return problem(key + ".amplitude", "expected a ringing amplitude of at most " +
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
  // The voltage's ringing and the current's: the same three keys each.
  for (const auto& [key, target] : {std::pair{"ringing", &spec.ringing}, std::pair{"current_ringing", &spec.current_ringing}}) {
    const toml::table* ringing = reader.optional_table(key);
    if (ringing == nullptr) continue;
    TableReader r(*ringing, reader.file(), reader.where() + "." + key);
    RingingSpec spec_r;
    spec_r.frequency_hz = r.required_quantity("frequency", Dimension::frequency);
    spec_r.decay_s = r.required_quantity("decay", Dimension::time);
    spec_r.relative_amplitude = r.required_quantity("amplitude", Dimension::fraction);
    r.finish({"frequency", "decay", "amplitude"});
    *target = spec_r;
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
                 "ringing", "current_ringing", "dither"});
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
  const std::vector<PeriodicNode> nodes = periodic_nodes(points, period_s);
  const std::size_t n = nodes.size();
  std::vector<double> slope(n);
  double area = 0.0;
  for (std::size_t g = 0; g < n; ++g) {
    const PeriodicNode& a = nodes[g];
    const PeriodicNode& b = nodes[(g + 1) % n];
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

std::vector<Breakpoint> input_current_breakpoints(const SwitchingSpec& spec) {
  validate_switching(spec);
  return current_breakpoints_for_period(spec, spec.period_s());
}

LineSpectrum switch_node_spectrum(const SwitchingSpec& spec, double max_frequency_hz) {
  return trapezoid_spectrum(spec, spec.amplitude_v, spec.ringing, Quantity::voltage, max_frequency_hz);
}

LineSpectrum input_current_spectrum(const SwitchingSpec& spec, double max_frequency_hz) {
  return trapezoid_spectrum(spec, spec.current_a, spec.current_ringing, Quantity::current, max_frequency_hz);
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
  return synthesize(spec, spec.amplitude_v, spec.ringing, Quantity::voltage, sample_rate_hz, duration_s);
}

Waveform synthesize_input_current(const SwitchingSpec& spec, double sample_rate_hz, double duration_s) {
  validate_switching(spec);
  return synthesize(spec, spec.current_a, spec.current_ringing, Quantity::current, sample_rate_hz, duration_s);
}


// ---------------------------------------------------------------------------------------------
// Dithered sources as exact lines.

namespace {

/// The cycles of one repeat, as synthesize() lays them out (each period set by the modulation at
/// the cycle start), then scaled to fill the repeat exactly. The cycle-start rule is Euler's
/// method on the oscillator phase, whose integral over whole modulation periods is exactly
/// f0·M/rate cycles; the scale factor absorbs Euler's small drift.
std::vector<DitherCycle> dither_cycles(const SwitchingSpec& spec, const DitherRepeat& repeat) {
  std::vector<DitherCycle> cycles;
  cycles.reserve(repeat.cycle_count);
  double start_s = 0.0;
  for (std::size_t n = 0; n < repeat.cycle_count; ++n) {
    const double frequency_hz =
        spec.frequency_hz * (1.0 + spec.dither->deviation_fraction * dither_profile(*spec.dither, start_s));
    cycles.push_back({start_s, 1.0 / frequency_hz});
    start_s += 1.0 / frequency_hz;
  }
  const double scale = repeat.period_s / start_s;
  for (DitherCycle& c : cycles) {
    c.start_s *= scale;
    c.period_s *= scale;
  }
  return cycles;
}

/// Anchor spacing of the phase recurrence: every 512 harmonics the rotating phasor is recomputed
/// exactly, which keeps its rounding error below about 1e-13 (judgement).
constexpr std::size_t phasor_anchor_interval = 512;

/// For k = 1..count, sums Σ_g weight_g·exp(−j·2π·k·time_g/period) into sums[k − 1], one array per
/// weight column, by a rotating phasor per term (one complex multiply per term and harmonic).
void accumulate_phasor_sums(const std::vector<double>& times_s, const std::vector<std::array<double, 2>>& weights,
                            double period_s, std::size_t count, std::array<std::vector<cd>, 2>& sums) {
  for (auto& column : sums) column.assign(count, cd(0.0));
  std::vector<double> turns(times_s.size());
  std::vector<cd> rotations(times_s.size());
  for (std::size_t g = 0; g < times_s.size(); ++g) {
    turns[g] = times_s[g] / period_s;
    rotations[g] = std::polar(1.0, -two_pi * turns[g]);
  }
  // Harmonics in blocks of phasor_anchor_interval, every kink within a block: the block's sums stay
  // in the first-level cache instead of streaming the whole columns once per kink. Each block starts
  // from an exact anchor, the fractional turns of k·t/T, so the argument stays small.
  for (std::size_t first = 1; first <= count; first = (first / phasor_anchor_interval + 1) * phasor_anchor_interval) {
    const std::size_t last = std::min(count, (first / phasor_anchor_interval + 1) * phasor_anchor_interval - 1);
    cd* sum0 = sums[0].data() + (first - 1);
    cd* sum1 = sums[1].data() + (first - 1);
    const std::size_t length = last - first + 1;
    // Four kinks at a time: their phasor recurrences are independent chains the core overlaps.
    constexpr std::size_t lanes = 4;
    auto* s0 = reinterpret_cast<double*>(sum0);  // (re, im) pairs: [complex.numbers] array access
    auto* s1 = reinterpret_cast<double*>(sum1);
    for (std::size_t g0 = 0; g0 < times_s.size(); g0 += lanes) {
      double re[lanes] = {};
      double im[lanes] = {};
      double rot_re[lanes] = {};
      double rot_im[lanes] = {};
      double w0[lanes] = {};  // zero weights pad the last group
      double w1[lanes] = {};
      for (std::size_t l = 0; l < lanes && g0 + l < times_s.size(); ++l) {
        const std::size_t g = g0 + l;
        const double t = static_cast<double>(first) * turns[g];
        const cd anchor = std::polar(1.0, -two_pi * (t - std::floor(t)));
        re[l] = anchor.real();
        im[l] = anchor.imag();
        rot_re[l] = rotations[g].real();
        rot_im[l] = rotations[g].imag();
        w0[l] = weights[g][0];
        w1[l] = weights[g][1];
      }
      for (std::size_t j = 0; j < length; ++j) {
        double a_re = 0.0;
        double a_im = 0.0;
        double b_re = 0.0;
        double b_im = 0.0;
        for (std::size_t l = 0; l < lanes; ++l) {
          a_re += w0[l] * re[l];
          a_im += w0[l] * im[l];
          b_re += w1[l] * re[l];
          b_im += w1[l] * im[l];
          const double next_re = re[l] * rot_re[l] - im[l] * rot_im[l];
          im[l] = re[l] * rot_im[l] + im[l] * rot_re[l];
          re[l] = next_re;
        }
        s0[2 * j] += a_re;
        s0[2 * j + 1] += a_im;
        s1[2 * j] += b_re;
        s1[2 * j + 1] += b_im;
      }
    }
  }
}

/// Half-width of the Gaussian spreading kernel of gridded_phasor_sums, in grid points: 14. With an
/// oversampling R ≥ 2 the kernel is truncated below exp(−π·14·(R − 1/2)/R) ≈ 5e-15 of its peak
/// (Greengard & Lee 2004, §2: 12 points give about 12 digits at R = 2; from memory; judgement).
constexpr std::size_t gridding_half_width = 14;
/// The direct sum below this many kink-harmonic products (about a millisecond), the gridded one
/// above (judgement, from tests/bench/dither_bench).
constexpr double direct_phasor_sum_limit = 1 << 20;
/// Harmonics summed directly even when the rest are gridded: the first 64 (judgement).
constexpr std::size_t directly_summed_harmonics = 64;

/// The same sums as accumulate_phasor_sums, by the non-uniform FFT of type 1 with Gaussian
/// gridding (L. Greengard and J.-Y. Lee, "Accelerating the nonuniform fast Fourier transform",
/// SIAM Review 46(3), 2004, §2, from memory): each weight is spread onto a uniform grid of Mr
/// points over the period through a periodic Gaussian of variance 2τ, the grid is transformed by
/// FFTW, and the Gaussian's Fourier coefficient √(τ/π)·e^{−k²τ} is divided out. Cost O(G·28 + Mr
/// log Mr) against O(G·K) for the direct sum; agreement with the direct sum to about 1e-13 of Σ|w|
/// (tests/source/dithered_lines_test.cpp against numpy).
void gridded_phasor_sums(const std::vector<double>& times_s, const std::vector<std::array<double, 2>>& weights,
                         double period_s, std::size_t count, std::array<std::vector<cd>, 2>& sums) {
  const std::size_t modes = 2 * count + 2;  // k = −modes/2 .. modes/2 − 1 covers 1..count
  const std::size_t grid = std::bit_ceil(2 * modes);
  const double oversampling = static_cast<double>(grid) / static_cast<double>(modes);
  const double m = static_cast<double>(modes);
  const double tau = std::numbers::pi * static_cast<double>(gridding_half_width) /
                     (m * m * oversampling * (oversampling - 0.5));
  const double spacing = two_pi / static_cast<double>(grid);
  const auto grid_n = static_cast<std::ptrdiff_t>(grid);

  double* f0 = fftw_alloc_real(grid);
  double* f1 = fftw_alloc_real(grid);
  fftw_complex* out = fftw_alloc_complex(grid / 2 + 1);
  std::fill(f0, f0 + grid, 0.0);
  std::fill(f1, f1 + grid, 0.0);
  for (std::size_t g = 0; g < times_s.size(); ++g) {
    const double turns = times_s[g] / period_s;
    const double x = two_pi * (turns - std::floor(turns));
    const auto nearest = static_cast<std::ptrdiff_t>(std::floor(x / spacing));
    const auto half = static_cast<std::ptrdiff_t>(gridding_half_width);
    for (std::ptrdiff_t l = 1 - half; l <= half; ++l) {
      const std::ptrdiff_t point = nearest + l;
      const double d = x - static_cast<double>(point) * spacing;
      const double kernel = std::exp(-d * d / (4.0 * tau));
      const std::ptrdiff_t index = ((point % grid_n) + grid_n) % grid_n;
      f0[index] += weights[g][0] * kernel;
      f1[index] += weights[g][1] * kernel;
    }
  }
  fftw_plan plan = nullptr;
  {
    const std::lock_guard<std::mutex> lock(fftw_planner_mutex());
    plan = fftw_plan_dft_r2c_1d(static_cast<int>(grid), f0, out, FFTW_ESTIMATE);
  }
  const double scale = std::sqrt(std::numbers::pi / tau) / static_cast<double>(grid);
  for (std::size_t column = 0; column < 2; ++column) {
    fftw_execute_dft_r2c(plan, column == 0 ? f0 : f1, out);
    std::vector<cd>& sum = sums[column];
    sum.resize(count);
    for (std::size_t k = 1; k <= count; ++k) {
      const double kk = static_cast<double>(k);
      sum[k - 1] = scale * std::exp(kk * kk * tau) * cd(out[k][0], out[k][1]);
    }
  }
  {
    const std::lock_guard<std::mutex> lock(fftw_planner_mutex());
    fftw_destroy_plan(plan);
  }
  fftw_free(out);
  fftw_free(f1);
  fftw_free(f0);
}

/// Σ_g weight_g·exp(−j·2π·k·time_g/period) for k = 1..count: the direct sum for few products, the
/// gridded non-uniform FFT for many.
void phasor_sums(const std::vector<double>& times_s, const std::vector<std::array<double, 2>>& weights,
                 double period_s, std::size_t count, std::array<std::vector<cd>, 2>& sums) {
  if (static_cast<double>(times_s.size()) * static_cast<double>(count) <= direct_phasor_sum_limit) {
    accumulate_phasor_sums(times_s, weights, period_s, count, sums);
  } else {
    gridded_phasor_sums(times_s, weights, period_s, count, sums);
    // The lowest harmonics directly: the series divides the slope column by ω², so the gridding
    // error (a fraction of Σ|w|) weighs most there, where the sums nearly cancel.
    const std::size_t low = std::min(count, directly_summed_harmonics);
    std::array<std::vector<cd>, 2> low_sums;
    accumulate_phasor_sums(times_s, weights, period_s, low, low_sums);
    for (std::size_t column = 0; column < 2; ++column) {
      std::copy(low_sums[column].begin(), low_sums[column].end(), sums[column].begin());
    }
  }
}

LineSpectrum dithered_lines(const SwitchingSpec& spec, const DitherRepeat& repeat, double max_frequency_hz,
                            Quantity quantity, double amplitude, const std::optional<RingingSpec>& ringing_spec) {
  validate_switching(spec);
  if (!spec.dither) throw Error("dithered lines need a dithered source");
  if (!(max_frequency_hz > 0.0)) throw Error("maximum frequency must be positive");
  if (repeat.cycle_count == 0 || !(repeat.period_s > 0.0)) throw Error("a dither repeat needs at least one cycle");
  const double period_s = repeat.period_s;
  const double count_real = std::floor(max_frequency_hz * period_s + 1e-9);
  if (count_real > static_cast<double>(max_harmonic_count)) {
    throw Error(spec.dither->rate_where,
                "expected a dither repeat of at most " +
                    format_quantity(static_cast<double>(max_harmonic_count) / max_frequency_hz, Dimension::time) +
                    " (its lines are computed up to " + format_quantity(max_frequency_hz, Dimension::frequency) +
                    ", at most " + std::to_string(max_harmonic_count) + " of them), found " +
                    format_quantity(period_s, Dimension::time));
  }
  const auto count = static_cast<std::size_t>(count_real);
  const std::vector<DitherCycle> cycles = dither_cycles(spec, repeat);

  // Every cycle's breakpoints on the repeat's time base; the joins between cycles of different
  // lengths are ordinary segments (a trapezoid's off state, a boost's falling ripple).
  std::vector<Breakpoint> points;
  points.reserve(4 * cycles.size());
  for (const DitherCycle& c : cycles) {
    for (const Breakpoint& b : period_breakpoints(spec, quantity, amplitude, c.period_s)) {
      points.push_back({c.start_s + b.time_s, b.value});
    }
  }
  const std::vector<PeriodicKink> kinks = periodic_kinks(points, period_s);
  // DC: the mean of the piecewise-linear waveform (trapezoid rule per segment, exact).
  const std::vector<PeriodicNode> nodes = periodic_nodes(points, period_s);
  double area = 0.0;
  for (std::size_t g = 0; g < nodes.size(); ++g) {
    const PeriodicNode& b = nodes[(g + 1) % nodes.size()];
    const double span = (g + 1 < nodes.size() ? b.time_s : b.time_s + period_s) - nodes[g].time_s;
    area += 0.5 * (nodes[g].out + b.in) * span;
  }

  // c_k = Σ J_g·e^{−jωt_g}/(jωT) − Σ Δs_g·e^{−jωt_g}/(ω²T), as piecewise_linear_series.
  std::vector<double> times_s;
  std::vector<std::array<double, 2>> weights;
  for (const PeriodicKink& k : kinks) {
    times_s.push_back(k.time_s);
    weights.push_back({k.jump, k.slope_change_per_s});
  }
  std::array<std::vector<cd>, 2> sums;
  phasor_sums(times_s, weights, period_s, count, sums);

  const bool ringing = ringing_spec && ringing_spec->relative_amplitude > 0.0;
  std::array<std::vector<cd>, 2> ring_sums;
  if (ringing) {
    // Each edge's tail, + after a rising edge and − after a falling one (RingingSpec).
    std::vector<double> edge_times_s;
    std::vector<std::array<double, 2>> edge_signs;
    for (const DitherCycle& c : cycles) {
      const EdgeEnds ends = edge_ends(spec, c.period_s);
      edge_times_s.push_back(c.start_s + ends.rising_end_s);
      edge_signs.push_back({1.0, 0.0});
      edge_times_s.push_back(c.start_s + ends.falling_end_s);
      edge_signs.push_back({-1.0, 0.0});
    }
    phasor_sums(edge_times_s, edge_signs, period_s, count, ring_sums);
  }

  LineSpectrum spectrum;
  spectrum.quantity = quantity;
  spectrum.fundamental_hz = 1.0 / period_s;
  spectrum.dc = area / period_s;
  spectrum.harmonics.resize(count);
  const double ring_amplitude = ringing ? ringing_spec->relative_amplitude * amplitude : 0.0;
  for (std::size_t k = 1; k <= count; ++k) {
    const double omega = two_pi * static_cast<double>(k) / period_s;
    cd c = sums[0][k - 1] / (cd(0.0, omega) * period_s) - sums[1][k - 1] / (omega * omega * period_s);
    if (ringing) c += ring_amplitude * ringing_transform(*ringing_spec, omega) / period_s * ring_sums[0][k - 1];
    spectrum.harmonics[k - 1] = std::sqrt(2.0) * c;  // one-sided RMS phasor
  }
  return spectrum;
}

}  // namespace

std::optional<DitherRepeat> dither_repeat(const SwitchingSpec& spec) {
  if (!spec.dither) throw Error("a dither repeat needs a dithered source");
  const double ratio = spec.frequency_hz / spec.dither->rate_hz;
  for (std::size_t m = 1; m <= max_dither_repeat_periods; ++m) {
    const double cycles = static_cast<double>(m) * ratio;
    const double whole = std::round(cycles);
    if (whole >= 1.0 && std::abs(cycles - whole) <= dither_repeat_tolerance_cycles) {
      return DitherRepeat{m, static_cast<std::size_t>(whole), static_cast<double>(m) / spec.dither->rate_hz};
    }
  }
  return std::nullopt;
}

LineSpectrum dithered_switch_node_lines(const SwitchingSpec& spec, const DitherRepeat& repeat, double max_frequency_hz) {
  return dithered_lines(spec, repeat, max_frequency_hz, Quantity::voltage, spec.amplitude_v, spec.ringing);
}

LineSpectrum dithered_input_current_lines(const SwitchingSpec& spec, const DitherRepeat& repeat,
                                          double max_frequency_hz) {
  return dithered_lines(spec, repeat, max_frequency_hz, Quantity::current, spec.current_a, spec.current_ringing);
}

}  // namespace spurcast
