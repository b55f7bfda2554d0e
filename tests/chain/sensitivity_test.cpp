// Sensitivities. External checks, each named beside it:
//  - C. R. Paul, Introduction to Electromagnetic Compatibility (2nd ed.), the common-mode path of a
//    switching converter, and the mode split of docs/references.md §2.3: the switch-node voltage
//    drives a current through the parasitic capacitance C into the LISN; while 1/(ωC) ≫ the LISN's
//    common-mode impedance (two 50 Ω in parallel: 25 Ω), the current is jωC·V, so the LISN voltage
//    is proportional to C and to the amplitude V: +10 % of either raises a common-mode-dominated
//    reading by 20·log10(1.1) = 0.828 dB. For C the exact divider jωC·25/(1 + jωC·25) gives the
//    expected figure beside it;
//  - common practice: a value that the scenario's own checks reject after +10 % (a duty of 0.95)
//    is reported with the reader's message, and integer counts and choices are not scaled.
#include "core/chain/sensitivity.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <complex>
#include <numbers>
#include <string>

#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;

namespace {

/// Common mode only in effect: the pulsed input current is 1 mA (the DM drive), the switch node
/// swings 48 V into 10 pF; no input filter. Invented data (a test fixture).
std::string cm_scenario(const std::string& duty = "0.25") {
  return R"(title = "common-mode test buck"
[switching]
frequency = "1 MHz"
duty = )" +
         duty + R"(
amplitude = "48 V"
current = "1 mA"
rise = "12 ns"
fall = "15 ns"
[coupling]
input_capacitance = "4.7 uF"
input_esr = "8 mOhm"
input_esl = "1.5 nH"
parasitic_capacitance = "10 pF"
[lisn]
model = "v-network-50uH"
lines = 2
[limits]
files = ["cispr32-class-b-conducted"]
guard = "6 dB"
)";
}

SensitivityResult run_text(const std::string& text) {
  const toml::table table = parse_toml_text(text, "test.toml");
  SensitivityOptions options;
  options.threads = 2;
  return run_sensitivity(table, "test.toml", SPURCAST_SOURCE_DIR, locate_shipped_data(), options);
}

const Sensitivity* find(const SensitivityResult& r, const std::string& key, std::size_t target) {
  for (const Sensitivity& s : r.sensitivities) {
    if (r.keys[s.key].key == key && s.target == target) return &s;
  }
  return nullptr;
}

// Tolerance of the closed form: the model's other elements (the LISN's 50 µH branch, the input
// capacitor's path) are below 0.01 dB of the CM divider when 1/(ωC) ≫ 25 Ω (judgement).
constexpr double divider_tol_db = 0.01;

}  // namespace

TEST_CASE(
    "a CM-dominated reading moves by 20 log10(1.1) per +10 % of the parasitic capacitance and of "
    "the amplitude") {
  const SensitivityResult r = run_text(cm_scenario());
  int detector_targets = 0;
  const double expected_amplitude_db = 20.0 * std::log10(1.1);  // Paul: V_LISN ∝ V_switch node
  CHECK(expected_amplitude_db == doctest::Approx(0.828).epsilon(1e-3));
  for (std::size_t t = 0; t < r.targets.size(); ++t) {
    const SensitivityTarget& target = r.targets[t];
    if (!target.detector) continue;  // the bands' fields: checked end to end in tests/cli
    ++detector_targets;
    CAPTURE(target.label());
    CAPTURE(target.frequency_hz);
    // The exact CM divider jωC·R/(1 + jωC·R), R = 25 Ω, at the reading's frequency.
    const double w = 2.0 * std::numbers::pi * target.frequency_hz;
    const double c_f = 10e-12;
    const double r_ohm = 25.0;
    REQUIRE(1.0 / (w * c_f) > 100.0 * r_ohm);  // the closed form's condition 1/(ωC) ≫ 25 Ω
    auto divider = [&](double c) {
      return std::abs(std::complex<double>(0.0, w * c * r_ohm) /
                      std::complex<double>(1.0, w * c * r_ohm));
    };
    const double expected_c_db = 20.0 * std::log10(divider(1.1 * c_f) / divider(c_f));

    const Sensitivity* c = find(r, "coupling.parasitic_capacitance", t);
    REQUIRE(c != nullptr);
    REQUIRE(c->db_per_10_percent.has_value());
    CHECK(std::abs(*c->db_per_10_percent - expected_c_db) < divider_tol_db);
    CHECK_FALSE(c->worst_frequency_after_hz.has_value());  // a level change moves no frequency

    const Sensitivity* v = find(r, "switching.amplitude", t);
    REQUIRE(v != nullptr);
    REQUIRE(v->db_per_10_percent.has_value());
    CHECK(std::abs(*v->db_per_10_percent - expected_amplitude_db) < divider_tol_db);

    // The DM drive is negligible here: its +10 % moves the reading by (almost) nothing.
    const Sensitivity* i = find(r, "switching.current", t);
    REQUIRE(i != nullptr);
    REQUIRE(i->db_per_10_percent.has_value());
    CHECK(std::abs(*i->db_per_10_percent) < divider_tol_db);
  }
  CHECK(detector_targets == 2);  // class B has a quasi-peak and an average line
  // Ranked by magnitude within each reading.
  for (std::size_t k = 1; k < r.sensitivities.size(); ++k) {
    if (!r.sensitivities[k].db_per_10_percent ||
        r.sensitivities[k].target != r.sensitivities[k - 1].target)
      continue;
    REQUIRE(r.sensitivities[k - 1].db_per_10_percent.has_value());
    CHECK(std::abs(*r.sensitivities[k - 1].db_per_10_percent) >=
          std::abs(*r.sensitivities[k].db_per_10_percent));
  }
}

