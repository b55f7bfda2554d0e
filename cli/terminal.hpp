#pragma once
// Terminal output of the CLI: aligned text columns, colour only when stdout is a terminal and
// NO_COLOR is unset, a progress line on stderr only when stderr is a terminal, and the summary
// that `predict` and `demo` print after writing a report folder.
#include <cstddef>
#include <string>
#include <vector>

#include "core/chain/prediction.hpp"

namespace spurcast::cli {

/// True when stdout is a terminal (isatty) and NO_COLOR is absent or empty (no-color.org).
[[nodiscard]] bool stdout_wants_colour();
/// True when stderr is a terminal.
[[nodiscard]] bool stderr_is_terminal();

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

/// A progress line on stderr ("spurcast: scanning band B ... 40 %"), redrawn in place; silent unless
/// stderr is a terminal. The line is cleared on destruction.
class Progress {
 public:
  Progress();
  ~Progress();
  Progress(const Progress&) = delete;
  Progress& operator=(const Progress&) = delete;
  /// Shows `stage`, with a percentage when 0 <= fraction <= 1.
  void show(const std::string& stage, double fraction = -1.0);
  void clear();

 private:
  bool enabled_ = false;
  std::size_t shown_width_ = 0;
};

/// The human summary of a written report: verdict, worst margin per detector, the five worst
/// frequencies, the band verdicts, and where the report is.
[[nodiscard]] std::string prediction_summary(const Prediction& prediction, const std::string& directory, bool colour);

/// What `predict` and `demo` share after the prediction: write the report folder, print the summary
/// (or summary.json with `json`), and return the exit code (0 pass, 1 marginal or fail). The test
/// hook SPURCAST_TEST_ABORT_AFTER_FILES=N (environment) stops the process after N files.
[[nodiscard]] int write_report_and_summarise(const Prediction& prediction, const std::string& directory, bool json);

}  // namespace spurcast::cli
