// Touchstone 1.x reader and measured parts. External checks: a one-port file written by numpy from
// known R, L, C values gives the same LISN spectrum as the same parts given as elements; the S-to-Y
// conversion of a series impedance, S11 = Z/(Z + 2R), S21 = 2R/(Z + 2R) against Y = ±1/Z (two-port
// relations, Pozar, Microwave Engineering, Table 4.2, from memory); the option line's formats (RI,
// MA, DB) and units read as the Touchstone 1.1 specification defines them.
#include "core/coupling/touchstone.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <cstdlib>
#include <filesystem>
#include <fstream>

#include "core/coupling/conducted.hpp"
#include "core/coupling/filter.hpp"
#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;
using cd = std::complex<double>;

namespace {

const double pi = 3.14159265358979323846;
const double parse_tol = 1e-12;  // the same number written three ways
const double exact_point_rel_tol =
    1e-9;  // at the file's own frequencies (12 significant digits written)
const double between_points_tol_db = 0.02;  // linear interpolation on S, 400 points per decade

FilterStage read_stage_at(const std::string& text, const std::string& file) {
  const auto table = parse_toml_text(text, file);
  TableReader reader(table, file, "filter 1");
  return read_filter_stage(reader);
}

std::filesystem::path scratch(const std::string& name) {
  const auto dir = std::filesystem::temp_directory_path() / ("spurcast_touchstone_" + name);
  std::filesystem::create_directories(dir);
  return dir;
}

}  // namespace

TEST_CASE("Touchstone option line: RI, MA and DB, units, reference, comments (Touchstone 1.1)") {
  const cd s(0.3, -0.4);  // |S| = 0.5, angle −53.130102354 degrees
  const auto ri = parse_touchstone(
      "! a comment\n# MHz S RI R 50\n1 0.3 -0.4 ! trailing\n2 0.3 -0.4\n", "a.s1p", 1);
  const auto ma = parse_touchstone(
      "#khz ma\n1000 0.5 -53.13010235415598\n2000 0.5 -53.13010235415598\n", "b.s1p", 1);
  const auto db = parse_touchstone(
      "# Hz S DB R 50\n1e6 -6.020599913279624 -53.13010235415598\n"
      "2e6 -6.020599913279624 -53.13010235415598\n",
      "c.s1p", 1);
  for (const auto* d : {ri.get(), ma.get(), db.get()}) {
    REQUIRE(d->frequency_hz.size() == 2);
    CHECK(std::abs(d->frequency_hz[0] - 1e6) <= parse_tol * 1e6);
    CHECK(std::abs(d->s[1][0] - s) <= parse_tol);
  }
  // Default unit GHz and reference 50 Ω; one-port Y = (1 − S)/(R(1 + S)).
  const auto dflt = parse_touchstone("# S RI\n0.001 0.2 0\n", "d.s1p", 1);
  CHECK(dflt->frequency_hz[0] == doctest::Approx(1e6));
  CHECK(std::abs(dflt->admittance(1e6)[0] - cd(0.8 / (50.0 * 1.2), 0.0)) <= parse_tol);
  const auto r75 = parse_touchstone("# Hz S RI R 75\n1e6 0.2 0\n", "e.s1p", 1);
  CHECK(std::abs(r75->admittance(1e6)[0] - cd(0.8 / (75.0 * 1.2), 0.0)) <= parse_tol);
}

TEST_CASE(
    "two-port: version 1 order S11 S21 S12 S22, records across lines, series-impedance S-to-Y") {
  const double r = 50.0;
  const cd z(3.0, 40.0);
  const cd s11 = z / (z + 2.0 * r), s21 = 2.0 * r / (z + 2.0 * r);
  char text[512];
  std::snprintf(text, sizeof text,
                "# Hz S RI R 50\n1e6 %.17g %.17g %.17g %.17g\n  %.17g %.17g %.17g %.17g\n",
                s11.real(), s11.imag(), s21.real(), s21.imag(), s21.real(), s21.imag(), s11.real(),
                s11.imag());
  const auto two = parse_touchstone(text, "z.s2p", 2);
  const auto y = two->admittance(1e6);
  const cd g = 1.0 / z;
  for (const auto& [value, expected] :
       {std::pair{y[0], g}, std::pair{y[1], -g}, std::pair{y[2], -g}, std::pair{y[3], g}}) {
    CHECK(std::abs(value - expected) <= 1e-12 * std::abs(g));
  }
}

