// The checked TOML reader shared by every loader (core/input/toml_reader, over toml++ compiled once in
// core/input/toml_impl.cpp). External checks: the TOML 1.0 specification (bare keys are ASCII letters,
// digits, '-' and '_'; non-ASCII text only in strings and comments; positions 1-based), and the
// inputs a fuzzer found that reach undefined behaviour in toml++ 3.3.0
// (tests/data/fuzz-regressions/toml/).
#include <doctest/doctest.h>

#include <algorithm>
#include <filesystem>
#include <functional>
#include <fstream>
#include <sstream>
#include <string>

#include "core/input/error.hpp"
#include "core/source/fftw_lock.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;

namespace {

std::string read_file(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

}  // namespace

TEST_CASE("TableReader: quantities with units, choices, and unknown keys with a suggestion") {
  const auto table = parse_toml_text(
      "frequency = \"220 kHz\"\nduty = 0.25\nmodel = \"lc\"\nflag = true\nlines = 2\ninductnce = \"1 uH\"\n", "t.toml");
  TableReader reader(table, "t.toml", "filter 1");
  CHECK(reader.required_quantity("frequency", Dimension::frequency) == doctest::Approx(220e3));
  CHECK(reader.quantity_or("duty", Dimension::fraction, 0.5) == doctest::Approx(0.25));
  CHECK(reader.quantity_or("absent", Dimension::time, 7.0) == doctest::Approx(7.0));
  CHECK(reader.required_choice("model", {"lc", "pi"}) == "lc");
  CHECK(reader.optional_bool("flag") == true);
  CHECK(reader.optional_integer("lines") == 2);
  CHECK_THROWS_WITH_AS(reader.finish({"frequency", "duty", "model", "flag", "lines", "inductance"}),
                       "t.toml:6:1: unknown key 'inductnce' in [filter 1]; did you mean 'inductance'?", Error);
  CHECK_THROWS_WITH_AS((void)reader.required_choice("model", {"pi", "netlist"}),
                       "t.toml:3:9: expected one of pi or netlist, found \"lc\"", Error);
  CHECK_THROWS_WITH_AS((void)reader.required_quantity("missing", Dimension::capacitance),
                       "t.toml:1:1: missing key 'missing' in [filter 1] (expected a capacitance)", Error);
  CHECK_THROWS_WITH_AS((void)reader.required_string("duty"), "t.toml:2:8: expected a string, found a number", Error);
  // A required key that is absent while an unread key one edit away is present: the misspelling
  // is named where it is (issue 14), for quantities, strings and choices alike.
  CHECK_THROWS_WITH_AS((void)reader.required_quantity("inductance", Dimension::inductance),
                       "t.toml:6:1: unknown key 'inductnce' in [filter 1]; did you mean 'inductance'?", Error);
  CHECK_THROWS_WITH_AS((void)reader.required_string("inductancee"),
                       "t.toml:6:1: unknown key 'inductnce' in [filter 1]; did you mean 'inductancee'?", Error);
  // A key already read is never taken for a misspelling of another ("lines" is one edit from "line").
  CHECK_THROWS_WITH_AS((void)reader.required_quantity("line", Dimension::number),
                       "t.toml:1:1: missing key 'line' in [filter 1] (expected a number)", Error);
}

TEST_CASE("nearest_key finds close spellings only") {
  CHECK(nearest_key("frequncy", {"frequency", "duty"}) == "frequency");
  CHECK(nearest_key("xyz", {"frequency", "duty"}).empty());
}

TEST_CASE("TOML syntax errors name the line and column") {
  CHECK_THROWS_AS((void)parse_toml_text("a = \n", "s.toml"), Error);
  try {
    (void)parse_toml_text("a = 1\nb = [1, 2\n", "s.toml");
    FAIL("expected an error");
  } catch (const Error& e) {
    CHECK(e.where().file == "s.toml");
    CHECK(e.where().line >= 2);
  }
}

TEST_CASE("non-ASCII text is taken in strings and comments, refused elsewhere (TOML 1.0)") {
  const auto ok = parse_toml_text("# capacité d'entrée\nc = \"4.7 \xC2\xB5" "F\"\nr = '8 m\xCE\xA9'\n", "u.toml");
  CHECK(ok.contains("c"));
  CHECK_THROWS_WITH_AS((void)parse_toml_text("capacitance = 4.7\xC2\xB5" "F\n", "u.toml"),
                       "u.toml:1:18: non-ASCII character outside a quoted string (TOML keys and values are ASCII; "
                       "quote the value, e.g. \"4.7 \xC2\xB5" "F\")",
                       Error);
  CHECK_THROWS_AS((void)parse_toml_text("\xC3\xA9 = 1\n", "u.toml"), Error);
  CHECK_THROWS_AS((void)parse_toml_text("s = \"\"\"\n\xC3\xA9\n\"\"\"\n", "u.toml"), Error);
}

namespace {

std::string dotted(int parts) {
  std::string key = "k";
  for (int i = 1; i < parts; ++i) key += ".k";
  return key;
}

int depth_of(const toml::table& root) {
  int deepest = 0;
  const std::function<void(const toml::node&, int)> walk = [&](const toml::node& node, int depth) {
    deepest = std::max(deepest, depth);
    if (const auto* table = node.as_table()) {
      for (const auto& [key, value] : *table) walk(value, depth + 1);
    } else if (const auto* array = node.as_array()) {
      for (const auto& element : *array) walk(element, depth + 1);
    }
  };
  walk(root, 0);
  return deepest;
}

}  // namespace

// The nesting bound (issue 14): a header of about 300,000 parts overflowed the stack inside
// toml++ 3.3.0, which bounds nested arrays and inline tables (256) but not dotted-key parts.
// The depth counted before parsing is checked against the depth of the tree toml++ builds (one
// level per table or array; TOML 1.0 specification, "Keys": `a.b = 1` defines table a holding b).
TEST_CASE("TOML nested deeper than max_toml_depth is refused before toml++ reads it, at the position") {
  const std::string message =
      "keys, tables and arrays nested more than 64 levels deep (each part of a dotted key counts one level)";
  REQUIRE(max_toml_depth == 64);
  // Exactly at the bound: parsed, and toml++ builds a tree of that depth.
  CHECK(depth_of(parse_toml_text("[" + dotted(64) + "]\n", "d.toml")) == 64);
  CHECK(depth_of(parse_toml_text(dotted(64) + " = 1\n", "d.toml")) == 64);
  CHECK(depth_of(parse_toml_text("[" + dotted(32) + "]\n" + dotted(32) + " = 1\n", "d.toml")) == 64);
  CHECK(depth_of(parse_toml_text("a = " + std::string(63, '[') + "1" + std::string(63, ']') + "\n", "d.toml")) == 64);
  // One above: refused at the character that goes one level too deep (1-based columns).
  CHECK_THROWS_WITH_AS((void)parse_toml_text("[" + dotted(65) + "]\n", "d.toml"),
                       ("d.toml:1:129: " + message).c_str(), Error);
  CHECK_THROWS_WITH_AS((void)parse_toml_text("x = 1\n" + dotted(65) + " = 1\n", "d.toml"),
                       ("d.toml:2:128: " + message).c_str(), Error);
  CHECK_THROWS_WITH_AS((void)parse_toml_text("[" + dotted(32) + "]\n" + dotted(33) + " = 1\n", "d.toml"),
                       ("d.toml:2:64: " + message).c_str(), Error);
  CHECK_THROWS_WITH_AS((void)parse_toml_text("a = " + std::string(64, '[') + std::string(64, ']') + "\n", "d.toml"),
                       ("d.toml:1:68: " + message).c_str(), Error);
  // Arrays, inline tables and the keys inside them add up: a at 1, then each "[{b = " puts an
  // element table one level down and its key b another: the b of the 32nd (column 193) is at 65.
  std::string mixed = "a = ";
  for (int i = 0; i < 40; ++i) mixed += "[{b = ";
  CHECK_THROWS_WITH_AS((void)parse_toml_text(mixed + "1\n", "d.toml"), ("d.toml:1:193: " + message).c_str(), Error);
  CHECK_THROWS_AS((void)parse_toml_text("a = {" + dotted(70) + " = 1}\n", "d.toml"), Error);
  // Multi-line arrays keep their depth across lines; a dot inside a string is no key part.
  CHECK_THROWS_AS((void)parse_toml_text("a = [\n" + std::string(64, '[') + "\n]\n", "d.toml"), Error);
  CHECK(parse_toml_text("a = \"" + dotted(200) + "\"\n[\"" + dotted(200) + "\"]\n", "d.toml").size() == 2);
  // The crash input itself: refused at the 64th dot, no stack overflow.
  CHECK_THROWS_WITH_AS((void)parse_toml_text("[" + dotted(300000) + "]\n", "d.toml"),
                       ("d.toml:1:129: " + message).c_str(), Error);
}

TEST_CASE("every fuzzer-found toml++ reproducer is refused with an Error, before toml++ sees it") {
  const std::filesystem::path folder = std::filesystem::path(SPURCAST_SOURCE_DIR) / "tests/data/fuzz-regressions/toml";
  int count = 0;
  for (const auto& entry : std::filesystem::directory_iterator(folder)) {
    if (!entry.is_regular_file()) continue;
    CAPTURE(entry.path().string());
    CHECK_THROWS_AS((void)parse_toml_text(read_file(entry.path()), "r.toml"), Error);
    ++count;
  }
  CHECK(count >= 5);
}

TEST_CASE("fftw_lock: one planner lock for the whole library") {
  CHECK(&fftw_planner_mutex() == &fftw_planner_mutex());
}

TEST_CASE("toml++'s non-ASCII whitespace test answers for every code point (Unicode Zs category)") {
  // Unicode's space separators (category Zs) above ASCII: U+00A0, U+1680, U+2000..U+200A, U+202F,
  // U+205F, U+3000. toml++ 3.3.0 also counts U+180E, U+200B, U+2060 and U+FEFF (older Unicode
  // versions and zero-width characters), which is harmless. core/input/toml.hpp makes the code points
  // its bitmask leaves without a case answer `false` instead of reaching __builtin_unreachable.
  const auto zs_or_toml_extra = [](char32_t c) {
    return c == 0xA0 || c == 0x1680 || (c >= 0x2000 && c <= 0x200B) || c == 0x202F || c == 0x205F ||
           c == 0x2060 || c == 0x3000 || c == 0x180E || c == 0xFEFF;
  };
  int mismatches = 0;
  for (char32_t c = 0x80; c <= 0x10FFFF; ++c) {
    if (toml::impl::is_non_ascii_horizontal_whitespace(c) != zs_or_toml_extra(c)) ++mismatches;
  }
  CHECK(mismatches == 0);
}
