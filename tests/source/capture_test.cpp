// Capture loader. External checks: the layout of text exports as oscilloscopes write them
// (common practice: header lines naming the columns and units, ',' ';' tab or blank separated,
// CRLF from Windows hosts, time in s or with a unit in the header); the bad-capture corpus in
// tests/data/capture/ (each file named for its defect, see the README there); every error message
// is interface and checked exactly, with file:line:column.
#include <doctest/doctest.h>

#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>

#include "core/source/capture.hpp"
#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;

namespace {

const std::string corpus = std::string(SPURCAST_SOURCE_DIR) + "/tests/data/capture/";

Capture load(const std::string& name, CaptureSpec spec = {}) {
  spec.file = corpus + name;
  return load_capture(spec);
}

Capture parse(const std::string& text, CaptureSpec spec = {}, unsigned threads = 1) {
  return parse_capture_text(text, "mem.csv", spec, CaptureLoadOptions{threads});
}

/// A temporary directory removed at scope exit.
struct TempDir {
  std::filesystem::path path;
  TempDir() : path(std::filesystem::temp_directory_path() / ("spurcast_capture_test_" + std::to_string(::getpid()))) {
    std::filesystem::create_directories(path);
  }
  ~TempDir() {
    std::error_code ignored;
    std::filesystem::remove_all(path, ignored);
  }
};

/// n samples "t,v" with t = i·dt printed with 9 significant digits (as the benchmark writes them).
std::string ramp_text(std::size_t n, double dt) {
  std::string text = "time,value\n";
  char line[64];
  for (std::size_t i = 0; i < n; ++i) {
    std::snprintf(line, sizeof line, "%.8e,%.8e\n", static_cast<double>(i) * dt, std::sin(0.001 * static_cast<double>(i)));
    text += line;
  }
  return text;
}

const double rel_tol = 1e-12;

}  // namespace

TEST_CASE("bad-capture corpus: each defect gives its own exact message with file:line:column") {
  CHECK_THROWS_WITH_AS((void)load("empty.csv"), (corpus + "empty.csv: empty file, expected a time column and a value column").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load("header_only.csv"),
                       (corpus + "header_only.csv:2:1: expected a data line (time and value), found the end of the file").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load("one_sample.csv"), (corpus + "one_sample.csv:2:1: expected at least 2 samples, found 1").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load("nan.csv"), (corpus + "nan.csv:3:3: expected a finite number, found \"NaN\"").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load("text_cell.csv"), (corpus + "text_cell.csv:3:6: expected a number, found \"abc\"").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load("empty_cell.csv"), (corpus + "empty_cell.csv:3:6: expected a number, found an empty cell").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load("non_monotonic.csv"),
                       (corpus + "non_monotonic.csv:5:1: expected a time after the previous line's 3e-06, found 2e-06").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load("mixed_delimiters.csv"),
                       (corpus + "mixed_delimiters.csv:3:5: expected ',' between columns, found ';' (mixed delimiters)").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load("binary_junk.bin"),
                       (corpus + "binary_junk.bin:2:1: expected text, found binary data (byte 0x1a)").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load("blank_line.csv"), (corpus + "blank_line.csv:3:1: expected a number, found an empty line").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load("non_uniform.csv"),
                       (corpus + "non_uniform.csv:5:1: non-uniform sampling: time is 500 ns off the uniform grid of 1 \xC2\xB5s "
                                 "steps (tolerance 100 ns); set resample = true (--resample) to resample it").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load("no_such_file.csv"),
                       (corpus + "no_such_file.csv: cannot open the capture file (no such file or directory)").c_str(), Error);
}

TEST_CASE("a 5 MB line is rejected with its length (generated, not committed)") {
  TempDir dir;
  const std::string file = (dir.path / "long_line.csv").string();
  {
    std::ofstream out(file);
    out << "time,value\n0,1\n1e-6,2";
    for (int i = 0; i < 2500000; ++i) out << ",0";
    out << "\n2e-6,3\n";
  }
  CaptureSpec spec;
  spec.file = file;
  CHECK_THROWS_WITH_AS((void)load_capture(spec), (file + ":3:1: line of 5000007 bytes, expected at most 1048576 (one sample a line)").c_str(), Error);
  {
    std::ofstream out(file);
    out << std::string(5000000, 'x') << "\n0,1\n";
  }
  CHECK_THROWS_WITH_AS((void)load_capture(spec), (file + ":1:1: line of 5000001 bytes, expected at most 1048576 (one sample a line)").c_str(), Error);
}