TEST_CASE("Touchstone reader: exact error text") {
  CHECK_THROWS_WITH_AS(
      (void)parse_touchstone("# MHz Z RI\n1 2 3\n", "p.s1p", 1),
      "p.s1p:1:7: expected S parameters, found 'Z' (only scattering parameters are read)", Error);
  CHECK_THROWS_WITH_AS((void)parse_touchstone("# MHz S XY\n", "p.s1p", 1),
                       "p.s1p:1:9: expected Hz, kHz, MHz, GHz, S, RI, MA, DB or R, found 'XY'",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse_touchstone("# MHz S RI R 0\n1 0 0\n", "p.s1p", 1),
                       "p.s1p:1:14: expected a reference resistance > 0, found '0'", Error);
  CHECK_THROWS_WITH_AS((void)parse_touchstone("# MHz S RI\n1 0 0\n# MHz S RI\n", "p.s1p", 1),
                       "p.s1p:3:1: expected one option line, found a second", Error);
  CHECK_THROWS_WITH_AS(
      (void)parse_touchstone("# MHz S RI\n2 0 0\n1 0 0\n", "p.s1p", 1),
      "p.s1p:3:1: expected a frequency above 2 MHz, found 1 MHz (frequencies must increase; noise "
      "parameters are not read)",
      Error);
  CHECK_THROWS_WITH_AS((void)parse_touchstone("# MHz S RI\n1 0 0x\n", "p.s1p", 1),
                       "p.s1p:2:5: expected a number, found '0x'", Error);
  CHECK_THROWS_WITH_AS((void)parse_touchstone("# MHz S RI\n1 0 0\n2 0\n", "p.s1p", 1),
                       "p.s1p:3:1: expected 3 values per frequency, found 2 in the last record",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse_touchstone("# MHz S MA\n1 -0.5 0\n", "p.s1p", 1),
                       "p.s1p:2:3: expected a magnitude >= 0, found '-0.5'", Error);
  CHECK_THROWS_WITH_AS((void)parse_touchstone("! nothing\n", "p.s1p", 1),
                       "p.s1p:1: expected network data, found none", Error);
  CHECK_THROWS_WITH_AS(
      (void)parse_touchstone("[Version] 2.0\n", "p.s1p", 1),
      "p.s1p:1:1: expected Touchstone version 1 data, found a keyword '[Version]' (version 2 files "
      "are not read)",
      Error);
  const auto d = parse_touchstone("# MHz S RI\n1 0 0\n30 0 0\n", "p.s1p", 1);
  CHECK_THROWS_WITH_AS(
      (void)d->s_at(31e6),
      "p.s1p: frequency 31 MHz is outside the file's range, 1 MHz to 30 MHz (no extrapolation)",
      Error);
  CHECK_THROWS_WITH_AS((void)touchstone_ports("part.txt"),
                       "expected a .s1p or .s2p file, found 'part.txt'", Error);
}

TEST_CASE(
    "a one-port written by numpy from R, L, C gives the LISN spectrum of the same parts as "
    "elements") {
  const char* python = std::filesystem::exists("/usr/bin/python3") ? "/usr/bin/python3" : "python3";
  if (std::system((std::string(python) + " -c \"import numpy\" > /dev/null 2>&1").c_str()) != 0) {
    MESSAGE("SKIPPED: python3 with numpy is not available");
    return;
  }
  const auto dir = scratch("numpy");
  const std::string part = (dir / "part.s1p").string();
  // 10 uH with 50 mOhm in series, 5 pF and 20 kOhm across: Z, then S11 = (Z − 50)/(Z + 50), MA in
  // MHz.
  const std::string script =
      "import numpy as np\n"
      "f = np.logspace(4, np.log10(2e8), 2119)\n"
      "w = 2*np.pi*f\n"
      "z = 1/(1/(0.05 + 1j*w*10e-6) + 1j*w*5e-12 + 1/20e3)\n"
      "s = (z - 50)/(z + 50)\n"
      "with open('" +
      part +
      "', 'w') as out:\n"
      "    out.write('! 10 uH, 50 mOhm, 5 pF, 20 kOhm\\n# MHz S MA R 50\\n')\n"
      "    for fi, si in zip(f, s):\n"
      "        out.write('%.12e %.12e %.12e\\n' % (fi/1e6, abs(si), np.angle(si, deg=True)))\n";
  const std::string script_path = (dir / "write.py").string();
  std::ofstream(script_path) << script;
  REQUIRE(std::system((std::string(python) + " " + script_path).c_str()) == 0);

  const std::string toml = (dir / "s.toml").string();
  const FilterStage measured = read_stage_at(
      "kind = \"netlist\"\nelements = [\n"
      "  { type = \"touchstone\", from = \"in+\", to = \"out+\", file = \"part.s1p\" },\n"
      "  { type = \"C\", from = \"out+\", to = \"in-\", value = \"10 uF\" },\n]\n",
      toml);
  const FilterStage parts = read_stage_at(
      "kind = \"netlist\"\nelements = [\n"
      "  { type = \"L\", from = \"in+\", to = \"out+\", value = \"10 uH\", resistance = \"50 "
      "mOhm\", "
      "winding_capacitance = \"5 pF\", core_loss_resistance = \"20 kOhm\" },\n"
      "  { type = \"C\", from = \"out+\", to = \"in-\", value = \"10 uF\" },\n]\n",
      toml);
  const CouplingSpec coupling;
  const LisnSpec lisn;
  const ConductedModel a(coupling, {measured}, lisn), b(coupling, {parts}, lisn);

  // At the file's own frequencies the interpolation is exact.
  const std::vector<double> own = measured.elements[0].touchstone->frequency_hz;
  const TransferFunctions ha = transfer_at(a, own), hb = transfer_at(b, own);
  for (std::size_t i = 0; i < own.size(); ++i) {
    CHECK(std::abs(ha.port1_per_input_current_ohm[i] - hb.port1_per_input_current_ohm[i]) <=
          exact_point_rel_tol * std::abs(hb.port1_per_input_current_ohm[i]));
  }
  // The LISN spectrum of a 220 kHz source to 30 MHz: unit lines of both sources.
  LineSpectrum v, i;
  v.quantity = Quantity::voltage;
  i.quantity = Quantity::current;
  v.fundamental_hz = i.fundamental_hz = 220e3;
  v.harmonics.assign(136, cd(1.0, 0.0));
  i.harmonics.assign(136, cd(0.0, 1.0));
  const ConductedResult ra = conduct(v, i, a), rb = conduct(v, i, b);
  for (std::size_t k = 0; k < ra.line1_v.size(); ++k) {
    CAPTURE(ra.frequency_hz[k]);
    CHECK(std::abs(20.0 * std::log10(std::abs(ra.line1_v[k]) / std::abs(rb.line1_v[k]))) <=
          between_points_tol_db);
    CHECK(std::abs(20.0 * std::log10(std::abs(ra.line2_v[k]) / std::abs(rb.line2_v[k]))) <=
          between_points_tol_db);
  }
  // Beyond the file: an error, not an extrapolation.
  CHECK_THROWS_WITH_AS(
      (void)transfer_at(a, {300e6}),
      (part +
       ": frequency 300 MHz is outside the file's range, 10 kHz to 200 MHz (no extrapolation)")
          .c_str(),
      Error);
}

