// Measured traces, correction tables and the pre-scan re-measure list.
#include <doctest/doctest.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "core/compliance/prescan.hpp"
#include "core/compliance/trace.hpp"

using namespace spurcast;

namespace {

const std::string source_dir = SPURCAST_SOURCE_DIR;

LimitSet class_b() { return read_limit_file(source_dir + "/limits/cispr32-class-b-conducted.toml"); }

}  // namespace

TEST_CASE("dBm traces are converted for 50 ohm: 0 dBm = 106.99 dBuV") {
  // docs/references.md §9.2 and §10 item 27 [D]: 10·log10(50 Ω · 1 mW) + 120 = 106.99 dB.
  const double tol_db = 0.005;
  const MeasuredTrace trace = parse_trace_csv("frequency_hz,level_dbm\n1e6,0\n2e6,-50\n", "t.csv");
  CHECK(trace.unit == TraceUnit::dbm);
  CHECK(std::abs(trace.level_dbuv[0] - 106.99) < tol_db);
  CHECK(std::abs(trace.level_dbuv[1] - 56.99) < tol_db);
  // Round trip with the slow formula: dBµV = dBm + 10·log10(50e-3) + 120.
  const double tol_exact_db = 1e-9;
  CHECK(std::abs(trace.level_dbuv[1] - (-50.0 + 10.0 * std::log10(50e-3) + 120.0)) < tol_exact_db);
  // Header added (issue 14): "1e6 ... 2e6" without a frequency unit could be Hz or kHz and is refused.
  const MeasuredTrace forced = parse_trace_csv("frequency_hz,level\n1e6,0\n2e6,-50\n", "u.csv", TraceUnit::dbm);
  CHECK(std::abs(forced.level_dbuv[0] - 106.99) < tol_db);
  const MeasuredTrace plain = parse_trace_csv("frequency_hz,level\n1e6,40\n2e6,41\n", "v.csv");
  CHECK(plain.unit == TraceUnit::dbuv);
  CHECK(std::abs(plain.level_dbuv[0] - 40.0) < tol_exact_db);
}

TEST_CASE("level units come from the header: dBmV is +60 dB, dBm +106.99 dB, never read as each other") {
  const double tol_db = 1e-9;
  // Closed forms (common practice): 1 mV = 1000 µV, so dBµV = dBmV + 20·log10(1e3); 1 mW into 50 Ω is
  // √(50 Ω · 1 mW) = 0.2236 V, so dBµV = dBm + 20·log10(√(50·1e-3) / 1e-6) = dBm + 106.9897.
  const double dbmv_offset_db = 20.0 * std::log10(1e-3 / 1e-6);
  const double dbm_offset_db = 20.0 * std::log10(std::sqrt(50.0 * 1e-3) / 1e-6);
  const MeasuredTrace dbmv = parse_trace_csv("Frequency (MHz),Level (dBmV)\n0.15,-10\n1,-12.5\n", "mv.csv");
  CHECK(dbmv.unit == TraceUnit::dbmv);
  CHECK(dbmv.quantity == LimitQuantity::conducted_voltage);
  CHECK(std::abs(dbmv.level_dbuv[0] - (-10.0 + dbmv_offset_db)) < tol_db);
  CHECK(std::abs(dbmv.level_dbuv[1] - (-12.5 + dbmv_offset_db)) < tol_db);
  const MeasuredTrace dbm = parse_trace_csv("Frequency [MHz];Level [DBM]\n0.15;-10\n1;-12.5\n", "m.csv");
  CHECK(dbm.unit == TraceUnit::dbm);
  CHECK(std::abs(dbm.level_dbuv[0] - (-10.0 + dbm_offset_db)) < tol_db);
  // Every spelling of the micro sign: ASCII u, U+00B5, U+03BC, and the Windows-1252 byte 0xB5.
  for (const char* header : {"Level (dBuV)", "Level (dB\xC2\xB5V)", "Level (dB\xCE\xBCV)", "Level (dB\xB5V)", "level_dbuv",
                             "Level dBuV"}) {
    CAPTURE(header);
    const MeasuredTrace t = parse_trace_csv(std::string("Frequency (Hz),") + header + "\n150e3,40\n160e3,41\n", "u.csv");
    CHECK(t.unit == TraceUnit::dbuv);
    CHECK(std::abs(t.level_dbuv[0] - 40.0) < tol_db);
  }
  const MeasuredTrace current = parse_trace_csv("frequency_hz,Current [dB\xC2\xB5" "A]\n150e3,20\n160e3,21\n", "a.csv");
  CHECK(current.unit == TraceUnit::dbua);
  CHECK(current.quantity == LimitQuantity::conducted_current);
  CHECK(std::abs(current.level_dbuv[0] - 20.0) < tol_db);
  const MeasuredTrace field = parse_trace_csv("Frequency (MHz),E-field dB\xCE\xBCV/m\n50,30\n60,31\n", "e.csv");
  CHECK(field.unit == TraceUnit::dbuvm);
  CHECK(field.quantity == LimitQuantity::radiated_field);
  CHECK(trace_unit_from_string("DBUV/M") == TraceUnit::dbuvm);
  CHECK(trace_unit_from_string("dB\xC2\xB5" "A") == TraceUnit::dbua);

  // A unit the loader does not know is refused at its header cell.
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("Frequency (MHz),Level (dBW)\n0.15,-70\n1,-70\n", "w.csv"),
                       "w.csv:1:17: expected a level unit (dBuV, dBmV, dBm, dBuA or dBuV/m), found \"dBW\"", Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("frequency_hz;level_dB\n150e3;1\n160e3;2\n", "d.csv"),
                       "d.csv:1:14: expected a level unit (dBuV, dBmV, dBm, dBuA or dBuV/m), found \"dB\"", Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("Frequency (MHz),Level (dBmV)\n0.15,-10\n1,-10\n", "c.csv", TraceUnit::dbm),
                       "c.csv:1:17: the level column \"Level (dBmV)\" is in dBmV, but the unit given is dBm", Error);
}

