// Radiated estimates. External checks: C. R. Paul, Introduction to Electromagnetic Compatibility,
// 2nd ed., Ex. 7.2 (loop) and the CM cable value of docs/references.md §6.2 / §10 items 20, 21 (derived
// there from Paul's formula), the inverse-distance law of a far field (§10 item 27), and the
// published constants 1.316e-14 (Paul eq. 7.9a) and 1.257e-6 (Paul §8.1.3).
#include <doctest/doctest.h>

#include <cmath>
#include <numbers>

#include "core/input/error.hpp"
#include "core/radio/radiated.hpp"
#include "core/input/units.hpp"

using namespace spurcast;

namespace {
const double tol_db = 0.05;
const double rel_tol = 1e-3;
const double tol_distance_db = 0.01;
bool near(double a, double b, double tol) { return std::abs(a - b) <= tol; }
}  // namespace

TEST_CASE("Paul Ex. 7.2: 1 cm² loop, 100 mA, 50 MHz, 3 m -> 109.7 uV/m = 40.80 dBuV/m") {
  const double field = dm_loop_field_v_per_m(50e6, 1e-4, 0.1, 3.0);
  CHECK(field == doctest::Approx(109.7e-6).epsilon(rel_tol));
  CHECK(near(field_to_dbuvm(field), 40.80, tol_db));
  // Published constant of Paul eq. (7.9a): 1.316e-14.
  CHECK(dm_loop_field_v_per_m(1.0, 1.0, 1.0, 1.0) == doctest::Approx(1.316e-14).epsilon(rel_tol));
}

TEST_CASE("Paul CM cable: 30 MHz, 1 m, 3 m, 100 uV/m <-> I_C = 7.96 uA per conductor (docs/references.md §10 item 21)") {
  const double tol_ua = 0.01;
  // Invert |E| = 1.257e-6·f·L·I_C/r for I_C.
  const double per_amp = cm_cable_field_v_per_m(30e6, 1.0, 1.0, 3.0);
  const double current_ua = 100e-6 / per_amp * 1e6;
  CHECK(std::abs(current_ua - 7.96) <= tol_ua);
  CHECK(cm_cable_field_v_per_m(30e6, 1.0, 7.96e-6, 3.0) == doctest::Approx(100e-6).epsilon(rel_tol));
  // Published constant of Paul §8.1.3: 1.257e-6.
  CHECK(cm_cable_field_v_per_m(1.0, 1.0, 1.0, 1.0) == doctest::Approx(1.257e-6).epsilon(rel_tol));
  // docs/references.md §6.2 [D]: 100 MHz, 1 m, 3 m, 1 uA -> 32.44 dBuV/m (the uncapped formula).
  CHECK(std::abs(field_to_dbuvm(cm_cable_field_v_per_m(100e6, 1.0, 1e-6, 3.0)) - 32.44) <= tol_db);
}

TEST_CASE("far field falls as 1/d: 3 m -> 10 m is -10.46 dB (docs/references.md §10 item 27)") {
  RadiationSetup near_setup;
  near_setup.distance_m = 3.0;
  near_setup.cable_length_m = 1.0;
  near_setup.loop_area_m2 = 1e-4;
  RadiationSetup far_setup = near_setup;
  far_setup.distance_m = 10.0;
  const auto at3 = radiated_field(near_setup, {50e6}, {1e-6}, {1e-3});
  const auto at10 = radiated_field(far_setup, {50e6}, {1e-6}, {1e-3});
  CHECK(near(at3[0].cm_dbuvm - at10[0].cm_dbuvm, 10.46, tol_distance_db));
  CHECK(near(at3[0].dm_dbuvm - at10[0].dm_dbuvm, 10.46, tol_distance_db));
  CHECK(near(at3[0].total_dbuvm - at10[0].total_dbuvm, 10.46, tol_distance_db));
}

