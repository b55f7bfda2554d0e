// Tests of core/output/text_table: ANSI colour sequences (ECMA-48 §8.3.117 SGR: 1 bold, 2 faint,
// 31 red, 32 green, 33 yellow, 0 reset), display width in UTF-8 code points (RFC 3629: continuation
// bytes are 10xxxxxx), column alignment, and the "-" cell for a level at the floor.
#include <doctest/doctest.h>

#include <string>

#include "core/input/units.hpp"
#include "core/output/text_table.hpp"

using namespace spurcast;

TEST_CASE("paint wraps text in the ECMA-48 SGR sequence only when enabled") {
  CHECK(paint("fail", Colour::red, true) == "\x1b[31mfail\x1b[0m");
  CHECK(paint("pass", Colour::green, true) == "\x1b[32mpass\x1b[0m");
  CHECK(paint("title", Colour::bold, true) == "\x1b[1mtitle\x1b[0m");
  CHECK(paint("fail", Colour::red, false) == "fail");
  CHECK(paint("plain", Colour::none, true) == "plain");
}

TEST_CASE("display width counts code points and skips escape sequences") {
  // "dBµV": µ is two bytes in UTF-8 (U+00B5 = C2 B5), one code point.
  CHECK(std::string("dB\xC2\xB5V").size() == 5);
  CHECK(display_width("dB\xC2\xB5V") == 4);
  CHECK(display_width(paint("-7.46 dB", Colour::red, true)) == 8);
  CHECK(display_width("") == 0);
}

TEST_CASE("format_columns aligns left and right columns and trims trailing spaces") {
  const std::string text = format_columns({{"detector", "highest", "at"}, {"peak", "61.20", "1.2 MHz"}, {"quasi-peak", "-", ""}},
                                          {1}, "  ");
  CHECK(text ==
        "  detector    highest  at\n"
        "  peak          61.20  1.2 MHz\n"
        "  quasi-peak        -\n");
  // Coloured cells align by what is seen, not by bytes.
  const std::string coloured = format_columns({{paint("ab", Colour::red, true), "x"}, {"abcd", "y"}}, {}, "");
  CHECK(coloured == "\x1b[31mab\x1b[0m    x\nabcd  y\n");
}

TEST_CASE("level_cell: one decimal (0.1 dB, issue 19), a dash at the floor") {
  CHECK(level_cell(61.204) == "61.2");
  CHECK(level_cell(61.25) == "61.2");  // 61.25 is exact in binary: round-half-to-even gives 61.2
  CHECK(level_cell(-3.05) == "-3.0");  // binary -3.05 lies just above -3.05: rounds to -3.0
  CHECK(level_cell(level_floor_db) == "-");
  CHECK(level_cell(level_floor_db - 1.0) == "-");
}
