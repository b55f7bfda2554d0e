#pragma once
/// The writers of a SpectrumResult (core/chain/spectrum_at.hpp): CSV (docs/design.md §4:
/// harmonic,frequency_hz,level_dbuv, then envelope or the LISN lines when present), JSON and the
/// terminal text. All three read the same rows.
///
/// Example:
///   write_file_atomically("spectrum.csv", spectrum_csv(result));
///   std::cout << spectrum_text(result, 15);
#include <cstddef>
#include <string>

#include "core/chain/spectrum_at.hpp"

namespace spurcast {

/// One row per harmonic: `harmonic,frequency_hz,level_<unit>` (dbuv or dbua), then
/// `envelope_<unit>` for a described source, `line1_dbuv,line2_dbuv,dm_dbuv,cm_dbuv` at the LISN.
/// Frequencies with 9 significant digits, levels with 3 decimals (1 mdB).
[[nodiscard]] std::string spectrum_csv(const SpectrumResult& result);

/// The whole result as a JSON object (2-space indent, ending in a newline); numbers at full precision.
[[nodiscard]] std::string spectrum_json(const SpectrumResult& result);

/// The terminal text: what, fundamental, capture, window, notes, then the `top` strongest harmonics.
[[nodiscard]] std::string spectrum_text(const SpectrumResult& result, std::size_t top);

}  // namespace spurcast
