// LISN sub-circuits, computed through the MNA engine. External checks:
//  - docs/references.md §2.2 [D]: |Z| and phase of 50 Ω ∥ (50 µH + 5 Ω) (CISPR 16-1-2 V-network) and of
//    50 Ω ∥ (5 µH + 1 Ω) (CISPR 25 artificial network), tabulated to 3 decimals / 2 decimals;
//  - C. R. Paul, Introduction to Electromagnetic Compatibility, 2nd ed., Wiley 2006, Problem 6.1.1
//    (via docs/references.md §2.1): his LISN (50 µH, 0.1 µF coupling, 50 Ω ∥ 1 kΩ port) has an input
//    impedance of 38.31 Ω at 150 kHz and 47.62 Ω at 30 MHz;
//  - the CISPR 16-1-2 impedance tolerance ±20 % / ±11.5°, from memory (docs/references.md §2.2 [M]);
//  - a measured network: a Touchstone one-port written by numpy from 50 Ω ∥ (50 µH + 5 Ω) gives the
//    LISN spectrum of the built-in model.
#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <cstdlib>
#include <filesystem>
#include <fstream>

#include "core/input/error.hpp"
#include "core/coupling/conducted.hpp"
#include "core/coupling/lisn.hpp"
#include "core/coupling/network.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;
using cd = std::complex<double>;

namespace {

const double tol_ohm = 0.0006;  // the table's 3-decimal rounding
const double tol_deg = 0.006;   // the table's 2-decimal rounding
const double pi = 3.14159265358979323846;

double degrees(cd z) { return std::arg(z) * 180.0 / pi; }

struct Row {
  double frequency_hz, magnitude_ohm, phase_deg;
};

std::vector<cd> lisn_impedance(LisnModel model, LisnCircuit circuit, const std::vector<double>& f) {
  Network net;
  const NodeId terminal = net.node("eut");
  (void)add_lisn(net, terminal, model, circuit, "lisn");
  return driving_point_impedance(net, terminal, Network::ground, f);
}

void check_table(LisnModel model, const std::vector<Row>& rows) {
  std::vector<double> f;
  for (const Row& r : rows) f.push_back(r.frequency_hz);
  const auto z = lisn_impedance(model, LisnCircuit::ideal, f);
  for (std::size_t i = 0; i < rows.size(); ++i) {
    CAPTURE(rows[i].frequency_hz);
    CHECK(std::abs(std::abs(z[i]) - rows[i].magnitude_ohm) < tol_ohm);
    CHECK(std::abs(degrees(z[i]) - rows[i].phase_deg) < tol_deg);
    const cd nominal = lisn_nominal_impedance(model, f[i]);
    CHECK(std::abs(z[i] - nominal) < 1e-9 * std::abs(nominal));
  }
}

}  // namespace

TEST_CASE("CISPR 16-1-2 V-network 50 Ω ∥ (50 µH + 5 Ω) through MNA: docs/references.md §2.2 table") {
  check_table(LisnModel::v_network_50uh, {{9e3, 5.215, 26.54},
                                          {150e3, 32.715, 43.35},
                                          {500e3, 47.215, 17.47},
                                          {1e6, 49.257, 9.02},
                                          {2e6, 49.811, 4.55},
                                          {10e6, 49.992, 0.91},
                                          {30e6, 49.999, 0.30}});
}

TEST_CASE("CISPR 25 artificial network 50 Ω ∥ (5 µH + 1 Ω) through MNA: docs/references.md §2.2 table") {
  check_table(LisnModel::v_network_5uh, {{100e3, 3.226, 68.82},
                                         {150e3, 4.703, 72.74},
                                         {500e3, 14.747, 69.24},
                                         {1e6, 26.237, 56.54},
                                         {5e6, 47.557, 17.62},
                                         {10e6, 49.354, 9.04},
                                         {100e6, 49.993, 0.91}});
}