TEST_CASE(
    "the switching frequency moves the harmonics: the worst reading's new frequency is stated") {
  const SensitivityResult r = run_text(cm_scenario());
  const Sensitivity* f = find(r, "switching.frequency", 0);
  REQUIRE(f != nullptr);
  CHECK(f->worst_frequency_after_hz.has_value());
}

TEST_CASE("keys: invalid after +10 %, and skipped with the reason") {
  const SensitivityResult r = run_text(cm_scenario("0.95"));
  const auto invalid = std::find_if(r.invalid.begin(), r.invalid.end(), [&](const InvalidKey& k) {
    return r.keys[k.key].key == "switching.duty";
  });
  REQUIRE(invalid != r.invalid.end());
  CHECK(r.keys[invalid->key].value_text == "0.95");
  CHECK(invalid->message == "test.toml: duty must be in (0, 1), found 1.045");
  CHECK_FALSE(
      std::any_of(r.sensitivities.begin(), r.sensitivities.end(),
                  [&](const Sensitivity& s) { return r.keys[s.key].key == "switching.duty"; }));

  auto reason = [&](const std::string& key) {
    for (const SkippedKey& k : r.skipped) {
      if (k.key == key) return k.reason;
    }
    return std::string("(not skipped)");
  };
  CHECK(reason("lisn.lines") == "an integer: a count or a choice");
  CHECK(reason("lisn.model") == "text: a name, a file or a choice");
  CHECK(reason("limits.files") == "a list of values");
  CHECK(reason("limits.guard") == "a level in dB: +10 % of a logarithm is no proportional change");
  CHECK(reason("title") == "(not skipped)");
}

TEST_CASE("keys of arrays of tables are numbered from 1, as `sweep --vary` writes them") {
  const toml::table table = parse_toml_text(cm_scenario() + R"(
[[filter]]
kind = "pi"
lisn_side_capacitance = "4.7 uF"
inductance = "22 uH"
converter_side_capacitance = "10 uF"
)",
                                            "test.toml");
  std::vector<SensitivityKey> keys;
  std::vector<SkippedKey> skipped;
  list_sensitivity_keys(table, keys, skipped);
  const auto it = std::find_if(keys.begin(), keys.end(), [](const SensitivityKey& k) {
    return k.key == "filter.1.inductance";
  });
  REQUIRE(it != keys.end());
  CHECK(it->value_text == "22 uH");
  CHECK(it->value_si == doctest::Approx(22e-6).epsilon(1e-12));
  CHECK(it->dimension == Dimension::inductance);
}

TEST_CASE("a dithered source is refused") {
  std::string text = cm_scenario();
  text.replace(text.find("rise = "), 0,
               "dither = { profile = \"triangle\", deviation = \"8 %\", rate = \"12 kHz\" }\n");
  CHECK_THROWS_WITH_AS((void)run_text(text),
                       "sensitivity needs a described source without dither: a dithered or "
                       "captured source goes through "
                       "the time-domain receiver, too slow to re-run for every key",
                       Error);
}
