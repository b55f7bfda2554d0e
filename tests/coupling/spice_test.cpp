// SPICE subcircuits as filter stages. External checks: the SPICE2 value syntax and scale factors
// (Nagel, UCB/ERL M520, 1975: f p n u m k meg g t mil, letters after them ignored, "1F" is a
// femtofarad); the same filter, parasitics included, as a SPICE subcircuit and as TOML stages gives
// the same LISN spectrum.
#include "core/coupling/spice.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <filesystem>
#include <fstream>

#include "core/coupling/conducted.hpp"
#include "core/coupling/filter.hpp"
#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;
using cd = std::complex<double>;

namespace {

const double value_rel_tol = 1e-15;
const double same_circuit_rel_tol = 1e-6;  // one circuit, two element orders: LU rounding only

std::vector<FilterStage> read_stages(const std::string& text, const std::string& file) {
  const auto table = parse_toml_text(text, file);
  std::vector<FilterStage> stages;
  const auto* array = table["filter"].as_array();
  REQUIRE(array != nullptr);
  for (std::size_t i = 0; i < array->size(); ++i) {
    TableReader reader(*array->get(i)->as_table(), file, "filter " + std::to_string(i + 1));
    stages.push_back(read_filter_stage(reader));
  }
  return stages;
}

}  // namespace

TEST_CASE("SPICE values: scale suffixes, any case, trailing letters ignored (SPICE2)") {
  const std::vector<std::pair<std::string, double>> cases{
      {"4.7u", 4.7e-6}, {"2Meg", 2e6}, {"2MEG", 2e6},    {"10uH", 1e-5},     {"1kOhm", 1e3},
      {"1F", 1e-15},    {"3m", 3e-3},  {"1e3", 1e3},     {"1.5e-6", 1.5e-6}, {"2.2n", 2.2e-9},
      {"1t", 1e12},     {"1G", 1e9},   {"5mil", 127e-6}, {"100", 100.0},     {".5p", 0.5e-12},
      {"47uF", 47e-6},  {"10V", 10.0}, {"1e-3m", 1e-6}};
  for (const auto& [text, expected] : cases) {
    CAPTURE(text);
    double value = 0.0;
    REQUIRE(parse_spice_value(text, value));
    CHECK(std::abs(value - expected) <= value_rel_tol * expected);
  }
  double value = 0.0;
  for (const char* bad : {"abc", "1.2.3", "1u5", "", "u", "1-2"}) {
    CAPTURE(bad);
    CHECK_FALSE(parse_spice_value(bad, value));
  }
}

TEST_CASE("the same filter as a SPICE subcircuit and as TOML stages gives the same LISN spectrum") {
  const auto dir = std::filesystem::temp_directory_path() / "spurcast_spice_test";
  std::filesystem::create_directories(dir);
  std::ofstream(dir / "filter.cir")
      << "Input filter of a 48 V buck (a title line)\n"
         "* common-mode choke: 1 mH per winding, k = 0.99, 15 mOhm, 10 pF and 10 kOhm across each\n"
         "* winding, 5 pF between the windings (half at each end)\n"
         ".SUBCKT inputfilter lp ln cp cn gnd_ref\n"
         "Rw1 lp a1 15m\n"
         "Lw1 a1 m_p 1mH\n"
         "Rw2 ln a2 15m ; winding 2\n"
         "lw2 a2 m_n\n"
         "+ 1m\n"
         "K1 Lw1 LW2 0.99\n"
         "Cw1 lp m_p 10p\nRc1 lp m_p 10k\nCw2 ln m_n 10p\nRc2 ln m_n 10k\n"
         "Ciw1 lp ln 2.5p\nCiw2 m_p m_n 2.5p\n"
         "* Y capacitors 4.7 nF, ESR 10 mOhm, ESL 3 nH\n"
         "Cy1 m_p y1 4.7n\nRy1 y1 y1b 10m\nLy1 y1b gnd_ref 3n\n"
         "Cy2 m_n y2 4.7n\nRy2 y2 y2b 10m\nLy2 y2b 0 3n\n"
         "* differential inductor 22 uH on each line, 12 mOhm, 3 pF and 10 kOhm across\n"
         "Rd1 m_p d1 12m\nLd1 d1 cp 22u\nCd1 m_p cp 3p\nRdc1 m_p cp 10k\n"
         "Rd2 m_n d2 12m\nLd2 d2 cn 22u\nCd2 m_n cn 3p\nRdc2 m_n cn 10k\n"
         "* converter-side capacitor 10 uF, 5 mOhm, 2 nH\n"
         "Cx cp x1 10u\nRx x1 x2 5m\nLx x2 cn 2n\n"
         ".ends inputfilter\n"
         ".subckt other 1 2 3 2 0\nR1 1 3 1\n.ends\n"
         ".end\n";
  const std::string toml = (dir / "s.toml").string();
  const std::vector<FilterStage> from_spice = read_stages(
      "[[filter]]\nkind = \"spice\"\nfile = \"filter.cir\"\nsubckt = \"InputFilter\"\n", toml);
  const std::vector<FilterStage> from_toml = read_stages(
      "[[filter]]\nkind = \"common-mode-choke\"\ninductance = \"1 mH\"\ncoupling = "
      "0.99\nwinding_resistance = \"15 mOhm\"\n"
      "winding_capacitance = \"10 pF\"\ncore_loss_resistance = \"10 "
      "kOhm\"\ninterwinding_capacitance = \"5 pF\"\n"
      "[[filter]]\nkind = \"y-capacitors\"\ncapacitance = \"4.7 nF\"\ncapacitor_esr = \"10 "
      "mOhm\"\ncapacitor_esl = \"3 nH\"\n"
      "[[filter]]\nkind = \"lc\"\ninductance = \"22 uH\"\ninductor_resistance = \"12 "
      "mOhm\"\nwinding_capacitance = \"3 pF\"\n"
      "core_loss_resistance = \"10 kOhm\"\ncapacitance = \"10 uF\"\ncapacitor_esr = \"5 "
      "mOhm\"\ncapacitor_esl = \"2 nH\"\n"
      "lines = \"both\"\n",
      toml);
  REQUIRE(from_spice.size() == 1);
  CHECK(from_spice[0].elements.size() ==
        26);  // 28 element cards; the K card joins two inductors into one pair
  const CouplingSpec coupling;
  const LisnSpec lisn;
  const ConductedModel a(coupling, from_spice, lisn), b(coupling, from_toml, lisn);
  LineSpectrum v, i;
  v.quantity = Quantity::voltage;
  i.quantity = Quantity::current;
  v.fundamental_hz = i.fundamental_hz = 220e3;
  v.harmonics.assign(500, cd(1.0, 0.0));
  i.harmonics.assign(500, cd(0.0, 1.0));
  const ConductedResult ra = conduct(v, i, a), rb = conduct(v, i, b);
  for (std::size_t k = 0; k < ra.line1_v.size(); ++k) {
    CAPTURE(ra.frequency_hz[k]);
    CHECK(std::abs(ra.line1_v[k] - rb.line1_v[k]) <=
          same_circuit_rel_tol * std::abs(rb.line1_v[k]));
    CHECK(std::abs(ra.line2_v[k] - rb.line2_v[k]) <=
          same_circuit_rel_tol * std::abs(rb.line2_v[k]));
    CHECK(std::abs(ra.cm_v[k] - rb.cm_v[k]) <= same_circuit_rel_tol * std::abs(rb.cm_v[k]));
  }
  // A repeated pin passes the line through.
  const std::vector<FilterStage> other = read_stages(
      "[[filter]]\nkind = \"spice\"\nfile = \"filter.cir\"\nsubckt = \"other\"\n", toml);
  REQUIRE(other[0].elements.size() == 1);
  CHECK(other[0].elements[0].from == "in+");
  CHECK(other[0].elements[0].to == "out+");
}