TEST_CASE("Paul's LISN (Introduction to EMC, 2nd ed., Problem 6.1.1): 38.31 Ω at 150 kHz, 47.62 Ω at 30 MHz") {
  // 50 µH from the EUT terminal to the (RF-shorted) mains; 0.1 µF into the 50 Ω receiver with the
  // 1 kΩ resistor across it (Paul, Fig. 6.3, values from Table 6.1 via docs/references.md §2.1).
  const double tol_paul_ohm = 0.006;  // Paul quotes two decimals
  Network net;
  const NodeId eut = net.node("eut"), port = net.node("port");
  net.add_inductor(eut, Network::ground, 50e-6);
  net.add_capacitor(eut, port, 0.1e-6);
  net.add_resistor(port, Network::ground, 50.0);
  net.add_resistor(port, Network::ground, 1e3);
  const auto z = driving_point_impedance(net, eut, Network::ground, {150e3, 30e6});
  CHECK(std::abs(std::abs(z[0]) - 38.31) < tol_paul_ohm);
  CHECK(std::abs(std::abs(z[1]) - 47.62) < tol_paul_ohm);
}

TEST_CASE("practical networks: voltage division factor of the coupling capacitor, closed form") {
  // Port / terminal = (R_rx ∥ R_discharge) / (R_rx ∥ R_discharge + 1/(jωC_coupling)): the divider
  // the lab's voltage-division-factor calibration measures (docs/references.md §2.3).
  for (const LisnModel model : {LisnModel::v_network_50uh, LisnModel::v_network_5uh}) {
    CAPTURE(lisn_model_name(model));
    const LisnParts parts = lisn_parts(model);
    Network net;
    const NodeId terminal = net.node("eut");
    const LisnNodes nodes = add_lisn(net, terminal, model, LisnCircuit::practical, "lisn");
    net.add_current_source(Network::ground, terminal);
    const NetworkSolver solver(net);
    const std::vector<double> f = {150e3, 1e6, 30e6};
    const Transfer t = solver.transfer(f, {Probe::voltage(nodes.port), Probe::voltage(terminal)});
    for (std::size_t i = 0; i < f.size(); ++i) {
      const double r = parts.receiver_resistance_ohm * parts.discharge_resistance_ohm /
                       (parts.receiver_resistance_ohm + parts.discharge_resistance_ohm);
      const cd expected = r / (r + 1.0 / (cd(0, 1) * 2.0 * pi * f[i] * parts.coupling_capacitance_f));
      CHECK(std::abs(t.at(i, 0, 0) / t.at(i, 1, 0) - expected) < 1e-9);
    }
  }
}

TEST_CASE("practical 50 µH network stays within the CISPR 16-1-2 tolerance (±20 %, ±11.5°, from memory)") {
  // From 150 kHz to 30 MHz, against the nominal 50 Ω ∥ (50 µH + 5 Ω).
  const double tol_fraction = 0.20;  // from memory
  const double tol_phase_deg = 11.5; // from memory
  std::vector<double> f;
  for (double x = 150e3; x <= 30e6 * 1.0001; x *= 1.25) f.push_back(x);
  const auto z = lisn_impedance(LisnModel::v_network_50uh, LisnCircuit::practical, f);
  for (std::size_t i = 0; i < f.size(); ++i) {
    CAPTURE(f[i]);
    const cd nominal = lisn_nominal_impedance(LisnModel::v_network_50uh, f[i]);
    CHECK(std::abs(std::abs(z[i]) / std::abs(nominal) - 1.0) < tol_fraction);
    CHECK(std::abs(degrees(z[i]) - degrees(nominal)) < tol_phase_deg);
  }
}

