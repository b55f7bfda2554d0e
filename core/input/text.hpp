#pragma once
/// Small text helpers shared by the readers and the what-if handler: byte-level checks and the
/// spelling of user text inside one-line error messages.
#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace spurcast {

/// The byte offset at which the first ill-formed UTF-8 sequence of `text` starts, or nullopt when
/// all of `text` is well-formed UTF-8. Well-formed means the byte sequences of the Unicode
/// Standard, Table 3-7, from memory (no overlong forms, no surrogates U+D800..U+DFFF, nothing above
/// U+10FFFF); a sequence cut short by the end of `text` is ill-formed at its lead byte. Example:
/// first_invalid_utf8_offset("l\x99mits") == 1.
[[nodiscard]] std::optional<std::size_t> first_invalid_utf8_offset(std::string_view text);

/// `text` with the ASCII letters A-Z in lower case; every other byte (UTF-8 included) as it is.
/// Example: ascii_lower("10uH .SUBCKT") == "10uh .subckt".
[[nodiscard]] std::string ascii_lower(std::string_view text);

/// `text` as a file reader's message shows a name or token: in single quotes, printable ASCII as
/// is, every other byte as \xNN, cut after `max_bytes` bytes with "..." appended. Example:
/// quoted_for_message("L\t1", 24) == "'L\\x091'".
[[nodiscard]] std::string quoted_for_message(std::string_view text, std::size_t max_bytes);

/// One word of a line: its text and its 1-based byte column.
struct LineWord {
  std::string_view text;
  int column = 1;
};

/// The words of `line`, split at spaces, tabs, carriage returns and any byte of `separators`.
/// Example: split_words("R1 a,b 10", ",") gives "R1" (column 1), "a" (4), "b" (6), "10" (8).
[[nodiscard]] std::vector<LineWord> split_words(std::string_view line, std::string_view separators);

/// Calls visit(line_number, line) for each line of `text` (split at '\n', numbered from 1) with the
/// part from the first `comment` byte on removed (a line-end comment of a netlist or a Touchstone
/// file). The views point into `text`.
template <typename Visit>
void for_each_line(std::string_view text, char comment, Visit&& visit) {
  int line_number = 0;
  std::size_t start = 0;
  while (start < text.size()) {
    std::size_t end = text.find('\n', start);
    if (end == std::string_view::npos) end = text.size();
    std::string_view line = text.substr(start, end - start);
    start = end + 1;
    ++line_number;
    if (const std::size_t at = line.find(comment); at != std::string_view::npos) line = line.substr(0, at);
    visit(line_number, line);
  }
}

}  // namespace spurcast
