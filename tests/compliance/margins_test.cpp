// Margins, verdict and U_cispr. Margin = limit − reading (docs/design.md §6); verdict with the guard band;
// CISPR 16-4-2 U_cispr values of docs/references.md §7 (from memory).
#include <doctest/doctest.h>

#include <cmath>
#include <string>

#include "core/compliance/margins.hpp"
#include "core/receiver/receiver.hpp"

using namespace spurcast;

namespace {

const std::string source_dir = SPURCAST_SOURCE_DIR;

LimitSet class_b() { return read_limit_file(source_dir + "/limits/cispr32-class-b-conducted.toml"); }

// A scan row shaped like the receiver's Reading (frequency_hz + level_db(Detector)).
struct FakeScanRow {
  double frequency_hz;
  double peak, quasi_peak, average;
  [[nodiscard]] double level_db(Detector d) const {
    return d == Detector::peak ? peak : d == Detector::quasi_peak ? quasi_peak : average;
  }
};

}  // namespace

TEST_CASE("verdict with the guard band") {
  // Issue 5 definition: fail when margin < 0, marginal when 0 <= margin < guard, else pass.
  CHECK(verdict_for(-0.01, 6.0) == Verdict::fail);
  CHECK(verdict_for(0.0, 6.0) == Verdict::marginal);
  CHECK(verdict_for(5.99, 6.0) == Verdict::marginal);
  CHECK(verdict_for(6.0, 6.0) == Verdict::pass);
  CHECK(verdict_for(0.0, 0.0) == Verdict::pass);
  CHECK(to_string(Verdict::marginal) == "marginal");
}

TEST_CASE("U_cispr per CISPR 16-4-2 (docs/references.md §7, from memory)") {
  const double tol_db = 1e-12;
  CHECK(std::abs(*cispr_uncertainty_db(LimitQuantity::conducted_voltage, 100e3) - 3.8) < tol_db);
  CHECK(std::abs(*cispr_uncertainty_db(LimitQuantity::conducted_voltage, 150e3) - 3.4) < tol_db);
  CHECK(std::abs(*cispr_uncertainty_db(LimitQuantity::conducted_voltage, 30e6) - 3.4) < tol_db);
  CHECK(std::abs(*cispr_uncertainty_db(LimitQuantity::radiated_field, 100e6) - 6.3) < tol_db);
  CHECK(std::abs(*cispr_uncertainty_db(LimitQuantity::radiated_field, 3e9) - 5.2) < tol_db);
  CHECK_FALSE(cispr_uncertainty_db(LimitQuantity::conducted_voltage, 50e6).has_value());
  CHECK_FALSE(cispr_uncertainty_db(LimitQuantity::conducted_current, 1e6).has_value());
}

