#pragma once
/// The writers of a SweepResult (core/chain/sweep.hpp): one CSV row per point, JSON of the whole
/// result, the terminal table of windows, and the sweep plot (SVG).
///
/// Example:
///   write_file_atomically("sweep.csv", sweep_csv(result));
///   std::cout << sweep_text(result, {"sweep.csv"});
#include <string>
#include <vector>

#include "core/chain/sweep.hpp"

namespace spurcast {

/// CSV, one row per point: the axis keys (SI values), method, limits_verdict, worst_margin_db,
/// `<detector>_margin_db` per detector (peak_margin_db, quasi-peak_margin_db, average_margin_db),
/// `margin_db:<limit line>` per limit line, `verdict:<band>` per band, `robust:<criterion>` (1/0)
/// per criterion, error. Margins with 2 decimals; empty cells where nothing was compared.
[[nodiscard]] std::string sweep_csv(const SweepResult& result);

/// JSON of the whole result (axes, columns, points with band details, windows, notes), ending with
/// `files`: the files written, on one line.
[[nodiscard]] std::string sweep_json(const SweepResult& result, const std::vector<std::string>& written);

/// The terminal text: the overall margins, the windows per criterion, the notes, "wrote FILE" for
/// each of `written`, and the reminder that a prediction is not a compliance result.
[[nodiscard]] std::string sweep_text(const SweepResult& result, const std::vector<std::string>& written);

/// The legend of the sweep plot's windows: what a window of the last criterion meets, named as it
/// was asked ("windows where MW is clear and quasi-peak and average margins ≥ 6 dB", the detectors
/// of the limit lines compared and the guard band for --meet-limits, every criterion for "all
/// criteria"), with the drift it holds across; "" when the sweep was asked for no window.
[[nodiscard]] std::string sweep_windows_label(const SweepResult& result);

/// The sweep plot: worst margin and band verdicts along the first axis (the first group of a grid),
/// the windows of the last criterion highlighted; a log axis when the values span more than 20:1.
[[nodiscard]] std::string sweep_svg(const SweepResult& result, const std::string& title);

}  // namespace spurcast
