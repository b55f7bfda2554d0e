#include "core/radio/radiated.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "core/input/error.hpp"
#include "core/input/units.hpp"

namespace spurcast {

namespace {

constexpr double mu0_h_per_m = 4e-7 * std::numbers::pi;  // 1.2566e-6 (pre-2019 exact value; 1e-10 rel.)
constexpr double c_m_per_s = 299792458.0;
// Half-wave dipole broadside field per ampere of feed current, 60 Ω = η0/(2π) (Paul §7.1.2, from memory).
constexpr double half_wave_dipole_ohm = 60.0;

double wavelength_m(double frequency_hz) { return c_m_per_s / frequency_hz; }

void require_positive(double value, const char* what) {
  if (!(value > 0.0)) throw Error(std::string(what) + " must be positive");
}

}  // namespace

double field_to_dbuvm(double field_v_per_m) {
  return field_v_per_m > 0.0 ? 20.0 * std::log10(field_v_per_m / 1e-6) : level_floor_db;
}

double cm_cable_field_v_per_m(double frequency_hz, double cable_length_m, double cm_current_per_conductor_a,
                              double distance_m) {
  // Paul §8.1.3: the two CM currents add, a Hertzian dipole of current 2·I_C, eq. (7.3c)
  // |E| = (µ0/2)·f·(2·I_C)·L/r = µ0·f·L·I_C/r.
  return mu0_h_per_m * frequency_hz * cable_length_m * std::abs(cm_current_per_conductor_a) / distance_m;
}

double dm_loop_field_v_per_m(double frequency_hz, double loop_area_m2, double dm_current_a, double distance_m) {
  // Paul eq. (7.9a): |E| = (π·µ0/c)·f²·A·I/r, the constant 1.3169e-14 (docs/references.md §6.1 [D]).
  return std::numbers::pi * mu0_h_per_m / c_m_per_s * frequency_hz * frequency_hz * loop_area_m2 *
         std::abs(dm_current_a) / distance_m;
}

double cm_effective_length_cap_m(double frequency_hz) { return wavelength_m(frequency_hz) / std::numbers::pi; }

std::vector<FieldLine> radiated_field(const RadiationSetup& setup, const std::vector<double>& frequency_hz,
                                      const std::vector<double>& cm_current_per_conductor_a,
                                      const std::vector<double>& dm_current_a) {
  require_positive(setup.distance_m, "distance");
  require_positive(setup.cable_length_m, "cable length");
  if (setup.loop_area_m2) require_positive(*setup.loop_area_m2, "loop area");
  if (cm_current_per_conductor_a.size() != frequency_hz.size() ||
      (!dm_current_a.empty() && dm_current_a.size() != frequency_hz.size())) {
    throw Error("expected one current per frequency (" + std::to_string(frequency_hz.size()) + "), found " +
                std::to_string(cm_current_per_conductor_a.size()) + " CM and " + std::to_string(dm_current_a.size()) +
                " DM");
  }
  const double reflection = setup.ground_reflection ? 2.0 : 1.0;
  std::vector<FieldLine> lines;
  lines.reserve(frequency_hz.size());
  for (std::size_t i = 0; i < frequency_hz.size(); ++i) {
    const double f = frequency_hz[i];
    require_positive(f, "frequency");
    const double lambda = wavelength_m(f);
    FieldLine line;
    line.frequency_hz = f;
    line.near_field = setup.distance_m < lambda / (2.0 * std::numbers::pi);
    line.cable_electrically_long = setup.cable_length_m > lambda / 10.0;
    const double length_m = std::min(setup.cable_length_m, cm_effective_length_cap_m(f));
    const double cm = reflection * cm_cable_field_v_per_m(f, length_m, cm_current_per_conductor_a[i], setup.distance_m);
    double dm = 0.0;
    if (setup.loop_area_m2 && !dm_current_a.empty()) {
      line.loop_electrically_large = 4.0 * std::sqrt(*setup.loop_area_m2) > lambda / 10.0;
      const double current = std::abs(dm_current_a[i]);
      const double bound = 2.0 * half_wave_dipole_ohm * current / setup.distance_m;
      dm = reflection * std::min(dm_loop_field_v_per_m(f, *setup.loop_area_m2, current, setup.distance_m), bound);
    }
    line.cm_dbuvm = field_to_dbuvm(cm);
    line.dm_dbuvm = field_to_dbuvm(dm);
    line.total_dbuvm = field_to_dbuvm(std::sqrt(cm * cm + dm * dm));
    lines.push_back(line);
  }
  return lines;
}

std::string radiation_convention(const RadiationSetup& setup) {
  std::string text =
      "Radiated estimate: C. R. Paul's free-space far-field formulas, broadside; common mode from the "
      "current in each conductor of a short cable (|E| = 1.257e-6 f L I_C / r, cable length capped at "
      "lambda/pi, the half-wave-dipole maximum), differential mode from a small loop "
      "(|E| = 1.316e-14 f^2 A I / r, capped at 120 I / r); the two are power-summed. ";
  text += setup.ground_reflection ? "A +6 dB ground reflection is added. "
                                  : "No ground reflection is added (over a ground plane add up to 6 dB). ";
  text +=
      "Texts quoting the total cable current with the reflection included use other constants: "
      "mixing the conventions is a 6 dB error. At distances under lambda/(2 pi) (every frequency below "
      "about 16 MHz at 3 m) the receiver is in the near field and the figure is an order-of-magnitude estimate.";
  return text;
}

}  // namespace spurcast
