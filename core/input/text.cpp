#include "core/input/text.hpp"

#include <cctype>
#include <cstdio>

namespace spurcast {

std::optional<std::size_t> first_invalid_utf8_offset(std::string_view text) {
  // Unicode Standard, Table 3-7 "Well-Formed UTF-8 Byte Sequences": the lead byte fixes the
  // length and the allowed range of the second byte; later bytes are 80..BF.
  const auto byte = [&](std::size_t i) { return static_cast<unsigned char>(text[i]); };
  std::size_t i = 0;
  while (i < text.size()) {
    const unsigned char lead = byte(i);
    if (lead < 0x80) {
      ++i;
      continue;
    }
    std::size_t length = 0;
    unsigned char second_low = 0x80;
    unsigned char second_high = 0xBF;
    if (lead >= 0xC2 && lead <= 0xDF) {
      length = 2;
    } else if (lead == 0xE0) {
      length = 3;
      second_low = 0xA0;  // below: overlong
    } else if (lead >= 0xE1 && lead <= 0xEC) {
      length = 3;
    } else if (lead == 0xED) {
      length = 3;
      second_high = 0x9F;  // above: surrogates
    } else if (lead >= 0xEE && lead <= 0xEF) {
      length = 3;
    } else if (lead == 0xF0) {
      length = 4;
      second_low = 0x90;  // below: overlong
    } else if (lead >= 0xF1 && lead <= 0xF3) {
      length = 4;
    } else if (lead == 0xF4) {
      length = 4;
      second_high = 0x8F;  // above: beyond U+10FFFF
    } else {
      return i;  // 80..C1 (continuation or overlong lead) and F5..FF never start a sequence
    }
    if (i + length > text.size()) return i;
    if (byte(i + 1) < second_low || byte(i + 1) > second_high) return i;
    for (std::size_t k = 2; k < length; ++k) {
      if (byte(i + k) < 0x80 || byte(i + k) > 0xBF) return i;
    }
    i += length;
  }
  return std::nullopt;
}

std::string ascii_lower(std::string_view text) {
  std::string out(text);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

std::string quoted_for_message(std::string_view text, std::size_t max_bytes) {
  std::string out;
  for (const char c : text.substr(0, max_bytes)) {
    const auto u = static_cast<unsigned char>(c);
    if (u >= 0x20 && u < 0x7f) {
      out += c;
    } else {
      char buffer[8];
      std::snprintf(buffer, sizeof buffer, "\\x%02x", u);
      out += buffer;
    }
  }
  if (text.size() > max_bytes) out += "...";
  return "'" + out + "'";
}

std::vector<LineWord> split_words(std::string_view line, std::string_view separators) {
  const auto is_separator = [&](char c) {
    return c == ' ' || c == '\t' || c == '\r' || separators.find(c) != std::string_view::npos;
  };
  std::vector<LineWord> words;
  std::size_t i = 0;
  while (i < line.size()) {
    while (i < line.size() && is_separator(line[i])) ++i;
    if (i >= line.size()) break;
    const std::size_t begin = i;
    while (i < line.size() && !is_separator(line[i])) ++i;
    words.push_back(LineWord{line.substr(begin, i - begin), static_cast<int>(begin + 1)});
  }
  return words;
}

}  // namespace spurcast