TEST_CASE("a trace is compared only with limits of its own quantity") {
  const LimitSet conducted = class_b();
  const LimitSet radiated = read_limit_file(source_dir + "/limits/cispr32-class-b-radiated-3m.toml");
  const MeasuredTrace voltage = parse_trace_csv("Frequency (MHz),Level (dBuV)\n50,30\n100,30\n", "v.csv");
  CHECK_NOTHROW(check_trace_quantity(voltage, {conducted}));
  CHECK_THROWS_WITH_AS(check_trace_quantity(voltage, {radiated}),
                       "v.csv:1:17: expected a radiated-field trace (dBuV/m) for the limits \"CISPR 32 class B, radiated, "
                       "3 m\", found a conducted-voltage trace (dBuV)",
                       Error);
  const MeasuredTrace field = parse_trace_csv("Frequency (MHz),Level (dBuV/m)\n50,30\n100,30\n", "f.csv");
  CHECK_NOTHROW(check_trace_quantity(field, {radiated}));
  const MeasuredTrace current = parse_trace_csv("0.15e6,30\n3e7,30\n", "i.csv", TraceUnit::dbua);
  CHECK_THROWS_WITH_AS(check_trace_quantity(current, {conducted}),
                       "i.csv: expected a conducted-voltage trace (dBuV) for the limits \"CISPR 32 class B, AC mains "
                       "port\", found a conducted-current trace (dBuA)",
                       Error);
}

TEST_CASE("trace CSV: header names, MHz column, separators, comments") {
  const double tol = 1e-9;
  const MeasuredTrace trace =
      parse_trace_csv("# exported trace\nFrequency (MHz);Level (dBuV)\n0.15;50.5\n\n0.2;51\n", "w.csv");
  REQUIRE(trace.frequency_hz.size() == 2);
  CHECK(std::abs(trace.frequency_hz[0] - 150e3) < tol);
  CHECK(std::abs(trace.level_dbuv[1] - 51.0) < tol);
  CHECK(trace.level_column == "Level (dBuV)");
}