TEST_CASE("practical 50 µH network over band A too: the docs/references.md §2.2 table from 9 kHz, ±20 % / ±11.5°") {
  // The 50 Ω ∥ (50 µH + 5 Ω) table of docs/references.md §2.2 [D] at every listed frequency, with the
  // CISPR 16-1-2 tolerance (§2.2 [M], from memory). With the former 1 µF supply-side capacitor the
  // network read 13.3 Ω at −69° at 9 kHz (series resonance with the 50 µH near 22.5 kHz).
  const double tol_fraction = 0.20;  // from memory
  const double tol_phase_deg = 11.5; // from memory
  const std::vector<Row> table{{9e3, 5.215, 26.54},    {10e3, 5.359, 28.87},   {15e3, 6.223, 38.41},
                               {20e3, 7.253, 44.97},   {30e3, 9.560, 52.33},   {50e3, 14.410, 56.40},
                               {100e3, 25.112, 51.22}, {150e3, 32.715, 43.35}, {200e3, 37.741, 36.65},
                               {300e3, 43.245, 27.23}, {500e3, 47.215, 17.47}, {1e6, 49.257, 9.02},
                               {2e6, 49.811, 4.55},    {5e6, 49.970, 1.82},    {10e6, 49.992, 0.91},
                               {30e6, 49.999, 0.30}};
  std::vector<double> f;
  for (const Row& r : table) f.push_back(r.frequency_hz);
  const auto z = lisn_impedance(LisnModel::v_network_50uh, LisnCircuit::practical, f);
  for (std::size_t i = 0; i < table.size(); ++i) {
    CAPTURE(table[i].frequency_hz);
    CHECK(std::abs(std::abs(z[i]) / table[i].magnitude_ohm - 1.0) < tol_fraction);
    CHECK(std::abs(degrees(z[i]) - table[i].phase_deg) < tol_phase_deg);
  }
  // Closed-form twin of the practical circuit: (jωL + (R_d + 1/(jωC_s)) ∥ jω·1 H) ∥
  // (1/(jωC_c) + R_rx ∥ R_discharge), at 9 kHz.
  const LisnParts parts = lisn_parts(LisnModel::v_network_50uh);
  const double w = 2.0 * pi * 9e3;
  const cd j(0.0, 1.0);
  const cd damping = parts.damping_resistance_ohm + 1.0 / (j * w * parts.supply_capacitance_f);
  const cd supply = 1.0 / (1.0 / damping + 1.0 / (j * w * 1.0));
  const cd series = j * w * parts.inductance_h + supply;
  const double port = parts.receiver_resistance_ohm * parts.discharge_resistance_ohm /
                      (parts.receiver_resistance_ohm + parts.discharge_resistance_ohm);
  const cd receiver = 1.0 / (j * w * parts.coupling_capacitance_f) + port;
  const cd expected = 1.0 / (1.0 / series + 1.0 / receiver);
  CHECK(std::abs(z[0] - expected) < 1e-9 * std::abs(expected));
}

TEST_CASE("[lisn] reader: keys, defaults and exact error text") {
  {
    const auto table = parse_toml_text("model = \"v-network-5uH\"\nlines = 1\ncircuit = \"practical\"\n", "s.toml");
    TableReader reader(table, "s.toml", "lisn");
    const LisnSpec spec = read_lisn_section(reader);
    CHECK(spec.model == LisnModel::v_network_5uh);
    CHECK(spec.lines == 1);
    CHECK(spec.circuit == LisnCircuit::practical);
  }
  {
    const auto table = parse_toml_text("", "s.toml");
    TableReader reader(table, "s.toml", "lisn");
    const LisnSpec spec = read_lisn_section(reader);
    CHECK(spec.model == LisnModel::v_network_50uh);
    CHECK(spec.lines == 2);
    CHECK(spec.circuit == LisnCircuit::ideal);
  }
  {
    const auto table = parse_toml_text("lines = 3\n", "s.toml");
    TableReader reader(table, "s.toml", "lisn");
    CHECK_THROWS_WITH_AS((void)read_lisn_section(reader), "s.toml:1:9: expected 1 or 2 supply lines, found 3", Error);
  }
  {
    const auto table = parse_toml_text("model = \"v-network-50uH\"\nline = 2\n", "s.toml");
    TableReader reader(table, "s.toml", "lisn");
    CHECK_THROWS_WITH_AS((void)read_lisn_section(reader), "s.toml:2:1: unknown key 'line' in [lisn]; did you mean 'lines'?",
                         Error);
  }
  {
    const auto table = parse_toml_text("model = \"v-network-50uh\"\n", "s.toml");
    TableReader reader(table, "s.toml", "lisn");
    CHECK_THROWS_WITH_AS((void)read_lisn_section(reader),
                         "s.toml:1:9: expected one of v-network-50uH or v-network-5uH, found \"v-network-50uh\"; did "
                         "you mean 'v-network-50uH'?",
                         Error);
  }
}

namespace {

LisnSpec read_lisn_at(const std::string& text, const std::string& file) {
  const auto table = parse_toml_text(text, file);
  TableReader reader(table, file, "lisn");
  return read_lisn_section(reader);
}

}  // namespace

