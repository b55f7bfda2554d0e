#pragma once
/// Fields of the product's radiators at a nearby receiver, at any distance.
///
/// Exact fields (docs/references.md §6.4): the short electric dipole (C. A. Balanis, Antenna
/// Theory, 3rd ed., §4.2, eq. 4-8a–c and 4-10a–c) and the small magnetic loop (§5.2, eq. 5-18a–f),
/// every term, e^(jωt) time convention, e^(−jkr) phase. For kr ≫ 1 they reduce to C. R. Paul's
/// far-field formulas (Introduction to Electromagnetic Compatibility, 2nd ed., eq. 7.3c and 7.9a;
/// kept below as cm_cable_field_v_per_m and dm_loop_field_v_per_m), for kr ≪ 1 to the static fields
/// (Biot–Savart I·l·sinθ/(4πr²), m/(4πr³), p/(4πε0 r³)). A radio in the same room is deep in the
/// near field on LW, MW and most of SW (λ/2π = 48 m at 1 MHz), where the far-field formulas
/// understate H by tens of dB.
///
/// Radiators (each with its own current and its share of the field):
///  - cable CM: the supply cable's common-mode current, a wire of the cable's length cut into short
///    dipoles (segments no longer than λ/20 and a fifth of the distance) carrying a travelling wave
///    I(z) = I·e^(−jkz) from the product end (the current of a matched wire over ground: the
///    amplitude the conducted path gives at every point, uniform for a short cable as Paul assumes;
///    its broadside effective length never exceeds λ/π, the half-wave-dipole cap). A mismatched far
///    end adds standing waves of up to +6 dB (|Γ| ≤ 1), not included;
///  - cable DM: the differential-mode current around the two-wire line of the cable (length ×
///  spacing),
///    cut into small loops carrying the same travelling wave;
///  - hot loop: the switching cell's pulsed current around the loop area on the board, one small
///  loop.
/// Geometry (a stated worst case): the receiver is `distance` from the hot loop and from the middle
/// of the cable, broadside to it; for the two-wire line both the in-plane and the perpendicular
/// position are evaluated and the larger field kept; the point radiators take the orientation that
/// couples most (max over θ: on the axis or broadside). The receiving antenna is aligned with the
/// field: its response is the major axis of the field's polarisation ellipse
/// (best_aligned_magnitude). Radiators' relative phases are unknown (different paths), so their
/// fields are power-summed.
///
/// Currents and fields are RMS phasors (the relations are linear). The CM current is given per
/// conductor, I_C (a current probe around the cable reads 2·I_C), Paul's convention.
///
/// Example:
///   small_loop_worst(50e6, 0.1 * 1e-4, 3.0).e_v_per_m  // 109.7e-6 V/m = 40.80 dBµV/m (Paul
///   Ex. 7.2)
#include <array>
#include <complex>
#include <optional>
#include <string>
#include <vector>

