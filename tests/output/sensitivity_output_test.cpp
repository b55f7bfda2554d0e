// The sensitivity writers. External check: the JSON parses with nlohmann (an independent JSON
// reader) and holds the fields docs/design.md §4 names; the text line reads as the command's
// documented example.
#include "core/output/sensitivity_output.hpp"

#include <doctest/doctest.h>

#include <nlohmann/json.hpp>
#include <string>

using namespace spurcast;

namespace {

SensitivityResult example() {
  SensitivityResult r;
  r.scenario_file = "buck.toml";
  SensitivityTarget qp;
  qp.detector = Detector::quasi_peak;
  qp.frequency_hz = 220e3;
  qp.level = 70.5;
  qp.unit = "dBµV";
  qp.margin_db = -7.5;
  qp.limit_label = "class B / quasi-peak";
  SensitivityTarget mw;
  mw.band = "MW";
  mw.frequency_hz = 1.098e6;
  mw.level = 31.0;
  mw.unit = "dBµV/m";
  r.targets = {qp, mw};
  r.keys = {{"coupling.parasitic_capacitance", "35 pF", 35e-12, Dimension::capacitance},
            {"switching.frequency", "220 kHz", 220e3, Dimension::frequency},
            {"filter.1.coupling", "0.995", 0.995, Dimension::number}};
  Sensitivity a;
  a.key = 0;
  a.target = 0;
  a.db_per_10_percent = 0.69;
  Sensitivity b;
  b.key = 1;
  b.target = 1;
  b.note = "the channel hears no line after the change";
  b.worst_frequency_after_hz = 1.215e6;
  b.worst_level_after = 30.2;
  r.sensitivities = {a, b};
  r.invalid = {{2, "test.toml:1:1: expected a coupling factor from 0 to 1, found 1.0945"}};
  r.skipped = {{"lisn.lines", "an integer: a count or a choice"}};
  r.threads = 2;
  return r;
}

constexpr double exact_copy = 1e-12;  // numbers pass through JSON unchanged (17 digits)

}  // namespace

TEST_CASE("sensitivity JSON parses and holds the documented fields") {
  const nlohmann::json j = nlohmann::json::parse(sensitivity_json(example()));
  REQUIRE(j.at("sensitivities").size() == 2);
  const nlohmann::json& first = j.at("sensitivities")[0];
  CHECK(first.at("key") == "coupling.parasitic_capacitance");
  CHECK(first.at("value") == "35 pF");
  CHECK(first.at("value_si").get<double>() == doctest::Approx(35e-12).epsilon(exact_copy));
  CHECK(first.at("frequency_hz").get<double>() == doctest::Approx(220e3).epsilon(exact_copy));
  CHECK(first.at("detector") == "quasi-peak");
  CHECK(first.at("db_per_10_percent").get<double>() == doctest::Approx(0.69).epsilon(exact_copy));
  CHECK(first.at("worst_frequency_after_hz").is_null());
  const nlohmann::json& second = j.at("sensitivities")[1];
  CHECK(second.at("band") == "MW");
  CHECK_FALSE(second.contains("detector"));
  CHECK(second.at("db_per_10_percent").is_null());
  CHECK(second.at("worst_frequency_after_hz").get<double>() ==
        doctest::Approx(1.215e6).epsilon(exact_copy));
  CHECK(second.at("note") == "the channel hears no line after the change");
  CHECK(j.at("invalid")[0].at("key") == "filter.1.coupling");
  CHECK(j.at("invalid")[0].at("value") == "0.995");
  CHECK(j.at("skipped")[0].at("reason") == "an integer: a count or a choice");
  CHECK(j.at("step_percent").get<double>() == doctest::Approx(10.0).epsilon(exact_copy));
}

TEST_CASE("sensitivity text: one ranked line per key and reading") {
  const std::string text = sensitivity_text(example());
  CHECK(text.find(
            "coupling.parasitic_capacitance  35 pF  +0.7 dB per +10 %  at 220 kHz (quasi-peak)") !=
        std::string::npos);
  CHECK(text.find("worst moves to 1.215 MHz (30.2 dBµV/m)") != std::string::npos);
  CHECK(text.find("filter.1.coupling  0.995: test.toml:1:1: expected a coupling factor") !=
        std::string::npos);
  CHECK(text.find("lisn.lines  an integer: a count or a choice") != std::string::npos);
}

TEST_CASE("sensitivity text counts threads in the singular for one") {
  SensitivityResult one = example();
  one.threads = 1;
  CHECK(sensitivity_text(one).find("3 keys, 4 predictions on 1 thread\n") != std::string::npos);
  CHECK(sensitivity_text(example()).find("3 keys, 4 predictions on 2 threads\n") != std::string::npos);
}

TEST_CASE("sensitivity JSON: a fraction's value_si is the plain ratio, so it carries no unit") {
  SensitivityResult r = example();
  r.keys[0] = {"switching.ringing.amplitude", "35 %", 0.35, Dimension::fraction};
  const nlohmann::json j = nlohmann::json::parse(sensitivity_json(r));
  const nlohmann::json& first = j.at("sensitivities")[0];
  CHECK(first.at("value") == "35 %");
  CHECK(first.at("value_si").get<double>() == doctest::Approx(0.35).epsilon(exact_copy));
  CHECK(first.at("unit") == "");
}