TEST_CASE("decimal commas: read where ';' or tab separates the fields, refused where ',' does") {
  const double tol = 1e-9;
  // A European export: ';' between the fields, ',' as the decimal mark ("60,45" was read as 60).
  const MeasuredTrace semi =
      parse_trace_csv("Frequency (MHz);Level (dBuV)\n0,15;60,45\n1;-3,5\n2,5;7\n", "semi.csv");
  REQUIRE(semi.frequency_hz.size() == 3);
  CHECK(std::abs(semi.frequency_hz[0] - 150e3) < tol);
  CHECK(std::abs(semi.level_dbuv[0] - 60.45) < tol);
  CHECK(std::abs(semi.level_dbuv[1] + 3.5) < tol);
  CHECK(std::abs(semi.frequency_hz[2] - 2.5e6) < tol);
  const MeasuredTrace tab = parse_trace_csv("Frequency (Hz)\tLevel (dBuV)\n150000\t40,25\n160000\t41\n", "tab.csv");
  CHECK(std::abs(tab.level_dbuv[0] - 40.25) < tol);
  const CorrectionTable vdf = parse_correction_csv("Frequency (MHz);Correction (dB)\n0,15;1,5\n30;0,25\n", "vdf.csv");
  CHECK(std::abs(vdf.correction_db[0] - 1.5) < tol);
  CHECK(std::abs(vdf.frequency_hz[1] - 30e6) < tol);
  // Quoted cells in a comma file: a '.' decimal is fine; a comma in the cell is ambiguous (1,234).
  const MeasuredTrace quoted = parse_trace_csv("\"Frequency (Hz)\",\"Level (dBuV)\"\n\"150000\",\"40.5\"\n160000,41\n", "q.csv");
  CHECK(std::abs(quoted.level_dbuv[0] - 40.5) < tol);
  CHECK(quoted.level_column == "Level (dBuV)");
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("Frequency (Hz),Level (dBuV)\n150000,\"40,5\"\n160000,41\n", "c.csv"),
                       "c.csv:2:9: expected a number with a decimal point, found \"40,5\" (a decimal comma is ambiguous "
                       "in a comma-separated file: use '.', or ';' or tab between the fields)",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("Frequency (Hz),Level (dBuV)\n150000,40,5\n160000,41\n", "d.csv"),
                       "d.csv:2:11: expected 2 fields as in the header, found 3 (a decimal comma is ambiguous in a "
                       "comma-separated file: use '.', or ';' or tab between the fields)",
                       Error);
  // A trailing empty field is no extra value.
  CHECK(parse_trace_csv("Frequency (Hz),Level (dBuV)\n150000,40,\n160000,41,\n", "e.csv").level_dbuv.size() == 2);
  // Thousands separators are not guessed at.
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("Frequency (Hz);Level (dBuV)\n150000;1.040,5\n", "g.csv"),
                       "g.csv:2:8: expected a number, found \"1.040,5\"", Error);
}

TEST_CASE("instrument exports: metadata lines before the header are skipped, the RBW is read from them") {
  const double tol = 1e-9;
  const std::string export_text =
      "Type;Analyzer\nVersion;1.2\nDate;01.02.2026\nRBW;9000;Hz\nVBW;30000;Hz\n\nTrace Mode;Max Hold\n\n"
      "Frequency [Hz];Level [dBmV]\n150000;-10,5\n179850;-11\n";
  const MeasuredTrace trace = parse_trace_csv(export_text, "export.csv");
  REQUIRE(trace.frequency_hz.size() == 2);
  CHECK(std::abs(trace.frequency_hz[1] - 179850.0) < tol);
  CHECK(trace.unit == TraceUnit::dbmv);
  CHECK(std::abs(trace.level_dbuv[0] - 49.5) < tol);
  CHECK(trace.level_column == "Level [dBmV]");
  REQUIRE(trace.rbw_hz.has_value());
  CHECK(std::abs(*trace.rbw_hz - 9000.0) < tol);
  CHECK(trace.rbw_where.to_string() == "export.csv:4:5");
  // Other spellings of the RBW row; a file without metadata has none.
  CHECK(std::abs(*parse_trace_csv("RBW [kHz],9\nf_hz,level_dbuv\n1e6,1\n2e6,2\n", "a.csv").rbw_hz - 9e3) < tol);
  CHECK(std::abs(*parse_trace_csv("Res BW;120 kHz\nf_hz;level_dbuv\n1e8;1\n2e8;2\n", "b.csv").rbw_hz - 120e3) < tol);
  CHECK(std::abs(*parse_trace_csv("\"Date, time\",x\nRBW,1,MHz\nf_hz,level_dbuv\n1e9,1\n2e9,2\n", "c.csv").rbw_hz - 1e6) <
        tol);
  CHECK_FALSE(parse_trace_csv("f_hz,level_dbuv\n1e6,1\n2e6,2\n", "d.csv").rbw_hz.has_value());
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("RBW;9;THz\nf_hz;level_dbuv\n1e6;1\n2e6;2\n", "e.csv"),
                       "e.csv:1:7: expected a bandwidth unit (Hz, kHz or MHz), found \"THz\"", Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("RBW;auto\nf_hz;level_dbuv\n1e6;1\n2e6;2\n", "g.csv"),
                       "g.csv:1:5: expected a positive resolution bandwidth, found \"auto\"", Error);
  // Only metadata: no rows of numbers.
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("Type;Analyzer\nRBW;9000;Hz\n", "h.csv"),
                       "h.csv: expected rows of numbers, found none", Error);
}

