// The product as a radiator: [supply] and [board], the battery leads' currents. External checks:
// the self-capacitance of an isolated sphere C = 4π·ε0·a (textbook physics; docs/references.md
// §6.5: about 11 pF for a = 10 cm), the two-wire line inductance (µ0/π)·acosh(s/d) per metre (any
// transmission-line text; 0.92 µH/m for s/d = 5), and the current divider of two impedances in
// parallel (Kirchhoff).
#include "core/radio/product.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <numbers>

#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;

namespace {
SupplySpec read_supply(const std::string& text) {
  const toml::table table = parse_toml_text(text, "s.toml");
  TableReader reader(table, "s.toml", "supply");
  return read_supply_section(reader);
}
BoardSpec read_board(const std::string& text) {
  const toml::table table = parse_toml_text(text, "s.toml");
  TableReader reader(table, "s.toml", "board");
  return read_board_section(reader);
}
}  // namespace

TEST_CASE("self-capacitance of a sphere and the two-wire inductance") {
  CHECK(product_self_capacitance_f(0.2) == doctest::Approx(11.13e-12).epsilon(1e-3));
  CHECK(two_wire_inductance_h(1.0, 5e-3, 1e-3) == doctest::Approx(0.9170e-6).epsilon(1e-3));
}

TEST_CASE("[supply] and [board]: defaults, every key, errors at the key") {
  const SupplySpec mains = read_supply("");
  CHECK(mains.kind == SupplyKind::mains);
  CHECK(mains.lead_spacing_m == doctest::Approx(5e-3));
  const SupplySpec battery = read_supply(
      "kind = \"battery\"\nlead_length = \"120 mm\"\nlead_spacing = \"3 mm\"\ninternal_resistance "
      "= \"150 mOhm\"\n"
      "product_size = \"80 mm\"\n");
  CHECK(battery.kind == SupplyKind::battery);
  CHECK(battery.lead_length_m == doctest::Approx(0.12));
  CHECK(battery.lead_spacing_m == doctest::Approx(3e-3));
  CHECK(battery.internal_resistance_ohm == doctest::Approx(0.15));
  CHECK(battery.product_size_m == doctest::Approx(0.08));
  CHECK(read_supply("kind = \"dc\"\n").kind == SupplyKind::dc);
  CHECK_THROWS_WITH_AS((void)read_supply("kind = \"mains\"\nlead_length = \"1 m\"\n"),
                       "s.toml:2:15: lead_length applies to kind = \"battery\" (a mains supply's "
                       "cable is [broadcast] "
                       "cable_length)",
                       Error);
  CHECK_THROWS_WITH_AS((void)read_supply("kind = \"solar\"\n"),
                       "s.toml:1:8: expected one of mains, dc or battery, found \"solar\"", Error);
  CHECK_THROWS_WITH_AS((void)read_supply("kind = \"battery\"\nlead_spacing = \"0.5 mm\"\n"),
                       "s.toml:2:16: lead spacing must exceed the wire diameter (1 mm)", Error);
  CHECK(*read_board("hot_loop_area = \"2 cm2\"\n").hot_loop_area_m2 == doctest::Approx(2e-4));
  CHECK_FALSE(read_board("").hot_loop_area_m2);
  CHECK_THROWS_WITH_AS((void)read_board("hot_loop_area = \"2 cm\"\n"),
                       "s.toml:1:17: expected an area (e.g. \"4 cm2\"), found \"2 cm\"", Error);
  CHECK_THROWS_WITH_AS(
      (void)read_board("hot_loop_aera = \"2 cm2\"\n"),
      "s.toml:1:1: unknown key 'hot_loop_aera' in [board]; did you mean 'hot_loop_area'?", Error);
}

TEST_CASE(
    "battery leads: the DM current divides as Kirchhoff says; the CM current is jw V C_series") {
  SupplySpec supply;
  supply.kind = SupplyKind::battery;
  supply.lead_length_m = 0.1;
  supply.lead_spacing_m = 5e-3;
  supply.internal_resistance_ohm = 0.1;
  supply.product_size_m = 0.1;
  CouplingSpec coupling;  // 10 µF, 5 mΩ, 1 nH, 30 pF
  LineSpectrum v;
  v.quantity = Quantity::voltage;
  v.fundamental_hz = 100e3;
  v.harmonics = {{10.0, 0.0}, {0.0, 5.0}};
  LineSpectrum i;
  i.quantity = Quantity::current;
  i.fundamental_hz = 100e3;
  i.harmonics = {{1.0, 0.0}, {0.5, 0.0}, {0.2, 0.0}};
  const BatteryCurrents out = battery_lead_currents(supply, coupling, v, i);
  REQUIRE(out.frequency_hz.size() == 3);
  const double rel_tol = 1e-12;
  const std::complex<double> j{0.0, 1.0};
  for (std::size_t k = 0; k < 3; ++k) {
    CAPTURE(k);
    const double w = 2.0 * std::numbers::pi * out.frequency_hz[k];
    const std::complex<double> zc = 5e-3 + j * w * 1e-9 + 1.0 / (j * w * 10e-6);
    const std::complex<double> zl = 0.1 + j * w * (4e-7 * std::acosh(5.0) * 0.1);
    const std::complex<double> expected = i.harmonics[k] * zc / (zc + zl);
    CHECK(std::abs(out.dm_a[k] - expected) <= rel_tol * std::abs(expected));
    // CM: 30 pF in series with 4π ε0 (5 cm) = 5.56 pF.
    const double c_self = 4.0 * std::numbers::pi * 8.8541878128e-12 * 0.05;
    const double c_series = 30e-12 * c_self / (30e-12 + c_self);
    const double v_k = k < v.harmonics.size() ? std::abs(v.harmonics[k]) : 0.0;
    CHECK(std::abs(out.cm_per_conductor_a[k]) ==
          doctest::Approx(0.5 * w * c_series * v_k).epsilon(1e-6));
  }
}
