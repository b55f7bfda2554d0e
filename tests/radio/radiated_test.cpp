// Radiated fields. External checks:
// - C. R. Paul, Introduction to Electromagnetic Compatibility, 2nd ed.: Ex. 7.2 (loop, 40.80
// dBµV/m),
//   the CM cable value of docs/references.md §6.2 (7.96 µA), the constants 1.316e-14 (eq. 7.9a) and
//   1.257e-6 (§8.1.3), the half-wave dipole's 60·I/r (§7.1.2, from memory);
// - the exact fields of C. A. Balanis, Antenna Theory, 3rd ed., §4.2 and §5.2 (docs/references.md
// §6.4):
//   their far-field limit (Paul) and static limit (Biot–Savart I·l/(4πr²), m/(4πr³), p/(4πε0 r³)),
//   and a numpy evaluation of the same expressions on a grid (Debian python3-numpy, run from the
//   test);
// - Biot–Savart for a straight finite wire, H = I/(4πρ)·(sinα2 − sinα1) (any electromagnetics text;
//   docs/references.md §6.4 [D] gives the symmetric case), summed over the segments of a rectangle.
#include "core/radio/radiated.hpp"

#include <doctest/doctest.h>
#include <unistd.h>

#include <cmath>
#include <complex>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <numbers>
#include <string>
#include <vector>

#include "core/input/error.hpp"
#include "core/input/units.hpp"

using namespace spurcast;

namespace {
const double tol_db = 0.05;
const double rel_tol = 1e-3;
bool near(double a, double b, double tol) { return std::abs(a - b) <= tol; }
constexpr double pi = std::numbers::pi;

double wavenumber(double f) { return 2.0 * pi * f / speed_of_light_m_per_s; }

/// Biot–Savart field [A/m] of a straight segment a→b carrying `current_a`, at p.
Vec3 segment_h(const Vec3& a, const Vec3& b, const Vec3& p, double current_a) {
  const Vec3 d{b.x - a.x, b.y - a.y, b.z - a.z};
  const double length = std::sqrt(d.x * d.x + d.y * d.y + d.z * d.z);
  const Vec3 u{d.x / length, d.y / length, d.z / length};
  const Vec3 w{p.x - a.x, p.y - a.y, p.z - a.z};
  const double along = w.x * u.x + w.y * u.y + w.z * u.z;
  const Vec3 rho{w.x - along * u.x, w.y - along * u.y, w.z - along * u.z};
  const double r = std::sqrt(rho.x * rho.x + rho.y * rho.y + rho.z * rho.z);
  const double z1 = -along;
  const double z2 = length - along;
  const double magnitude =
      current_a / (4.0 * pi * r) * (z2 / std::hypot(r, z2) - z1 / std::hypot(r, z1));
  // Direction u × ρ̂.
  const Vec3 dir{(u.y * rho.z - u.z * rho.y) / r, (u.z * rho.x - u.x * rho.z) / r,
                 (u.x * rho.y - u.y * rho.x) / r};
  return {magnitude * dir.x, magnitude * dir.y, magnitude * dir.z};
}

double norm(const Vec3& v) { return std::sqrt(v.x * v.x + v.y * v.y + v.z * v.z); }
Vec3 plus(const Vec3& a, const Vec3& b) { return {a.x + b.x, a.y + b.y, a.z + b.z}; }

std::string python_with_numpy() {
  if (std::system("/usr/bin/python3 -c \"import numpy\" > /dev/null 2>&1") == 0)
    return "/usr/bin/python3";
  return "";
}

}  // namespace

TEST_CASE("Paul Ex. 7.2: 1 cm² loop, 100 mA, 50 MHz, 3 m -> 109.7 uV/m = 40.80 dBuV/m") {
  const double field = dm_loop_field_v_per_m(50e6, 1e-4, 0.1, 3.0);
  CHECK(field == doctest::Approx(109.7e-6).epsilon(rel_tol));
  CHECK(near(field_to_dbuvm(field), 40.80, tol_db));
  // Published constant of Paul eq. (7.9a): 1.316e-14.
  CHECK(dm_loop_field_v_per_m(1.0, 1.0, 1.0, 1.0) == doctest::Approx(1.316e-14).epsilon(rel_tol));
}