TEST_CASE("frequency units: from the header, and a column without one only when Hz is the one reading") {
  const double tol_hz = 1e-6;
  // Header units scale the column.
  CHECK(std::abs(parse_correction_csv("Frequency (MHz),dB\n0.15,1\n30,2\n", "a.csv").frequency_hz[0] - 150e3) < tol_hz);
  CHECK(std::abs(parse_correction_csv("Freq [kHz];dB\n150;1\n30000;2\n", "b.csv").frequency_hz[1] - 30e6) < tol_hz);
  CHECK(std::abs(parse_correction_csv("Frequency/GHz,dB\n1,1\n6,2\n", "c.csv").frequency_hz[1] - 6e9) < tol_hz);
  CHECK(std::abs(parse_correction_csv("Hz,dB\n150e3,1\n1e6,2\n", "d.csv").frequency_hz[0] - 150e3) < tol_hz);
  CHECK(std::abs(parse_trace_csv("freq_MHz,level_dbuv\n0.15,1\n0.2,2\n", "e.csv").frequency_hz[1] - 200e3) < tol_hz);
  // No unit: Hz when only Hz puts the values within 9 kHz .. 18 GHz (a band B trace in Hz).
  CHECK(std::abs(parse_correction_csv("150000,1\n30000000,2\n", "f.csv").frequency_hz[1] - 30e6) < tol_hz);
  CHECK(std::abs(parse_trace_csv("Frequency,Level\n150e3,1\n30e6,2\n", "g.csv").frequency_hz[0] - 150e3) < tol_hz);
  // A correction table in MHz without a unit was read as Hz (0.15 Hz .. 30 Hz, end values held).
  CHECK_THROWS_WITH_AS((void)parse_correction_csv("0.15,10\n30,10\n", "h.csv"),
                       "h.csv:1:1: expected a header naming the frequency unit, e.g. \"Frequency (MHz)\": the values 0.15 "
                       "to 30 could be MHz",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse_correction_csv("Frequency;Correction\n0,15;10\n30;10\n", "i.csv"),
                       "i.csv:1:1: expected a unit in the frequency header, e.g. \"Frequency (MHz)\", found \"Frequency\": "
                       "the values 0.15 to 30 could be MHz",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("Frequency,Level (dBuV)\n1e6,1\n2e6,2\n", "j.csv"),
                       "j.csv:1:1: expected a unit in the frequency header, e.g. \"Frequency (Hz)\", found \"Frequency\": "
                       "the values 1e+06 to 2e+06 could be Hz or kHz",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("Level (dBuV),Frequency\n1,1e-6\n2,2e-6\n", "k.csv"),
                       "k.csv:1:14: expected a unit in the frequency header, e.g. \"Frequency (Hz)\", found \"Frequency\": "
                       "the values 1e-06 to 2e-06 lie outside 9 kHz to 18 GHz as Hz, kHz, MHz and GHz",
                       Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("Frequency (THz),Level (dBuV)\n1,1\n2,2\n", "l.csv"),
                       "l.csv:1:1: expected a frequency unit (Hz, kHz, MHz or GHz), found \"THz\"", Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("Frequency (GHz),Level (dBuV)\n1,1\n1e300,2\n", "m.csv"),
                       "m.csv:3:1: expected a finite frequency in Hz, found 1e300", Error);
}

