// Receiving antennas. External checks: Faraday's law V = ω·µ0·µ_rod·N·A·H against E. C. Snelling's
// effective height h_eff = µ_rod·2πNA/λ (Soft Ferrites, 1969; docs/references.md §6.5) in a plane
// wave (E = η0·H), and the common practice of portable receivers (ferrite rod on LW and MW, whip
// above).
#include "core/radio/antenna.hpp"

#include <doctest/doctest.h>

#include <cmath>

#include "core/input/error.hpp"
#include "core/radio/radiated.hpp"

using namespace spurcast;

TEST_CASE("ferrite rod: Faraday's voltage equals h_eff * E in a plane wave (Snelling)") {
  const double rel_tol = 1e-12;
  // A typical MW rod: µ_rod 100 (judgement), 60 turns, 10 mm diameter.
  const double mu_rod = 100.0;
  const double turns = 60.0;
  const double area = 3.14159e-4 / 4.0;
  for (const double f : {153e3, 531e3, 999e3, 1602e3}) {
    CAPTURE(f);
    const double e_v_per_m = 1e-3;  // 60 dBµV/m
    const double h = e_v_per_m / eta0_ohm;
    const double faraday = ferrite_rod_voltage_v(f, mu_rod, turns, area, h);
    const double snelling = ferrite_rod_effective_height_m(f, mu_rod, turns, area) * e_v_per_m;
    CHECK(faraday == doctest::Approx(snelling).epsilon(rel_tol));
  }
  // h_eff grows with frequency: 2π·100·60·7.85e-5/λ = 2.96/λ m; at 1 MHz (λ = 299.8 m) 9.87 mm.
  CHECK(ferrite_rod_effective_height_m(1e6, mu_rod, turns, area) ==
        doctest::Approx(9.87e-3).epsilon(1e-3));
}

TEST_CASE(
    "antenna per band: ferrite rod on LW and MW, whip on SW and FM (common practice); overrides") {
  CHECK(antenna_for_band(AntennaChoice::automatic, 283.5e3) == AntennaKind::ferrite);
  CHECK(antenna_for_band(AntennaChoice::automatic, 1705e3) == AntennaKind::ferrite);
  CHECK(antenna_for_band(AntennaChoice::automatic, 2.495e6) == AntennaKind::whip);
  CHECK(antenna_for_band(AntennaChoice::automatic, 108e6) == AntennaKind::whip);
  CHECK(antenna_for_band(AntennaChoice::ferrite, 108e6) == AntennaKind::ferrite);
  CHECK(antenna_for_band(AntennaChoice::whip, 283.5e3) == AntennaKind::whip);
  CHECK(antenna_choice_from_name("auto") == AntennaChoice::automatic);
  CHECK(antenna_choice_name(AntennaChoice::ferrite) == "ferrite");
  CHECK(antenna_name(AntennaKind::whip) == "whip");
  CHECK_THROWS_WITH_AS((void)antenna_choice_from_name("rod"),
                       "expected one of auto, ferrite or whip, found \"rod\"", Error);
}
