// The text helpers (core/input/text.hpp) against Python's UTF-8 decoder, which rejects the same
// byte sequences as the Unicode Standard, Table 3-7 (from memory) and reports where the first
// ill-formed one starts (UnicodeDecodeError.start).
#include "core/input/text.hpp"

#include <doctest/doctest.h>
#include <fmt/format.h>

#include <cstdint>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <optional>
#include <string>
#include <vector>

#include "cli_support.hpp"

namespace {

using spurcast::first_invalid_utf8_offset;

}  // namespace

TEST_CASE("first_invalid_utf8_offset: hand-picked sequences of Table 3-7") {
  CHECK(first_invalid_utf8_offset("") == std::nullopt);
  CHECK(first_invalid_utf8_offset("plain ascii") == std::nullopt);
  CHECK(first_invalid_utf8_offset("10 \xc2\xb5H, \xce\xbc, \xe2\x82\xac, \xf0\x9f\x98\x80") ==
        std::nullopt);
  CHECK(first_invalid_utf8_offset("\xf4\x8f\xbf\xbf") ==
        std::nullopt);                                        // U+10FFFF, the last code point
  CHECK(first_invalid_utf8_offset("l\x99mits") == 1);         // a lone continuation byte
  CHECK(first_invalid_utf8_offset("ab\xc0\x80") == 2);        // overlong NUL
  CHECK(first_invalid_utf8_offset("\xe0\x9f\xbf") == 0);      // overlong 3-byte form
  CHECK(first_invalid_utf8_offset("x\xed\xa0\x80") == 1);     // surrogate U+D800
  CHECK(first_invalid_utf8_offset("\xf4\x90\x80\x80") == 0);  // above U+10FFFF
  CHECK(first_invalid_utf8_offset("ok\xe2\x82") == 2);        // cut short by the end
  CHECK(first_invalid_utf8_offset("\xf5\x80\x80\x80") == 0);  // F5 never starts a sequence
}

TEST_CASE("first_invalid_utf8_offset agrees with Python's decoder on pseudo-random byte strings") {
  const char* python = std::filesystem::exists("/usr/bin/python3") ? "/usr/bin/python3" : "python3";
  // Strings mostly of ASCII and well-formed multi-byte sequences with a few stray bytes, so that
  // both answers (well-formed, offset) occur often; a fixed linear congruential generator
  // (Numerical Recipes' constants, common practice) keeps the cases the same on every run.
  std::uint32_t state = 12345;
  const auto next = [&] {
    state = state * 1664525u + 1013904223u;
    return state >> 8;
  };
  const std::vector<std::string> pieces = {"a",
                                           "Z",
                                           " ",
                                           "\xc2\xb5",
                                           "\xe2\x82\xac",
                                           "\xf0\x9f\x98\x80",
                                           "\xed\x9f\xbf",
                                           "\xee\x80\x80",
                                           "\xf4\x8f\xbf\xbf"};
  std::vector<std::string> cases;
  for (int n = 0; n < 2000; ++n) {
    std::string s;
    const int length = static_cast<int>(next() % 12);
    for (int k = 0; k < length; ++k) {
      if (next() % 6 == 0) {
        s += static_cast<char>(next() % 256);  // any byte, often ill-formed in its place
      } else {
        s += pieces[next() % pieces.size()];
      }
    }
    cases.push_back(s);
  }
  const std::filesystem::path dir = spurcast::test::fresh_directory("spurcast-text-", "utf8");
  {
    std::ofstream hex(dir / "cases.txt");
    for (const std::string& s : cases) {
      for (const char c : s) hex << fmt::format("{:02x}", static_cast<unsigned char>(c));
      hex << "\n";
    }
  }
  const std::string script =
      "import sys\n"
      "for line in open(sys.argv[1]):\n"
      "    b = bytes.fromhex(line.strip())\n"
      "    try:\n"
      "        b.decode('utf-8')\n"
      "        print(-1)\n"
      "    except UnicodeDecodeError as e:\n"
      "        print(e.start)\n"
      "    print('x' + b.lower().hex())\n";  // x: an empty string still gives a word
  spurcast::test::write_text(dir / "check.py", script);
  const std::string command = std::string(python) + " " + (dir / "check.py").string() + " " +
                              (dir / "cases.txt").string() + " > " + (dir / "python.txt").string();
  REQUIRE(std::system(command.c_str()) == 0);
  std::ifstream answers(dir / "python.txt");
  int invalid = 0;
  for (const std::string& s : cases) {
    long expected = 0;
    std::string lower_hex;
    REQUIRE(static_cast<bool>(answers >> expected >> lower_hex));
    const std::optional<std::size_t> got = first_invalid_utf8_offset(s);
    INFO("case of ", s.size(), " bytes");
    // bytes.lower() changes only the ASCII letters A-Z, as ascii_lower() does.
    std::string lower_bytes_hex;
    for (const char c : spurcast::ascii_lower(s))
      lower_bytes_hex += fmt::format("{:02x}", static_cast<unsigned char>(c));
    CHECK("x" + lower_bytes_hex == lower_hex);
    if (expected < 0) {
      CHECK(got == std::nullopt);
    } else {
      ++invalid;
      REQUIRE(got.has_value());
      CHECK(static_cast<long>(*got) == expected);
    }
  }
  // Both kinds were exercised.
  CHECK(invalid > 200);
  CHECK(invalid < 1800);
}

TEST_CASE(
    "quoted_for_message: C-style \\xNN escapes for every byte outside printable ASCII (common "
    "practice)") {
  using spurcast::quoted_for_message;
  CHECK(quoted_for_message("L1", 24) == "'L1'");
  CHECK(quoted_for_message("L\t1", 24) == "'L\\x091'");
  CHECK(quoted_for_message("\xc2\xb5H", 24) == "'\\xc2\\xb5H'");
  CHECK(quoted_for_message(std::string_view("a\0b", 3), 24) == "'a\\x00b'");
  CHECK(quoted_for_message("0123456789abcdefghijklmnop", 20) == "'0123456789abcdefghij...'");
  CHECK(quoted_for_message("0123456789abcdefghij", 20) == "'0123456789abcdefghij'");
}

TEST_CASE("split_words and for_each_line: byte columns from 1, line numbers from 1, comments cut") {
  // Columns and line numbers as editors count them for ASCII text (common practice).
  using spurcast::for_each_line;
  using spurcast::LineWord;
  using spurcast::split_words;
  const std::vector<LineWord> words = split_words("R1 a,b\t 10\r", ",");
  REQUIRE(words.size() == 4);
  CHECK(words[0].text == "R1");
  CHECK(words[0].column == 1);
  CHECK(words[1].text == "a");
  CHECK(words[1].column == 4);
  CHECK(words[2].text == "b");
  CHECK(words[2].column == 6);
  CHECK(words[3].text == "10");
  CHECK(words[3].column == 9);
  CHECK(split_words(" \t,\r", ",").empty());
  CHECK(split_words("a(b)", "()").size() == 2);

  std::vector<std::pair<int, std::string>> seen;
  for_each_line("first ! note\n\n! all comment\nlast", '!', [&](int number, std::string_view line) {
    seen.emplace_back(number, std::string(line));
  });
  REQUIRE(seen.size() == 4);
  CHECK(seen[0] == std::pair<int, std::string>{1, "first "});
  CHECK(seen[1] == std::pair<int, std::string>{2, ""});
  CHECK(seen[2] == std::pair<int, std::string>{3, ""});
  CHECK(seen[3] == std::pair<int, std::string>{4, "last"});
}