TEST_CASE("validity flags: near field below lambda/(2 pi), long cable above lambda/10") {
  RadiationSetup setup;  // 3 m, 1.5 m cable
  const auto lines = radiated_field(setup, {1e6, 15e6, 16.5e6, 19e6, 21e6}, {1e-6, 1e-6, 1e-6, 1e-6, 1e-6}, {});
  // lambda/(2 pi) = 3 m at 15.9 MHz.
  CHECK(lines[0].near_field);
  CHECK(lines[1].near_field);
  CHECK_FALSE(lines[2].near_field);
  // lambda/10 = 1.5 m at 19.99 MHz.
  CHECK_FALSE(lines[3].cable_electrically_long);
  CHECK(lines[4].cable_electrically_long);
  // No loop area: no DM field.
  CHECK(lines[0].dm_dbuvm == doctest::Approx(level_floor_db));
}

TEST_CASE("long cable: capped at the half-wave dipole maximum 60 (2 I_C) / r, continuous at L = lambda/pi") {
  // Half-wave dipole broadside field E = 60·I/r (Paul §7.1.2, from memory), with the total CM
  // current 2·I_C.
  RadiationSetup setup;
  setup.cable_length_m = 10.0;
  const double current_a = 1e-6;
  const auto lines = radiated_field(setup, {100e6, 300e6}, {current_a, current_a}, {});
  for (const auto& line : lines) {
    CAPTURE(line.frequency_hz);
    CHECK(line.cable_electrically_long);
    CHECK(line.cm_dbuvm == doctest::Approx(field_to_dbuvm(60.0 * 2.0 * current_a / 3.0)).epsilon(1e-3));
  }
  // At L = lambda/pi the short-dipole formula and the cap meet.
  const double f = 50e6;
  const double length = cm_effective_length_cap_m(f);
  CHECK(cm_cable_field_v_per_m(f, length, current_a, 3.0) == doctest::Approx(120.0 * current_a / 3.0).epsilon(1e-3));
}

TEST_CASE("DM loop: capped at two antiphase half-wave dipoles, 120 I / r") {
  RadiationSetup setup;
  setup.loop_area_m2 = 0.01;  // 10 cm x 10 cm
  const auto lines = radiated_field(setup, {1e9}, {0.0}, {1e-3});
  CHECK(lines[0].loop_electrically_large);
  CHECK(lines[0].dm_dbuvm == doctest::Approx(field_to_dbuvm(120.0 * 1e-3 / 3.0)).epsilon(1e-3));
}

TEST_CASE("ground reflection adds 6.02 dB; CM and DM power-sum") {
  RadiationSetup free_space;
  free_space.loop_area_m2 = 1e-4;
  free_space.cable_length_m = 1.0;
  RadiationSetup reflected = free_space;
  reflected.ground_reflection = true;
  const auto a = radiated_field(free_space, {30e6}, {7.96e-6}, {0.1});
  const auto b = radiated_field(reflected, {30e6}, {7.96e-6}, {0.1});
  CHECK(b[0].cm_dbuvm - a[0].cm_dbuvm == doctest::Approx(20.0 * std::log10(2.0)));
  CHECK(b[0].dm_dbuvm - a[0].dm_dbuvm == doctest::Approx(20.0 * std::log10(2.0)));
  CHECK(a[0].total_dbuvm == doctest::Approx(db_power_sum(a[0].cm_dbuvm, a[0].dm_dbuvm)));
  CHECK(radiation_convention(free_space).find("each conductor") != std::string::npos);
  CHECK(radiation_convention(free_space).find("6 dB error") != std::string::npos);
  CHECK(radiation_convention(reflected).find("+6 dB ground reflection is added") != std::string::npos);
}

TEST_CASE("radiated_field rejects mismatched inputs") {
  RadiationSetup setup;
  CHECK_THROWS_WITH_AS((void)radiated_field(setup, {1e6, 2e6}, {1e-6}, {}),
                       "expected one current per frequency (2), found 1 CM and 0 DM", Error);
  setup.distance_m = 0.0;
  CHECK_THROWS_WITH_AS((void)radiated_field(setup, {1e6}, {1e-6}, {}), "distance must be positive", Error);
}