TEST_CASE("good files: header units, delimiters, CRLF, column choice") {
  SUBCASE("CRLF, comment line, 'Time (us)' and 'CH1 (mV)'") {
    const Capture c = load("good_crlf_us.csv");
    CHECK(c.delimiter == ',');
    CHECK(c.header_lines == 2);
    CHECK(c.first_data_line == 3);
    CHECK(c.time_header == "Time (us)");
    CHECK(c.value_header == "CH1 (mV)");
    CHECK(c.time_unit_s == doctest::Approx(1e-6));
    CHECK(c.waveform.sample_rate_hz == doctest::Approx(2e6).epsilon(rel_tol));
    REQUIRE(c.waveform.samples.size() == 4);
    CHECK(c.waveform.samples[0] == doctest::Approx(0.1).epsilon(rel_tol));
    CHECK(c.waveform.samples[3] == doctest::Approx(0.4).epsilon(rel_tol));
    CHECK(c.sampling.uniform);
  }
  SUBCASE("semicolons and 't[ns]'-style header") {
    const Capture c = load("good_semicolon.csv");
    CHECK(c.delimiter == ';');
    CHECK(c.waveform.sample_rate_hz == doctest::Approx(0.5e9).epsilon(rel_tol));
    CHECK(c.waveform.samples[1] == doctest::Approx(2.5));
  }
  SUBCASE("tabs, 't/ms', a current column chosen by name") {
    CaptureSpec spec;
    spec.column = ColumnChoice::by_name("ch2 (a)");  // case-insensitive match
    spec.quantity = Quantity::current;
    const Capture c = load("good_tabs.tsv", spec);
    CHECK(c.delimiter == '\t');
    CHECK(c.waveform.quantity == Quantity::current);
    CHECK(c.waveform.sample_rate_hz == doctest::Approx(1e6).epsilon(rel_tol));
    CHECK(c.waveform.samples[2] == doctest::Approx(30.0));
  }
  SUBCASE("blank separated, no header, leading blanks, a probe scale") {
    CaptureSpec spec;
    spec.scale = 10.0;  // 10:1 probe
    const Capture c = load("good_spaces.txt", spec);
    CHECK(c.delimiter == ' ');
    CHECK(c.header_lines == 0);
    CHECK(c.waveform.sample_rate_hz == doctest::Approx(1e9).epsilon(rel_tol));
    CHECK(c.waveform.samples[3] == doctest::Approx(40.0));
  }
  SUBCASE("two header lines, negative start time") {
    const Capture c = load("good_two_headers.csv");
    CHECK(c.header_lines == 2);
    CHECK(c.value_header == "Volt");
    CHECK(c.waveform.start_time_s == doctest::Approx(-2e-6));
    CHECK(c.waveform.samples.size() == 4);
  }
}

TEST_CASE("time units named in headers") {
  CHECK(time_unit_from_header("Time (us)").value() == doctest::Approx(1e-6));
  CHECK(time_unit_from_header("t[ns]").value() == doctest::Approx(1e-9));
  CHECK(time_unit_from_header("time/ms").value() == doctest::Approx(1e-3));
  CHECK(time_unit_from_header("Time (\xC2\xB5s)").value() == doctest::Approx(1e-6));
  CHECK(time_unit_from_header("second").value() == doctest::Approx(1.0));
  CHECK(time_unit_from_header("Time [ps]").value() == doctest::Approx(1e-12));
  CHECK_FALSE(time_unit_from_header("time").has_value());
  // Every common spelling, any case (issue 14: "uS", "mS", "usec", "nsec", "min" and a Windows-1252
  // "µs" were read as seconds). Factors: the SI prefixes and 1 min = 60 s (common practice).
  const struct {
    const char* header;
    double seconds;
  } spellings[] = {{"Time (uS)", 1e-6},        {"Time (mS)", 1e-3},  {"Time (usec)", 1e-6},
                   {"Time (nsec)", 1e-9},      {"Time (min)", 60.0}, {"Time (\xB5s)", 1e-6},
                   {"Time (\xCE\xBCs)", 1e-6}, {"Time (S)", 1.0},    {"Time (SEC)", 1.0},
                   {"Time (msec)", 1e-3},      {"Time (NS)", 1e-9},  {"Time (ps)", 1e-12},
                   {"Time [Seconds]", 1.0},    {"t/Minutes", 60.0},  {"time (microseconds)", 1e-6}};
  for (const auto& spelling : spellings) {
    CAPTURE(spelling.header);
    const auto seconds = time_unit_from_header(spelling.header);
    REQUIRE(seconds.has_value());
    CHECK(std::abs(*seconds / spelling.seconds - 1.0) < rel_tol);
  }
  CHECK_THROWS_WITH_AS((void)time_unit_from_header("Time (ks)"),
                       "expected a time unit (s, ms, us, ns, ps or min, any case), found \"ks\"",
                       Error);
  CHECK_THROWS_WITH_AS((void)time_unit_from_header("t/div"),
                       "expected a time unit (s, ms, us, ns, ps or min, any case), found \"div\"",
                       Error);
}

