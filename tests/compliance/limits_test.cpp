// Limit lines: the format, the loader's errors, and every shipped file against the values of the
// table it cites (docs/references.md §3, §10).
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <string>

#include "core/compliance/limits.hpp"

using namespace spurcast;

namespace {

const std::string source_dir = SPURCAST_SOURCE_DIR;

LimitSet shipped(const std::string& name) { return read_limit_file(source_dir + "/limits/" + name + ".toml"); }

double level(const LimitSet& set, Detector detector, double frequency_hz) {
  const LimitLine* line = set.line_for(detector);
  REQUIRE(line != nullptr);
  const auto value = line->level_at(frequency_hz);
  REQUIRE(value.has_value());
  return *value;
}

// Slow twin of the sloped segment: docs/references.md §3.2, L(f) = L1 + (L2 − L1)·log10(f/f1)/log10(f2/f1).
double log_interpolated(double f, double f1, double f2, double l1, double l2) {
  return l1 + (l2 - l1) * std::log10(f / f1) / std::log10(f2 / f1);
}

std::string bad(const std::string& name) { return source_dir + "/tests/data/limits/" + name + ".toml"; }

}  // namespace

TEST_CASE("sloped segment of CISPR 32 class B conducted is linear in log-frequency") {
  // docs/references.md §3.2 [D from F: FCC 15.107 note "decreases with the logarithm of the frequency";
  // EN 55022 table "decreasing with Log (Freq.)"], table values given to 2 decimals.
  const double tol_db = 0.006;
  for (const char* name : {"cispr32-class-b-conducted", "fcc15-107-class-b-conducted"}) {
    CAPTURE(name);
    const LimitSet set = shipped(name);
    CHECK(std::abs(level(set, Detector::quasi_peak, 250e3) - 61.76) < tol_db);
    struct Row {
      double f_mhz, qp, av;
    };
    for (const Row& row : {Row{0.150, 66.00, 56.00}, Row{0.160, 65.46, 55.46}, Row{0.200, 63.61, 53.61},
                           Row{0.250, 61.76, 51.76}, Row{0.300, 60.24, 50.24}, Row{0.400, 57.85, 47.85},
                           Row{0.450, 56.88, 46.88}, Row{0.500, 56.00, 46.00}}) {
      CAPTURE(row.f_mhz);
      CHECK(std::abs(level(set, Detector::quasi_peak, row.f_mhz * 1e6) - row.qp) < tol_db);
      CHECK(std::abs(level(set, Detector::average, row.f_mhz * 1e6) - row.av) < tol_db);
    }
    // Against the slow twin at many points (exact up to rounding).
    const double tol_exact_db = 1e-9;
    for (double f = 150e3; f <= 500e3; f *= 1.01) {
      CHECK(std::abs(level(set, Detector::quasi_peak, f) - log_interpolated(f, 150e3, 500e3, 66.0, 56.0)) < tol_exact_db);
    }
  }
}

TEST_CASE("the lower limit applies at a boundary frequency") {
  // docs/references.md §10 item 16 [F: FCC 15.107 "The lower limit applies at the band edges"]:
  // class B QP at 0.5 MHz is 56, at 5 MHz 56 (not 60).
  const double tol_db = 1e-9;
  for (const char* name : {"cispr32-class-b-conducted", "fcc15-107-class-b-conducted", "cispr11-group1-class-b-conducted"}) {
    CAPTURE(name);
    const LimitSet set = shipped(name);
    CHECK(std::abs(level(set, Detector::quasi_peak, 0.5e6) - 56.0) < tol_db);
    CHECK(std::abs(level(set, Detector::quasi_peak, 5e6) - 56.0) < tol_db);
    CHECK(std::abs(level(set, Detector::average, 5e6) - 46.0) < tol_db);
    CHECK(std::abs(level(set, Detector::quasi_peak, 5.000001e6) - 60.0) < tol_db);
    CHECK(std::abs(level(set, Detector::quasi_peak, 30e6) - 60.0) < tol_db);
    // Outside the line there is no limit.
    CHECK_FALSE(set.line_for(Detector::quasi_peak)->level_at(149e3).has_value());
    CHECK_FALSE(set.line_for(Detector::quasi_peak)->level_at(30.1e6).has_value());
  }
  // 230 MHz in the CISPR 32 radiated tables: the lower (30–230 MHz) value, docs/references.md §3.4.
  CHECK(std::abs(level(shipped("cispr32-class-b-radiated-10m"), Detector::quasi_peak, 230e6) - 30.0) < tol_db);
}

