#include "core/coupling/touchstone.hpp"

#include <fast_float/fast_float.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "core/input/error.hpp"
#include "core/input/input_file.hpp"
#include "core/input/text.hpp"
#include "core/input/units.hpp"

namespace spurcast {

using cd = std::complex<double>;

namespace {

constexpr double degree = 3.14159265358979323846 / 180.0;

struct Token {
  std::string_view text;
  int line = 0;
  int column = 0;
};

/// Shows a token in a message: printable ASCII as is, anything else escaped, at most 20 characters.
std::string shown(std::string_view text) { return quoted_for_message(text, 20); }

bool parse_number(std::string_view text, double& value) {
  std::string_view body = text;
  // An explicit '+' (which fast_float, like std::from_chars, rejects) is a plain number.
  if (body.size() > 1 && body.front() == '+' && body[1] != '-' && body[1] != '+')
    body.remove_prefix(1);
  const auto result = fast_float::from_chars(body.data(), body.data() + body.size(), value);
  return result.ec == std::errc() && result.ptr == body.data() + body.size() &&
         std::isfinite(value);
}

}  // namespace

std::array<cd, 4> TouchstoneData::s_at(double f) const {
  if (frequency_hz.empty()) throw Error(SourcePosition{file, 0, 0}, "no data");
  const double lo = frequency_hz.front(), hi = frequency_hz.back();
  // The same relative slack as Network::check_tabulated_range: the end points are inside.
  if (!(f >= lo * (1.0 - 1e-12) && f <= hi * (1.0 + 1e-12))) {
    throw Error(file + ": frequency " + format_quantity(f, Dimension::frequency) +
                " is outside the file's range, " + format_quantity(lo, Dimension::frequency) +
                " to " + format_quantity(hi, Dimension::frequency) + " (no extrapolation)");
  }
  if (frequency_hz.size() == 1 || f <= lo) return s.front();
  if (f >= hi) return s.back();
  const auto upper = std::upper_bound(frequency_hz.begin(), frequency_hz.end(), f);
  const auto i = static_cast<std::size_t>(upper - frequency_hz.begin());
  const double t = (f - frequency_hz[i - 1]) / (frequency_hz[i] - frequency_hz[i - 1]);
  std::array<cd, 4> out{};
  for (std::size_t k = 0; k < 4; ++k) out[k] = s[i - 1][k] + t * (s[i][k] - s[i - 1][k]);
  return out;
}

std::array<cd, 4> TouchstoneData::admittance(double f) const {
  const std::array<cd, 4> m = s_at(f);
  const double g = 1.0 / reference_ohm;
  auto singular = [&]() {
    return Error(file + ": the part is an ideal short at " +
                 format_quantity(f, Dimension::frequency) + " (I + S is singular): no admittance");
  };
  if (ports == 1) {
    const cd denominator = 1.0 + m[0];
    if (!(std::abs(denominator) > 1e-12)) throw singular();
    return {g * (1.0 - m[0]) / denominator, 0.0, 0.0, 0.0};
  }
  // (I + S)⁻¹ for a 2×2 matrix, then Y = g·(I − S)·(I + S)⁻¹.
  const cd a = 1.0 + m[0], b = m[1], c = m[2], d = 1.0 + m[3];
  const cd det = a * d - b * c;
  if (!(std::abs(det) > 1e-12)) throw singular();
  const cd i11 = d / det, i12 = -b / det, i21 = -c / det, i22 = a / det;
  const cd p = 1.0 - m[0], q = -m[1], r = -m[2], t = 1.0 - m[3];
  return {g * (p * i11 + q * i21), g * (p * i12 + q * i22), g * (r * i11 + t * i21),
          g * (r * i12 + t * i22)};
}

std::shared_ptr<const TouchstoneData> parse_touchstone(std::string_view text,
                                                       const std::string& name, int ports) {
  if (ports != 1 && ports != 2)
    throw Error(SourcePosition{name, 0, 0}, "expected a one-port or two-port file");
  auto data = std::make_shared<TouchstoneData>();
  data->file = name;
  data->ports = ports;
  double unit_hz = 1e9;  // the specification's defaults: GHz S MA R 50
  enum class Format { ri, ma, db } format = Format::ma;
  bool options_seen = false;
  std::vector<Token> numbers;
  auto fail = [&](const Token& token, const std::string& message) -> Error {
    return Error(SourcePosition{name, token.line, token.column}, message);
  };

  int line_count = 0;
  for_each_line(text, '!', [&](int line_number, std::string_view line) {
    line_count = line_number;
    std::vector<Token> tokens;
    for (const LineWord& word : split_words(line, ",")) tokens.push_back(Token{word.text, line_number, word.column});
    if (tokens.empty()) return;
    if (tokens.front().text.front() == '#') {
      const Token hash{tokens.front().text.substr(0, 1), tokens.front().line,
                       tokens.front().column};
      if (options_seen) throw fail(hash, "expected one option line, found a second");
      if (!numbers.empty()) throw fail(hash, "expected the option line before the data");
      options_seen = true;
      // "#GHz" (no space) is the same as "# GHz".
      std::vector<Token> options;
      if (tokens.front().text.size() > 1) {
        options.push_back(
            Token{tokens.front().text.substr(1), line_number, tokens.front().column + 1});
      }
      options.insert(options.end(), tokens.begin() + 1, tokens.end());
      for (std::size_t k = 0; k < options.size(); ++k) {
        const std::string word = ascii_lower(options[k].text);
        if (word == "hz") {
          unit_hz = 1.0;
        } else if (word == "khz") {
          unit_hz = 1e3;
        } else if (word == "mhz") {
          unit_hz = 1e6;
        } else if (word == "ghz") {
          unit_hz = 1e9;
        } else if (word == "s") {
        } else if (word == "y" || word == "z" || word == "h" || word == "g") {
          throw fail(options[k], "expected S parameters, found " + shown(options[k].text) +
                                     " (only scattering parameters are read)");
        } else if (word == "ri") {
          format = Format::ri;
        } else if (word == "ma") {
          format = Format::ma;
        } else if (word == "db") {
          format = Format::db;
        } else if (word == "r") {
          if (k + 1 >= options.size())
            throw fail(options[k], "expected a reference resistance after R");
          double r = 0.0;
          if (!parse_number(options[k + 1].text, r) || !(r > 0.0)) {
            throw fail(options[k + 1],
                       "expected a reference resistance > 0, found " + shown(options[k + 1].text));
          }
          data->reference_ohm = r;
          ++k;
        } else {
          throw fail(options[k], "expected Hz, kHz, MHz, GHz, S, RI, MA, DB or R, found " +
                                     shown(options[k].text));
        }
      }
      return;
    }
    if (tokens.front().text.front() == '[') {
      throw fail(tokens.front(), "expected Touchstone version 1 data, found a keyword " +
                                     shown(tokens.front().text) +
                                     " (version 2 files are not read)");
    }
    numbers.insert(numbers.end(), tokens.begin(), tokens.end());
  });

  const std::size_t per_record = ports == 1 ? 3 : 9;
  if (numbers.empty())
    throw Error(SourcePosition{name, line_count, 0}, "expected network data, found none");
  if (numbers.size() % per_record != 0) {
    const Token& first = numbers[numbers.size() - numbers.size() % per_record];
    throw fail(first, "expected " + std::to_string(per_record) + " values per frequency, found " +
                          std::to_string(numbers.size() % per_record) + " in the last record");
  }
  for (std::size_t r = 0; r < numbers.size(); r += per_record) {
    double values[9] = {};
    for (std::size_t k = 0; k < per_record; ++k) {
      if (!parse_number(numbers[r + k].text, values[k])) {
        throw fail(numbers[r + k], "expected a number, found " + shown(numbers[r + k].text));
      }
    }
    const double f = values[0] * unit_hz;
    if (!(std::isfinite(f) && f >= 0.0))
      throw fail(numbers[r], "expected a frequency >= 0, found " + shown(numbers[r].text));
    if (!data->frequency_hz.empty() && !(f > data->frequency_hz.back())) {
      throw fail(numbers[r], "expected a frequency above " +
                                 format_quantity(data->frequency_hz.back(), Dimension::frequency) +
                                 ", found " + format_quantity(f, Dimension::frequency) +
                                 " (frequencies must increase; noise parameters are not read)");
    }
    std::array<cd, 4> s{};
    const std::size_t pairs = ports == 1 ? 1 : 4;
    for (std::size_t p = 0; p < pairs; ++p) {
      const double a = values[1 + 2 * p], b = values[2 + 2 * p];
      cd value;
      switch (format) {
        case Format::ri:
          value = cd(a, b);
          break;
        case Format::ma:
          value = std::polar(a, b * degree);
          break;
        case Format::db:
          value = std::polar(std::pow(10.0, a / 20.0), b * degree);
          break;
      }
      if (format == Format::ma && a < 0.0) {
        throw fail(numbers[r + 1 + 2 * p],
                   "expected a magnitude >= 0, found " + shown(numbers[r + 1 + 2 * p].text));
      }
      if (!(std::isfinite(value.real()) && std::isfinite(value.imag()))) {
        throw fail(numbers[r + 1 + 2 * p],
                   "expected a finite parameter, found " + shown(numbers[r + 1 + 2 * p].text));
      }
      s[p] = value;
    }
    // Version 1 two-port order on the line: S11 S21 S12 S22; stored row-major S11 S12 S21 S22.
    if (ports == 2) std::swap(s[1], s[2]);
    data->frequency_hz.push_back(f);
    data->s.push_back(s);
  }
  return data;
}

int touchstone_ports(const std::string& path) {
  const std::string l = ascii_lower(path);
  auto ends = [&](const char* suffix) {
    const std::string s(suffix);
    return l.size() >= s.size() && l.compare(l.size() - s.size(), s.size(), s) == 0;
  };
  if (ends(".s1p")) return 1;
  if (ends(".s2p")) return 2;
  throw Error("expected a .s1p or .s2p file, found '" + path + "'");
}

std::shared_ptr<const TouchstoneData> load_touchstone(const std::string& path) {
  const int ports = touchstone_ports(path);
  // A regular file of bounded size only, as for every loader (core/input/input_file.hpp).
  return parse_touchstone(read_input_file(path, "Touchstone file", max_csv_file_bytes), path, ports);
}

std::shared_ptr<const TouchstoneData> read_touchstone_file(TableReader& reader, std::string_view key, int ports,
                                                           std::string& file) {
  file = reader.required_string(key);
  std::filesystem::path path(file);
  if (path.is_relative()) path = std::filesystem::path(reader.file()).parent_path() / path;
  int found = 0;
  try {
    found = touchstone_ports(path.string());
  } catch (const Error& error) {
    reader.fail(key, error.message());
  }
  if (found != ports) {
    reader.fail(key, std::string("expected a ") + (ports == 1 ? ".s1p (one-port)" : ".s2p (two-port)") +
                         " file, found '" + file + "'");
  }
  return load_touchstone(path.string());
}

}  // namespace spurcast
