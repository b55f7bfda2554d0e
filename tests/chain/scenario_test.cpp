// The scenario loader: every example loads; errors name file:line:column and what was expected.
// External check: the TOML 1.0 specification's position conventions (1-based lines and columns,
// as toml++ reports them) and docs/design.md §5's keys.
#include <doctest/doctest.h>

#include <filesystem>
#include <string>

#include "core/input/error.hpp"
#include "core/chain/scenario.hpp"

using namespace spurcast;

namespace {

const std::string source_dir = SPURCAST_SOURCE_DIR;

const char* minimal_switching =
    "[switching]\nfrequency = \"220 kHz\"\nduty = 0.25\namplitude = \"48 V\"\ncurrent = \"6 A\"\n"
    "rise = \"12 ns\"\nfall = \"15 ns\"\n";

}  // namespace

TEST_CASE("every example scenario loads") {
  int count = 0;
  for (const auto& entry : std::filesystem::directory_iterator(source_dir + "/examples")) {
    if (entry.path().extension() != ".toml") continue;
    CAPTURE(entry.path().string());
    const Scenario s = load_scenario(entry.path().string(), locate_shipped_data());
    CHECK(!s.title.empty());
    CHECK((s.switching.has_value() != s.capture.has_value()));
    ++count;
  }
  CHECK(count >= 4);
}

TEST_CASE("the greenhouse example reads with its units") {
  const Scenario s = load_scenario(source_dir + "/examples/greenhouse-buck.toml", locate_shipped_data());
  REQUIRE(s.switching);
  CHECK(s.switching->frequency_hz == doctest::Approx(220e3));
  CHECK(s.switching->rise_s == doctest::Approx(12e-9));
  CHECK(s.coupling.input_capacitance_f == doctest::Approx(4.7e-6));
  CHECK(s.coupling.parasitic_capacitance_f == doctest::Approx(35e-12));
  CHECK(s.filters.size() == 3);
  CHECK(s.lisn.lines == 2);
  CHECK(s.limits.guard_db == doctest::Approx(6.0));
  CHECK(!s.limits.sets.empty());
}

TEST_CASE("a scenario needs exactly one source") {
  CHECK_THROWS_WITH_AS((void)scenario_from_text("title = \"x\"\n", "a.toml", ".", locate_shipped_data()),
                       "a.toml:1:1: a scenario needs a source: a [switching] or a [capture] section", Error);
  const std::string both = std::string(minimal_switching) + "[capture]\nfile = \"x.csv\"\n";
  CHECK_THROWS_AS((void)scenario_from_text(both, "b.toml", ".", locate_shipped_data()), Error);
}

TEST_CASE("unknown top-level keys suggest the nearest section") {
  const std::string text = std::string(minimal_switching) + "[coupleing]\ninput_capacitance = \"1 uF\"\n";
  CHECK_THROWS_WITH_AS((void)scenario_from_text(text, "c.toml", ".", locate_shipped_data()),
                       "c.toml:8:2: unknown key 'coupleing' in [scenario]; did you mean 'coupling'?", Error);
}

TEST_CASE("TOML syntax errors carry line and column") {
  try {
    (void)scenario_from_text("[switching]\nfrequency = \"220 kHz\nduty = 0.25\n", "d.toml", ".", locate_shipped_data());
    FAIL("expected an error");
  } catch (const Error& e) {
    CHECK(e.where().file == "d.toml");
    CHECK(e.where().line == 2);
    CHECK(e.where().column > 0);
    CHECK(std::string(e.what()).rfind("d.toml:2:", 0) == 0);
  }
}

TEST_CASE("a wrong unit inside a section points at the value") {
  const std::string text =
      "[switching]\nfrequency = \"3 V\"\nduty = 0.25\namplitude = \"48 V\"\ncurrent = \"6 A\"\n"
      "rise = \"12 ns\"\nfall = \"15 ns\"\n";
  CHECK_THROWS_WITH_AS((void)scenario_from_text(text, "e.toml", ".", locate_shipped_data()),
                       "e.toml:2:13: expected a frequency (e.g. \"220 kHz\"), found \"3 V\"", Error);
}

TEST_CASE("a missing file is a clear error") {
  CHECK_THROWS_WITH_AS((void)load_scenario("/nonexistent/s.toml", locate_shipped_data()), "/nonexistent/s.toml: cannot open the scenario file (no such file or directory)", Error);
}

TEST_CASE("[converter] sets the input current's shape; its ripple is checked at its own key") {
  const std::string boost = std::string(minimal_switching) + "[converter]\ntopology = \"boost\"\ninductor_ripple = \"2 A\"\n";
  const Scenario s = scenario_from_text(boost, "b.toml", ".", locate_shipped_data());
  REQUIRE(s.switching);
  CHECK(s.converter.topology == Topology::boost);
  CHECK(s.switching->input_current_shape == InputCurrentShape::triangular);
  CHECK(s.switching->current_ripple_a == doctest::Approx(2.0));
  const Scenario plain = scenario_from_text(minimal_switching, "p.toml", ".", locate_shipped_data());
  CHECK(plain.converter.topology == Topology::buck);
  CHECK(plain.switching->input_current_shape == InputCurrentShape::pulsed);
  CHECK(plain.switching->current_ripple_a == 0.0);

  // 6 A of current: a ripple of 13 A peak to peak would take the current below zero.
  const std::string too_large = std::string(minimal_switching) + "[converter]\ninductor_ripple = \"13 A\"\n";
  CHECK_THROWS_WITH_AS((void)scenario_from_text(too_large, "r.toml", ".", locate_shipped_data()),
                       "r.toml:9:19: expected an inductor ripple from 0 to twice the current (12 A, continuous "
                       "conduction), found 13 A",
                       Error);
  const std::string captured =
      "[capture]\nfile = \"captures/scope-switch-node.csv\"\ncolumn = 2\nquantity = \"voltage\"\n"
      "[converter]\ninductor_ripple = \"1 A\"\n";
  CHECK_THROWS_WITH_AS((void)scenario_from_text(captured, "c.toml", source_dir + "/examples", locate_shipped_data()),
                       "c.toml:6:19: 'inductor_ripple' shapes the described input current: it needs [switching]",
                       Error);
}