TEST_CASE("a two-port stage from an .s2p equals the series part it describes") {
  const auto dir = scratch("s2p");
  // A 22 uH inductor with 12 mOhm in series on the positive line, as a two-port with the negative
  // line common: S11 = S22 = Z/(Z + 2R), S21 = S12 = 2R/(Z + 2R).
  std::ofstream out(dir / "choke.s2p");
  out << "# Hz S RI R 50\n";
  std::vector<double> f;
  for (double x = 1e4; x <= 2e8 * 1.0000001; x *= 1.02) f.push_back(x);
  f.back() = std::min(f.back(), 2e8);
  char line[512];
  for (const double fi : f) {
    const cd z(0.012, 2.0 * pi * fi * 22e-6);
    const cd s11 = z / (z + 100.0), s21 = 100.0 / (z + 100.0);
    std::snprintf(line, sizeof line, "%.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g\n", fi,
                  s11.real(), s11.imag(), s21.real(), s21.imag(), s21.real(), s21.imag(),
                  s11.real(), s11.imag());
    out << line;
  }
  out.close();
  const std::string toml = (dir / "s.toml").string();
  const FilterStage two_port = read_stage_at("kind = \"touchstone\"\nfile = \"choke.s2p\"\n", toml);
  const FilterStage inductor = read_stage_at(
      "kind = \"netlist\"\nelements = [ { type = \"L\", from = \"in+\", to = \"out+\", value = "
      "\"22 uH\", "
      "resistance = \"12 mOhm\", winding_capacitance = 0, core_loss_resistance = \"none\" } ]\n",
      toml);
  const ConductedModel a(CouplingSpec{}, {two_port}, LisnSpec{}),
      b(CouplingSpec{}, {inductor}, LisnSpec{});
  const TransferFunctions ha = transfer_at(a, f), hb = transfer_at(b, f);
  for (std::size_t k = 0; k < f.size(); ++k) {
    CHECK(std::abs(ha.port1_per_input_current_ohm[k] - hb.port1_per_input_current_ohm[k]) <=
          exact_point_rel_tol * std::abs(hb.port1_per_input_current_ohm[k]));
    CHECK(std::abs(ha.port2_per_switch_node[k] - hb.port2_per_switch_node[k]) <=
          exact_point_rel_tol * std::abs(hb.port2_per_switch_node[k]) + 1e-15);
  }
  CHECK_THROWS_WITH_AS((void)read_stage_at("kind = \"touchstone\"\nfile = \"part.s1p\"\n", toml),
                       (toml + ":2:8: expected a .s2p (two-port) file, found 'part.s1p'").c_str(),
                       Error);
}
