// Units and decibel conversions. External checks: SI prefixes (BIPM SI Brochure, 9th ed., Table 7)
// and the 50 Ω dBm/dBµV relation (docs/references.md §9.2, derived: 10·log10(50e-3) + 120 = 106.99 dB).
#include <doctest/doctest.h>

#include <cmath>

#include "core/input/error.hpp"
#include "core/input/units.hpp"

using spurcast::Dimension;
using spurcast::parse_quantity;

namespace {
const double rel_tol = 1e-12;
const double tol_db = 0.005;
}  // namespace

TEST_CASE("quantities with SI prefixes and units (BIPM SI Brochure Table 7)") {
  CHECK(parse_quantity("220 kHz", Dimension::frequency) == doctest::Approx(220e3).epsilon(rel_tol));
  CHECK(parse_quantity("220kHz", Dimension::frequency) == doctest::Approx(220e3).epsilon(rel_tol));
  CHECK(parse_quantity("12 ns", Dimension::time) == doctest::Approx(12e-9).epsilon(rel_tol));
  CHECK(parse_quantity("4.7 uF", Dimension::capacitance) == doctest::Approx(4.7e-6).epsilon(rel_tol));
  CHECK(parse_quantity("4.7 \xC2\xB5" "F", Dimension::capacitance) == doctest::Approx(4.7e-6).epsilon(rel_tol));
  CHECK(parse_quantity("4.7 \xCE\xBC" "F", Dimension::capacitance) == doctest::Approx(4.7e-6).epsilon(rel_tol));
  CHECK(parse_quantity("8 mOhm", Dimension::resistance) == doctest::Approx(8e-3).epsilon(rel_tol));
  CHECK(parse_quantity("8 m\xCE\xA9", Dimension::resistance) == doctest::Approx(8e-3).epsilon(rel_tol));
  CHECK(parse_quantity("35 pF", Dimension::capacitance) == doctest::Approx(35e-12).epsilon(rel_tol));
  CHECK(parse_quantity("6 %", Dimension::fraction) == doctest::Approx(0.06).epsilon(rel_tol));
  CHECK(parse_quantity("0.25", Dimension::fraction) == doctest::Approx(0.25).epsilon(rel_tol));
  CHECK(parse_quantity("48 V", Dimension::voltage) == doctest::Approx(48.0).epsilon(rel_tol));
  CHECK(parse_quantity("6 A", Dimension::current) == doctest::Approx(6.0).epsilon(rel_tol));
  CHECK(parse_quantity("1.5 nH", Dimension::inductance) == doctest::Approx(1.5e-9).epsilon(rel_tol));
  CHECK(parse_quantity("3 m", Dimension::length) == doctest::Approx(3.0).epsilon(rel_tol));
  CHECK(parse_quantity("1.5 km", Dimension::length) == doctest::Approx(1500.0).epsilon(rel_tol));
  CHECK(parse_quantity("2.2 MHz", Dimension::frequency) == doctest::Approx(2.2e6).epsilon(rel_tol));
  CHECK(parse_quantity("5 mHz", Dimension::frequency) == doctest::Approx(5e-3).epsilon(rel_tol));
  CHECK(parse_quantity("1e3", Dimension::frequency) == doctest::Approx(1e3).epsilon(rel_tol));
  CHECK(parse_quantity("6 dB", Dimension::decibel) == doctest::Approx(6.0).epsilon(rel_tol));
  CHECK(parse_quantity("-3 dB", Dimension::decibel) == doctest::Approx(-3.0).epsilon(rel_tol));
  CHECK(parse_quantity("60 dBuV", Dimension::level_dbuv) == doctest::Approx(60.0).epsilon(rel_tol));
  CHECK(parse_quantity("60 dB\xC2\xB5V", Dimension::level_dbuv) == doctest::Approx(60.0).epsilon(rel_tol));
  CHECK(parse_quantity("40 dBuV/m", Dimension::level_dbuvm) == doctest::Approx(40.0).epsilon(rel_tol));
}

TEST_CASE("a wrong unit for the key is an error that says what was expected") {
  CHECK_THROWS_WITH_AS((void)parse_quantity("3 V", Dimension::frequency),
                       "expected a frequency (e.g. \"220 kHz\"), found \"3 V\"", spurcast::Error);
  CHECK_THROWS_WITH_AS((void)parse_quantity("fast", Dimension::time),
                       "expected a time (e.g. \"12 ns\"), found \"fast\"", spurcast::Error);
  CHECK_THROWS_WITH_AS((void)parse_quantity("6 kdB", Dimension::decibel),
                       "expected a level in dB (e.g. \"6 dB\"), found \"6 kdB\"", spurcast::Error);
  CHECK_THROWS_AS((void)parse_quantity("", Dimension::voltage), spurcast::Error);
  CHECK_THROWS_AS((void)parse_quantity("4.7 xF", Dimension::capacitance), spurcast::Error);
  CHECK_THROWS_AS((void)parse_quantity("inf Hz", Dimension::frequency), spurcast::Error);
  CHECK_THROWS_AS((void)parse_quantity("nan", Dimension::frequency), spurcast::Error);
}

TEST_CASE("decibel conversions (docs/references.md §9.2, derived)") {
  CHECK(std::fabs(spurcast::dbm_to_dbuv_50ohm(0.0) - 106.99) < tol_db);
  CHECK(spurcast::volts_to_dbuv(1e-3) == doctest::Approx(60.0));
  CHECK(spurcast::volts_to_dbuv(0.0) == doctest::Approx(spurcast::level_floor_db));
  CHECK(spurcast::dbuv_to_volts(120.0) == doctest::Approx(1.0));
  // Paul, Introduction to EMC, Table 3.3: two equal in-phase signals add 6.02 dB; equal powers 3.01 dB.
  CHECK(spurcast::db_power_sum(60.0, 60.0) == doctest::Approx(63.0103).epsilon(1e-5));
  CHECK(spurcast::dbuv_to_dbm_50ohm(spurcast::dbm_to_dbuv_50ohm(-20.0)) == doctest::Approx(-20.0));
}

TEST_CASE("format_quantity uses engineering prefixes") {
  CHECK(spurcast::format_quantity(220e3, Dimension::frequency) == "220 kHz");
  CHECK(spurcast::format_quantity(4.7e-6, Dimension::capacitance) == "4.7 \xC2\xB5" "F");
  CHECK(spurcast::format_quantity(0.06, Dimension::fraction) == "6 %");
  CHECK(spurcast::format_quantity(3.0, Dimension::length) == "3 m");
}