TEST_CASE(
    "exact loop field -> Paul's far field for kr >> 1 (Ex. 7.2 loop moved out to kr = 3000)") {
  // Paul's formula is the 1/r term of Balanis E_phi; at Ex. 7.2's own point (kr = 3.14) the exact
  // field is higher by |1 + 1/(jkr)| = sqrt(1 + 1/(kr)^2), +0.42 dB.
  const double moment = 0.1 * 1e-4;
  for (const double r : {2865.0, 28650.0}) {
    CAPTURE(r);
    const double exact = small_loop_worst(50e6, moment, r).e_v_per_m;
    CHECK(near(field_to_dbuvm(exact), field_to_dbuvm(dm_loop_field_v_per_m(50e6, 1e-4, 0.1, r)),
               0.001));
  }
  const double kr = wavenumber(50e6) * 3.0;
  const double at_3m = small_loop_worst(50e6, moment, 3.0).e_v_per_m;
  CHECK(near(field_to_dbuvm(at_3m), 40.80 + 10.0 * std::log10(1.0 + 1.0 / (kr * kr)), tol_db));
  // Far field: E/H = eta0 broadside.
  const auto far = small_loop_worst(50e6, moment, 28650.0);
  CHECK(far.e_v_per_m / far.h_a_per_m == doctest::Approx(eta0_ohm).epsilon(rel_tol));
}

TEST_CASE("exact dipole field -> Paul's CM cable formula for kr >> 1 and a short cable") {
  // Paul §8.1.3: a cable of length L with I_C per conductor is a Hertzian dipole of moment 2·I_C·L.
  const double f = 10e6;
  const double r = 10e3;  // kr = 2096
  const double current = 7.96e-6;
  const double paul = cm_cable_field_v_per_m(f, 1.0, current, r);
  CHECK(near(field_to_dbuvm(short_dipole_worst(f, 2.0 * current * 1.0, r).e_v_per_m),
             field_to_dbuvm(paul), 0.001));
  CHECK(near(field_to_dbuvm(cable_cm_field(f, current, 1.0, r).e_v_per_m), field_to_dbuvm(paul),
             0.001));
  // docs/references.md §6.2 [D]: 30 MHz, 1 m, 3 m, 100 uV/m <-> 7.96 uA; the constant 1.257e-6.
  CHECK(cm_cable_field_v_per_m(30e6, 1.0, 7.96e-6, 3.0) ==
        doctest::Approx(100e-6).epsilon(rel_tol));
  CHECK(cm_cable_field_v_per_m(1.0, 1.0, 1.0, 1.0) == doctest::Approx(1.257e-6).epsilon(rel_tol));
}

TEST_CASE("static limits for kr << 1: Biot-Savart, m/(4 pi r^3), p/(4 pi eps0 r^3)") {
  const double tol = 1e-6;
  const double f = 1e3;  // kr = 2e-5 at 1 m
  for (const double r : {0.5, 1.0, 3.0}) {
    CAPTURE(r);
    const double m = 1e-4;  // A·m²
    const LoopComponents loop_side = small_loop_components(f, m, r, pi / 2.0);
    const LoopComponents loop_axis = small_loop_components(f, m, r, 0.0);
    CHECK(std::abs(loop_side.h_theta) == doctest::Approx(m / (4.0 * pi * r * r * r)).epsilon(tol));
    CHECK(std::abs(loop_axis.h_r) == doctest::Approx(m / (2.0 * pi * r * r * r)).epsilon(tol));
    CHECK(small_loop_worst(f, m, r).h_a_per_m ==
          doctest::Approx(m / (2.0 * pi * r * r * r)).epsilon(tol));
    const double il = 1e-3;                // A·m
    const double p = il / (2.0 * pi * f);  // charge moment q·l [C·m], I = jωq
    const DipoleComponents side = short_dipole_components(f, il, r, pi / 2.0);
    const DipoleComponents axis = short_dipole_components(f, il, r, 0.0);
    CHECK(std::abs(side.h_phi) == doctest::Approx(il / (4.0 * pi * r * r)).epsilon(tol));
    CHECK(std::abs(side.e_theta) ==
          doctest::Approx(p / (4.0 * pi * epsilon0_f_per_m * r * r * r)).epsilon(tol));
    CHECK(std::abs(axis.e_r) ==
          doctest::Approx(2.0 * p / (4.0 * pi * epsilon0_f_per_m * r * r * r)).epsilon(tol));
    CHECK(short_dipole_worst(f, il, r).e_v_per_m ==
          doctest::Approx(2.0 * p / (4.0 * pi * epsilon0_f_per_m * r * r * r)).epsilon(tol));
  }
}

