#include "core/receiver/detector.hpp"

#include "core/input/error.hpp"

namespace spurcast {

std::vector<Detector> all_detectors() {
  return {Detector::peak, Detector::quasi_peak, Detector::average};
}

std::string to_string(Detector detector) {
  switch (detector) {
    case Detector::peak: return "peak";
    case Detector::quasi_peak: return "quasi-peak";
    case Detector::average: return "average";
  }
  return "peak";
}

std::vector<std::string> detector_names() {
  std::vector<std::string> names;
  for (Detector detector : all_detectors()) names.push_back(to_string(detector));
  return names;
}

std::optional<Detector> find_detector(std::string_view name) {
  for (Detector detector : all_detectors()) {
    if (to_string(detector) == name) return detector;
  }
  return std::nullopt;
}

Detector detector_from_string(std::string_view name) {
  if (auto found = find_detector(name)) return *found;
  throw Error("expected one of peak, quasi-peak or average, found \"" + std::string(name) + "\"");
}

}  // namespace spurcast

// ---------------------------------------------------------------------------------------------
// Detector algorithms.
#include <algorithm>
#include <cmath>
#include <numbers>

namespace spurcast {

double diode_charge_function(double ratio) {
  if (ratio <= 0.0) return 1.0 / std::numbers::pi;
  if (ratio >= 1.0) return 0.0;
  const double phi = std::acos(ratio);
  return (std::sqrt(1.0 - ratio * ratio) - phi * ratio) / std::numbers::pi;
}

double diode_final_ratio(double charge_rc_s, double discharge_rc_s) {
  // tan φ − φ grows monotonically from 0 on [0, π/2): bisection.
  const double target = std::numbers::pi * charge_rc_s / discharge_rc_s;
  double lo = 0.0;
  double hi = 0.5 * std::numbers::pi;
  for (int i = 0; i < 200 && hi - lo > 1e-15; ++i) {
    const double mid = 0.5 * (lo + hi);
    if (mid <= lo || mid >= hi) break;  // the bracket is two adjacent doubles
    (std::tan(mid) - mid < target ? lo : hi) = mid;
  }
  return std::cos(0.5 * (lo + hi));
}

double diode_charge_time_s(double charge_rc_s, double discharge_rc_s) {
  // Envelope e = 1 applied at t = 0, V(0) = 0: dV/dt = g(V)/(Rc·C) − V/(Rd·C) > 0 below V_final, so
  // t(63 %) = ∫_0^{V63} dV / (dV/dt) (composite Simpson; the integrand is smooth up to V63 < V_final).
  const double v63 = (1.0 - std::exp(-1.0)) * diode_final_ratio(charge_rc_s, discharge_rc_s);
  auto inverse_rate = [&](double v) {
    return 1.0 / (diode_charge_function(v) / charge_rc_s - v / discharge_rc_s);
  };
  const int intervals = 2000;  // even
  const double h = v63 / intervals;
  double sum = inverse_rate(0.0) + inverse_rate(v63);
  for (int i = 1; i < intervals; ++i) sum += (i % 2 == 1 ? 4.0 : 2.0) * inverse_rate(i * h);
  return sum * h / 3.0;
}

QuasiPeakModel quasi_peak_model(const DetectorTimeConstants& constants) {
  if (!(constants.charge_s > 0.0 && constants.discharge_s > constants.charge_s && constants.meter_s > 0.0)) {
    throw Error("expected positive time constants with discharge longer than charge");
  }
  // Rc·C is below the nominal charge time (the diode conducts only near the crests, g(0) = 1/π < 1):
  // bisect in log(Rc·C) over [charge/1000, charge] for diode_charge_time_s == charge_s.
  double lo = std::log(constants.charge_s * 1e-3);
  double hi = std::log(constants.charge_s);
  for (int i = 0; i < 80; ++i) {
    const double mid = 0.5 * (lo + hi);
    if (mid <= lo || mid >= hi) break;  // the bracket is two adjacent doubles: more halvings change nothing
    (diode_charge_time_s(std::exp(mid), constants.discharge_s) < constants.charge_s ? lo : hi) = mid;
  }
  QuasiPeakModel model;
  model.charge_rc_s = std::exp(0.5 * (lo + hi));
  model.discharge_rc_s = constants.discharge_s;
  model.final_ratio = diode_final_ratio(model.charge_rc_s, model.discharge_rc_s);
  return model;
}

DetectorModel make_detector_model(const DetectorTimeConstants& constants) {
  DetectorModel model{constants, quasi_peak_model(constants), {}};
  const std::size_t intervals = 8192;
  model.charge_table.resize(intervals + 2);
  for (std::size_t i = 0; i <= intervals; ++i) {
    model.charge_table[i] = diode_charge_function(static_cast<double>(i) / static_cast<double>(intervals));
  }
  model.charge_table[intervals + 1] = 0.0;
  return model;
}

namespace {

struct DiodeStepper {
  double inv_charge;     // 1/(Rc·C)
  double inv_discharge;  // 1/(Rd·C)
  double h;              // sample interval
  double decay;          // exp(−h/(Rd·C))
  const double* table;   // tabulated g (table_intervals + 2 entries), or null for the direct formula
  double table_intervals;