TEST_CASE("a capture's time unit scales the record; an unknown one is refused at its cell") {
  // 150 kHz sampled every 0.1 µs: with "Time (uS)" the record is 10 MS/s, not 10 S/s.
  std::string text = "Time (uS);CH1 (V)\n";
  for (int i = 0; i < 200; ++i)
    text += std::to_string(0.1 * i) + ";" + std::to_string(std::sin(0.3 * i)) + "\n";
  const Capture c = parse(text);
  CHECK(c.time_unit_s == doctest::Approx(1e-6));
  CHECK(c.waveform.sample_rate_hz == doctest::Approx(1e7).epsilon(1e-9));
  // Windows-1252: the micro sign is the byte 0xB5.
  std::string cp1252 = text;
  cp1252.replace(0, 9, "Time (\xB5s)");
  CHECK(parse(cp1252).waveform.sample_rate_hz == doctest::Approx(1e7).epsilon(1e-9));
  CHECK_THROWS_WITH_AS(
      (void)parse("# scope\nModel,X\nt (furlong),CH1 (V)\n0,1\n1,2\n2,3\n"),
      "mem.csv:3:1: expected a time unit (s, ms, us, ns, ps or min, any case), found \"furlong\"",
      Error);
  // A metadata line above the column names may hold any bracket.
  CHECK(parse("Record Length (points),3\nTime (ms),CH1 (V)\n0,1\n1,2\n2,3\n").time_unit_s ==
        doctest::Approx(1e-3));
}

TEST_CASE("column errors") {
  const std::string text = "Time (s),CH1 (V),CH2 (V)\n0,1,2\n1,2,3\n";
  CaptureSpec spec;
  spec.column = ColumnChoice::by_name("CH3 (V)");
  CHECK_THROWS_WITH_AS((void)parse(text, spec),
                       "mem.csv:1:1: no column named 'CH3 (V)'; did you mean 'CH1 (V)'? (columns: 'Time (s)', 'CH1 (V)', 'CH2 (V)')", Error);
  spec.column = ColumnChoice::by_index(4);
  CHECK_THROWS_WITH_AS((void)parse(text, spec), "mem.csv:2:6: expected ',' and column 4, found the end of the line", Error);
  spec.column = ColumnChoice::by_index(1);
  CHECK_THROWS_WITH_AS((void)parse(text, spec), "mem.csv: the value column 1 is the time column", Error);
  spec.column = ColumnChoice::by_name("CH1");
  CHECK_THROWS_WITH_AS((void)parse("0,1\n1,2\n", spec), "mem.csv: no column named 'CH1': the capture has no header line", Error);
  spec.column = ColumnChoice::by_index(3);
  const Capture c = parse(text, spec);
  CHECK(c.waveform.samples[1] == doctest::Approx(3.0));
  CHECK(c.value_header == "CH2 (V)");
}

TEST_CASE("an explicit plus sign, as some scopes write it") {
  const Capture c = parse("Time,Ampl\n+0.000000E+00,+1.5E-01\n+1.000000E-06,-1.5E-01\n+2.000000E-06,+1.5E-01\n");
  CHECK(c.waveform.sample_rate_hz == doctest::Approx(1e6).epsilon(rel_tol));
  CHECK(c.waveform.samples[0] == doctest::Approx(0.15));
  CHECK(c.waveform.samples[1] == doctest::Approx(-0.15));
  CHECK_THROWS_WITH_AS((void)parse("t,v\n0,+-1\n1,2\n"), "mem.csv:2:3: expected a number, found \"+-1\"", Error);
}

