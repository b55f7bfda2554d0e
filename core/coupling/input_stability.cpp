#include "core/coupling/input_stability.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <numbers>

#include "core/input/units.hpp"

namespace spurcast {

ConverterPowerSpec read_converter_power(TableReader& reader) {
  ConverterPowerSpec spec;
  const bool has_v = reader.has("min_input_voltage");
  const bool has_p = reader.has("output_power");
  if (has_v != has_p) {
    reader.fail(has_v ? "min_input_voltage" : "output_power",
                "expected min_input_voltage and output_power together, found only this one");
  }
  if (!has_v) return spec;
  spec.min_input_voltage_v = reader.required_quantity("min_input_voltage", Dimension::voltage);
  spec.output_power_w = reader.required_quantity("output_power", Dimension::power);
  if (!(std::isfinite(spec.min_input_voltage_v) && spec.min_input_voltage_v > 0.0)) {
    reader.fail("min_input_voltage",
                "expected a voltage > 0, found " +
                    format_quantity(spec.min_input_voltage_v, Dimension::voltage));
  }
  if (!(std::isfinite(spec.output_power_w) && spec.output_power_w > 0.0)) {
    reader.fail("output_power", "expected a power > 0, found " +
                                    format_quantity(spec.output_power_w, Dimension::power));
  }
  spec.given = true;
  return spec;
}

double negative_input_resistance_ohm(const ConverterPowerSpec& c) {
  return c.min_input_voltage_v * c.min_input_voltage_v / c.output_power_w;
}

double output_impedance_ohm(const DampedLc& lc, double f) {
  using cd = std::complex<double>;
  const double w = 2.0 * std::numbers::pi * f;
  const cd y_l = 1.0 / cd(lc.inductor_resistance_ohm, w * lc.inductance_h);
  const cd y_c(0.0, w * lc.capacitance_f);
  cd y_d = 0.0;
  if (lc.damping_capacitance_f > 0.0)
    y_d = 1.0 / cd(lc.damping_resistance_ohm, -1.0 / (w * lc.damping_capacitance_f));
  return std::abs(1.0 / (y_l + y_c + y_d));
}

double peak_output_impedance_ohm(const DampedLc& lc) {
  constexpr int per_decade = 400;
  double best_f = 1.0, best = 0.0;
  for (int i = 0; i <= 8 * per_decade; ++i) {
    const double f = std::pow(10.0, static_cast<double>(i) / per_decade);
    const double z = output_impedance_ohm(lc, f);
    if (z > best) best = z, best_f = f;
  }
  // Golden-section refinement inside one grid step either side.
  const double step = std::pow(10.0, 1.0 / per_decade);
  double a = std::log(best_f / step), b = std::log(best_f * step);
  const double g = (std::sqrt(5.0) - 1.0) / 2.0;
  for (int i = 0; i < 80; ++i) {
    const double x1 = b - g * (b - a), x2 = a + g * (b - a);
    if (output_impedance_ohm(lc, std::exp(x1)) > output_impedance_ohm(lc, std::exp(x2)))
      b = x2;
    else
      a = x1;
  }
  return std::max(best, output_impedance_ohm(lc, std::exp((a + b) / 2.0)));
}

OptimalDamping optimal_parallel_damping(double l, double c, double n) {
  const double r0 = std::sqrt(l / c);
  return {r0 * std::sqrt((2.0 + n) * (4.0 + 3.0 * n) / (2.0 * n * n * (4.0 + n))),
          r0 * std::sqrt(2.0 * (2.0 + n)) / n};
}

double damping_ratio_for_peak(double l, double c, double target_ohm) {
  // R0²·2(2 + n)/n² = T²  →  T²n² − 2R0²n − 4R0² = 0, the positive root.
  const double r0sq = l / c;
  const double t2 = target_ohm * target_ohm;
  return (2.0 * r0sq + std::sqrt(4.0 * r0sq * r0sq + 16.0 * t2 * r0sq)) / (2.0 * t2);
}

std::vector<double> converter_side_impedance_ohm(const ConductedModel& model,
                                                 const std::vector<double>& frequency_hz) {
  const Transfer t = model.solver().transfer(frequency_hz, {model.converter_terminals()});
  std::vector<double> out(frequency_hz.size());
  const auto source = static_cast<std::size_t>(ConductedModel::source_input_current);
  for (std::size_t i = 0; i < frequency_hz.size(); ++i) out[i] = std::abs(t.at(i, 0, source));
  return out;
}

NetworkImpedancePeak peak_converter_side_impedance(const ConductedModel& model) {
  constexpr int per_decade = 200;
  const std::array<double, 2> measured = model.solver().network().tabulated_range();
  NetworkImpedancePeak peak;
  peak.from_hz = std::max(1.0, measured[0]);
  peak.to_hz = std::min(100e6, measured[1]);
  if (!(peak.to_hz > peak.from_hz)) return peak;
  const double decades = std::log10(peak.to_hz / peak.from_hz);
  const int n = std::max(2, static_cast<int>(std::ceil(decades * per_decade)) + 1);
  std::vector<double> grid(static_cast<std::size_t>(n));
  for (int i = 0; i < n; ++i) {
    grid[static_cast<std::size_t>(i)] =
        std::min(peak.to_hz, peak.from_hz * std::pow(10.0, decades * i / (n - 1)));
  }
  const std::vector<double> z = converter_side_impedance_ohm(model, grid);
  const auto best = static_cast<std::size_t>(std::max_element(z.begin(), z.end()) - z.begin());
  peak.frequency_hz = grid[best];
  peak.impedance_ohm = z[best];
  // Golden-section refinement between the neighbouring grid points.
  double a = std::log(grid[best > 0 ? best - 1 : 0]),
         b = std::log(grid[std::min(best + 1, grid.size() - 1)]);
  const double g = (std::sqrt(5.0) - 1.0) / 2.0;
  auto at = [&](double x) { return converter_side_impedance_ohm(model, {std::exp(x)})[0]; };
  for (int i = 0; i < 60 && b - a > 1e-9; ++i) {
    const double x1 = b - g * (b - a), x2 = a + g * (b - a);
    if (at(x1) > at(x2))
      b = x2;
    else
      a = x1;
  }
  const double f = std::exp((a + b) / 2.0);
  const double zf = at(std::log(f));
  if (zf > peak.impedance_ohm) peak.impedance_ohm = zf, peak.frequency_hz = f;
  return peak;
}

}  // namespace spurcast