TEST_CASE("margins of receiver readings against CISPR 32 class B") {
  const double tol_db = 1e-9;
  // Limits: docs/references.md §3.1/§3.2: QP 56 at 1 MHz, AV 46 at 1 MHz, QP 60 / AV 50 at 10 MHz.
  const std::vector<FakeScanRow> scan{
      {1e6, 58.0, 52.0, 43.0},   // QP margin 4 (marginal), AV margin 3 (marginal)
      {10e6, 55.0, 50.0, 51.0},  // QP margin 10, AV margin -1 (fail)
      {100e3, 70.0, 65.0, 60.0}, // below 150 kHz: no line, not compared
  };
  const auto readings = readings_from_scan(scan, {Detector::quasi_peak, Detector::average});
  REQUIRE(readings.size() == 6);
  const MarginReport report = compare_with_limits(readings, {class_b()}, {.guard_db = 6.0});
  CHECK(report.readings == 6);
  CHECK(report.compared_readings == 4);
  CHECK(report.not_compared == 2);
  REQUIRE(report.rows.size() == 4);
  CHECK(std::abs(report.rows[0].limit - 56.0) < tol_db);
  CHECK(std::abs(report.rows[0].margin_db - 4.0) < tol_db);
  CHECK(report.rows[0].limit_label == "CISPR 32 class B, AC mains port / quasi-peak");
  REQUIRE(report.rows[0].uncertainty_db.has_value());
  CHECK(std::abs(*report.rows[0].uncertainty_db - 3.4) < tol_db);
  REQUIRE(report.worst.has_value());
  CHECK(std::abs(report.worst->margin_db + 1.0) < tol_db);
  CHECK(report.worst->limit_detector == Detector::average);
  CHECK(report.verdict == Verdict::fail);
  REQUIRE(report.worst_per_detector.size() == 2);
  CHECK(report.worst_per_detector[0].detector == Detector::quasi_peak);
  CHECK(std::abs(report.worst_per_detector[0].worst.margin_db - 4.0) < tol_db);
  CHECK(report.worst_per_detector[1].detector == Detector::average);
  CHECK(std::abs(report.worst_per_detector[1].worst.margin_db + 1.0) < tol_db);
  REQUIRE(report.closest.size() == 4);
  CHECK(std::abs(report.closest[0].margin_db + 1.0) < tol_db);
  CHECK(std::abs(report.closest[1].margin_db - 3.0) < tol_db);

  // The peak reading meets no line of its own detector (class B has none): nothing compared.
  const MarginReport peak_only = compare_with_limits(readings_from_scan(scan, {Detector::peak}), {class_b()});
  CHECK(peak_only.compared_readings == 0);
  CHECK(peak_only.not_compared == 3);
  CHECK_FALSE(peak_only.worst.has_value());

  // Pre-scan rule: peak >= QP >= AV (docs/references.md §10 item 30), a peak reading meets every line.
  const MarginReport prescan = compare_with_limits(readings_from_scan(scan, {Detector::peak}), {class_b()},
                                                   {.guard_db = 6.0, .peak_against_every_line = true});
  CHECK(prescan.rows.size() == 4);
  CHECK(std::abs(prescan.worst->margin_db - (46.0 - 58.0)) < tol_db);
}

TEST_CASE("verdict over a report: pass and marginal") {
  const double guard_db = 6.0;
  // Both lines of class B get a reading (a line without one would make the verdict incomplete).
  const MarginReport pass = compare_with_limits(
      {{1e6, Detector::quasi_peak, 50.0}, {1e6, Detector::average, 40.0}}, {class_b()}, {.guard_db = guard_db});
  CHECK(pass.verdict == Verdict::pass);  // margin 6 dB = guard
  const MarginReport marginal = compare_with_limits(
      {{1e6, Detector::quasi_peak, 50.5}, {1e6, Detector::average, 40.0}}, {class_b()}, {.guard_db = guard_db});
  CHECK(marginal.verdict == Verdict::marginal);
  CHECK_THROWS_WITH_AS((void)compare_with_limits({}, {class_b()}, {.guard_db = -1.0}),
                       "expected a guard band of 0 dB or more, found -1 dB", Error);
}

TEST_CASE("closest rows keep one row per frequency and respect the separation") {
  std::vector<LevelReading> readings;
  for (int i = 0; i < 20; ++i) readings.push_back({1e6 + i * 1e3, Detector::peak, 50.0 + (i == 10 ? 1.0 : 0.0)});
  const MarginReport report = compare_with_limits(
      readings, {class_b()},
      {.guard_db = 6.0, .peak_against_every_line = true, .closest_count = 5, .closest_separation_hz = 30e3});
  REQUIRE(report.closest.size() == 1);  // all 20 points lie within 30 kHz of the worst one
  const double tol_hz = 1e-6;
  CHECK(std::abs(report.closest[0].frequency_hz - 1.010e6) < tol_hz);
  CHECK(report.closest[0].limit_detector == Detector::average);
}

