#pragma once
/// The writers of a ScanReport (core/chain/scan_at.hpp): the scan CSV of docs/design.md §4
/// (`frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv,at_floor`, dbua for a current; at_floor
/// names the detectors, joined by '+', whose reading is the receiver's noise floor, as in the
/// prediction's scan.csv), JSON and the terminal text. All three read the same readings.
///
/// Example:
///   write_file_atomically("scan.csv", scan_csv(report));
///   std::cout << scan_text(report, false, {"scan.csv"});
#include <string>
#include <vector>

#include "core/chain/scan_at.hpp"

namespace spurcast {

/// How many of the highest peaks the text lists per band.
inline constexpr std::size_t scan_text_listed_readings = 10;

/// Every reading of every band, ascending band then frequency: frequencies with 6 significant
/// digits, levels with 3 decimals, then at_floor ("" when no detector reads the floor, or the band
/// has no floor). The header names dbuv for a voltage (or no readings), dbua for a current.
[[nodiscard]] std::string scan_csv(const ScanReport& report);

/// The report as a JSON object (2-space indent, ending in a newline): scenario, at, unit, per band
/// the bandwidth, step, noise_floor (null for none), highest reading per detector, every reading
/// (with its at_floor text) and the notes; `files` lists `written`.
[[nodiscard]] std::string scan_json(const ScanReport& report, const std::vector<std::string>& written);

/// The terminal text: per band the highest reading per detector, the noise floor and how many
/// readings sit on it, and the highest peaks (every
/// reading for spot frequencies), then "wrote FILE" for each of `written`. `colour` makes band
/// titles bold (ANSI).
[[nodiscard]] std::string scan_text(const ScanReport& report, bool colour, const std::vector<std::string>& written);

}  // namespace spurcast