TEST_CASE("an explicit at_boundary = higher takes the looser value") {
  const double tol_db = 1e-9;
  const LimitSet set = parse_limit_text(R"(
name = "looser at the edge"
measures = "conducted-voltage"
unit = "dBuV"
source = "test data"
confidence = "read from the test"
[[line]]
detector = "quasi-peak"
at_boundary = "higher"
segment = [ { from = "150 kHz", to = "5 MHz", level = "56 dBuV" },
            { from = "5 MHz", to = "30 MHz", level = "60 dBuV" } ]
)",
                                        "edge.toml");
  CHECK(std::abs(level(set, Detector::quasi_peak, 5e6) - 60.0) < tol_db);
}

TEST_CASE("class A conducted files hold the values of their tables") {
  // docs/references.md §10 item 17 [F: FCC 15.107(b)]: 0.15–0.5 MHz 79/66; 0.5–30 MHz 73/60. The same
  // values for CISPR 32 class A [F: EN 55022 table] and CISPR 11 group 1 class A up to 20 kVA [F: EN 55011
  // figures in a public declaration], docs/references.md §3.1.
  const double tol_db = 1e-9;
  for (const char* name : {"fcc15-107-class-a-conducted", "cispr32-class-a-conducted", "cispr11-group1-class-a-conducted"}) {
    CAPTURE(name);
    const LimitSet set = shipped(name);
    CHECK(set.measures == LimitQuantity::conducted_voltage);
    CHECK(set.unit == Dimension::level_dbuv);
    for (double f : {0.15e6, 0.3e6, 0.499e6}) {
      CHECK(std::abs(level(set, Detector::quasi_peak, f) - 79.0) < tol_db);
      CHECK(std::abs(level(set, Detector::average, f) - 66.0) < tol_db);
    }
    for (double f : {0.5e6, 1e6, 5e6, 10e6, 30e6}) {
      CHECK(std::abs(level(set, Detector::quasi_peak, f) - 73.0) < tol_db);
      CHECK(std::abs(level(set, Detector::average, f) - 60.0) < tol_db);
    }
  }
}

TEST_CASE("class B conducted files hold the values of their tables") {
  // docs/references.md §3.1: FCC 15.107(a) [F: hallikainen.org], CISPR 32 class B [F: EN 55022 table],
  // CISPR 11 group 1 class B [M, high] (from memory): 66→56 / 56→46, 56 / 46, 60 / 50.
  const double tol_db = 1e-9;
  for (const char* name : {"fcc15-107-class-b-conducted", "cispr32-class-b-conducted", "cispr11-group1-class-b-conducted"}) {
    CAPTURE(name);
    const LimitSet set = shipped(name);
    CHECK(std::abs(level(set, Detector::quasi_peak, 0.15e6) - 66.0) < tol_db);
    CHECK(std::abs(level(set, Detector::average, 0.15e6) - 56.0) < tol_db);
    CHECK(std::abs(level(set, Detector::quasi_peak, 1e6) - 56.0) < tol_db);
    CHECK(std::abs(level(set, Detector::average, 1e6) - 46.0) < tol_db);
    CHECK(std::abs(level(set, Detector::quasi_peak, 10e6) - 60.0) < tol_db);
    CHECK(std::abs(level(set, Detector::average, 10e6) - 50.0) < tol_db);
  }
  CHECK(shipped("cispr11-group1-class-b-conducted").confidence == LimitConfidence::from_memory);
}

TEST_CASE("CISPR 32 radiated files hold the values of their tables") {
  // docs/references.md §10 item 18 [F: emc-pstc msg64453 quoting CISPR 32:2012 Table A.4]: class B 3 m
  // 100 MHz → 40, 300 MHz → 47; 10 m → 30 / 37. Class A [F: test-report page, §3.4]: 10 m 40/47, 3 m 50/57.
  const double tol_db = 1e-9;
  struct Row {
    const char* name;
    double distance_m, low, high;
  };
  for (const Row& row : {Row{"cispr32-class-b-radiated-3m", 3, 40, 47}, Row{"cispr32-class-b-radiated-10m", 10, 30, 37},
                         Row{"cispr32-class-a-radiated-3m", 3, 50, 57}, Row{"cispr32-class-a-radiated-10m", 10, 40, 47}}) {
    CAPTURE(row.name);
    const LimitSet set = shipped(row.name);
    CHECK(set.measures == LimitQuantity::radiated_field);
    CHECK(set.unit == Dimension::level_dbuvm);
    REQUIRE(set.distance_m.has_value());
    CHECK(std::abs(*set.distance_m - row.distance_m) < 1e-12);
    CHECK(std::abs(level(set, Detector::quasi_peak, 30e6) - row.low) < tol_db);
    CHECK(std::abs(level(set, Detector::quasi_peak, 100e6) - row.low) < tol_db);
    CHECK(std::abs(level(set, Detector::quasi_peak, 300e6) - row.high) < tol_db);
    CHECK(std::abs(level(set, Detector::quasi_peak, 1000e6) - row.high) < tol_db);
  }
}

