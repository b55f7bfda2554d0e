// The input-filter planner. External checks: the Würth Elektronik worked example (Power
// Electronics News eBook, July 2022, p. 8; docs/references.md §9.3): between a 220 µF / 100 mΩ bulk
// capacitor and 50 Ω, C1 = 47 µF and L1 = 240 nH give 34.7 dB at 350 kHz with a 47.4 kHz corner,
// and 35 dB at 350 kHz is the requirement; the E6 series (IEC 60063); the touch-current bound of
// docs/references.md §9.6; and end to end, the planner's scenario for examples/greenhouse-buck.toml
// (which fails the average line by 7.16 dB) passes predict() with the guard band.
#include "core/chain/filter_design.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <numbers>

#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;

namespace {
constexpr double db_tolerance = 0.05;  ///< the article's figures are given to 0.1 dB
const NoiseSource wurth_source{220e-6, 0.1, 0.0};
constexpr double wurth_load_ohm = 50.0;

double corner_hz(double l, double c) { return 1.0 / (2.0 * std::numbers::pi * std::sqrt(l * c)); }
}  // namespace

TEST_CASE("E6 series") {
  CHECK(e6_at_or_above(4.0e-6) == doctest::Approx(4.7e-6));
  CHECK(e6_at_or_above(4.7e-6) == doctest::Approx(4.7e-6));
  CHECK(e6_at_or_above(7.0e-9) == doctest::Approx(10e-9));
  CHECK(e6_at_or_below(6.92e-9) == doctest::Approx(6.8e-9));
  CHECK(e6_at_or_below(2.2e-9) == doctest::Approx(2.2e-9));
  CHECK(e6_next(6.8e-6) == doctest::Approx(10e-6));
}

TEST_CASE("Würth Elektronik: 47 µF and 240 nH give 34.7 dB at 350 kHz") {
  ClSection s;
  s.inductance_h = 240e-9;
  s.capacitance_f = 47e-6;
  CHECK(cl_insertion_loss_db(s, wurth_source, wurth_load_ohm, 350e3) ==
        doctest::Approx(34.7).epsilon(db_tolerance / 34.7));
  CHECK(corner_hz(s.inductance_h, s.capacitance_f) ==
        doctest::Approx(47.4e3).epsilon(0.1e3 / 47.4e3));
}

TEST_CASE(
    "Würth Elektronik: the planner's section reaches 35 dB at 350 kHz with a corner in the same "
    "range") {
  for (const bool parasitics : {false, true}) {
    CAPTURE(parasitics);
    const auto s =
        size_cl_section({{350e3, 35.0}}, wurth_source, wurth_load_ohm, 1e-3, 100e-6, parasitics);
    REQUIRE(s);
    CHECK(cl_insertion_loss_db(*s, wurth_source, wurth_load_ohm, 350e3) >= 35.0);
    // The article's corner is 47.4 kHz; 35 dB at 40 dB/decade asks for at most 350 kHz·10^(−35/40)
    // = 46.7 kHz, and one E6 step below that (a factor 1.5 in L·C, 1.22 in frequency) is the range.
    const double corner = corner_hz(s->inductance_h, s->capacitance_f);
    CHECK(corner <= 47.4e3);
    CHECK(corner >= 47.4e3 / 1.5);
  }
  CHECK_FALSE(size_cl_section({{350e3, 35.0}}, wurth_source, wurth_load_ohm, 200e-9, 2.2e-6, true));
}

TEST_CASE("end to end: the greenhouse buck's planned scenario passes predict with the guard") {
  const std::string path = std::string(SPURCAST_SOURCE_DIR) + "/examples/greenhouse-buck.toml";
  const toml::table table = parse_toml_file(path, "scenario file");
  const FilterDesign d = design_filter(table, path, std::string(SPURCAST_SOURCE_DIR) + "/examples",
                                       locate_shipped_data());
  CHECK(d.verdict_before == Verdict::fail);
  REQUIRE(d.met);
  CHECK(d.binding.empty());
  CHECK(d.y_capacitance_per_line_f <= d.max_y_capacitance_f);
  CHECK(d.max_y_capacitance_f == doctest::Approx(6.92e-9).epsilon(1e-3));
  // The required attenuation at 220 kHz (average): 7.16 dB over the line plus the 6 dB guard.
  bool found = false;
  for (const RequiredAttenuation& r : d.required) {
    if (std::abs(r.frequency_hz - 220e3) < 1.0 && r.detector == "average") {
      CHECK(r.required_db == doctest::Approx(13.16).epsilon(0.01 / 13.16));
      found = true;
    }
  }
  CHECK(found);
  // NEW.toml, read back as the CLI's predict reads it: every conducted margin at least the guard.
  const Scenario planned =
      scenario_from_text(d.scenario_toml, "new.toml",
                         std::string(SPURCAST_SOURCE_DIR) + "/examples", locate_shipped_data());
  const Prediction p = predict(planned);
  CHECK(p.verdict == Verdict::pass);
  REQUIRE(p.margins.worst);
  CHECK(p.margins.worst->margin_db >= d.guard_db);
  CHECK(d.scenario_toml.rfind(filter_design_header, 0) == 0);
}

TEST_CASE("a tight touch-current limit binds, and says by how much") {
  const std::string path = std::string(SPURCAST_SOURCE_DIR) + "/examples/greenhouse-buck.toml";
  toml::table table = parse_toml_file(path, "scenario file");
  table.insert_or_assign("safety", toml::table{{"touch_current", "0.1 mA"}});
  const FilterDesign d = design_filter(table, path, std::string(SPURCAST_SOURCE_DIR) + "/examples",
                                       locate_shipped_data());
  CHECK_FALSE(d.met);
  CHECK(d.binding.find(
            "common mode: the CM choke is at the largest part considered (47 mH per winding) and "
            "the Y "
            "capacitance at 4.7 nF per line against the touch-current limit of 1.384 nF") == 0);
  CHECK(d.binding.find(" dB short at ") != std::string::npos);
}

TEST_CASE("a scenario without limit lines is refused") {
  const toml::table table = parse_toml_text(
      "[switching]\nfrequency = \"220 kHz\"\nduty = 0.25\namplitude = \"48 V\"\ncurrent = \"6 "
      "A\"\nrise = \"12 ns\"\nfall = \"15 ns\"\n",
      "nolimits.toml");
  CHECK_THROWS_WITH_AS(
      design_filter(table, "nolimits.toml", ".", locate_shipped_data()),
      "nolimits.toml: design-filter needs limit lines to design against: give [limits] files",
      Error);
}
