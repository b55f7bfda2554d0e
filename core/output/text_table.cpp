#include "core/output/text_table.hpp"

#include <fmt/format.h>

#include <algorithm>

#include "core/input/units.hpp"

namespace spurcast {

std::string paint(const std::string& text, Colour colour, bool enabled) {
  if (!enabled || colour == Colour::none) return text;
  const char* code = "";
  switch (colour) {
    case Colour::none: return text;
    case Colour::green: code = "\x1b[32m"; break;
    case Colour::yellow: code = "\x1b[33m"; break;
    case Colour::red: code = "\x1b[31m"; break;
    case Colour::bold: code = "\x1b[1m"; break;
    case Colour::dim: code = "\x1b[2m"; break;
  }
  return code + text + "\x1b[0m";
}

std::size_t display_width(const std::string& text) {
  std::size_t width = 0;
  for (std::size_t i = 0; i < text.size(); ++i) {
    const auto c = static_cast<unsigned char>(text[i]);
    if (c == 0x1b) {  // CSI ... final byte in @..~
      ++i;
      if (i < text.size() && text[i] == '[') {
        while (i + 1 < text.size() && !(text[i + 1] >= '@' && text[i + 1] <= '~')) ++i;
        ++i;
      }
      continue;
    }
    if ((c & 0xC0) != 0x80) ++width;
  }
  return width;
}

std::string format_columns(const std::vector<std::vector<std::string>>& rows, const std::vector<std::size_t>& right_aligned,
                           const std::string& indent) {
  std::vector<std::size_t> widths;
  for (const auto& row : rows) {
    if (row.size() > widths.size()) widths.resize(row.size(), 0);
    for (std::size_t c = 0; c < row.size(); ++c) widths[c] = std::max(widths[c], display_width(row[c]));
  }
  std::string out;
  for (const auto& row : rows) {
    std::string line = indent;
    for (std::size_t c = 0; c < row.size(); ++c) {
      const std::size_t pad = widths[c] - display_width(row[c]);
      const bool right = std::find(right_aligned.begin(), right_aligned.end(), c) != right_aligned.end();
      if (c > 0) line += "  ";
      if (right) line += std::string(pad, ' ');
      line += row[c];
      if (!right && c + 1 < row.size()) line += std::string(pad, ' ');
    }
    while (!line.empty() && line.back() == ' ') line.pop_back();
    out += line + "\n";
  }
  return out;
}

std::string level_cell(double level_db) {
  return level_db <= level_floor_db ? std::string("-") : fmt::format("{:.1f}", level_db);
}

}  // namespace spurcast
