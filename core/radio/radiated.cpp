#include "core/radio/radiated.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "core/input/error.hpp"
#include "core/input/units.hpp"

namespace spurcast {

namespace {

using cplx = std::complex<double>;
constexpr cplx j{0.0, 1.0};

double wavenumber(double frequency_hz) {
  return 2.0 * std::numbers::pi * frequency_hz / speed_of_light_m_per_s;
}

void require_positive(double value, const char* what) {
  if (!(value > 0.0)) throw Error(std::string(what) + " must be positive");
}

/// The bracketed factors of Balanis (4-10) and (5-18): 1 + 1/(jkr) and 1 + 1/(jkr) − 1/(kr)².
struct Brackets {
  cplx first;   ///< 1 + 1/(jkr)
  cplx second;  ///< 1 + 1/(jkr) − 1/(kr)²
  cplx phase;   ///< e^(−jkr)
};
Brackets brackets(double k, double r) {
  const double kr = k * r;
  const cplx inv_jkr = 1.0 / (j * kr);
  return {1.0 + inv_jkr, 1.0 + inv_jkr - 1.0 / (kr * kr), std::polar(1.0, -kr)};
}

double dot(const Vec3& a, const Vec3& b) { return a.x * b.x + a.y * b.y + a.z * b.z; }
Vec3 cross(const Vec3& a, const Vec3& b) {
  return {a.y * b.z - a.z * b.y, a.z * b.x - a.x * b.z, a.x * b.y - a.y * b.x};
}

/// radial·(û·r̂)·r̂ + tangential·((û·r̂)r̂ − û): F_r(θ=0)·cosθ·r̂ + F_θ(θ=90°)·sinθ·θ̂ in Cartesian form.
std::array<cplx, 3> meridian(cplx radial, cplx tangential, const Vec3& axis, const Vec3& unit_r) {
  const double c = dot(axis, unit_r);
  const cplx along_r = (radial + tangential) * c;
  return {along_r * unit_r.x - tangential * axis.x, along_r * unit_r.y - tangential * axis.y,
          along_r * unit_r.z - tangential * axis.z};
}

std::array<cplx, 3> azimuthal(cplx amplitude, const Vec3& axis, const Vec3& unit_r) {
  const Vec3 u = cross(axis, unit_r);
  return {amplitude * u.x, amplitude * u.y, amplitude * u.z};
}

void add(std::array<cplx, 3>& sum, const std::array<cplx, 3>& term) {
  for (std::size_t i = 0; i < 3; ++i) sum[i] += term[i];
}

/// The travelling-wave current of segment `i` of `n` on a wire of `length_m`, centre z of the
/// segment.
struct Segment {
  double z_m;
  cplx current_factor;  ///< e^(−jk·(distance from the product end))
};
Segment segment(std::size_t i, std::size_t n, double length_m, double k) {
  const double dz = length_m / static_cast<double>(n);
  const double from_end = (static_cast<double>(i) + 0.5) * dz;
  return {from_end - 0.5 * length_m, std::polar(1.0, -k * from_end)};
}

}  // namespace

double field_to_dbuvm(double field_v_per_m) {
  return field_v_per_m > 0.0 ? 20.0 * std::log10(field_v_per_m / 1e-6) : level_floor_db;
}

double cm_cable_field_v_per_m(double frequency_hz, double cable_length_m,
                              double cm_current_per_conductor_a, double distance_m) {
  // Paul §8.1.3: the two CM currents add, a Hertzian dipole of current 2·I_C, eq. (7.3c)
  // |E| = (µ0/2)·f·(2·I_C)·L/r = µ0·f·L·I_C/r.
  return mu0_h_per_m * frequency_hz * cable_length_m * std::abs(cm_current_per_conductor_a) /
         distance_m;
}

double dm_loop_field_v_per_m(double frequency_hz, double loop_area_m2, double dm_current_a,
                             double distance_m) {
  // Paul eq. (7.9a): |E| = (π·µ0/c)·f²·A·I/r, the constant 1.3169e-14 (docs/references.md §6.1
  // [D]).
  return std::numbers::pi * mu0_h_per_m / speed_of_light_m_per_s * frequency_hz * frequency_hz *
         loop_area_m2 * std::abs(dm_current_a) / distance_m;
}

DipoleComponents short_dipole_components(double frequency_hz, cplx moment_a_m, double distance_m,
                                         double theta_rad) {
  // Balanis (4-8a)–(4-10c), docs/references.md §6.4.
  const double k = wavenumber(frequency_hz);
  const double r = distance_m;
  const Brackets b = brackets(k, r);
  const cplx common = moment_a_m * b.phase;
  DipoleComponents c;
  c.e_r = eta0_ohm * common * std::cos(theta_rad) / (2.0 * std::numbers::pi * r * r) * b.first;
  c.e_theta =
      j * eta0_ohm * k * common * std::sin(theta_rad) / (4.0 * std::numbers::pi * r) * b.second;
  c.h_phi = j * k * common * std::sin(theta_rad) / (4.0 * std::numbers::pi * r) * b.first;
  return c;
}

LoopComponents small_loop_components(double frequency_hz, cplx moment_a_m2, double distance_m,
                                     double theta_rad) {
  // Balanis (5-18a)–(5-18f) with m = I·πa², docs/references.md §6.4.
  const double k = wavenumber(frequency_hz);
  const double r = distance_m;
  const Brackets b = brackets(k, r);
  const cplx common = moment_a_m2 * b.phase;
  LoopComponents c;
  c.h_r = j * k * common * std::cos(theta_rad) / (2.0 * std::numbers::pi * r * r) * b.first;
  c.h_theta = -k * k * common * std::sin(theta_rad) / (4.0 * std::numbers::pi * r) * b.second;
  c.e_phi =
      eta0_ohm * k * k * common * std::sin(theta_rad) / (4.0 * std::numbers::pi * r) * b.first;
  return c;
}

FieldPhasors short_dipole_field(double frequency_hz, cplx moment_a_m, const Vec3& axis,
                                const Vec3& offset) {
  const double r = std::sqrt(dot(offset, offset));
  const Vec3 unit_r{offset.x / r, offset.y / r, offset.z / r};
  // Components at θ = 90° carry sinθ = 1; the direction vectors below carry the angle.
  const DipoleComponents at_axis = short_dipole_components(frequency_hz, moment_a_m, r, 0.0);
  const DipoleComponents broadside =
      short_dipole_components(frequency_hz, moment_a_m, r, std::numbers::pi / 2.0);
  FieldPhasors f;
  // E = E_r(θ=0)·cosθ·r̂ + E_θ(θ=90°)·sinθ·θ̂, with sinθ·θ̂ = (û·r̂)r̂ − û.
  f.e = meridian(at_axis.e_r, broadside.e_theta, axis, unit_r);
  f.h = azimuthal(broadside.h_phi, axis, unit_r);
  return f;
}

FieldPhasors small_loop_field(double frequency_hz, cplx moment_a_m2, const Vec3& axis,
                              const Vec3& offset) {
  const double r = std::sqrt(dot(offset, offset));
  const Vec3 unit_r{offset.x / r, offset.y / r, offset.z / r};
  const LoopComponents at_axis = small_loop_components(frequency_hz, moment_a_m2, r, 0.0);
  const LoopComponents broadside =
      small_loop_components(frequency_hz, moment_a_m2, r, std::numbers::pi / 2.0);
  FieldPhasors f;
  f.h = meridian(at_axis.h_r, broadside.h_theta, axis, unit_r);
  f.e = azimuthal(broadside.e_phi, axis, unit_r);
  return f;
}

double best_aligned_magnitude(const std::array<cplx, 3>& field) {
  double aa = 0.0, bb = 0.0, ab = 0.0;
  for (const cplx& v : field) {
    aa += v.real() * v.real();
    bb += v.imag() * v.imag();
    ab += v.real() * v.imag();
  }
  // The non-zero eigenvalues of aaᵀ + bbᵀ are those of the Gram matrix [[a·a, a·b], [a·b, b·b]].
  const double half_diff = 0.5 * (aa - bb);
  return std::sqrt(0.5 * (aa + bb) + std::sqrt(half_diff * half_diff + ab * ab));
}

FieldMagnitude short_dipole_worst(double frequency_hz, double moment_a_m, double distance_m) {
  const DipoleComponents axis = short_dipole_components(frequency_hz, moment_a_m, distance_m, 0.0);
  const DipoleComponents side =
      short_dipole_components(frequency_hz, moment_a_m, distance_m, std::numbers::pi / 2.0);
  return {std::max(std::abs(axis.e_r), std::abs(side.e_theta)), std::abs(side.h_phi)};
}

FieldMagnitude small_loop_worst(double frequency_hz, double moment_a_m2, double distance_m) {
  const LoopComponents axis = small_loop_components(frequency_hz, moment_a_m2, distance_m, 0.0);
  const LoopComponents side =
      small_loop_components(frequency_hz, moment_a_m2, distance_m, std::numbers::pi / 2.0);
  return {std::abs(side.e_phi), std::max(std::abs(axis.h_r), std::abs(side.h_theta))};
}

std::size_t cable_segment_count(double frequency_hz, double length_m, double distance_m) {
  const double lambda = speed_of_light_m_per_s / frequency_hz;
  const double longest = std::min(lambda / 20.0, distance_m / 5.0);
  const double n = std::ceil(length_m / longest - 1e-12);
  return static_cast<std::size_t>(std::clamp(n, 1.0, static_cast<double>(max_cable_segments)));
}

FieldMagnitude cable_cm_field(double frequency_hz, double cm_current_per_conductor_a,
                              double length_m, double distance_m) {
  const double k = wavenumber(frequency_hz);
  const std::size_t n = cable_segment_count(frequency_hz, length_m, distance_m);
  const double dz = length_m / static_cast<double>(n);
  const double total_a = 2.0 * std::abs(cm_current_per_conductor_a);
  const Vec3 axis{0.0, 0.0, 1.0};
  FieldPhasors sum;
  for (std::size_t i = 0; i < n; ++i) {
    const Segment s = segment(i, n, length_m, k);
    const FieldPhasors f = short_dipole_field(frequency_hz, total_a * dz * s.current_factor, axis,
                                              {distance_m, 0.0, -s.z_m});
    add(sum.e, f.e);
    add(sum.h, f.h);
  }
  return {best_aligned_magnitude(sum.e), best_aligned_magnitude(sum.h)};
}

FieldMagnitude cable_dm_field(double frequency_hz, double dm_current_a, double length_m,
                              double spacing_m, double distance_m) {
  // Wires along z at y = ±s/2: the line's loop lies in the y–z plane, its moment along x.
  const double k = wavenumber(frequency_hz);
  const std::size_t n = cable_segment_count(frequency_hz, length_m, distance_m);
  const double dz = length_m / static_cast<double>(n);
  const double moment_per_segment = std::abs(dm_current_a) * dz * spacing_m;
  const Vec3 axis{1.0, 0.0, 0.0};
  FieldMagnitude worst;
  for (const Vec3& observer : {Vec3{distance_m, 0.0, 0.0}, Vec3{0.0, distance_m, 0.0}}) {
    FieldPhasors sum;
    for (std::size_t i = 0; i < n; ++i) {
      const Segment s = segment(i, n, length_m, k);
      const FieldPhasors f = small_loop_field(frequency_hz, moment_per_segment * s.current_factor,
                                              axis, {observer.x, observer.y, observer.z - s.z_m});
      add(sum.e, f.e);
      add(sum.h, f.h);
    }
    worst.e_v_per_m = std::max(worst.e_v_per_m, best_aligned_magnitude(sum.e));
    worst.h_a_per_m = std::max(worst.h_a_per_m, best_aligned_magnitude(sum.h));
  }
  return worst;
}

std::string radiator_name(Radiator radiator) {
  switch (radiator) {
    case Radiator::cable_cm:
      return "cable CM";
    case Radiator::cable_dm:
      return "cable DM";
    case Radiator::hot_loop:
      return "hot loop";
  }
  return "cable CM";
}

namespace {

void check_setup(const RadiationSetup& setup) {
  require_positive(setup.distance_m, "distance");
  require_positive(setup.cable_length_m, "cable length");
  require_positive(setup.cable_spacing_m, "cable spacing");
  if (setup.hot_loop_area_m2) require_positive(*setup.hot_loop_area_m2, "hot loop area");
}

/// The loop of radiated_field(), the cable fields per ampere from `cable_per_ampere(f)`.
template <typename CableFields>
std::vector<FieldLine> radiate(const RadiationSetup& setup, const RadiatorCurrents& currents,
                               const CableFields& cable_per_ampere) {
  check_setup(setup);
  const std::size_t count = currents.frequency_hz.size();
  for (const std::vector<double>* v :
       {&currents.cable_cm_per_conductor_a, &currents.cable_dm_a, &currents.hot_loop_a}) {
    if (!v->empty() && v->size() != count) {
      throw Error("expected one current per frequency (" + std::to_string(count) + "), found " +
                  std::to_string(currents.cable_cm_per_conductor_a.size()) + " CM, " +
                  std::to_string(currents.cable_dm_a.size()) + " DM and " +
                  std::to_string(currents.hot_loop_a.size()) + " hot-loop");
    }
  }
  const double reflection = setup.ground_reflection ? 2.0 : 1.0;
  std::vector<FieldLine> lines;
  lines.reserve(count);
  for (std::size_t i = 0; i < count; ++i) {
    const double f = currents.frequency_hz[i];
    require_positive(f, "frequency");
    const double lambda = speed_of_light_m_per_s / f;
    FieldLine line;
    line.frequency_hz = f;
    line.near_field = setup.distance_m < lambda / (2.0 * std::numbers::pi);
    line.cable_electrically_long = setup.cable_length_m > lambda / 10.0;
    std::array<FieldMagnitude, radiator_count> fields{};
    const double cm_a = currents.cable_cm_per_conductor_a.empty() ? 0.0 : std::abs(currents.cable_cm_per_conductor_a[i]);
    const double dm_a = currents.cable_dm_a.empty() ? 0.0 : std::abs(currents.cable_dm_a[i]);
    if (cm_a != 0.0 || dm_a != 0.0) {
      const std::array<FieldMagnitude, 2> unit = cable_per_ampere(f, cm_a != 0.0, dm_a != 0.0);
      fields[0] = {unit[0].e_v_per_m * cm_a, unit[0].h_a_per_m * cm_a};
      fields[1] = {unit[1].e_v_per_m * dm_a, unit[1].h_a_per_m * dm_a};
    }
    if (setup.hot_loop_area_m2 && !currents.hot_loop_a.empty() && currents.hot_loop_a[i] != 0.0) {
      fields[2] = small_loop_worst(f, std::abs(currents.hot_loop_a[i]) * *setup.hot_loop_area_m2,
                                   setup.distance_m);
    }
    double e_power = 0.0, h_power = 0.0;
    for (std::size_t r = 0; r < radiator_count; ++r) {
      const double e = reflection * fields[r].e_v_per_m;
      const double h = reflection * eta0_ohm * fields[r].h_a_per_m;
      line.e_dbuvm[r] = field_to_dbuvm(e);
      line.h_dbuvm[r] = field_to_dbuvm(h);
      e_power += e * e;
      h_power += h * h;
    }
    line.e_total_dbuvm = field_to_dbuvm(std::sqrt(e_power));
    line.h_total_dbuvm = field_to_dbuvm(std::sqrt(h_power));
    lines.push_back(line);
  }
  return lines;
}

/// The exact cable fields per ampere (the fields are linear in the current).
std::array<FieldMagnitude, 2> exact_cable_per_ampere(const RadiationSetup& setup, double f, bool cm, bool dm) {
  std::array<FieldMagnitude, 2> unit{};
  if (cm) unit[0] = cable_cm_field(f, 1.0, setup.cable_length_m, setup.distance_m);
  if (dm) unit[1] = cable_dm_field(f, 1.0, setup.cable_length_m, setup.cable_spacing_m, setup.distance_m);
  return unit;
}

/// ln of a field magnitude, held above a floor far under any level of interest (1e-30 V/m).
double log_field(double value) { return std::log(std::max(value, 1e-30)); }

}  // namespace

std::vector<FieldLine> radiated_field(const RadiationSetup& setup,
                                      const RadiatorCurrents& currents) {
  return radiate(setup, currents,
                 [&](double f, bool cm, bool dm) { return exact_cable_per_ampere(setup, f, cm, dm); });
}

CableFieldTable::CableFieldTable(const RadiationSetup& setup, double low_hz, double high_hz, double points_per_decade)
    : setup_(setup) {
  check_setup(setup);
  require_positive(low_hz, "table frequency");
  if (!(high_hz > low_hz) || !(points_per_decade > 0.0)) throw Error("expected a table range low < high");
  log_low_ = std::log(low_hz);
  log_step_ = std::log(10.0) / points_per_decade;
  const auto points = static_cast<std::size_t>(std::ceil((std::log(high_hz) - log_low_) / log_step_)) + 1;
  log_fields_.reserve(points);
  for (std::size_t i = 0; i < points; ++i) {
    const double f = std::exp(log_low_ + log_step_ * static_cast<double>(i));
    const std::array<FieldMagnitude, 2> unit = exact_cable_per_ampere(setup, f, true, true);
    log_fields_.push_back({log_field(unit[0].e_v_per_m), log_field(unit[0].h_a_per_m), log_field(unit[1].e_v_per_m),
                           log_field(unit[1].h_a_per_m)});
  }
}

bool CableFieldTable::covers(double frequency_hz) const {
  if (!(frequency_hz > 0.0) || log_fields_.size() < 2) return false;
  const double x = (std::log(frequency_hz) - log_low_) / log_step_;
  return x >= 0.0 && x <= static_cast<double>(log_fields_.size() - 1);
}

std::array<FieldMagnitude, 2> CableFieldTable::per_ampere(double frequency_hz) const {
  const double x = (std::log(frequency_hz) - log_low_) / log_step_;
  const auto i = std::min(static_cast<std::size_t>(std::max(x, 0.0)), log_fields_.size() - 2);
  const double w = x - static_cast<double>(i);
  std::array<double, 4> v{};
  for (std::size_t k = 0; k < 4; ++k) v[k] = std::exp((1.0 - w) * log_fields_[i][k] + w * log_fields_[i + 1][k]);
  return {FieldMagnitude{v[0], v[1]}, FieldMagnitude{v[2], v[3]}};
}

std::vector<FieldLine> radiated_field(const RadiationSetup& setup, const RadiatorCurrents& currents,
                                      const CableFieldTable& table) {
  return radiate(setup, currents, [&](double f, bool cm, bool dm) {
    return table.covers(f) ? table.per_ampere(f) : exact_cable_per_ampere(setup, f, cm, dm);
  });
}

std::string radiation_convention(const RadiationSetup& setup) {
  std::string text =
      "Radiated estimate: the exact fields of the short electric dipole and the small magnetic "
      "loop at any "
      "distance (Balanis, Antenna Theory, sections 4.2 and 5.2), near and far field alike; the "
      "supply cable as "
      "short segments carrying its common-mode current (each conductor's I_C, 2 I_C in all) and as "
      "small loops "
      "carrying its differential-mode current around the two-wire line, a travelling wave from the "
      "product end "
      "(standing waves of a mismatched far end, up to +6 dB, are not included); the switching "
      "cell's pulsed "
      "current around the hot loop as one small loop. Worst case: the receiver broadside to the "
      "cable's middle "
      "and in the orientation of the loop that couples most, its antenna aligned with the field; "
      "the radiators "
      "are power-summed (their relative phase is unknown). ";
  text += setup.ground_reflection ? "A +6 dB ground reflection is added."
                                  : "No ground reflection is added (over a "
                                    "ground plane add up to 6 dB).";
  return text;
}

}  // namespace spurcast