TEST_CASE("a measured network from an .s1p written by numpy gives the built-in 50 µH network's spectrum") {
  const char* python = std::filesystem::exists("/usr/bin/python3") ? "/usr/bin/python3" : "python3";
  if (std::system((std::string(python) + " -c \"import numpy\" > /dev/null 2>&1").c_str()) != 0) {
    MESSAGE("SKIPPED: python3 with numpy is not available");
    return;
  }
  // At the file's own frequencies only the 12 written digits differ; between them S11 is
  // interpolated linearly (200 points per decade): 0.005 dB bounds that error.
  const double at_points_rel_tol = 1e-9;
  const double between_points_tol_db = 0.005;
  const auto dir = std::filesystem::temp_directory_path() / "spurcast_lisn_measured";
  std::filesystem::create_directories(dir);
  const std::string file = (dir / "lisn.s1p").string();
  // The impedance CISPR 16-1-2 defines, Z = 50 ∥ (5 + jω·50 µH) (docs/references.md §2.2), as
  // S11 = (Z − 50)/(Z + 50), RI in Hz, 9 kHz to 30 MHz.
  const std::string script = "import numpy as np\n"
                             "f = np.logspace(np.log10(9e3), np.log10(30e6), 706)\n"
                             "z = 1/(1/50 + 1/(5 + 2j*np.pi*f*50e-6))\n"
                             "s = (z - 50)/(z + 50)\n"
                             "with open('" + file + "', 'w') as out:\n"
                             "    out.write('! 50 ohm || (50 uH + 5 ohm)\\n# Hz S RI R 50\\n')\n"
                             "    for fi, si in zip(f, s):\n"
                             "        out.write('%.12e %.12e %.12e\\n' % (fi, si.real, si.imag))\n";
  const std::string script_path = (dir / "write.py").string();
  std::ofstream(script_path) << script;
  REQUIRE(std::system((std::string(python) + " " + script_path).c_str()) == 0);

  const std::string toml = (dir / "s.toml").string();
  for (const int lines : {1, 2}) {
    CAPTURE(lines);
    const LisnSpec measured = read_lisn_at("file = \"lisn.s1p\"\nlines = " + std::to_string(lines) + "\n", toml);
    REQUIRE(measured.measured != nullptr);
    CHECK(measured.file == "lisn.s1p");
    LisnSpec model;
    model.lines = lines;
    const ConductedModel a(CouplingSpec{}, {}, measured), b(CouplingSpec{}, {}, model);

    const std::vector<double> own = measured.measured->frequency_hz;
    const TransferFunctions ha = transfer_at(a, own), hb = transfer_at(b, own);
    for (std::size_t k = 0; k < own.size(); ++k) {
      CHECK(std::abs(ha.port1_per_input_current_ohm[k] - hb.port1_per_input_current_ohm[k]) <=
            at_points_rel_tol * std::abs(hb.port1_per_input_current_ohm[k]));
    }
    // A 220 kHz source's unit lines of both sources, to 30 MHz.
    LineSpectrum v, i;
    v.quantity = Quantity::voltage;
    i.quantity = Quantity::current;
    v.fundamental_hz = i.fundamental_hz = 220e3;
    v.harmonics.assign(136, cd(1.0, 0.0));
    i.harmonics.assign(136, cd(0.0, 1.0));
    const ConductedResult ra = conduct(v, i, a), rb = conduct(v, i, b);
    REQUIRE(ra.line1_v.size() == rb.line1_v.size());
    for (std::size_t k = 0; k < ra.line1_v.size(); ++k) {
      CAPTURE(ra.frequency_hz[k]);
      CHECK(std::abs(20.0 * std::log10(std::abs(ra.line1_v[k]) / std::abs(rb.line1_v[k]))) <= between_points_tol_db);
      if (lines == 2) {
        CHECK(std::abs(20.0 * std::log10(std::abs(ra.line2_v[k]) / std::abs(rb.line2_v[k]))) <=
              between_points_tol_db);
      }
    }
    // Beyond the file: an error naming the file and its range, not an extrapolation.
    CHECK_THROWS_WITH_AS(
        (void)transfer_at(a, {31e6}),
        (dir / "lisn.s1p").string().append(": frequency 31 MHz is outside the file's range, 9 kHz to 30 MHz (no extrapolation)").c_str(),
        Error);
  }
  CHECK_THROWS_WITH_AS((void)read_lisn_at("file = \"lisn.s1p\"\ncircuit = \"practical\"\n", toml),
                       (toml + ":2:11: 'circuit' does not apply to a measured network (file)").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)read_lisn_at("file = \"lisn.s2p\"\n", toml),
                       (toml + ":1:8: expected a .s1p (one-port) file, found 'lisn.s2p'").c_str(), Error);
}