TEST_CASE("every shipped file loads and carries its source and confidence") {
  const auto files = shipped_limit_files(locate_shipped_data());
  CHECK(files.size() >= 10);
  for (const char* stem : {"cispr11-group1-class-a-conducted", "cispr11-group1-class-b-conducted",
                           "cispr32-class-a-conducted", "cispr32-class-b-conducted", "cispr32-class-a-radiated-3m",
                           "cispr32-class-a-radiated-10m", "cispr32-class-b-radiated-3m", "cispr32-class-b-radiated-10m",
                           "fcc15-107-class-a-conducted", "fcc15-107-class-b-conducted"}) {
    CAPTURE(stem);
    CHECK(std::find(files.begin(), files.end(), locate_shipped_data().limits_directory() + "/" + stem + ".toml") != files.end());
  }
  for (const std::string& file : files) {
    CAPTURE(file);
    const LimitSet set = read_limit_file(file);
    CHECK_FALSE(set.source.empty());
    CHECK_FALSE(set.confidence_text.empty());
    CHECK_FALSE(set.lines.empty());
  }
}

TEST_CASE("bad limit files are rejected with file:line:column") {
  CHECK_THROWS_WITH_AS((void)read_limit_file(bad("out-of-order")),
                       (bad("out-of-order") + ":11:28: frequencies out of order: expected 'to' above 'from' "
                                              "(500 kHz), found 150 kHz").c_str(),
                       Error);
  CHECK_THROWS_WITH_AS((void)read_limit_file(bad("overlapping")),
                       (bad("overlapping") + ":12:12: overlapping segments: this one starts at 3 MHz, inside "
                                             "the previous one (150 kHz to 5 MHz)").c_str(),
                       Error);
  CHECK_THROWS_WITH_AS((void)read_limit_file(bad("segments-out-of-order")),
                       (bad("segments-out-of-order") + ":12:12: segments out of order: expected 'from' at or "
                                                       "above 30 MHz, found 150 kHz").c_str(),
                       Error);
  CHECK_THROWS_WITH_AS((void)read_limit_file(bad("missing-source")),
                       (bad("missing-source") + ":1:1: missing key 'source' in [limit file] (expected a string)").c_str(),
                       Error);
  CHECK_THROWS_WITH_AS((void)read_limit_file(bad("unknown-detector")),
                       (bad("unknown-detector") + ":9:12: expected one of peak, quasi-peak or average, found \"qp\"").c_str(),
                       Error);
  CHECK_THROWS_WITH_AS((void)read_limit_file(bad("unknown-unit")),
                       (bad("unknown-unit") + ":4:8: expected one of dBuV, dBuV/m or dBuA, found \"dBm\"").c_str(),
                       Error);
}

TEST_CASE("other loader errors") {
  const std::string head = "name = \"x\"\nmeasures = \"radiated-field\"\nunit = \"dBuV\"\n";
  CHECK_THROWS_WITH_AS((void)parse_limit_text(head, "a.toml"),
                       "a.toml:3:8: expected dBuV/m for a radiated-field limit, found \"dBuV\"", Error);
  CHECK_THROWS_WITH_AS((void)parse_limit_text(R"(name = "x"
measures = "radiated-field"
unit = "dBuV/m"
source = "s"
confidence = "read from s"
[[line]]
detector = "quasi-peak"
segment = [ { from = "30 MHz", to = "1 GHz", level = "30 dBuV/m" } ]
)",
                                              "b.toml"),
                       "b.toml:1:1: missing key 'distance' in [limit file] (expected a length; a radiated-field "
                       "limit needs its measuring distance)",
                       Error);
  const std::string good_head =
      "name = \"x\"\nmeasures = \"conducted-voltage\"\nunit = \"dBuV\"\nsource = \"s\"\nconfidence = \"read from s\"\n";
  CHECK_THROWS_WITH_AS((void)parse_limit_text(good_head + "[[line]]\ndetector = \"average\"\n"
                                                          "segment = [ { from = \"1 MHz\", to = \"2 MHz\", level = \"3 dBuV/m\" } ]\n",
                                              "c.toml"),
                       "c.toml:8:53: expected a level in dBuV (e.g. \"60 dBuV\"), found \"3 dBuV/m\"", Error);
  CHECK_THROWS_WITH_AS((void)parse_limit_text(good_head + "[[line]]\ndetector = \"average\"\n"
                                                          "segment = [ { from = \"1 MHz\", to = \"2 MHz\" } ]\n",
                                              "d.toml"),
                       "d.toml:8:13: missing key 'level' in [line 1 segment 1] (expected 'level', or 'start' and 'end')",
                       Error);
  CHECK_THROWS_WITH_AS(
      (void)parse_limit_text(good_head + "[[line]]\ndetector = \"average\"\n"
                                         "segment = [ { from = \"1 MHz\", to = \"2 MHz\", level = \"3 dBuV\" } ]\n"
                                         "[[line]]\ndetector = \"average\"\n"
                                         "segment = [ { from = \"3 MHz\", to = \"4 MHz\", level = \"3 dBuV\" } ]\n",
                             "e.toml"),
      "e.toml:10:12: second average line in 'x'; a set has at most one line per detector", Error);
  CHECK_THROWS_WITH_AS((void)parse_limit_text(R"(name = "x"
measures = "conducted-voltage"
unit = "dBuV"
source = "s"
confidence = "pretty sure"
)",
                                              "f.toml"),
                       "f.toml:5:14: expected a confidence beginning \"read from\" or \"from memory\", found \"pretty sure\"",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse_limit_text(good_head + "[[line]]\ndetector = \"average\"\nsegmnet = 1\n", "g.toml"),
                       "g.toml:6:1: missing key 'segment' in [line 1] (expected at least one segment)", Error);
}