  DiodeStepper(const QuasiPeakModel& model, double sample_interval_s, const std::vector<double>* charge_table)
      : inv_charge(1.0 / model.charge_rc_s),
        inv_discharge(1.0 / model.discharge_rc_s),
        h(sample_interval_s),
        decay(std::exp(-sample_interval_s / model.discharge_rc_s)),
        table(charge_table != nullptr && charge_table->size() > 2 ? charge_table->data() : nullptr),
        table_intervals(table != nullptr ? static_cast<double>(charge_table->size() - 2) : 0.0) {}

  // g(r) for 0 <= r < 1 (callers only ask when V < e).
  [[nodiscard]] double g(double r) const {
    if (table == nullptr) return diode_charge_function(r);
    const double x = r * table_intervals;
    const auto i = static_cast<std::size_t>(x);
    const double w = x - static_cast<double>(i);
    return table[i] + w * (table[i + 1] - table[i]);
  }

  // dg/dr, piecewise constant on the table (the slope of the interpolation used by g).
  [[nodiscard]] double g_slope(double r) const {
    if (table == nullptr) return -std::acos(std::min(r, 1.0)) / std::numbers::pi;  // d/dr of diode_charge_function
    const auto i = static_cast<std::size_t>(r * table_intervals);
    return (table[i + 1] - table[i]) * table_intervals;
  }
  [[nodiscard]] double rate(double v, double e, double inverse_e) const {
    const double charge = v < e ? e * g(v * inverse_e) * inv_charge : 0.0;
    return charge - v * inv_discharge;
  }
  // One sample interval, envelope going linearly from e0 to e1 (inverses given, 0 for e = 0).
  [[nodiscard]] double step(double v, double e0, double e1, double inverse_e0, double inverse_e1) const {
    if (e0 <= v && e1 <= v * decay) return v * decay;  // diode off: exact exponential discharge
    const double k1 = rate(v, e0, inverse_e0);
    const double k2 = rate(v + h * k1, e1, inverse_e1);
    return std::max(0.0, v + 0.5 * h * (k1 + k2));
  }
  // ∂rate/∂v.
  [[nodiscard]] double rate_slope(double v, double e, double inverse_e) const {
    return (v < e ? g_slope(v * inverse_e) * inv_charge : 0.0) - inv_discharge;
  }
  // step(), also multiplying `slope` by d(step)/dv (the chain rule through Heun's two stages).
  [[nodiscard]] double step(double v, double e0, double e1, double inverse_e0, double inverse_e1, double& slope) const {
    if (e0 <= v && e1 <= v * decay) {
      slope *= decay;
      return v * decay;
    }
    const double k1 = rate(v, e0, inverse_e0);
    const double v_mid = v + h * k1;
    const double k2 = rate(v_mid, e1, inverse_e1);
    const double next = v + 0.5 * h * (k1 + k2);
    if (next <= 0.0) {
      slope = 0.0;
      return 0.0;
    }
    const double d1 = rate_slope(v, e0, inverse_e0);
    const double d2 = rate_slope(v_mid, e1, inverse_e1) * (1.0 + h * d1);
    slope *= 1.0 + 0.5 * h * (d1 + d2);
    return next;
  }
};

double safe_inverse(double e) { return e > 0.0 ? 1.0 / e : 0.0; }

// V at the end of one period starting from v; the envelope is periodic, so the last interval runs
// from the last sample back to the first. `trace` receives V after each sample and `slope` the
// derivative of V at the end of the period with respect to V at its start.
double diode_period(std::span<const double> envelope, std::span<const double> inverse, const DiodeStepper& stepper,
                    double v, double* trace, double& slope) {
  const std::size_t n = envelope.size();
  slope = 1.0;
  for (std::size_t i = 0; i < n; ++i) {
    const std::size_t next = i + 1 == n ? 0 : i + 1;
    v = stepper.step(v, envelope[i], envelope[next], inverse[i], inverse[next], slope);
    trace[i] = v;
  }
  return v;
}

// The start for the periodic steady state: V where the diode's charge and discharge balance over
// the period with V held constant, mean_i[e_i·g(V/e_i)]/(R_C·C) = V/(R_D·C) (V moves little in
// one period when T << R_D·C), by a few safeguarded Newton steps from `v`. Only a start: the
// exact fixed point follows.
double averaged_diode_state(std::span<const double> envelope, std::span<const double> inverse,
                            const DiodeStepper& stepper, double v, double max_e) {
  double lo = 0.0;
  double hi = max_e;
  const double n = static_cast<double>(envelope.size());
  for (int round = 0; round < 8; ++round) {
    double balance = 0.0;
    double slope = 0.0;
    for (std::size_t i = 0; i < envelope.size(); ++i) {
      if (v >= envelope[i]) continue;
      const double r = v * inverse[i];
      balance += envelope[i] * stepper.g(r);
      slope += stepper.g_slope(r);
    }
    balance = balance * stepper.inv_charge / n - v * stepper.inv_discharge;
    slope = slope * stepper.inv_charge / n - stepper.inv_discharge;
    (balance > 0.0 ? lo : hi) = v;
    double next = slope < 0.0 ? v - balance / slope : 0.5 * (lo + hi);
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (std::abs(next - v) <= 1e-6 * max_e) return next;
    v = next;
  }
  return v;
}

// The maximum output of the critically damped meter 1/(1 + s·T_L)² driven by a periodic input, in
// periodic steady state. The input is averaged in blocks of at most T_L/1000 (the meter cannot
// tell them apart) and held constant over each block (exact zero-order-hold update of the two
// cascaded lags: y1 = u + a·(y1 − u); y2 = u + a·(y2 − u) + (h/T_L)·a·(y1_old − u)).
double meter_periodic_max(std::span<const double> input, double sample_interval_s, double meter_s) {
  const std::size_t n = input.size();
  const std::size_t per_block =
      std::max<std::size_t>(1, static_cast<std::size_t>(std::floor(meter_s * 1e-3 / sample_interval_s)));
  std::vector<double> value;  // block means; every block is full but perhaps the last
  value.reserve(n / per_block + 1);
  for (std::size_t start = 0; start < n; start += per_block) {
    const std::size_t count = std::min(per_block, n - start);
    double sum = 0.0;
    for (std::size_t i = start; i < start + count; ++i) sum += input[i];
    value.push_back(sum / static_cast<double>(count));
  }
  const double full_h = static_cast<double>(per_block) * sample_interval_s;
  const double full_a = std::exp(-full_h / meter_s);
  const std::size_t last_count = n - (value.size() - 1) * per_block;
  const double last_h = static_cast<double>(last_count) * sample_interval_s;
  const double last_a = last_count == per_block ? full_a : std::exp(-last_h / meter_s);
  auto run = [&](double& y1, double& y2, double* max_y2) {
    for (std::size_t b = 0; b < value.size(); ++b) {
      const bool last = b + 1 == value.size();
      const double h = last ? last_h : full_h;
      const double a = last ? last_a : full_a;
      const double u = value[b];
      const double y1_old = y1;
      y1 = u + a * (y1 - u);
      y2 = u + a * (y2 - u) + (h / meter_s) * a * (y1_old - u);
      if (max_y2 != nullptr) *max_y2 = std::max(*max_y2, y2);
    }
  };
  double r1 = 0.0;
  double r2 = 0.0;
  run(r1, r2, nullptr);  // forced response over one period from rest
  const double period_s = static_cast<double>(n) * sample_interval_s;
  const double a_period = std::exp(-period_s / meter_s);
  const double coupling = period_s / meter_s * a_period;
  // Fixed point of x(T) = Φ·x(0) + r for the free response Φ of the two lags over one period.
  double y1 = r1 / (1.0 - a_period);
  double y2 = (r2 + coupling * y1) / (1.0 - a_period);
  double max_y2 = y2;
  run(y1, y2, &max_y2);
  return max_y2;
}

double interpolated_peak(std::span<const double> envelope) {
  const std::size_t n = envelope.size();
  const std::size_t i = static_cast<std::size_t>(std::max_element(envelope.begin(), envelope.end()) - envelope.begin());
  const double center = envelope[i];
  if (n < 3) return center;
  const double before = envelope[(i + n - 1) % n];
  const double after = envelope[(i + 1) % n];
  if (!(before > 0.0 && after > 0.0 && center > 0.0)) return center;
  // Parabola through the logarithms: exact for a Gaussian pulse envelope.
  const double ym = std::log(before);
  const double y0 = std::log(center);
  const double yp = std::log(after);
  const double curvature = ym - 2.0 * y0 + yp;
  if (!(curvature < 0.0)) return center;
  const double offset = 0.5 * (ym - yp) / curvature;
  return std::exp(y0 - 0.25 * (ym - yp) * offset);
}

}  // namespace

std::vector<double> quasi_peak_voltage(std::span<const double> envelope, double sample_interval_s,
                                       const QuasiPeakModel& model, double initial_v) {
  const DiodeStepper stepper(model, sample_interval_s, nullptr);
  std::vector<double> trace(envelope.size());
  double v = initial_v;
  for (std::size_t i = 0; i + 1 < envelope.size(); ++i) {
    trace[i] = v;
    v = stepper.step(v, envelope[i], envelope[i + 1], safe_inverse(envelope[i]), safe_inverse(envelope[i + 1]));
  }
  if (!envelope.empty()) trace.back() = v;
  return trace;
}

double periodic_envelope_peak(std::span<const double> envelope) {
  if (envelope.empty()) return 0.0;
  return interpolated_peak(envelope) / std::numbers::sqrt2;
}

DetectorReadings read_periodic_envelope(std::span<const double> envelope, double sample_interval_s,
                                        const DetectorModel& model) {
  DetectorReadings readings;
  if (envelope.empty()) return readings;
  const double max_e = *std::max_element(envelope.begin(), envelope.end());
  if (!(max_e > 0.0)) return readings;
  const double min_e = *std::min_element(envelope.begin(), envelope.end());
  if (max_e - min_e <= 1e-9 * max_e) {
    // A constant envelope (one line in the passband): every detector reads its RMS by calibration.
    double sum = 0.0;
    for (double e : envelope) sum += e;
    readings.peak = readings.quasi_peak = readings.average = sum / static_cast<double>(envelope.size()) / std::numbers::sqrt2;
    return readings;
  }
  readings.peak = interpolated_peak(envelope) / std::numbers::sqrt2;
  readings.average = meter_periodic_max(envelope, sample_interval_s, model.constants.meter_s) / std::numbers::sqrt2;
  if (max_e - min_e <= 1e-4 * max_e) {
    // A nearly constant envelope: the diode detector is monotonic and homogeneous (its rate grows
    // with e, and scaling e scales V), and it and the meter pass a constant at unit gain after
    // calibration, so the QP reading lies in [min e, max e]/√2, as does the average: the two agree
    // within 1e-4 (0.001 dB) and the costly QP steady state is not needed.
    readings.quasi_peak = readings.average;
    return readings;
  }

  // QP: the periodic steady state is the fixed point V* = P(V*) of the one-period map P (V at the
  // end of a period as a function of V at its start; increasing, with slope below 1). Solve
  // F(V) = P(V) − V = 0 by Newton's method with P' carried through the integration (forward
  // sensitivity), safeguarded by bisection: F decreases, F(0) = P(0) >= 0 and F(max e) <= 0
  // bracket the root. A plain iteration of P would need of the order of R_D·C/T periods.
  const DiodeStepper stepper(model.quasi_peak, sample_interval_s, &model.charge_table);
  const double ratio = model.quasi_peak.final_ratio;
  const std::size_t m = envelope.size();
  std::vector<double> scratch(2 * m);  // one allocation: the inverses, then V after each sample
  const std::span<double> inverse(scratch.data(), m);
  const std::span<double> trace(scratch.data() + m, m);
  double sum = 0.0;
  for (std::size_t i = 0; i < m; ++i) {
    inverse[i] = safe_inverse(envelope[i]);
    sum += envelope[i];
  }
  const double tolerance = 1e-8 * max_e;  // |P(V) − V|: < 1e-6 dB on a reading above 1 % of max e
  double lo = 0.0;
  double hi = max_e;
  double v = averaged_diode_state(envelope, inverse, stepper, ratio * sum / static_cast<double>(envelope.size()), max_e);
  for (int round = 0; round < 100; ++round) {
    double slope = 1.0;
    const double f = diode_period(envelope, inverse, stepper, v, trace.data(), slope) - v;
    if (std::abs(f) <= tolerance) break;
    (f > 0.0 ? lo : hi) = v;
    double next = slope < 1.0 ? v - f / (slope - 1.0) : 0.5 * (lo + hi);
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    v = next;
  }
  readings.quasi_peak = meter_periodic_max(trace, sample_interval_s, model.constants.meter_s) /
                        (model.quasi_peak.final_ratio * std::numbers::sqrt2);
  return readings;
}

}  // namespace spurcast
