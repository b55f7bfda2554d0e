#pragma once
/// Quantities with SI prefixes and units ("220 kHz", "4.7 µF", "8 mΩ", "6 %", "60 dBµV"), and the
/// decibel conversions of the trade. Plain numbers are SI base units.
#include <string>
#include <string_view>

namespace spurcast {

/// What a value measures; decides which unit symbols are accepted.
enum class Dimension {
  frequency,    ///< Hz
  time,         ///< s
  voltage,      ///< V
  current,      ///< A
  capacitance,  ///< F
  inductance,   ///< H
  resistance,   ///< Ω (also "Ohm", "ohm")
  length,       ///< m
  fraction,     ///< "%" or a plain number (0.06 = 6 %)
  decibel,      ///< dB (a ratio: guard band, correction)
  level_dbuv,   ///< dBµV (also "dBuV")
  level_dbua,   ///< dBµA (also "dBuA")
  level_dbuvm,  ///< dBµV/m (also "dBuV/m")
  power,        ///< W
  number,       ///< a plain number, no unit accepted
};

/// A human name for messages: "a frequency", "a capacitance", ...
[[nodiscard]] std::string dimension_name(Dimension dimension);
/// The canonical unit symbol ("Hz", "F", "Ω", "dBµV", ...); "" for fraction and number.
[[nodiscard]] std::string unit_symbol(Dimension dimension);

/// Parses a quantity such as "220 kHz", "220kHz", "4.7 uF", "-3 dB" or "1e3 Hz". A number alone is
/// taken in SI base units (and in dB for the dB dimensions). Throws Error (without a position;
/// loaders add it) on a wrong unit or malformed text, e.g.
/// `expected a frequency (e.g. "220 kHz"), found "3 V"`.
[[nodiscard]] double parse_quantity(std::string_view text, Dimension expected);

/// Engineering notation with the SI prefix: format_quantity(220e3, Dimension::frequency) ==
/// "220 kHz"; `significant` digits (default 4), trailing zeros dropped.
[[nodiscard]] std::string format_quantity(double value, Dimension dimension, int significant = 4);
/// Digits for values that are exact by definition, such as the edges of a broadcast band
/// (1606.5 kHz must not print as 1.607 MHz).
inline constexpr int band_edge_digits = 7;

// Decibel conversions. Levels are RMS. dBµV = 20·log10(V / 1 µV), dBµA = 20·log10(I / 1 µA).
[[nodiscard]] double volts_to_dbuv(double volts);
[[nodiscard]] double dbuv_to_volts(double level_dbuv);
[[nodiscard]] double amps_to_dbua(double amps);
[[nodiscard]] double dbua_to_amps(double level_dbua);
/// dBm in a 50 Ω system to dBµV: +106.99 dB (10·log10(50·1e-3) + 120). docs/references.md §9.2 [D].
[[nodiscard]] double dbm_to_dbuv_50ohm(double level_dbm);
[[nodiscard]] double dbuv_to_dbm_50ohm(double level_dbuv);
/// Power sum of two uncorrelated levels in dB: 10·log10(10^(a/10) + 10^(b/10)).
[[nodiscard]] double db_power_sum(double a_db, double b_db);

/// A floor used instead of -inf for a zero amplitude (a spectral null): -400 dBµV is far below
/// any physical noise floor, keeps CSV and JSON finite, and reads as "nothing there".
inline constexpr double level_floor_db = -400.0;

}  // namespace spurcast
