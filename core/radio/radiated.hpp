#pragma once
/// Radiated field estimates from conducted currents (C. R. Paul, Introduction to Electromagnetic
/// Compatibility, 2nd ed.): the common-mode current on a short cable (§8.1.3) and the differential-
/// mode current around a small loop (eq. 7.9a). Free space, far field, broadside (maximum) direction.
///
/// Convention (see radiation_convention()): the CM formula takes I_C, the common-mode current IN
/// EACH of the two conductors (a current probe around the cable reads 2·I_C); the DM formula takes the
/// loop current. Texts that use the total current and include a +6 dB ground-plane reflection
/// (constants 2.63e-14 and 1.26e-6) are a different convention: mixing the two is a 6 dB error.
/// Currents and fields are both RMS here (the relations are linear, so Paul's peak-amplitude
/// formulas hold unchanged for RMS values).
///
/// Example:
///   dm_loop_field_v_per_m(50e6, 1e-4, 0.1, 3.0)  // 109.7e-6 V/m = 40.80 dBµV/m (Paul Ex. 7.2)
#include <optional>
#include <string>
#include <vector>

namespace spurcast {

/// Paul's CM cable formula |E| = µ0·f·L·I_C / r [V/m] (1.257e-6·f·L·I_C/r), without any cap.
/// `cm_current_per_conductor_a` [A] is I_C in each conductor; f [Hz], L [m], r [m] > 0.
[[nodiscard]] double cm_cable_field_v_per_m(double frequency_hz, double cable_length_m,
                                            double cm_current_per_conductor_a, double distance_m);
/// Paul's loop formula |E| = (π·µ0/c)·f²·A·I / r [V/m] (1.316e-14·f²·A·I/r), without any cap.
[[nodiscard]] double dm_loop_field_v_per_m(double frequency_hz, double loop_area_m2, double dm_current_a,
                                           double distance_m);

/// The cable length beyond which the short-dipole formula overstates the field: λ/π, where
/// µ0·f·L·I_C/r equals the broadside maximum of a half-wave dipole fed with the total current 2·I_C,
/// 60·(2·I_C)/r (Paul §7.1.2 half-wave dipole, E = 60·I/r; from memory). Capping L there keeps the
/// estimate continuous and bounded by the resonant-wire value for long cables.
[[nodiscard]] double cm_effective_length_cap_m(double frequency_hz);

/// Where a geometry and the chosen distance are used.
struct RadiationSetup {
  double distance_m = 3.0;               ///< receiver to product/cable [m], > 0
  double cable_length_m = 1.5;           ///< radiating cable [m], > 0
  std::optional<double> loop_area_m2;    ///< DM loop area [m²]; no DM field when absent
  bool ground_reflection = false;        ///< add 20·log10(2) = 6.02 dB for a reflecting ground
};

/// The field of one frequency.
struct FieldLine {
  double frequency_hz = 0.0;
  double cm_dbuvm = 0.0;      ///< from the CM cable current [dBµV/m], level_floor_db for none
  double dm_dbuvm = 0.0;      ///< from the DM loop [dBµV/m], level_floor_db when no loop area
  double total_dbuvm = 0.0;   ///< power sum of the two (their relative phase is unknown)
  bool cable_electrically_long = false;  ///< L > λ/10: uniform-current assumption fails; L capped at λ/π
  bool loop_electrically_large = false;  ///< perimeter of a square loop 4·√A > λ/10; field capped
  bool near_field = false;               ///< r < λ/(2π): the far-field formulas underestimate
};

/// Fields at `setup.distance_m` from CM and DM currents given per frequency (plain vectors so any
/// stage can feed them: the conducted path or a measured current). `cm_current_per_conductor_a` and
/// `dm_current_a` are RMS magnitudes [A], same size as `frequency_hz` (dm may be empty = none).
/// Caps: CM length at λ/π (see above); DM at 2 × 60·I/r, the two antiphase conductors as two
/// half-wave dipoles adding in phase, an upper bound. Throws Error on mismatched sizes.
[[nodiscard]] std::vector<FieldLine> radiated_field(const RadiationSetup& setup,
                                                    const std::vector<double>& frequency_hz,
                                                    const std::vector<double>& cm_current_per_conductor_a,
                                                    const std::vector<double>& dm_current_a);

/// One sentence for the report saying which convention and caps the estimate uses.
[[nodiscard]] std::string radiation_convention(const RadiationSetup& setup);

/// V/m to dBµV/m (20·log10(E / 1 µV/m)); level_floor_db for zero.
[[nodiscard]] double field_to_dbuvm(double field_v_per_m);

}  // namespace spurcast