TEST_CASE("trace CSV errors carry file:line:column") {
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("frequency_hz,level_dbuv\n1e6,40\n0.9e6,41\n", "a.csv"),
                       "a.csv:3:1: frequencies out of order: expected above 1 MHz, found 900 kHz", Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("frequency_hz,level_dbuv\n1e6,40\n2e6,x\n", "b.csv"),
                       "b.csv:3:5: expected a number, found \"x\"", Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("frequency_hz,level_dbuv\n1e6\n", "c.csv"),
                       "c.csv:2: expected at least 2 columns, found 1", Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("frequency_hz,level_dbm\n1e6,0\n2e6,1\n", "d.csv", TraceUnit::dbuv),
                       "d.csv:1:14: the level column \"level_dbm\" is in dBm, but the unit given is dBuV", Error);
  CHECK_THROWS_WITH_AS((void)parse_trace_csv("frequency_hz,level_dbuv\n", "e.csv"),
                       "e.csv: expected rows of numbers, found none", Error);
  // Behaviour change (issue 14): dBmV, dBuA and dBuV/m are trace units too.
  CHECK_THROWS_WITH_AS((void)trace_unit_from_string("dBW"), "expected dBuV, dBmV, dBm, dBuA or dBuV/m, found \"dBW\"",
                       Error);
}

TEST_CASE("correction tables: linear in log-frequency, added to the reading") {
  // Sign convention: corrected = reading + correction (LISN voltage-division factor is added to the
  // receiver reading, docs/references.md §2.3 [F: emc-pstc msg57218]).
  const CorrectionTable vdf = parse_correction_csv("frequency_hz,correction_db\n150e3,2\n1.5e6,0\n", "vdf.csv");
  const double tol_db = 1e-9;
  // Halfway in log10(f) between 150 kHz and 1.5 MHz is 474.34 kHz: 1 dB.
  CHECK(std::abs(vdf.at(std::sqrt(150e3 * 1.5e6)) - 1.0) < tol_db);
  CHECK(std::abs(vdf.at(100e3) - 2.0) < tol_db);  // held at the end values
  CHECK(std::abs(vdf.at(30e6) - 0.0) < tol_db);
  CHECK_FALSE(vdf.covers(100e3));
  const CorrectionTable cable = parse_correction_csv("1e5,0.5\n1e8,0.5\n", "cable.csv");
  const MeasuredTrace trace = parse_trace_csv("frequency_hz,level_dbuv\n150e3,40\n1.5e6,50\n", "t.csv");
  const MeasuredTrace corrected = apply_corrections(trace, {vdf, cable});
  CHECK(std::abs(corrected.level_dbuv[0] - 42.5) < tol_db);
  CHECK(std::abs(corrected.level_dbuv[1] - 50.5) < tol_db);
}

TEST_CASE("correction interpolation against numpy.interp on log10(f)") {
  const char* python = std::filesystem::exists("/usr/bin/python3") ? "/usr/bin/python3" : "python3";
  const std::string probe = std::string(python) + " -c \"import numpy\" > /dev/null 2>&1";
  if (std::system(probe.c_str()) != 0) {
    MESSAGE("SKIPPED: python3 with numpy is not available");
    return;
  }
  const CorrectionTable table =
      parse_correction_csv("9e3,10.1\n50e3,4.2\n150e3,1.3\n1e6,0.2\n30e6,0.45\n", "t.csv");
  std::ostringstream frequencies;
  frequencies.precision(17);
  std::vector<double> f_hz;
  for (double f = 5e3; f < 40e6; f *= 1.37) f_hz.push_back(f);
  for (std::size_t i = 0; i < f_hz.size(); ++i) frequencies << (i ? "," : "") << f_hz[i];
  const std::string output_path = (std::filesystem::temp_directory_path() / "spurcast_trace_test_numpy.txt").string();
  const std::string command = std::string(python) +
                              " -c \"import numpy as np; x=np.log10([9e3,50e3,150e3,1e6,30e6]); "
                              "y=[10.1,4.2,1.3,0.2,0.45]; f=np.array([" +
                              frequencies.str() + "]); print(' '.join(repr(v) for v in np.interp(np.log10(f), x, y)))\" > " +
                              output_path;
  REQUIRE(std::system(command.c_str()) == 0);
  std::ifstream in(output_path);
  const double tol_db = 1e-9;
  for (double f : f_hz) {
    double expected = 0.0;
    REQUIRE(static_cast<bool>(in >> expected));
    CAPTURE(f);
    CHECK(std::abs(table.at(f) - expected) < tol_db);
  }
  std::filesystem::remove(output_path);
}