TEST_CASE("decimal comma and trailing junk") {
  CHECK_THROWS_WITH_AS((void)parse("t;v\n0;0,5\n"),
                       "mem.csv:2:4: expected ';' or the end of the cell, found ',' (a decimal comma? write 0.5, not 0,5)", Error);
  CHECK_THROWS_WITH_AS((void)parse("t,v\n0,1V\n1,2\n"), "mem.csv:2:3: expected a number, found \"1V\"", Error);
  CHECK_THROWS_WITH_AS((void)parse("t,v\n0,1e999\n1,2\n"), "mem.csv:2:3: expected a finite number, found \"1e999\"", Error);
}

TEST_CASE("a record printed with few digits is still uniform (tolerance follows the printed resolution)") {
  // 1000 samples of 1.1 ns printed with 4 significant digits: rounding up to 0.5 ns.
  std::string text;
  char line[64];
  for (int i = 0; i < 1000; ++i) {
    std::snprintf(line, sizeof line, "%.3e,%d\n", i * 1.1e-9, i);
    text += line;
  }
  const Capture c = parse(text);
  CHECK(c.sampling.uniform);
  CHECK(c.waveform.sample_rate_hz == doctest::Approx(1.0 / 1.1e-9).epsilon(1e-3));
}

TEST_CASE("non-uniform sampling is resampled when asked") {
  // A linear ramp v = 2·t/µs on jittered time stamps: linear interpolation reproduces it exactly.
  std::string text = "t (us),v\n";
  char line[64];
  for (int i = 0; i <= 100; ++i) {
    const double t = i + ((i % 3 == 1 && i < 100) ? 0.3 : 0.0);
    std::snprintf(line, sizeof line, "%.6f,%.6f\n", t, 2.0 * t);
    text += line;
  }
  CaptureSpec spec;
  spec.resample = true;
  const Capture c = parse(text, spec);
  CHECK_FALSE(c.sampling.uniform);
  CHECK(c.sampling.resampled);
  CHECK(c.sampling.max_deviation_s == doctest::Approx(0.3e-6));
  CHECK((c.sampling.worst_line - 2) % 3 == 1);  // a jittered line
  REQUIRE(c.waveform.samples.size() == 101);
  const double tol = 1e-9;
  for (std::size_t i = 0; i < c.waveform.samples.size(); ++i) {
    CHECK(std::abs(c.waveform.samples[i] - 2.0 * static_cast<double>(i)) < tol);
  }
}

TEST_CASE("parallel parsing equals the single-thread parse, and errors keep their line numbers") {
  const std::string text = ramp_text(150000, 1e-9);  // ~4.5 MB: 4 chunks of > 1 MiB
  const Capture one = parse(text, {}, 1);
  const Capture four = parse(text, {}, 4);
  REQUIRE(one.waveform.samples.size() == 150000);
  REQUIRE(four.waveform.samples.size() == 150000);
  CHECK(one.waveform.samples == four.waveform.samples);
  CHECK(four.waveform.sample_rate_hz == doctest::Approx(1e9).epsilon(1e-9));
  CHECK(four.sampling.uniform);
  // A bad cell deep in the file (line 120001 = sample 120000).
  std::string bad = text;
  const std::size_t at = bad.find("1.20000000e-04,");
  REQUIRE(at != std::string::npos);
  bad[at + 15] = 'x';
  const std::size_t line_end = bad.find('\n', at);
  const std::string cell = bad.substr(at + 15, line_end - at - 15);
  CHECK_THROWS_WITH_AS((void)parse(bad, {}, 4), ("mem.csv:120002:16: expected a number, found \"" + cell + "\"").c_str(), Error);
  // Time going back exactly at a chunk boundary is found too.
  for (const unsigned threads : {1u, 2u, 3u, 4u}) {
    CAPTURE(threads);
    std::string back = text;
    const std::size_t middle = back.find('\n', back.size() / 2) + 1;  // a boundary of the 2-thread split
    back[middle] = '0';
    CHECK_THROWS_AS((void)parse(back, {}, threads), Error);
  }
}