TEST_CASE("SPICE reader: anything not read is an error naming file, line and element") {
  auto parse = [](const std::string& text, const std::string& name = "f") {
    return parse_spice_subcircuit(text, "f.cir", name);
  };
  const std::string head = "* filter\n.subckt f 1 2 3 4 0\n";
  CHECK_THROWS_WITH_AS((void)parse(head + "Q1 1 3 0 npn\n.ends\n"),
                       "f.cir:3:1: element 'Q1' is not read (only R, L, C and K elements are)",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse(head + "X1 1 3 sub\n.ends\n"),
                       "f.cir:3:1: element 'X1' is not read (only R, L, C and K elements are)",
                       Error);
  CHECK_THROWS_WITH_AS(
      (void)parse(head + "C1 1 2 1u IC=0\n.ends\n"),
      "f.cir:3:11: element 'C1': expected two nodes and a value, found more: 'IC=0'", Error);
  CHECK_THROWS_WITH_AS((void)parse(head + "R1 1 3 ten\n.ends\n"),
                       "f.cir:3:8: element 'R1': expected a value, found 'ten'", Error);
  CHECK_THROWS_WITH_AS((void)parse(head + ".param x=1\n.ends\n"),
                       "f.cir:3:1: expected .subckt, .ends or .end, found '.param' (not read)",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse(head + "L1 1 3 1u\nL2 2 4 1u\nK1 L1 L3 0.9\n.ends\n"),
                       "f.cir:5:7: element 'K1': no inductor 'L3' in subcircuit 'f'", Error);
  CHECK_THROWS_WITH_AS((void)parse(head + "L1 1 3 1u\nL2 2 4 1u\nK1 L1 L2 1\n.ends\n"),
                       "f.cir:5:10: element 'K1': expected a coupling factor in [0, 1), found '1'",
                       Error);
  CHECK_THROWS_WITH_AS(
      (void)parse(head + "R1 1 3 1\n.ends\n"),
      "f.cir:2:13: pin 2 (LISN-side -) '2' reaches no element; give pin 4's node to pass the line "
      "through",
      Error);
  CHECK_THROWS_WITH_AS(
      (void)parse("* x\n.subckt f 1 1 3 4 0\nR1 1 3 1\n.ends\n"),
      "f.cir:2:13: pin 2 (LISN-side -) repeats node '1'; only a line's two sides may share a node",
      Error);
  CHECK_THROWS_WITH_AS(
      (void)parse("* x\nR1 1 3 1\n"),
      "f.cir:2:1: element 'R1' is outside a subcircuit (only .subckt definitions are read)", Error);
  CHECK_THROWS_WITH_AS((void)parse(head + "R1 1 3 1\nR2 2 4 1\n.ends\n", "g"),
                       "f.cir: no subcircuit 'g' (the file defines f)", Error);
  CHECK_THROWS_WITH_AS((void)parse(head + "R1 1 3 1\n"),
                       "f.cir:3: expected .ends for subcircuit 'f'", Error);
  CHECK_THROWS_WITH_AS((void)parse("+ R1 1 2 3\n"),
                       "f.cir:1:1: expected a line to continue before '+'", Error);
}