TEST_CASE("closest_count 0: no closest list, the same rows, worst margins and verdict") {
  // CISPR 32 class B (docs/references.md §3.2) against twenty quasi-peak readings.
  std::vector<LevelReading> readings;
  for (int i = 0; i < 20; ++i) readings.push_back({200e3 + i * 10e3, Detector::quasi_peak, 55.0 + 0.3 * i});
  const MarginReport full = compare_with_limits(readings, {class_b()}, {.guard_db = 6.0});
  const MarginReport lean = compare_with_limits(readings, {class_b()}, {.guard_db = 6.0, .closest_count = 0});
  CHECK_FALSE(full.closest.empty());
  CHECK(lean.closest.empty());
  REQUIRE(lean.rows.size() == full.rows.size());
  const double tol_db = 1e-12;
  for (std::size_t i = 0; i < full.rows.size(); ++i) CHECK(std::abs(lean.rows[i].margin_db - full.rows[i].margin_db) < tol_db);
  REQUIRE(lean.worst);
  REQUIRE(full.worst);
  CHECK(std::abs(lean.worst->margin_db - full.worst->margin_db) < tol_db);
  CHECK(lean.verdict == full.verdict);
  CHECK(lean.worst_per_detector.size() == full.worst_per_detector.size());
}

TEST_CASE("margins CSV columns (docs/design.md §4)") {
  const MarginReport report = compare_with_limits({{250e3, Detector::quasi_peak, 60.0}}, {class_b()});
  // 61.76 dBµV at 250 kHz, docs/references.md §3.2.
  CHECK(margins_csv(report) ==
        "frequency_hz,detector,reading_dbuv,limit_dbuv,margin_db,limit,unit\n"
        "250000,quasi-peak,60.00,61.76,1.76,\"CISPR 32 class B, AC mains port / quasi-peak\",dB\xC2\xB5V\n");
  CHECK(csv_field("a\"b") == "\"a\"\"b\"");
}

TEST_CASE("readings_from_scan takes the receiver's Reading rows") {
  std::vector<Reading> scan(2);
  scan[0].frequency_hz = 1e6;
  scan[0].peak_db = 50.0;
  scan[0].quasi_peak_db = 45.0;
  scan[0].average_db = 40.0;
  scan[1].frequency_hz = 2e6;  // nothing in the passband: level_floor_db on every detector
  const auto readings = readings_from_scan(scan, {Detector::quasi_peak, Detector::average});
  REQUIRE(readings.size() == 2);
  const double tol_db = 1e-12;
  CHECK(readings[0].detector == Detector::quasi_peak);
  CHECK(std::abs(readings[0].level - 45.0) < tol_db);
  CHECK(std::abs(readings[1].level - 40.0) < tol_db);
}

TEST_CASE("closest rows: local minima of the margin only (the tips of emissions)") {
  // Two emissions on a dense grid: tips at 1.00 MHz (48 dBµV) and 1.10 MHz (44 dBµV), shoulders between.
  std::vector<LevelReading> readings;
  for (int i = 0; i <= 20; ++i) {
    const double f = 0.99e6 + i * 6e3;
    const double level = 30.0 + std::max(0.0, 18.0 - 3.0 * std::abs(f - 1.0e6) / 6e3) +
                         std::max(0.0, 14.0 - 3.0 * std::abs(f - 1.098e6) / 6e3);
    readings.push_back({f, Detector::average, level});
  }
  const MarginReport report = compare_with_limits(readings, {class_b()}, {.closest_local_minima_only = true});
  REQUIRE(report.closest.size() == 2);
  const double tol_hz = 1e-6;
  CHECK(std::abs(report.closest[0].frequency_hz - 1.002e6) < 3e3 + tol_hz);
  CHECK(std::abs(report.closest[1].frequency_hz - 1.098e6) < 3e3 + tol_hz);
  // Without the filter the shoulders of the first emission crowd the list.
  const MarginReport crowded = compare_with_limits(readings, {class_b()}, {.closest_count = 2});
  CHECK(std::abs(crowded.closest[1].frequency_hz - crowded.closest[0].frequency_hz) < 7e3);
}