TEST_CASE("scenario [limits] section: files, bare names, guard and inline lines") {
  const toml::table table = parse_toml_text(R"(
files = ["limits/cispr32-class-b-conducted.toml", "fcc15-107-class-a-conducted"]
guard = "4 dB"
[[line]]
name = "customer spec"
unit = "dBuV"
detector = "quasi-peak"
segment = [ { from = "150 kHz", to = "30 MHz", level = "50 dBuV" } ]
[[line]]
name = "customer spec"
unit = "dBuV"
detector = "average"
segment = [ { from = "150 kHz", to = "30 MHz", level = "40 dBuV" } ]
)",
                                            "scenario.toml");
  TableReader reader(table, "scenario.toml", "limits");
  const LimitsSpec spec = read_limits_section(reader, "/nonexistent-folder", locate_shipped_data());
  const double tol_db = 1e-9;
  CHECK(std::abs(spec.guard_db - 4.0) < tol_db);
  REQUIRE(spec.sets.size() == 3);
  CHECK(spec.sets[0].name == "CISPR 32 class B, AC mains port");
  // A shipped file is named by its place in the data folder, never by the folder itself.
  CHECK(spec.sets[0].file == "<shipped>/limits/cispr32-class-b-conducted.toml");
  CHECK(spec.sets[2].file.empty());
  CHECK(spec.sets[1].name == "FCC Part 15 class A, AC power line (15.107(b))");
  CHECK(spec.sets[2].name == "customer spec");
  CHECK(spec.sets[2].lines.size() == 2);
  CHECK(std::abs(level(spec.sets[2], Detector::average, 1e6) - 40.0) < tol_db);

  const toml::table defaults = parse_toml_text("files = []\n", "s.toml");
  TableReader default_reader(defaults, "s.toml", "limits");
  // A 6 dB pre-compliance margin is common practice (docs/references.md §7).
  CHECK(std::abs(read_limits_section(default_reader, ".", locate_shipped_data()).guard_db - 6.0) < tol_db);

  const toml::table missing = parse_toml_text("files = [\"a.toml\", \"no-such-line\"]\n", "m.toml");
  TableReader missing_reader(missing, "m.toml", "limits");
  CHECK_THROWS_WITH_AS((void)read_limits_section(missing_reader, source_dir + "/tests/data/limits", locate_shipped_data()),
                       ("m.toml:1:10: cannot find limit file \"a.toml\" in the scenario's folder or in " +
                        locate_shipped_data().limits_directory()).c_str(),
                       Error);

  const toml::table unknown = parse_toml_text("gaurd = \"3 dB\"\n", "u.toml");
  TableReader unknown_reader(unknown, "u.toml", "limits");
  CHECK_THROWS_WITH_AS((void)read_limits_section(unknown_reader, ".", locate_shipped_data()),
                       "u.toml:1:1: unknown key 'gaurd' in [limits]; did you mean 'guard'?", Error);

  // A file next to the scenario is found before the shipped ones.
  const toml::table local = parse_toml_text("files = [\"overlapping.toml\"]\n", "l.toml");
  TableReader local_reader(local, "l.toml", "limits");
  CHECK_THROWS_WITH_AS((void)read_limits_section(local_reader, source_dir + "/tests/data/limits", locate_shipped_data()),
                       (source_dir + "/tests/data/limits/overlapping.toml:12:12: overlapping segments: this one "
                                     "starts at 3 MHz, inside the previous one (150 kHz to 5 MHz)").c_str(),
                       Error);
}