TEST_CASE("scan CSV of a prediction") {
  const auto rows = parse_scan_csv(
      "frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv\n220000,60,55,40\n440000,50,45,30\n", "scan.csv");
  REQUIRE(rows.size() == 2);
  const double tol_db = 1e-9;
  CHECK(std::abs(rows[1].level_db(Detector::quasi_peak) - 45.0) < tol_db);
  CHECK_THROWS_WITH_AS((void)parse_scan_csv("f,level\n1,2\n", "bad.csv"),
                       "bad.csv:1:1: expected a column named \"frequency_hz\", found none", Error);
}

TEST_CASE("pre-scan re-measure list: local maxima within the guard band, merged within a few RBW") {
  // Class B limits at 1 MHz: QP 56, AV 46 (docs/references.md §3.1). Guard 6 dB.
  // Emission A at 1 MHz, peak 48: AV margin -2 (re-measure AV), QP margin 8 (proven by the peak).
  // Emission B at 1.010 MHz (2 points of a 5 kHz grid above A, within 3 x 9 kHz): merged into A.
  // Emission C at 3 MHz, peak 52: QP margin 4 and AV margin -6: both detectors.
  // Emission D at 10 MHz, peak 40: AV margin 10: nothing to re-measure.
  std::string csv = "frequency_hz,level_dbuv\n";
  auto add = [&](double f, double level) { csv += std::to_string(f) + "," + std::to_string(level) + "\n"; };
  for (double f = 0.98e6; f <= 1.03e6; f += 5e3) {
    double level = 30.0;
    if (std::abs(f - 1.0e6) < 1.0) level = 48.0;
    if (std::abs(f - 1.010e6) < 1.0) level = 47.0;
    add(f, level);
  }
  add(2.99e6, 30.0);
  add(3.0e6, 52.0);
  add(3.01e6, 30.0);
  add(9.99e6, 30.0);
  add(10e6, 40.0);
  add(10.01e6, 30.0);
  const MeasuredTrace trace = parse_trace_csv(csv, "trace.csv");
  const auto points = remeasure_list(trace, {class_b()}, {.guard_db = 6.0});
  REQUIRE(points.size() == 2);
  const double tol = 1e-6;
  CHECK(std::abs(points[0].frequency_hz - 1.0e6) < tol);
  CHECK(points[0].detectors == std::vector<Detector>{Detector::average});
  CHECK(std::abs(points[0].margin_db + 2.0) < tol);
  CHECK(points[0].limit_label == "CISPR 32 class B, AC mains port / average");
  CHECK(std::abs(points[1].frequency_hz - 3.0e6) < tol);
  CHECK(points[1].detectors == std::vector<Detector>{Detector::quasi_peak, Detector::average});

  // Slow twin of the selection: brute force over every point, no merging.
  std::vector<double> brute;
  for (std::size_t i = 1; i + 1 < trace.frequency_hz.size(); ++i) {
    const double l = trace.level_dbuv[i];
    if (l < trace.level_dbuv[i - 1] || l < trace.level_dbuv[i + 1]) continue;
    const double av = *class_b().line_for(Detector::average)->level_at(trace.frequency_hz[i]);
    if (av - l < 6.0) brute.push_back(trace.frequency_hz[i]);
  }
  CHECK(brute.size() == 3);  // 1.000, 1.010 and 3 MHz before merging

  // Prediction side by side.
  const auto prediction = parse_scan_csv(
      "frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv\n1002250,45,42,39\n3000000,53,49,44\n5000000,1,1,1\n",
      "scan.csv");
  const auto checks = compare_with_prediction(points, prediction);
  REQUIRE(checks.size() == 2);
  REQUIRE(checks[0].predicted.has_value());
  CHECK(std::abs(checks[0].predicted->frequency_hz - 1002250.0) < tol);
  CHECK(std::abs(*checks[0].difference_db - 3.0) < tol);
  CHECK(std::abs(*checks[1].difference_db + 1.0) < tol);
}

TEST_CASE("prescan RBW follows the CISPR 16-1-1 bands") {
  // docs/references.md §1.1 [F]: 200 Hz, 9 kHz, 120 kHz; band E 1 MHz.
  const double tol_hz = 1e-9;
  CHECK(std::abs(prescan_rbw_hz(100e3) - 200.0) < tol_hz);
  CHECK(std::abs(prescan_rbw_hz(1e6) - 9e3) < tol_hz);
  CHECK(std::abs(prescan_rbw_hz(100e6) - 120e3) < tol_hz);
  CHECK(std::abs(prescan_rbw_hz(2e9) - 1e6) < tol_hz);
}