TEST_CASE("a limit is compared only with a reading of its own quantity and distance") {
  // CISPR 32 class B radiated at 10 m: 30 dBµV/m QP at 30-230 MHz (docs/references.md §3.4).
  const LimitSet radiated = read_limit_file(source_dir + "/limits/cispr32-class-b-radiated-10m.toml");
  const double tol_db = 1e-9;
  // A LISN voltage at 50 MHz is never compared with a field line: the line is not computed.
  const MarginReport voltage = compare_with_limits({{50e6, Detector::quasi_peak, 78.78}}, {radiated});
  CHECK(voltage.rows.empty());
  CHECK(voltage.verdict == Verdict::incomplete);
  REQUIRE(voltage.not_computed.size() == 1);
  CHECK(voltage.not_computed[0].reason ==
        "no quasi-peak reading of the radiated-field estimate at 10 m falls on this line");
  // A field reading at another distance is not compared either (the field falls with distance).
  const MarginReport at_3m = compare_with_limits(
      {{50e6, Detector::quasi_peak, 20.0, LimitQuantity::radiated_field, 3.0}}, {radiated});
  CHECK(at_3m.rows.empty());
  CHECK(at_3m.verdict == Verdict::incomplete);
  // A field reading at 10 m is compared, and the row says what it compares.
  const MarginReport field = compare_with_limits(
      {{50e6, Detector::quasi_peak, 20.0, LimitQuantity::radiated_field, 10.0}}, {radiated});
  REQUIRE(field.rows.size() == 1);
  CHECK(std::abs(field.rows[0].margin_db - 10.0) < tol_db);
  CHECK(row_unit_symbol(field.rows[0]) == "dB\xC2\xB5V/m");
  CHECK(field.verdict == Verdict::pass);
  CHECK(margins_csv(field).find(",dB\xC2\xB5V/m\n") != std::string::npos);
  // A conducted reading still meets the conducted set beside the radiated one.
  const MarginReport both = compare_with_limits(
      {{1e6, Detector::quasi_peak, 40.0}, {1e6, Detector::average, 30.0}}, {class_b(), radiated});
  CHECK(both.rows.size() == 2);
  CHECK(both.verdict == Verdict::incomplete);  // the radiated line has no reading
}

TEST_CASE("unread ranges make the verdict incomplete, a failure stays a failure, no sets is no limits") {
  const std::vector<LevelReading> low{{200e3, Detector::quasi_peak, 30.0}, {200e3, Detector::average, 20.0}};
  MarginOptions options;
  options.unread = {{LimitQuantity::conducted_voltage, 480.75e3, 30e6, "the record stops at 480.75 kHz"}};
  const MarginReport report = compare_with_limits(low, {class_b()}, options);
  CHECK(report.verdict == Verdict::incomplete);
  CHECK(to_string(report.verdict) == "incomplete");
  // One part per line, merged over the line's segments (0.15-0.5, 0.5-5, 5-30 MHz).
  REQUIRE(report.not_computed.size() == 2);
  const double tol_hz = 1e-3;
  CHECK(std::abs(report.not_computed[0].from_hz - 480.75e3) < tol_hz);
  CHECK(std::abs(report.not_computed[0].to_hz - 30e6) < tol_hz);
  CHECK(describe(report.not_computed[0]) ==
        "480.8 kHz-30 MHz of CISPR 32 class B, AC mains port / quasi-peak: the record stops at 480.75 kHz");
  // An unread range of another quantity does not touch a conducted line.
  MarginOptions field_only;
  field_only.unread = {{LimitQuantity::radiated_field, 150e3, 30e6, "not estimated"}};
  CHECK(compare_with_limits(low, {class_b()}, field_only).verdict == Verdict::pass);
  // A negative margin is a fact whatever else was not read.
  const MarginReport failing = compare_with_limits({{200e3, Detector::quasi_peak, 80.0}}, {class_b()}, options);
  CHECK(failing.verdict == Verdict::fail);
  // No limit lines: nothing can pass.
  const MarginReport none = compare_with_limits(low, {});
  CHECK(none.verdict == Verdict::no_limits);
  CHECK(to_string(none.verdict) == "no limits");
}