TEST_CASE(
    "docs/references.md §6.4 [D]: |H_theta| over the static m/(4 pi r^3) and the near-field "
    "excess") {
  const double tol = 0.001;
  auto ratio = [](double f, double r) {
    return std::abs(small_loop_components(f, 1.0, r, pi / 2.0).h_theta) /
           (1.0 / (4.0 * pi * r * r * r));
  };
  CHECK(near(ratio(1e6, 1.0), 1.000, tol));
  CHECK(near(ratio(1e6, 3.0), 0.998, tol));
  CHECK(near(ratio(10e6, 1.0), 0.979, tol));
  CHECK(near(ratio(10e6, 3.0), 0.872, tol));
  CHECK(near(ratio(30e6, 3.0), 3.18, 0.01));
  // eta0·H of a short cable over Paul's far-field E, broadside: +33.6 dB at 1 MHz and 1 m, +24.0 at
  // 3 m, +47.6 at 200 kHz and 1 m; of a loop +67.1 dB at 1 MHz and 1 m, +48.0 at 3 m.
  const double tol_excess_db = 0.1;
  auto cable_excess = [](double f, double r) {
    const DipoleComponents c = short_dipole_components(f, 1.0, r, pi / 2.0);
    return 20.0 * std::log10(eta0_ohm * std::abs(c.h_phi) / cm_cable_field_v_per_m(f, 0.5, 1.0, r));
  };
  auto loop_excess = [](double f, double r) {
    const LoopComponents c = small_loop_components(f, 1.0, r, pi / 2.0);
    return 20.0 *
           std::log10(eta0_ohm * std::abs(c.h_theta) / dm_loop_field_v_per_m(f, 1.0, 1.0, r));
  };
  CHECK(near(cable_excess(1e6, 1.0), 33.6, tol_excess_db));
  CHECK(near(cable_excess(1e6, 3.0), 24.0, tol_excess_db));
  CHECK(near(cable_excess(200e3, 1.0), 47.6, tol_excess_db));
  CHECK(near(loop_excess(1e6, 1.0), 67.1, tol_excess_db));
  CHECK(near(loop_excess(1e6, 3.0), 48.0, tol_excess_db));
}