TEST_CASE("resampling across parser chunks equals the single-thread result, and a ramp stays exact") {
  // ~4 MB of jittered stamps on a ramp v = 3·t/µs: four chunks of > 1 MiB meet at three seams,
  // where the interpolation interval spans two chunks.
  std::string text = "t (us),v\n";
  char line[64];
  const int n = 140000;
  for (int i = 0; i < n; ++i) {
    const double t = i + ((i % 7 == 3 && i + 1 < n) ? 0.25 : 0.0);
    std::snprintf(line, sizeof line, "%.6f,%.6f\n", t, 3.0 * t);
    text += line;
  }
  CaptureSpec spec;
  spec.resample = true;
  spec.scale = 2.0;
  const Capture one = parse(text, spec, 1);
  for (const unsigned threads : {2u, 3u, 4u}) {
    CAPTURE(threads);
    const Capture several = parse(text, spec, threads);
    CHECK(several.sampling.resampled);
    CHECK(several.waveform.samples == one.waveform.samples);
  }
  REQUIRE(one.waveform.samples.size() == static_cast<std::size_t>(n));
  int off = 0;
  for (int i = 0; i < n; ++i) {
    if (std::abs(one.waveform.samples[static_cast<std::size_t>(i)] - 6.0 * i) > 1e-6) ++off;
  }
  CHECK(off == 0);
}

TEST_CASE("[capture] section of a scenario") {
  const std::string toml_text =
      "[capture]\n"
      "file = \"scope/node.csv\"\n"
      "column = \"CH1\"\n"
      "scale = 10\n"
      "quantity = \"current\"\n"
      "frequency = \"100 kHz\"\n";
  const toml::table root = parse_toml_text(toml_text, "/work/s/scenario.toml");
  TableReader reader(*root["capture"].as_table(), "/work/s/scenario.toml", "capture");
  const CaptureSpec spec = read_capture_section(reader);
  CHECK(spec.file == "/work/s/scope/node.csv");
  CHECK(spec.column.name == "CH1");
  CHECK(spec.time_column.index == 1);
  CHECK(spec.scale == doctest::Approx(10.0));
  CHECK(spec.quantity == Quantity::current);
  CHECK(spec.switching_frequency_hz.value() == doctest::Approx(100e3));

  const toml::table bad = parse_toml_text("[capture]\nfile = \"a.csv\"\ncolumn = 0\n", "s.toml");
  TableReader bad_reader(*bad["capture"].as_table(), "s.toml", "capture");
  CHECK_THROWS_WITH_AS((void)read_capture_section(bad_reader), "s.toml:3:10: expected a column number of 1 or more, found 0", Error);
  const toml::table typo = parse_toml_text("[capture]\nfile = \"a.csv\"\nscael = 10\n", "s.toml");
  TableReader typo_reader(*typo["capture"].as_table(), "s.toml", "capture");
  CHECK_THROWS_WITH_AS((void)read_capture_section(typo_reader), "s.toml:3:1: unknown key 'scael' in [capture]; did you mean 'scale'?", Error);
  const toml::table zero = parse_toml_text("[capture]\nfile = \"a.csv\"\nscale = 0\n", "s.toml");
  TableReader zero_reader(*zero["capture"].as_table(), "s.toml", "capture");
  CHECK_THROWS_WITH_AS((void)read_capture_section(zero_reader), "s.toml:3:9: expected a finite, non-zero scale, found 0", Error);
}

TEST_CASE("a subnormal time step is rejected before it makes the sample rate infinite (found by fuzzing)") {
  CaptureSpec spec;
  CHECK_THROWS_WITH_AS((void)parse_capture_text("time,v\n0,1\n1e-320,2\n2e-320,3\n", "sub.csv", spec),
                       "sub.csv:3:1: sample interval of 1e-320 s is below 1 fs: check the time column and its unit",
                       Error);
}

TEST_CASE("a capture shorter than one period of the fundamental asked for") {
  const Capture c = load("good_crlf_us.csv");  // 4 samples at 0.5 µs: 2 µs
  CHECK_THROWS_WITH_AS(check_capture_covers_period(c, 100e3),
                       ("capture '" + corpus + "good_crlf_us.csv' covers 2 \xC2\xB5s, fewer than one period of the fundamental (100 kHz, 10 \xC2\xB5s)").c_str(), Error);
  check_capture_covers_period(c, 1e6);
}