namespace spurcast {

/// Free-space constants: µ0 (pre-2019 exact value 4π·1e-7; 1e-10 relative to the CODATA value), c,
/// η0 = µ0·c (376.73 Ω, "120π" in Balanis) and ε0 = 1/(µ0·c²).
inline constexpr double mu0_h_per_m = 4e-7 * 3.14159265358979323846;
inline constexpr double speed_of_light_m_per_s = 299792458.0;
inline constexpr double eta0_ohm = mu0_h_per_m * speed_of_light_m_per_s;
inline constexpr double epsilon0_f_per_m =
    1.0 / (mu0_h_per_m * speed_of_light_m_per_s * speed_of_light_m_per_s);

/// Paul's CM cable formula |E| = µ0·f·L·I_C / r [V/m] (1.257e-6·f·L·I_C/r): far field, uniform
/// current, broadside. `cm_current_per_conductor_a` [A] is I_C in each conductor; f [Hz], L [m], r
/// [m] > 0.
[[nodiscard]] double cm_cable_field_v_per_m(double frequency_hz, double cable_length_m,
                                            double cm_current_per_conductor_a, double distance_m);
/// Paul's loop formula |E| = (π·µ0/c)·f²·A·I / r [V/m] (1.316e-14·f²·A·I/r): far field, broadside.
[[nodiscard]] double dm_loop_field_v_per_m(double frequency_hz, double loop_area_m2,
                                           double dm_current_a, double distance_m);

/// Spherical components of the short electric dipole, moment I·l [A·m] along the z axis (Balanis
/// eq. 4-8a–c, 4-10a–c): E_r, E_θ [V/m] and H_φ [A/m] at distance r [m] and angle θ [rad] from the
/// axis.
struct DipoleComponents {
  std::complex<double> e_r, e_theta, h_phi;
};
[[nodiscard]] DipoleComponents short_dipole_components(double frequency_hz,
                                                       std::complex<double> moment_a_m,
                                                       double distance_m, double theta_rad);

/// Spherical components of the small loop, magnetic moment m = N·I·A [A·m²] along the z axis
/// (Balanis eq. 5-18a–f): H_r, H_θ [A/m] and E_φ [V/m].
struct LoopComponents {
  std::complex<double> h_r, h_theta, e_phi;
};
[[nodiscard]] LoopComponents small_loop_components(double frequency_hz,
                                                   std::complex<double> moment_a_m2,
                                                   double distance_m, double theta_rad);

/// A real 3-vector [m] or direction.
struct Vec3 {
  double x = 0.0, y = 0.0, z = 0.0;
};
/// Complex Cartesian field vectors at a point: E [V/m], H [A/m].
struct FieldPhasors {
  std::array<std::complex<double>, 3> e{};
  std::array<std::complex<double>, 3> h{};
};
/// The dipole's fields in Cartesian form at `offset` (observation point minus source position, not
/// zero) for a moment along the unit vector `axis`: the components above rotated with
/// sinθ·θ̂ = (û·r̂)r̂ − û and sinθ·φ̂ = û × r̂.
[[nodiscard]] FieldPhasors short_dipole_field(double frequency_hz, std::complex<double> moment_a_m,
                                              const Vec3& axis, const Vec3& offset);
/// The same for a small loop whose moment lies along the unit normal `axis`.
[[nodiscard]] FieldPhasors small_loop_field(double frequency_hz, std::complex<double> moment_a_m2,
                                            const Vec3& axis, const Vec3& offset);

/// The response of a linear antenna turned to the best orientation: max over real unit u of |u·F|,
/// the major semi-axis of the polarisation ellipse (the largest eigenvalue of aaᵀ + bbᵀ, F = a +
/// jb).
[[nodiscard]] double best_aligned_magnitude(const std::array<std::complex<double>, 3>& field);

/// |E| [V/m] and |H| [A/m] seen by an aligned antenna.
struct FieldMagnitude {
  double e_v_per_m = 0.0;
  double h_a_per_m = 0.0;
};
/// The short dipole in the orientation that couples most: max over θ of |E| (max of E_r on the axis
/// and E_θ broadside, since |E|² is linear in cos²θ) and |H_φ| broadside. Moment magnitude [A·m].
[[nodiscard]] FieldMagnitude short_dipole_worst(double frequency_hz, double moment_a_m,
                                                double distance_m);
/// The small loop likewise: |H| the larger of H_r on the axis and H_θ broadside, |E_φ| broadside.
[[nodiscard]] FieldMagnitude small_loop_worst(double frequency_hz, double moment_a_m2,
                                              double distance_m);

/// The segments a cable of `length_m` is cut into at `frequency_hz` for a receiver at `distance_m`:
/// each no longer than λ/20 and a fifth of the distance, at most max_cable_segments.
inline constexpr std::size_t max_cable_segments = 2000;
[[nodiscard]] std::size_t cable_segment_count(double frequency_hz, double length_m,
                                              double distance_m);

/// The supply cable's CM field at `distance_m` broadside from its middle: segments as above, total
/// current 2·I_C as a travelling wave. [V/m], [A/m].
[[nodiscard]] FieldMagnitude cable_cm_field(double frequency_hz, double cm_current_per_conductor_a,
                                            double length_m, double distance_m);
/// The two-wire line's DM field (loop current I around length × spacing) at `distance_m` from its
/// middle: small-loop segments, the larger field of the in-plane and the perpendicular position.
[[nodiscard]] FieldMagnitude cable_dm_field(double frequency_hz, double dm_current_a,
                                            double length_m, double spacing_m, double distance_m);

/// The radiators of a product, in output order.
enum class Radiator { cable_cm, cable_dm, hot_loop };
inline constexpr std::size_t radiator_count = 3;
/// "cable CM", "cable DM", "hot loop".
[[nodiscard]] std::string radiator_name(Radiator radiator);

/// Geometry of the radiators and where the receiver is.
struct RadiationSetup {
  double distance_m = 3.0;        ///< receiver to the product and to the cable's middle [m], > 0
  double cable_length_m = 1.5;    ///< radiating supply cable or leads [m], > 0
  double cable_spacing_m = 5e-3;  ///< conductor spacing of the cable's two-wire line [m], > 0
  std::optional<double>
      hot_loop_area_m2;  ///< the switching cell's loop [m²]; no hot-loop field when absent
  bool ground_reflection = false;  ///< add 20·log10(2) = 6.02 dB for a reflecting ground
};

/// The currents of the radiators per frequency, RMS magnitudes [A]; each vector empty (absent) or
/// of the size of `frequency_hz`.
struct RadiatorCurrents {
  std::vector<double> frequency_hz;
  std::vector<double> cable_cm_per_conductor_a;  ///< I_C in each conductor
  std::vector<double> cable_dm_a;                ///< the cable's DM loop current
  std::vector<double> hot_loop_a;                ///< the switching cell's pulsed current
};

/// The field of one frequency, per radiator and in total, as the two quantities a receiver responds
/// to: E (a whip) and η0·H (a ferrite rod; the equivalent far field, the broadcasting convention).
struct FieldLine {
  double frequency_hz = 0.0;
  std::array<double, radiator_count> e_dbuvm{};  ///< per radiator [dBµV/m]; level_floor_db for none
  std::array<double, radiator_count> h_dbuvm{};  ///< η0·|H| per radiator [dBµV/m]
  double e_total_dbuvm = 0.0;                    ///< power sum over the radiators
  double h_total_dbuvm = 0.0;
  bool cable_electrically_long =
      false;                ///< L > λ/10: the travelling-wave segments carry the estimate
  bool near_field = false;  ///< r < λ/(2π)
};

/// Fields at `setup.distance_m` of every radiator. Throws Error on mismatched sizes or a
/// non-positive geometry or frequency.
[[nodiscard]] std::vector<FieldLine> radiated_field(const RadiationSetup& setup,
                                                    const RadiatorCurrents& currents);

/// The cable radiators' fields per ampere (CM per conductor ampere, DM loop ampere) of one setup,
/// tabulated on a log-spaced frequency grid of `points_per_decade`, so that a sweep re-radiating
/// thousands of lines at new frequencies interpolates instead of summing the segments again. The
/// fields are linear in the current; their magnitudes are smooth in frequency on the scale of
/// c/L and c/r (tens of MHz for a metre-long cable at metres), and ln|E|, ln|H| are interpolated
/// linearly in ln f: tests/radio/radiated_test.cpp bounds the error against the exact sum.
class CableFieldTable {
 public:
  /// Throws Error on a non-positive geometry or an empty range.
  CableFieldTable(const RadiationSetup& setup, double low_hz, double high_hz, double points_per_decade = 2000.0);
  [[nodiscard]] bool covers(double frequency_hz) const;
  /// {CM field per conductor ampere, DM field per loop ampere} at a covered frequency.
  [[nodiscard]] std::array<FieldMagnitude, 2> per_ampere(double frequency_hz) const;
  [[nodiscard]] const RadiationSetup& setup() const { return setup_; }

 private:
  RadiationSetup setup_;
  double log_low_ = 0.0;
  double log_step_ = 0.0;
  /// Per grid point: ln of |E| and |H| per ampere, CM then DM (ln of a tiny floor for none).
  std::vector<std::array<double, 4>> log_fields_;
};

/// radiated_field() with the cable radiators read from `table` where it covers the frequency (the
/// exact sum elsewhere); the hot loop, in closed form, stays exact. `setup` must be the table's.
[[nodiscard]] std::vector<FieldLine> radiated_field(const RadiationSetup& setup, const RadiatorCurrents& currents,
                                                    const CableFieldTable& table);

/// One paragraph for the report saying which method, geometry and convention the estimate uses.
[[nodiscard]] std::string radiation_convention(const RadiationSetup& setup);

/// V/m to dBµV/m (20·log10(E / 1 µV/m)); level_floor_db for zero.
[[nodiscard]] double field_to_dbuvm(double field_v_per_m);

}  // namespace spurcast