TEST_CASE("Balanis expressions against numpy on a grid: 0.5-3 m, 0.15-30 MHz, several angles") {
  const std::string python = python_with_numpy();
  if (python.empty()) {
    MESSAGE("skipped: /usr/bin/python3 with numpy not found (install Debian's python3-numpy)");
    return;
  }
  const std::vector<double> distances{0.5, 1.0, 2.0, 3.0};
  const std::vector<double> frequencies{0.15e6, 0.5e6, 1e6, 3e6, 10e6, 30e6};
  const std::vector<double> angles{0.0, 0.4, pi / 4.0, 1.2, pi / 2.0};
  const std::filesystem::path dir = std::filesystem::temp_directory_path() /
                                    ("spurcast_radiated_test_" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  const std::filesystem::path out = dir / "fields.txt";
  // An independent transcription of Balanis (4-8a)-(4-10c) and (5-18a)-(5-18f), numpy complex
  // arithmetic; eta = mu0*c, Il = 1 A·m, m = 1 A·m². Columns: E_r, E_theta, H_phi, H_r, H_theta,
  // E_phi (re, im).
  const std::string script =
      "import numpy as np, sys\n"
      "mu0 = 4e-7*np.pi; c = 299792458.0; eta = mu0*c\n"
      "rows = []\n"
      "for f in [0.15e6, 0.5e6, 1e6, 3e6, 10e6, 30e6]:\n"
      "  for r in [0.5, 1.0, 2.0, 3.0]:\n"
      "    for t in [0.0, 0.4, np.pi/4, 1.2, np.pi/2]:\n"
      "      k = 2*np.pi*f/c; e = np.exp(-1j*k*r)\n"
      "      Er = eta*np.cos(t)/(2*np.pi*r**2)*(1 + 1/(1j*k*r))*e\n"
      "      Et = 1j*eta*k*np.sin(t)/(4*np.pi*r)*(1 + 1/(1j*k*r) - 1/(k*r)**2)*e\n"
      "      Hp = 1j*k*np.sin(t)/(4*np.pi*r)*(1 + 1/(1j*k*r))*e\n"
      "      Hr = 1j*k*np.cos(t)/(2*np.pi*r**2)*(1 + 1/(1j*k*r))*e\n"
      "      Ht = -k**2*np.sin(t)/(4*np.pi*r)*(1 + 1/(1j*k*r) - 1/(k*r)**2)*e\n"
      "      Ep = eta*k**2*np.sin(t)/(4*np.pi*r)*(1 + 1/(1j*k*r))*e\n"
      "      rows.append([v for z in (Er, Et, Hp, Hr, Ht, Ep) for v in (z.real, z.imag)])\n"
      "np.savetxt(sys.argv[1], np.array(rows), fmt='%.17g')\n";
  const std::filesystem::path script_file = dir / "balanis.py";
  std::ofstream(script_file) << script;
  REQUIRE(std::system((python + " " + script_file.string() + " " + out.string()).c_str()) == 0);
  std::ifstream file(out);
  const double tol = 1e-9;  // relative to the row's largest component of each kind
  std::size_t rows = 0;
  for (const double f : frequencies) {
    for (const double r : distances) {
      for (const double t : angles) {
        CAPTURE(f);
        CAPTURE(r);
        CAPTURE(t);
        double v[12];
        for (double& x : v) {
          const bool read = static_cast<bool>(file >> x);
          REQUIRE(read);
        }
        ++rows;
        const DipoleComponents d = short_dipole_components(f, 1.0, r, t);
        const LoopComponents l = small_loop_components(f, 1.0, r, t);
        const std::complex<double> ours[6] = {d.e_r, d.e_theta, d.h_phi, l.h_r, l.h_theta, l.e_phi};
        double scale_e = 0.0, scale_h = 0.0;
        for (int i = 0; i < 6; ++i) {
          const double mag = std::hypot(v[2 * i], v[2 * i + 1]);
          ((i == 0 || i == 1 || i == 5) ? scale_e : scale_h) =
              std::max((i == 0 || i == 1 || i == 5) ? scale_e : scale_h, mag);
        }
        for (int i = 0; i < 6; ++i) {
          const double scale = (i == 0 || i == 1 || i == 5) ? scale_e : scale_h;
          const double error = std::abs(ours[i] - std::complex<double>(v[2 * i], v[2 * i + 1]));
          CHECK(error <= tol * scale);
        }
      }
    }
  }
  CHECK(rows == frequencies.size() * distances.size() * angles.size());
  std::filesystem::remove_all(dir);
}

TEST_CASE("Cartesian fields rotate the spherical components (any axis)") {
  const double tol = 1e-12;
  const double f = 5e6;
  const double r = 1.7;
  const double theta = 0.7;
  const double phi = 1.1;
  // Axis z: compare with r̂, θ̂, φ̂ written out.
  const Vec3 rhat{std::sin(theta) * std::cos(phi), std::sin(theta) * std::sin(phi),
                  std::cos(theta)};
  const Vec3 that{std::cos(theta) * std::cos(phi), std::cos(theta) * std::sin(phi),
                  -std::sin(theta)};
  const Vec3 phat{-std::sin(phi), std::cos(phi), 0.0};
  const DipoleComponents d = short_dipole_components(f, 1.0, r, theta);
  const FieldPhasors fd =
      short_dipole_field(f, 1.0, {0.0, 0.0, 1.0}, {r * rhat.x, r * rhat.y, r * rhat.z});
  const LoopComponents l = small_loop_components(f, 1.0, r, theta);
  const FieldPhasors fl =
      small_loop_field(f, 1.0, {0.0, 0.0, 1.0}, {r * rhat.x, r * rhat.y, r * rhat.z});
  const double comp[3][3] = {
      {rhat.x, that.x, phat.x}, {rhat.y, that.y, phat.y}, {rhat.z, that.z, phat.z}};
  for (int i = 0; i < 3; ++i) {
    const auto e = d.e_r * comp[i][0] + d.e_theta * comp[i][1];
    const auto h = d.h_phi * comp[i][2];
    const double e_error = std::abs(fd.e[i] - e);
    const double h_error = std::abs(fd.h[i] - h);
    CHECK(e_error <= tol * std::abs(d.e_theta));
    CHECK(h_error <= tol * std::abs(d.h_phi));
    const auto lh = l.h_r * comp[i][0] + l.h_theta * comp[i][1];
    const double lh_error = std::abs(fl.h[i] - lh);
    const double le_error = std::abs(fl.e[i] - l.e_phi * comp[i][2]);
    CHECK(lh_error <= tol * std::abs(l.h_theta));
    CHECK(le_error <= tol * std::abs(l.e_phi));
  }
  // Axis x and an observer on the y axis: broadside, E along −x for the dipole (θ̂ = −û at θ = 90°).
  const FieldPhasors side = short_dipole_field(f, 1.0, {1.0, 0.0, 0.0}, {0.0, r, 0.0});
  const DipoleComponents b = short_dipole_components(f, 1.0, r, pi / 2.0);
  const double along_axis_error = std::abs(side.e[0] + b.e_theta);
  const double across = std::abs(side.e[1]);
  CHECK(along_axis_error <= tol * std::abs(b.e_theta));
  CHECK(across <= tol * std::abs(b.e_theta));
}

TEST_CASE("best-aligned magnitude: linear, circular and elliptical polarisation") {
  const double tol = 1e-12;
  using C = std::complex<double>;
  CHECK(best_aligned_magnitude({C(3.0, 4.0), C(0.0), C(0.0)}) == doctest::Approx(5.0).epsilon(tol));
  // Circular: x + j·y; any aligned linear antenna sees 1.
  CHECK(best_aligned_magnitude({C(1.0, 0.0), C(0.0, 1.0), C(0.0)}) ==
        doctest::Approx(1.0).epsilon(tol));
  // Ellipse with axes 2 (x) and 1 (y).
  CHECK(best_aligned_magnitude({C(2.0, 0.0), C(0.0, 1.0), C(0.0)}) ==
        doctest::Approx(2.0).epsilon(tol));
  // In-phase components: a linear field of length sqrt(1 + 4 + 4) = 3.
  CHECK(best_aligned_magnitude({C(1.0, 1.0), C(2.0, 2.0), C(2.0, 2.0)}) ==
        doctest::Approx(3.0 * std::sqrt(2.0)).epsilon(tol));
}

TEST_CASE(
    "segmented cable, static limit: Biot-Savart of a finite wire, I L / (4 pi r sqrt(r^2 + "
    "(L/2)^2))") {
  // docs/references.md §6.4 [D]: a 1.5 m cable seen from 1 m is not a point (a point dipole would
  // give I L/(4 pi r^2), +2.5 dB too high here).
  const double tol = 2e-3;
  const double f = 1e3;
  const double current_per_conductor = 1e-3;
  for (const auto& [length, distance] :
       {std::pair{1.5, 1.0}, std::pair{1.5, 0.5}, std::pair{0.1, 3.0}}) {
    CAPTURE(length);
    CAPTURE(distance);
    const double total = 2.0 * current_per_conductor;
    const double expected =
        total * length /
        (4.0 * pi * distance * std::sqrt(distance * distance + 0.25 * length * length));
    CHECK(cable_cm_field(f, current_per_conductor, length, distance).h_a_per_m ==
          doctest::Approx(expected).epsilon(tol));
  }
}

TEST_CASE(
    "segmented two-wire line, static limit: Biot-Savart of the closed rectangle, both positions") {
  const double tol = 2e-3;
  const double f = 1e3;
  const double current = 0.1;
  const double spacing = 5e-3;
  for (const auto& [length, distance] :
       {std::pair{1.5, 1.0}, std::pair{0.1, 0.3}, std::pair{1.5, 3.0}}) {
    CAPTURE(length);
    CAPTURE(distance);
    // Wires along z at y = ±s/2 (current +z at y = +s/2), closed at both ends.
    const Vec3 a{0.0, spacing / 2, -length / 2}, b{0.0, spacing / 2, length / 2};
    const Vec3 c{0.0, -spacing / 2, length / 2}, d{0.0, -spacing / 2, -length / 2};
    double worst = 0.0;
    for (const Vec3& p : {Vec3{distance, 0.0, 0.0}, Vec3{0.0, distance, 0.0}}) {
      const Vec3 h = plus(plus(segment_h(a, b, p, current), segment_h(b, c, p, current)),
                          plus(segment_h(c, d, p, current), segment_h(d, a, p, current)));
      worst = std::max(worst, norm(h));
    }
    CHECK(cable_dm_field(f, current, length, spacing, distance).h_a_per_m ==
          doctest::Approx(worst).epsilon(tol));
  }
}

TEST_CASE(
    "long cable, far field: the travelling wave's broadside field never exceeds the half-wave "
    "dipole's 60 (2 I_C) / r") {
  // Paul §7.1.2 (from memory): a half-wave dipole fed with I gives 60·I/r broadside. The travelling
  // wave's effective length |sin(kL/2)|/(k/2) peaks at lambda/pi for L = lambda/2, 3 lambda/2, ...
  const double r = 20e3;
  const double current = 1e-6;
  const double cap = 60.0 * 2.0 * current / r;
  // The midpoint sum of e^(−jkz) over lambda/20 segments exceeds the integral by (pi/20)/sin(pi/20)
  // − 1 = 0.41 % (+0.036 dB).
  const double discretisation_db = 0.04;
  const double discretisation_rel = 0.0042;
  CHECK(near(field_to_dbuvm(cable_cm_field(100e6, current, 1.5, r).e_v_per_m), field_to_dbuvm(cap),
             discretisation_db));
  for (const double f : {30e6, 70e6, 150e6, 300e6}) {
    CAPTURE(f);
    CHECK(cable_cm_field(f, current, 5.0, r).e_v_per_m <= cap * (1.0 + discretisation_rel));
  }
}

TEST_CASE("radiated_field: radiators, shares, eta0 H, ground reflection, validity flags") {
  RadiationSetup setup;  // 3 m, 1.5 m cable, 5 mm spacing
  setup.hot_loop_area_m2 = 2e-4;
  RadiatorCurrents currents;
  currents.frequency_hz = {1e6, 16.5e6, 21e6};
  currents.cable_cm_per_conductor_a = {1e-6, 1e-6, 1e-6};
  currents.cable_dm_a = {1e-5, 1e-5, 1e-5};
  currents.hot_loop_a = {0.1, 0.0, 0.1};
  const auto lines = radiated_field(setup, currents);
  REQUIRE(lines.size() == 3);
  const auto& l = lines[0];
  CHECK(l.e_dbuvm[0] ==
        doctest::Approx(field_to_dbuvm(cable_cm_field(1e6, 1e-6, 1.5, 3.0).e_v_per_m)));
  CHECK(l.h_dbuvm[0] ==
        doctest::Approx(field_to_dbuvm(eta0_ohm * cable_cm_field(1e6, 1e-6, 1.5, 3.0).h_a_per_m)));
  CHECK(l.h_dbuvm[1] == doctest::Approx(field_to_dbuvm(
                            eta0_ohm * cable_dm_field(1e6, 1e-5, 1.5, 5e-3, 3.0).h_a_per_m)));
  CHECK(l.h_dbuvm[2] == doctest::Approx(field_to_dbuvm(
                            eta0_ohm * small_loop_worst(1e6, 0.1 * 2e-4, 3.0).h_a_per_m)));
  CHECK(l.h_total_dbuvm ==
        doctest::Approx(db_power_sum(db_power_sum(l.h_dbuvm[0], l.h_dbuvm[1]), l.h_dbuvm[2])));
  CHECK(l.e_total_dbuvm ==
        doctest::Approx(db_power_sum(db_power_sum(l.e_dbuvm[0], l.e_dbuvm[1]), l.e_dbuvm[2])));
  CHECK(lines[1].h_dbuvm[2] == doctest::Approx(level_floor_db));
  // lambda/(2 pi) = 3 m at 15.9 MHz; lambda/10 = 1.5 m at 19.99 MHz.
  CHECK(lines[0].near_field);
  CHECK_FALSE(lines[1].near_field);
  CHECK_FALSE(lines[1].cable_electrically_long);
  CHECK(lines[2].cable_electrically_long);
  RadiationSetup reflected = setup;
  reflected.ground_reflection = true;
  const auto doubled = radiated_field(reflected, currents);
  CHECK(doubled[0].h_total_dbuvm - l.h_total_dbuvm == doctest::Approx(20.0 * std::log10(2.0)));
  CHECK(radiation_convention(setup).find("No ground reflection") != std::string::npos);
  CHECK(radiation_convention(reflected).find("+6 dB ground reflection is added") !=
        std::string::npos);
  CHECK(radiator_name(Radiator::hot_loop) == "hot loop");
}

TEST_CASE("radiated_field rejects mismatched inputs") {
  RadiationSetup setup;
  RadiatorCurrents currents;
  currents.frequency_hz = {1e6, 2e6};
  currents.cable_cm_per_conductor_a = {1e-6};
  CHECK_THROWS_WITH_AS((void)radiated_field(setup, currents),
                       "expected one current per frequency (2), found 1 CM, 0 DM and 0 hot-loop",
                       Error);
  currents.cable_cm_per_conductor_a = {1e-6, 1e-6};
  setup.distance_m = 0.0;
  CHECK_THROWS_WITH_AS((void)radiated_field(setup, currents), "distance must be positive", Error);
}

TEST_CASE("the cable-field table interpolates the exact segment sums to within 0.01 dB") {
  // Reference: the exact sums themselves (cable_cm_field, cable_dm_field) at 4000 log-spaced
  // frequencies that fall between the table's grid points, over LW to FM, for a mains cable at
  // 3 m and at 1 m and for short battery leads at 1 m (the geometries of the examples).
  constexpr double tol_db = 0.01;
  for (const auto& [length_m, distance_m] : {std::pair{1.5, 3.0}, std::pair{1.5, 1.0}, std::pair{0.15, 1.0}}) {
    RadiationSetup setup;
    setup.cable_length_m = length_m;
    setup.distance_m = distance_m;
    const CableFieldTable table(setup, 140e3, 112e6);
    double worst_db = 0.0;
    for (int i = 0; i < 4000; ++i) {
      const double f = 148.5e3 * std::pow(108e6 / 148.5e3, (i + 0.37) / 4000.0);
      REQUIRE(table.covers(f));
      const auto unit = table.per_ampere(f);
      const FieldMagnitude cm = cable_cm_field(f, 1.0, setup.cable_length_m, setup.distance_m);
      const FieldMagnitude dm = cable_dm_field(f, 1.0, setup.cable_length_m, setup.cable_spacing_m, setup.distance_m);
      for (const auto& [approx, exact] : {std::pair{unit[0].e_v_per_m, cm.e_v_per_m}, std::pair{unit[0].h_a_per_m, cm.h_a_per_m},
                                          std::pair{unit[1].e_v_per_m, dm.e_v_per_m}, std::pair{unit[1].h_a_per_m, dm.h_a_per_m}}) {
        worst_db = std::max(worst_db, std::abs(20.0 * std::log10(approx / exact)));
      }
    }
    CAPTURE(length_m);
    CAPTURE(distance_m);
    CHECK(worst_db < tol_db);
  }
  // radiated_field with the table gives the exact lines (and falls back to the sum outside it).
  RadiationSetup setup;
  setup.hot_loop_area_m2 = 2e-4;
  const CableFieldTable table(setup, 1e6, 10e6);
  RadiatorCurrents currents;
  currents.frequency_hz = {0.5e6, 3.3e6, 9.9e6, 50e6};
  currents.cable_cm_per_conductor_a = {1e-6, 2e-6, 3e-6, 4e-6};
  currents.cable_dm_a = {1e-3, 0.0, 1e-4, 1e-5};
  currents.hot_loop_a = {0.5, 0.1, 0.0, 0.01};
  const auto exact = radiated_field(setup, currents);
  const auto tabled = radiated_field(setup, currents, table);
  REQUIRE(exact.size() == tabled.size());
  for (std::size_t i = 0; i < exact.size(); ++i) {
    CAPTURE(exact[i].frequency_hz);
    CHECK(std::abs(exact[i].e_total_dbuvm - tabled[i].e_total_dbuvm) < tol_db);
    CHECK(std::abs(exact[i].h_total_dbuvm - tabled[i].h_total_dbuvm) < tol_db);
    CHECK(exact[i].cable_electrically_long == tabled[i].cable_electrically_long);
  }
  CHECK(exact[0].e_total_dbuvm == tabled[0].e_total_dbuvm);  // outside the table: the exact sum
}
