#include "core/input/units.hpp"

#include <fast_float/fast_float.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <utility>
#include <vector>

#include "core/input/error.hpp"

namespace spurcast {

namespace {

struct Prefix {
  std::string_view symbol;
  double factor;
};

// SI prefixes; both the micro sign (U+00B5) and the Greek mu (U+03BC) are accepted, and "u".
constexpr std::array<Prefix, 11> prefixes{{{"f", 1e-15},
                                           {"p", 1e-12},
                                           {"n", 1e-9},
                                           {"u", 1e-6},
                                           {"\xC2\xB5", 1e-6},
                                           {"\xCE\xBC", 1e-6},
                                           {"m", 1e-3},
                                           {"k", 1e3},
                                           {"M", 1e6},
                                           {"G", 1e9},
                                           {"T", 1e12}}};

bool is_db_dimension(Dimension d) {
  return d == Dimension::decibel || d == Dimension::level_dbuv || d == Dimension::level_dbua ||
         d == Dimension::level_dbuvm;
}

// Unit spellings accepted for a dimension, without prefix. The first one is canonical.
std::vector<std::string_view> spellings(Dimension d) {
  switch (d) {
    case Dimension::frequency: return {"Hz"};
    case Dimension::time: return {"s"};
    case Dimension::voltage: return {"V"};
    case Dimension::current: return {"A"};
    case Dimension::capacitance: return {"F"};
    case Dimension::inductance: return {"H"};
    case Dimension::resistance: return {"\xCE\xA9", "\xE2\x84\xA6", "Ohm", "ohm"};
    case Dimension::length: return {"m"};
    case Dimension::fraction: return {"%"};
    case Dimension::decibel: return {"dB"};
    case Dimension::level_dbuv: return {"dB\xC2\xB5V", "dBuV", "dB\xCE\xBCV"};
    case Dimension::level_dbua: return {"dB\xC2\xB5" "A", "dBuA", "dB\xCE\xBC" "A"};
    case Dimension::level_dbuvm: return {"dB\xC2\xB5V/m", "dBuV/m", "dB\xCE\xBCV/m"};
    case Dimension::power: return {"W"};
    case Dimension::number: return {};
  }
  return {};
}

std::string example(Dimension d) {
  switch (d) {
    case Dimension::frequency: return "\"220 kHz\"";
    case Dimension::time: return "\"12 ns\"";
    case Dimension::voltage: return "\"48 V\"";
    case Dimension::current: return "\"6 A\"";
    case Dimension::capacitance: return "\"4.7 uF\"";
    case Dimension::inductance: return "\"50 uH\"";
    case Dimension::resistance: return "\"8 mOhm\"";
    case Dimension::length: return "\"3 m\"";
    case Dimension::fraction: return "\"6 %\"";
    case Dimension::decibel: return "\"6 dB\"";
    case Dimension::level_dbuv: return "\"60 dBuV\"";
    case Dimension::level_dbua: return "\"20 dBuA\"";
    case Dimension::level_dbuvm: return "\"40 dBuV/m\"";
    case Dimension::power: return "\"60 W\"";
    case Dimension::number: return "0.25";
  }
  return "";
}

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

[[noreturn]] void fail(std::string_view text, Dimension expected) {
  std::string message = "expected " + dimension_name(expected);
  if (expected != Dimension::number) message += " (e.g. " + example(expected) + ")";
  message += ", found \"" + std::string(text) + "\"";
  throw Error(message);
}

}  // namespace

std::string dimension_name(Dimension d) {
  switch (d) {
    case Dimension::frequency: return "a frequency";
    case Dimension::time: return "a time";
    case Dimension::voltage: return "a voltage";
    case Dimension::current: return "a current";
    case Dimension::capacitance: return "a capacitance";
    case Dimension::inductance: return "an inductance";
    case Dimension::resistance: return "a resistance";
    case Dimension::length: return "a length";
    case Dimension::fraction: return "a fraction";
    case Dimension::decibel: return "a level in dB";
    case Dimension::level_dbuv: return "a level in dBuV";
    case Dimension::level_dbua: return "a level in dBuA";
    case Dimension::level_dbuvm: return "a field strength in dBuV/m";
    case Dimension::power: return "a power";
    case Dimension::number: return "a number";
  }
  return "a quantity";
}

std::string unit_symbol(Dimension d) {
  const auto list = spellings(d);
  if (list.empty() || d == Dimension::fraction) return "";
  return std::string(list.front());
}

double parse_quantity(std::string_view text, Dimension expected) {
  const std::string_view body = trim(text);
  double value = 0.0;
  const char* first = body.data();
  const char* last = body.data() + body.size();
  // fast_float accepts no leading '+'; allow it by hand.
  if (first != last && *first == '+') ++first;
  const auto parsed = fast_float::from_chars(first, last, value);
  if (parsed.ec != std::errc() || !std::isfinite(value)) fail(text, expected);
  const std::string_view unit = trim(std::string_view(parsed.ptr, static_cast<std::size_t>(last - parsed.ptr)));
  if (unit.empty()) return value;  // SI base unit (or dB) by convention
  if (expected == Dimension::number) fail(text, expected);
  for (const std::string_view spelling : spellings(expected)) {
    if (unit == spelling) {
      return expected == Dimension::fraction ? value / 100.0 : value;
    }
    if (is_db_dimension(expected) || expected == Dimension::fraction) continue;  // no prefixes
    if (unit.size() > spelling.size() && unit.substr(unit.size() - spelling.size()) == spelling) {
      const std::string_view prefix = unit.substr(0, unit.size() - spelling.size());
      for (const Prefix& p : prefixes) {
        if (prefix == p.symbol && std::isfinite(value * p.factor)) return value * p.factor;  // "1e308 THz" overflows
      }
    }
  }
  fail(text, expected);
}

std::string format_quantity(double value, Dimension dimension, int significant) {
  char buffer[64];
  if (dimension == Dimension::fraction) {
    std::snprintf(buffer, sizeof buffer, "%.*g %%", significant, value * 100.0);
    return buffer;
  }
  const std::string unit = unit_symbol(dimension);
  if (is_db_dimension(dimension) || dimension == Dimension::number) {
    std::snprintf(buffer, sizeof buffer, "%.*g%s%s", significant, value, unit.empty() ? "" : " ",
                  unit.c_str());
    return buffer;
  }
  static constexpr std::array<std::pair<double, const char*>, 9> scale{{{1e12, "T"},
                                                                        {1e9, "G"},
                                                                        {1e6, "M"},
                                                                        {1e3, "k"},
                                                                        {1.0, ""},
                                                                        {1e-3, "m"},
                                                                        {1e-6, "\xC2\xB5"},
                                                                        {1e-9, "n"},
                                                                        {1e-12, "p"}}};
  const double magnitude = std::fabs(value);
  double factor = 1.0;
  const char* prefix = "";
  if (magnitude > 0.0 && dimension != Dimension::length) {
    factor = 1e-15;
    prefix = "f";
    for (const auto& [f, p] : scale) {
      if (magnitude >= f * 0.9999999) {
        factor = f;
        prefix = p;
        break;
      }
    }
  }
  std::snprintf(buffer, sizeof buffer, "%.*g %s%s", significant, value / factor, prefix,
                unit.c_str());
  return buffer;
}

double volts_to_dbuv(double volts) {
  return volts > 0.0 ? std::max(20.0 * std::log10(volts / 1e-6), level_floor_db) : level_floor_db;
}
double dbuv_to_volts(double level_dbuv) { return 1e-6 * std::pow(10.0, level_dbuv / 20.0); }
double amps_to_dbua(double amps) { return volts_to_dbuv(amps); }
double dbua_to_amps(double level_dbua) { return dbuv_to_volts(level_dbua); }
double dbm_to_dbuv_50ohm(double level_dbm) {
  return level_dbm + 10.0 * std::log10(50.0 * 1e-3) + 120.0;
}
double dbuv_to_dbm_50ohm(double level_dbuv) {
  return level_dbuv - 10.0 * std::log10(50.0 * 1e-3) - 120.0;
}
double db_power_sum(double a_db, double b_db) {
  const double hi = std::max(a_db, b_db);
  const double lo = std::min(a_db, b_db);
  return hi + 10.0 * std::log10(1.0 + std::pow(10.0, (lo - hi) / 10.0));
}

}  // namespace spurcast
