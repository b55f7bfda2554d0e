#pragma once
/// Plain-text building blocks of every terminal writer: ANSI colour, display width, aligned columns
/// and the level cell ("-" for nothing in the passband). Pure functions of their arguments: whether
/// colour is wanted (a terminal, NO_COLOR) is decided by the caller.
///
/// Example:
///   format_columns({{"detector", "highest"}, {"peak", "61.20"}}, {1}, "  ");
#include <cstddef>
#include <string>
#include <vector>

namespace spurcast {

enum class Colour { none, green, yellow, red, bold, dim };
/// `text` wrapped in the ANSI sequence of `colour` when `enabled`, else `text` unchanged.
[[nodiscard]] std::string paint(const std::string& text, Colour colour, bool enabled);

/// Display width: UTF-8 code points, ANSI escape sequences not counted.
[[nodiscard]] std::size_t display_width(const std::string& text);

/// Rows of cells as aligned columns (two spaces between columns, each line indented by `indent`).
/// Columns listed in `right_aligned` (0-based) are right-aligned; trailing spaces are not written.
[[nodiscard]] std::string format_columns(const std::vector<std::vector<std::string>>& rows,
                                         const std::vector<std::size_t>& right_aligned = {},
                                         const std::string& indent = "  ");

/// A level in dB to 0.1 dB (text output; the CSVs keep more), or "-" at or below level_floor_db (nothing in the passband).
[[nodiscard]] std::string level_cell(double level_db);

}  // namespace spurcast
